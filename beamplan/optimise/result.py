"""The result of a plan: frozen records of every source, scanner and element.

The LP chooses the settings (source outputs, splitter shares, attenuator
transmissions); :func:`propagate` then pushes the source outputs through the
network with those settings, so every reported balance holds exactly, and
:func:`verify` checks the result against every constraint before anyone sees
it. A failed check is a bug and raises :class:`~beamplan.errors.InternalError`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from beamplan.errors import InternalError
from beamplan.network.behaviour import Behaviour, Port
from beamplan.network.graph import Network
from beamplan.vocabulary import Family, ScannerStatus

__all__ = [
    "Binding",
    "ElementResult",
    "Flows",
    "Losses",
    "Plan",
    "ScannerResult",
    "SourceResult",
    "propagate",
    "verify",
]

CONSERVATION_RTOL = 1e-9
IDLE_W = 1e-9  # below this an element's input is solver noise: it is idle
LIMIT_RTOL = 1e-6


@dataclass(frozen=True)
class SourceResult:
    """A source's available and drawn power.

    ``electrical_w`` is the wall-plug draw at the planned output (a fixed part
    plus a part per W of EUV, :func:`beamplan.physics.source.electrical_draw_w`;
    0 for a source that gives nothing), ``None`` when the layout gives none.
    """

    id: str
    available_w: float
    output_w: float
    electrical_w: float | None = None
    standby: bool = False  # no power can reach a scanner from it (a switch selects another)
    electrical_full_w: float | None = None  # the draw at full output
    electrical_fixed_w: float = 0.0
    surplus: str = "turn-down"


@dataclass(frozen=True)
class ScannerResult:
    """What a scanner gets. ``headroom`` is delivered ÷ need − 1."""

    id: str
    need_w: float
    delivered_w: float
    max_w: float | None
    priority: int
    headroom: float
    shortfall_w: float
    status: ScannerStatus
    limits: tuple[str, ...] = ()
    need_provenance: str = ""
    dose_j_m2: float | None = None
    dose_set_by: str | None = None
    target_wph: float | None = None
    achieved_wph: float | None = None
    throughput_limit: str | None = None  # "stage" or "power"
    useful_ceiling_w: float | None = None  # where the stage, not the light, sets wph
    max_power_w: float | None = None  # max_power as given (max_w is the bound used)
    over_delivery_reason: str = ""  # why it gets more than its need, in words


@dataclass(frozen=True)
class ElementResult:
    """An element's power balance and chosen setting.

    ``setting`` is the transmission of an attenuator, the share of the input
    per output for a splitter, else ``None``.
    """

    id: str
    kind: str
    incident_w: float
    absorbed_w: float
    output_w: float
    heat_limit_w: float | None
    heat_margin_w: float | None
    setting: float | tuple[tuple[str, float], ...] | None
    gain: float
    provenance: str = ""
    dumped_w: float = 0.0  # a switch's deselected inputs, stopped on its beam stop


@dataclass(frozen=True)
class Losses:
    """Where the source output goes; the parts sum to ``source_w``."""

    source_w: float
    delivered_w: float
    absorbed_w: float
    dumped_w: float
    by_kind: tuple[tuple[str, float], ...]
    residual_w: float


@dataclass(frozen=True)
class Binding:
    """A constraint that binds, with its shadow price in the goal's terms."""

    constraint: str
    family: Family
    subject: str
    description: str
    shadow_price: float
    unit: str
    meaning: str


@dataclass(frozen=True)
class Plan:
    """A verified allocation. The same fields as the JSON report."""

    layout: str
    file: str
    sha256: str
    goal: str
    status: ScannerStatus  # MET or SHORT
    headroom_factor: float
    sources: tuple[SourceResult, ...]
    scanners: tuple[ScannerResult, ...]
    elements: tuple[ElementResult, ...]
    losses: Losses
    binding: tuple[Binding, ...]
    solver: str
    solver_version: str
    stages: int
    warnings: tuple[str, ...] = field(default=())
    wavelength_m: float = 13.5e-9
    surplus_mode: str = "turn-down"  # what happens to light no scanner can use
    surplus_w: float = 0.0  # light sent to dumps or attenuators by that choice
    surplus_to: tuple[tuple[str, float], ...] = ()  # (element id, W) where it went

    @property
    def photon_energy_ev(self) -> float:
        """Photon energy at the layout wavelength (CODATA constants)."""
        from beamplan.physics.photons import photon_energy_ev

        return photon_energy_ev(self.wavelength_m)

    @property
    def photon_flux_per_watt(self) -> float:
        """Photons per second in one watt at the layout wavelength (CODATA constants)."""
        from beamplan.physics.photons import photon_flux_per_watt

        return photon_flux_per_watt(self.wavelength_m)

    @property
    def electrical_w(self) -> float | None:
        """Wall-plug draw of the sources at their planned output (None if none is given)."""
        known = [s.electrical_w for s in self.sources if s.electrical_w is not None]
        return sum(known) if known else None

    @property
    def electrical_per_delivered(self) -> float | None:
        """Wall-plug kW per kW of EUV delivered at the scanners, at the planned output."""
        electrical = self.electrical_w
        if electrical is None or electrical <= 0 or self.delivered_w <= 0:
            return None
        if any(s.electrical_w is None for s in self.sources if s.output_w > 0):
            return None  # unknown when a source in use does not give its electrical draw
        return electrical / self.delivered_w

    @property
    def unused_w(self) -> float:
        """Power the sources that can feed scanners leave unused (available − drawn)."""
        used = sum(s.output_w for s in self.sources if not s.standby)
        return max(self.source_available_w - used, 0.0)

    @property
    def source_used_w(self) -> float:
        """Total power drawn from the sources."""
        return sum(s.output_w for s in self.sources)

    @property
    def source_available_w(self) -> float:
        """Total power the sources that can feed scanners could give (standby excluded)."""
        return sum(s.available_w for s in self.sources if not s.standby)

    @property
    def standby_w(self) -> float:
        """Power of the sources on standby (deselected by a switch)."""
        return sum(s.available_w for s in self.sources if s.standby)

    @property
    def delivered_w(self) -> float:
        """Total power delivered at the scanners' IF."""
        return sum(s.delivered_w for s in self.scanners)

    @property
    def efficiency(self) -> float:
        """Delivered ÷ drawn (0 when nothing is drawn)."""
        used = self.source_used_w
        return self.delivered_w / used if used > 0 else 0.0

    @property
    def all_met(self) -> bool:
        """Whether every scanner gets its need."""
        return self.status == ScannerStatus.MET

    def scanner(self, scanner_id: str) -> ScannerResult:
        """Look up one scanner's result."""
        return next(s for s in self.scanners if s.id == scanner_id)

    def element(self, element_id: str) -> ElementResult:
        """Look up one element's result."""
        return next(e for e in self.elements if e.id == element_id)


@dataclass(frozen=True)
class Flows:
    """Exactly propagated powers: per link, and per node incident/absorbed."""

    link_w: tuple[float, ...]
    incident_w: dict[str, float]
    absorbed_w: dict[str, float]
    settings: dict[str, float | tuple[tuple[str, float], ...] | None]
    dumped_w: dict[str, float] = field(default_factory=dict)  # stopped at a switch's beam stop


def _idle_fractions(ports: tuple[Port, ...]) -> list[float]:
    """Shares of a splitter that receives nothing: lower bounds, topped up within bounds."""
    fractions = [p.fraction_min for p in ports]
    spare = 1.0 - sum(fractions)
    for i, port in enumerate(ports):
        add = min(spare, port.fraction_max - port.fraction_min)
        fractions[i] += add
        spare -= add
    return fractions


def _within_bounds(fractions: list[float], ports: tuple[Port, ...]) -> list[float]:
    """LP share ratios moved onto their bounds where round-off pushed them out.

    With almost no input a share ratio is round-off; clip each to its bounds,
    then spread what the sum misses over the outputs that have room.
    """
    out = [min(max(f, p.fraction_min), p.fraction_max) for f, p in
           zip(fractions, ports, strict=True)]
    miss = 1.0 - sum(out)
    for i, port in enumerate(ports):
        room = (port.fraction_max - out[i]) if miss > 0 else (port.fraction_min - out[i])
        step = min(miss, room) if miss > 0 else max(miss, room)
        out[i] += step
        miss -= step
    return out


def propagate(network: Network, source_w: dict[str, float],
              lp_link_w: list[float], lp_share_w: dict[tuple[str, str | None], float]) -> Flows:
    """Push source outputs through the network with the LP's settings.

    Settings are read from the LP solution as ratios (output ÷ input for an
    attenuator, share ÷ input for a splitter output) and re-applied in
    topological order, so each element's balance holds to round-off. A switch
    passes gain × its selected input; what arrives on its other inputs is
    dumped there (``Flows.dumped_w``), not absorbed.
    """
    link = [0.0] * len(network.links)
    incident: dict[str, float] = {}
    absorbed: dict[str, float] = {}
    settings: dict[str, float | tuple[tuple[str, float], ...] | None] = {}
    dumped: dict[str, float] = {}
    in_links = network.in_links
    for node in network.nodes:
        into = in_links[node.id]
        inflow = link[into[0].index] if len(into) == 1 else sum(link[lk.index] for lk in into)
        b = node.behaviour
        if b is Behaviour.SOURCE:
            inflow = max(source_w[node.id], 0.0)
        incident[node.id] = inflow
        if b is Behaviour.SOURCE:
            out = network.out_link.get((node.id, None))
            if out is not None:
                link[out.index] = inflow
            absorbed[node.id] = 0.0 if out is not None else inflow
        elif b in (Behaviour.GAIN, Behaviour.COMBINE, Behaviour.RANGE):
            gain = node.gain_max
            if b is Behaviour.COMBINE and node.select is not None:
                stopped = sum(link[lk.index] for lk in into if lk.tail != node.select)
                dumped[node.id] = stopped
                inflow -= stopped  # a deselected input ends on the switch's beam stop
            if b is Behaviour.RANGE:
                lp_in = sum(lp_link_w[lk.index] for lk in into)
                lp_out = lp_link_w[network.out_link[(node.id, None)].index]
                gain = min(max(lp_out / lp_in, node.gain_min), node.gain_max) \
                    if lp_in > IDLE_W else node.gain_max
                settings[node.id] = gain
            link[network.out_link[(node.id, None)].index] = gain * inflow
            absorbed[node.id] = inflow - gain * inflow
        elif b is Behaviour.SPLIT:
            shares = [max(lp_share_w[(node.id, p.name)], 0.0) for p in node.ports]
            total = sum(shares)
            fractions = (_within_bounds([s / total for s in shares], node.ports)
                         if total > IDLE_W else _idle_fractions(node.ports))
            settings[node.id] = tuple((str(p.name), f)
                                      for p, f in zip(node.ports, fractions, strict=True))
            lost = 0.0
            for port, fraction in zip(node.ports, fractions, strict=True):
                share = fraction * inflow
                link[network.out_link[(node.id, port.name)].index] = port.efficiency * share
                lost += share - port.efficiency * share
            absorbed[node.id] = lost
        else:  # ABSORB and SINK keep what they get
            absorbed[node.id] = inflow
    return Flows(tuple(link), incident, absorbed, settings, dumped)


def verify(plan: Plan, network: Network) -> None:
    """Check a plan against conservation and every limit; raise on a violation.

    Source output = delivered + absorbed + dumped to 1e-9 relative; heat
    limits, max_power, source availability and splitter share bounds to 1e-6
    relative.
    """
    problems: list[str] = []
    total = plan.source_used_w
    scale = max(total, 1.0)
    loss = plan.losses
    balance = loss.delivered_w + loss.absorbed_w + loss.dumped_w
    if abs(total - balance) > CONSERVATION_RTOL * scale:
        problems.append(f"conservation: source {total!r} W != delivered + absorbed + dumped "
                        f"{balance!r} W")
    for s in plan.sources:
        if s.output_w > s.available_w * (1 + LIMIT_RTOL) + LIMIT_RTOL:
            problems.append(f"source {s.id} draws {s.output_w} W of {s.available_w} W")
    for e in plan.elements:
        if abs(e.incident_w - e.absorbed_w - e.dumped_w - e.output_w) > \
                CONSERVATION_RTOL * scale:
            problems.append(f"element {e.id} balance: {e.incident_w} != {e.absorbed_w} + "
                            f"{e.dumped_w} + {e.output_w}")
        if e.heat_limit_w is not None and \
                e.absorbed_w > e.heat_limit_w * (1 + LIMIT_RTOL) + LIMIT_RTOL:
            problems.append(f"element {e.id} absorbs {e.absorbed_w} W over {e.heat_limit_w} W")
        node = network.node[e.id]
        if node.behaviour is Behaviour.SPLIT and isinstance(e.setting, tuple):
            for port, (_, fraction) in zip(node.ports, e.setting, strict=True):
                if not port.fraction_min - LIMIT_RTOL <= fraction <= \
                        port.fraction_max + LIMIT_RTOL:
                    problems.append(f"splitter {e.id} output {port.name} share {fraction} "
                                    f"outside [{port.fraction_min}, {port.fraction_max}]")
    for sc in plan.scanners:
        if sc.max_w is not None and sc.delivered_w > sc.max_w * (1 + LIMIT_RTOL) + LIMIT_RTOL:
            problems.append(f"scanner {sc.id} gets {sc.delivered_w} W over max {sc.max_w} W")
    if problems:
        raise InternalError("the plan failed its own checks (a bug in beamplan, please "
                            "report it with the layout): " + "; ".join(problems))
