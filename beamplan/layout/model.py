"""The frozen domain model of a layout, as loaded and validated from YAML.

These objects are plain data: they say what the user wrote, in SI units.
Physics that turns them into gains lives in :mod:`beamplan.physics` and the
graph built from them in :mod:`beamplan.network`.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field

from beamplan.errors import Diagnostic, Location
from beamplan.vocabulary import NodeKind

__all__ = [
    "SURPLUS_MODES",
    "AttenuatorSpec",
    "CoatingSpec",
    "DemandSpec",
    "DriftSpec",
    "DumpSpec",
    "ElementSpec",
    "GasFillSpec",
    "InterlayerSpec",
    "Layout",
    "LinkSpec",
    "MirrorSpec",
    "MultilayerSpec",
    "OutputSpec",
    "ScannerSpec",
    "SourceSpec",
    "SplitterSpec",
    "SwitchSpec",
    "UndulatorSpec",
]

_NOWHERE = Location("<layout>", 1, 1)


@dataclass(frozen=True)
class UndulatorSpec:
    """A planar undulator and its electron beam, to check the declared wavelength."""

    energy_ev: float
    period_m: float
    k: float | None = None
    peak_field_t: float | None = None
    harmonic: int = 1
    tunable: bool = False
    tolerance: float = 0.01


@dataclass(frozen=True)
class SourceSpec:
    """A light source: the power available at its exit, in W.

    ``polarisation_degree`` is the degree of linear polarisation in [0, 1],
    ``polarisation_angle_rad`` the angle of its E-field to the lab horizontal.
    ``electrical_w`` is the wall-plug draw at full output, ``electrical_fixed_w``
    the part of it drawn whatever the output (the rest scales with the EUV
    given). ``surplus`` says what happens to light no scanner can use:
    ``turn-down`` (the default), ``dump`` or ``attenuate``.
    """

    id: str
    power_w: float
    electrical_w: float | None = None
    note: str = ""
    location: Location = _NOWHERE
    polarisation_degree: float = 0.0
    polarisation_angle_rad: float = 0.0
    undulator: UndulatorSpec | None = None
    in_use: bool = True
    electrical_fixed_w: float = 0.0
    surplus: str = "turn-down"


SURPLUS_MODES = ("turn-down", "dump", "attenuate")


@dataclass(frozen=True)
class ElementSpec:
    """Base of every optic or beamline element.

    Attributes
    ----------
    id
        The element's id, unique across the layout.
    kind
        The element kind (``NodeKind.MIRROR``, ``NodeKind.SPLITTER``, ...); each
        subclass gives its own kind as the default.
    heat_limit_w
        The most power the element may absorb, or ``None`` for no limit.
    derate
        A factor on its gain (ageing, contamination, a what-if), default 1.
    in_use
        ``False`` for an outage: no power passes it.
    part
        The part (template) it was made from, if any.
    """

    id: str
    kind: NodeKind
    heat_limit_w: float | None = None
    part: str | None = None
    note: str = ""
    location: Location = _NOWHERE
    derate: float = 1.0
    in_use: bool = True

    @property
    def single_input(self) -> bool:
        """Whether the kind takes exactly one incoming link."""
        return True

    @property
    def output_ports(self) -> tuple[str | None, ...]:
        """The names of its outputs; ``(None,)`` for one unnamed output."""
        return (None,)


@dataclass(frozen=True)
class CoatingSpec:
    """A mirror coating: a formula, optionally its density and measured δ, β."""

    material: str
    density_g_cm3: float | None = None
    delta: float | None = None
    beta: float | None = None


@dataclass(frozen=True)
class InterlayerSpec:
    """Interdiffusion layers of a multilayer; the defaults are MoSi2 in sputtered Mo/Si."""

    material: str = "MoSi2"
    density_g_cm3: float | None = 6.2
    absorber_on_spacer_m: float = 1.0e-9
    spacer_on_absorber_m: float = 0.5e-9


@dataclass(frozen=True)
class MultilayerSpec:
    """A periodic multilayer: absorber/spacer pair on a substrate.

    The defaults are the documented defaults of docs/layout-format.md: a realistic
    Mo/Si stack (Ru cap, MoSi2 interlayers, 0.4 nm interface roughness).
    """

    absorber: str = "Mo"
    spacer: str = "Si"
    period_m: float = 6.9e-9
    absorber_fraction: float = 0.4
    periods: int = 50
    cap: str | None = "Ru"
    cap_thickness_m: float = 2.0e-9
    substrate: str = "SiO2"
    roughness_m: float = 0.4e-9
    interlayers: InterlayerSpec | None = InterlayerSpec()


@dataclass(frozen=True)
class MirrorSpec(ElementSpec):
    """A mirror: a fixed reflectivity, or a coating at a grazing angle, or a multilayer.

    A fixed ``reflectivity`` wins when given. ``plane_rad`` is the angle of
    the plane of incidence to the lab horizontal (for polarised sources).
    """

    kind: NodeKind = NodeKind.MIRROR
    reflectivity: float | None = None
    coating: CoatingSpec | None = None
    grazing_rad: float | None = None
    roughness_m: float = 0.0
    multilayer: MultilayerSpec | None = None
    incidence_rad: float | None = None
    plane_rad: float = 0.0


@dataclass(frozen=True)
class OutputSpec:
    """One output of a splitter: its efficiency and the bounds of its share.

    ``fraction_min``/``fraction_max`` bound the share of the splitter's input
    sent to this output; ``efficiency`` is the part of that share that leaves.
    """

    name: str
    efficiency: float = 1.0
    fraction_min: float = 0.0
    fraction_max: float = 1.0
    location: Location = _NOWHERE

    @property
    def adjustable(self) -> bool:
        """Whether the share may be chosen by the optimiser."""
        return self.fraction_max > self.fraction_min


@dataclass(frozen=True)
class SplitterSpec(ElementSpec):
    """A splitter with two or more named outputs."""

    kind: NodeKind = NodeKind.SPLITTER
    outputs: tuple[OutputSpec, ...] = ()

    @property
    def output_ports(self) -> tuple[str | None, ...]:
        return tuple(o.name for o in self.outputs)


@dataclass(frozen=True)
class AttenuatorSpec(ElementSpec):
    """An attenuator with a fixed (min == max) or adjustable transmission."""

    kind: NodeKind = NodeKind.ATTENUATOR
    transmission_min: float = 1.0
    transmission_max: float = 1.0


@dataclass(frozen=True)
class GasFillSpec:
    """The residual or buffer gas of a drift: Beer–Lambert absorption over its length."""

    gas: str
    pressure_pa: float
    temperature_k: float
    length_m: float


@dataclass(frozen=True)
class DriftSpec(ElementSpec):
    """A drift section: a fixed transmission, or a gas fill over a length."""

    kind: NodeKind = NodeKind.DRIFT
    transmission: float | None = None
    fill: GasFillSpec | None = None
    length_m: float | None = None


@dataclass(frozen=True)
class DumpSpec(ElementSpec):
    """A beam dump: absorbs all it receives (counted as dumped power)."""

    kind: NodeKind = NodeKind.DUMP

    @property
    def output_ports(self) -> tuple[str | None, ...]:
        return ()


@dataclass(frozen=True)
class SwitchSpec(ElementSpec):
    """A switch: several inputs, one output; ``select`` fixes the live input."""

    kind: NodeKind = NodeKind.SWITCH
    efficiency: float = 1.0
    select: str | None = None
    select_location: Location | None = field(default=None, compare=False)

    @property
    def single_input(self) -> bool:
        return False


@dataclass(frozen=True)
class DemandSpec:
    """A scanner's process and tool, from which its IF power need is derived.

    ``tool`` holds (field, value) pairs in SI units, named like the fields of
    :class:`beamplan.physics.demand.ScannerTool`; absent fields take its
    defaults. The stochastic floor applies when ``critical_area_m2`` is given.
    """

    dose_j_m2: float
    wafers_per_hour: float
    tool: tuple[tuple[str, float], ...] = ()
    train_multilayer: MultilayerSpec | None = None  # computes the IF-to-wafer mirrors' R
    train_incidence_rad: float = 0.0
    critical_area_m2: float | None = None
    resist_absorption_per_m: float | None = None
    resist_thickness_m: float | None = None
    noise: float | None = None
    profile: str | None = None


@dataclass(frozen=True)
class ScannerSpec:
    """A scanner's entrance port at its intermediate focus (IF).

    Attributes
    ----------
    need_w
        The IF power it needs, in W, or ``None`` when ``demand`` derives it.
    max_w
        The most IF power it accepts, or ``None``.
    priority
        Its tier for the ``priority`` goal; 1 is served first.
    cap_at_useful
        Whether its useful ceiling (see :func:`beamplan.physics.demand.useful_ceiling_w`)
        bounds what it gets; only scanners given by dose and wph have one.
    """

    id: str
    need_w: float | None
    max_w: float | None = None
    priority: int = 1
    note: str = ""
    location: Location = _NOWHERE
    demand: DemandSpec | None = None
    in_use: bool = True
    cap_at_useful: bool = True


@dataclass(frozen=True)
class LinkSpec:
    """One link of a beamline, from ``tail`` (output ``port``) to ``head``."""

    tail: str
    head: str
    port: str | None = None
    tail_location: Location = _NOWHERE
    head_location: Location = _NOWHERE

    @property
    def label(self) -> str:
        """The link as a user writes it, e.g. ``t1.pick -> a1``."""
        tail = f"{self.tail}.{self.port}" if self.port else self.tail
        return f"{tail} -> {self.head}"


@dataclass(frozen=True)
class Layout:
    """A loaded, schema-valid layout (graph checks come with the network).

    Examples
    --------
    >>> lay = Layout(name="demo", file="demo.yaml", wavelength_m=13.5e-9,
    ...              sources=(SourceSpec("s", 1000.0),), elements=(),
    ...              scanners=(ScannerSpec("x", 100.0),), links=(LinkSpec("s", "x"),))
    >>> lay.node_ids
    ('s', 'x')
    """

    name: str
    file: str
    wavelength_m: float
    sources: tuple[SourceSpec, ...]
    elements: tuple[ElementSpec, ...]
    scanners: tuple[ScannerSpec, ...]
    links: tuple[LinkSpec, ...]
    format: int = 1
    note: str = ""
    sha256: str = ""
    warnings: tuple[Diagnostic, ...] = field(default=(), compare=False)

    @property
    def node_ids(self) -> tuple[str, ...]:
        """Every id: sources, elements, scanners, in file order."""
        return (*(s.id for s in self.sources), *(e.id for e in self.elements),
                *(s.id for s in self.scanners))

    @functools.cached_property
    def by_id(self) -> dict[str, SourceSpec | ElementSpec | ScannerSpec]:
        """Look up any source, element or scanner by id."""
        table: dict[str, SourceSpec | ElementSpec | ScannerSpec] = {}
        for group in (self.sources, self.elements, self.scanners):
            for item in group:
                table[item.id] = item
        return table
