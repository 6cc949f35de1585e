"""The frozen domain model of a layout, as loaded and validated from YAML.

These objects are plain data: they say what the user wrote, in SI units.
Physics that turns them into gains lives in :mod:`beamplan.physics` and the
graph built from them in :mod:`beamplan.network`.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field

from beamplan.errors import Diagnostic, Location

__all__ = [
    "AttenuatorSpec",
    "DriftSpec",
    "DumpSpec",
    "ElementSpec",
    "Layout",
    "LinkSpec",
    "MirrorSpec",
    "OutputSpec",
    "ScannerSpec",
    "SourceSpec",
    "SplitterSpec",
    "SwitchSpec",
]

_NOWHERE = Location("<layout>", 1, 1)


@dataclass(frozen=True)
class SourceSpec:
    """A light source: the power available at its exit, in W."""

    id: str
    power_w: float
    electrical_w: float | None = None
    note: str = ""
    location: Location = _NOWHERE


@dataclass(frozen=True)
class ElementSpec:
    """Base of every optic or beamline element.

    Attributes
    ----------
    id
        The element's id, unique across the layout.
    kind
        The element kind (``mirror``, ``splitter``, ...).
    heat_limit_w
        The most power the element may absorb, or ``None`` for no limit.
    part
        The part (template) it was made from, if any.
    """

    id: str
    kind: str = ""
    heat_limit_w: float | None = None
    part: str | None = None
    note: str = ""
    location: Location = _NOWHERE

    @property
    def single_input(self) -> bool:
        """Whether the kind takes exactly one incoming link."""
        return True

    @property
    def output_ports(self) -> tuple[str | None, ...]:
        """The names of its outputs; ``(None,)`` for one unnamed output."""
        return (None,)


@dataclass(frozen=True)
class MirrorSpec(ElementSpec):
    """A mirror with a fixed reflectivity (a fraction in [0, 1])."""

    reflectivity: float = 1.0


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

    outputs: tuple[OutputSpec, ...] = ()

    @property
    def output_ports(self) -> tuple[str | None, ...]:
        return tuple(o.name for o in self.outputs)


@dataclass(frozen=True)
class AttenuatorSpec(ElementSpec):
    """An attenuator with a fixed (min == max) or adjustable transmission."""

    transmission_min: float = 1.0
    transmission_max: float = 1.0


@dataclass(frozen=True)
class DriftSpec(ElementSpec):
    """A drift section (vacuum pipe) with a fixed transmission."""

    transmission: float = 1.0


@dataclass(frozen=True)
class DumpSpec(ElementSpec):
    """A beam dump: absorbs all it receives (counted as dumped power)."""

    @property
    def output_ports(self) -> tuple[str | None, ...]:
        return ()


@dataclass(frozen=True)
class SwitchSpec(ElementSpec):
    """A switch: several inputs, one output; ``select`` fixes the live input."""

    efficiency: float = 1.0
    select: str | None = None

    @property
    def single_input(self) -> bool:
        return False


@dataclass(frozen=True)
class ScannerSpec:
    """A scanner's entrance port at its intermediate focus (IF).

    Attributes
    ----------
    need_w
        The IF power it needs, in W.
    max_w
        The most IF power it accepts, or ``None``.
    priority
        Its tier for the ``priority`` goal; 1 is served first.
    """

    id: str
    need_w: float
    max_w: float | None = None
    priority: int = 1
    note: str = ""
    location: Location = _NOWHERE


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
