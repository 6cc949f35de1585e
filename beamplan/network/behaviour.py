"""What each element kind does to power: its behaviour in the network.

This is the one place where an element kind meets its physics. Every kind
maps to one of a few behaviours that the optimiser knows:

* ``GAIN``: output = g × input (mirror, drift, fixed attenuator);
* ``RANGE``: g_min × input ≤ output ≤ g_max × input (adjustable attenuator);
* ``SPLIT``: shares s_k of the input, Σ s_k = input, bounded per output,
  each output = efficiency_k × s_k (splitter);
* ``COMBINE``: output = efficiency × Σ inputs (switch);
* ``ABSORB``: takes all of its input (dump);
* ``SOURCE`` and ``SINK`` for sources and scanners.
"""

from __future__ import annotations

import enum
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from typing import Any

from beamplan.errors import Location
from beamplan.layout.model import (
    AttenuatorSpec,
    DriftSpec,
    DumpSpec,
    ElementSpec,
    MirrorSpec,
    ScannerSpec,
    SourceSpec,
    SplitterSpec,
    SwitchSpec,
)
from beamplan.network.derive import drift_transmission, mirror_gain, scanner_demand, source_check
from beamplan.vocabulary import NodeKind

__all__ = ["Behaviour", "Node", "Optics", "Port", "derated", "element_node", "out_of_service",
           "scanner_node", "source_node"]


class Behaviour(enum.Enum):
    """How a node moves power (see the module docstring)."""

    SOURCE = "source"
    GAIN = "gain"
    RANGE = "range"
    SPLIT = "split"
    COMBINE = "combine"
    ABSORB = "absorb"
    SINK = "sink"


@dataclass(frozen=True)
class Port:
    """One output of a node: its efficiency and the bounds of its share."""

    name: str | None
    efficiency: float = 1.0
    fraction_min: float = 0.0
    fraction_max: float = 1.0
    location: Location | None = field(default=None, compare=False)


_NOWHERE = Location("<layout>", 1, 1)


@dataclass(frozen=True)
class Node:
    """A node of the network with everything the optimiser needs.

    Attributes
    ----------
    gain_min, gain_max
        The gain (output over input) range; equal for a fixed gain.
    provenance
        Where the gain came from, in words ("given in the layout", ...).
    max_w
        A scanner's upper bound in the LP: the lower of its ``max_power``
        (``max_given_w``) and its useful ceiling (``ceiling_w``) unless it opts
        out of the ceiling; ``None`` for no bound.
    electrical_w, electrical_fixed_w
        A source's wall-plug draw at full output and the part of it that does
        not scale with the EUV given.
    """

    id: str
    kind: NodeKind
    behaviour: Behaviour
    gain_min: float = 1.0
    gain_max: float = 1.0
    ports: tuple[Port, ...] = (Port(None),)
    heat_limit_w: float | None = None
    available_w: float = 0.0
    electrical_w: float | None = None
    need_w: float = 0.0
    max_w: float | None = None
    priority: int = 1
    select: str | None = None
    provenance: str = ""
    location: Location = _NOWHERE
    demand: Any = None  # beamplan.network.derive.ScannerDemand for scanners with a model
    in_use: bool = True
    select_location: Location | None = field(default=None, compare=False)
    electrical_fixed_w: float = 0.0
    surplus: str = "turn-down"
    ceiling_w: float | None = None
    max_given_w: float | None = None
    cap_at_useful: bool = True

    @property
    def is_source(self) -> bool:
        """Whether the node is a source."""
        return self.behaviour is Behaviour.SOURCE

    @property
    def is_scanner(self) -> bool:
        """Whether the node is a scanner."""
        return self.behaviour is Behaviour.SINK

    @property
    def adjustable(self) -> bool:
        """Whether the optimiser chooses a setting here."""
        if self.behaviour is Behaviour.RANGE:
            return self.gain_max > self.gain_min
        if self.behaviour is Behaviour.SPLIT:
            return any(p.fraction_max > p.fraction_min for p in self.ports)
        return False


GIVEN = "given in the layout"


@dataclass(frozen=True)
class Optics:
    """What the physics of an element depends on beyond its own spec."""

    wavelength_m: float = 13.5e-9
    s_polarisation: float = 0.0


def _mirror(spec: ElementSpec, optics: Optics) -> dict[str, object]:
    assert isinstance(spec, MirrorSpec)
    gain, how = mirror_gain(spec, optics.wavelength_m, optics.s_polarisation)
    return {"behaviour": Behaviour.GAIN, "gain_min": gain, "gain_max": gain,
            "provenance": how}


def _drift(spec: ElementSpec, optics: Optics) -> dict[str, object]:
    assert isinstance(spec, DriftSpec)
    gain, how = drift_transmission(spec, optics.wavelength_m)
    return {"behaviour": Behaviour.GAIN, "gain_min": gain, "gain_max": gain,
            "provenance": how}


def _attenuator(spec: ElementSpec, optics: Optics) -> dict[str, object]:
    assert isinstance(spec, AttenuatorSpec)
    fixed = spec.transmission_min == spec.transmission_max
    return {"behaviour": Behaviour.GAIN if fixed else Behaviour.RANGE,
            "gain_min": spec.transmission_min, "gain_max": spec.transmission_max,
            "provenance": GIVEN}


def _splitter(spec: ElementSpec, optics: Optics) -> dict[str, object]:
    assert isinstance(spec, SplitterSpec)
    ports = tuple(Port(o.name, o.efficiency, o.fraction_min, o.fraction_max, o.location)
                  for o in spec.outputs)
    return {"behaviour": Behaviour.SPLIT, "ports": ports, "provenance": GIVEN}


def _switch(spec: ElementSpec, optics: Optics) -> dict[str, object]:
    assert isinstance(spec, SwitchSpec)
    return {"behaviour": Behaviour.COMBINE, "gain_min": spec.efficiency,
            "gain_max": spec.efficiency, "select": spec.select, "provenance": GIVEN,
            "select_location": spec.select_location}


def _dump(spec: ElementSpec, optics: Optics) -> dict[str, object]:
    assert isinstance(spec, DumpSpec)
    return {"behaviour": Behaviour.ABSORB, "gain_min": 0.0, "gain_max": 0.0, "ports": ()}


BEHAVIOURS: dict[type[ElementSpec], Callable[[ElementSpec, Optics], dict[str, object]]] = {
    MirrorSpec: _mirror,
    DriftSpec: _drift,
    AttenuatorSpec: _attenuator,
    SplitterSpec: _splitter,
    SwitchSpec: _switch,
    DumpSpec: _dump,
}


def element_node(spec: ElementSpec, optics: Optics | None = None) -> Node:
    """The network node of an element, with its behaviour and gain.

    Raises
    ------
    ValueError
        When its physics cannot be computed (unknown coating, bad geometry).

    Examples
    --------
    >>> element_node(MirrorSpec("m1", reflectivity=0.9)).gain_max
    0.9
    >>> element_node(AttenuatorSpec("a1", transmission_min=0.2,
    ...                             transmission_max=1.0)).behaviour
    <Behaviour.RANGE: 'range'>
    """
    fields = BEHAVIOURS[type(spec)](spec, optics or Optics())
    node = Node(id=spec.id, kind=spec.kind, heat_limit_w=spec.heat_limit_w,
                location=spec.location, **fields)  # type: ignore[arg-type]
    if spec.derate != 1.0:
        node = derated(node, spec.derate)
    return node if spec.in_use else out_of_service(node)


def derated(node: Node, factor: float) -> Node:
    """The node with its gains (or output efficiencies) multiplied by ``factor``.

    Examples
    --------
    >>> derated(Node("m1", NodeKind.MIRROR, Behaviour.GAIN, 0.9, 0.9), 0.5).gain_max
    0.45
    """
    how = f"{node.provenance}, derated × {factor:g}" if node.provenance else f"derated × {factor:g}"
    if node.behaviour is Behaviour.SPLIT:
        ports = tuple(replace(p, efficiency=p.efficiency * factor) for p in node.ports)
        return replace(node, ports=ports, provenance=how)
    if node.behaviour in (Behaviour.GAIN, Behaviour.RANGE, Behaviour.COMBINE):
        return replace(node, gain_min=node.gain_min * factor, gain_max=node.gain_max * factor,
                       provenance=how)
    return node


def out_of_service(node: Node) -> Node:
    """The node as an outage: no power passes it.

    An element absorbs whatever still reaches it (counted as dumped, with no
    heat limit); a source gives nothing; a scanner takes no need and whatever
    reaches its closed port is dumped. This is the one definition: a live
    model's in-place edits for sweeps are derived from it
    (:meth:`beamplan.optimise.live.LiveModel.outage_edits`).

    Examples
    --------
    >>> mirror = Node("m1", NodeKind.MIRROR, Behaviour.GAIN, 0.9, 0.9, heat_limit_w=5.0)
    >>> node = out_of_service(mirror)
    >>> node.gain_max, node.heat_limit_w, node.in_use
    (0.0, None, False)
    """
    if node.is_source:
        return replace(node, available_w=0.0, in_use=False)
    if node.is_scanner:
        return replace(node, in_use=False)
    ports = tuple(replace(p, efficiency=0.0) for p in node.ports)
    return replace(node, gain_min=0.0, gain_max=0.0, ports=ports, heat_limit_w=None,
                   in_use=False)


def source_node(spec: SourceSpec, wavelength_m: float = 13.5e-9) -> Node:
    """The network node of a source (its undulator checked when it has one).

    Examples
    --------
    >>> source_node(SourceSpec("fel", 1e4)).available_w
    10000.0
    """
    node = Node(id=spec.id, kind=NodeKind.SOURCE, behaviour=Behaviour.SOURCE,
                available_w=spec.power_w, electrical_w=spec.electrical_w,
                electrical_fixed_w=spec.electrical_fixed_w, surplus=spec.surplus,
                provenance=source_check(spec, wavelength_m), location=spec.location)
    return node if spec.in_use else out_of_service(node)


def scanner_node(spec: ScannerSpec, wavelength_m: float = 13.5e-9) -> Node:
    """The network node of a scanner; its need comes from its demand model if needed.

    A scanner given by dose and wph has a useful ceiling (the IF power at which
    its stage, not the light, sets the throughput); it bounds what the scanner
    gets unless ``cap_at_useful`` is false. A lower ``max_power`` still wins.

    Examples
    --------
    >>> scanner_node(ScannerSpec("litho-01", 300.0, 500.0)).max_w
    500.0
    >>> from beamplan.layout.model import DemandSpec
    >>> node = scanner_node(ScannerSpec("litho-02", None, demand=DemandSpec(300.0, 150.0)))
    >>> round(node.ceiling_w, 1), node.max_w == node.ceiling_w
    (487.6, True)
    """
    demand = None if spec.demand is None else scanner_demand(spec.demand, wavelength_m)
    ceiling = None
    if spec.need_w is not None:
        need, how = spec.need_w, GIVEN
    else:
        assert demand is not None
        from beamplan.physics.demand import useful_ceiling_w

        need = demand.need_w
        ceiling = useful_ceiling_w(demand.tool, demand.dose_j_m2)  # type: ignore[arg-type]
        how = (f"from dose {demand.dose_j_m2 / 10:.1f} mJ/cm² ({demand.dose_set_by}) at "
               f"{demand.target_wph:g} wph: scanner throughput model")
    bound = spec.max_w
    if ceiling is not None and spec.cap_at_useful:
        bound = ceiling if bound is None else min(bound, ceiling)
    node = Node(id=spec.id, kind=NodeKind.SCANNER, behaviour=Behaviour.SINK, ports=(),
                need_w=need, max_w=bound, priority=spec.priority,
                provenance=how, location=spec.location, demand=demand,
                ceiling_w=ceiling, max_given_w=spec.max_w, cap_at_useful=spec.cap_at_useful)
    return node if spec.in_use else out_of_service(node)
