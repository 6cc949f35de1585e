"""Check that the powers of a network lie where the LP solves them reliably.

The LP works in watts with the solver's tolerances of about 1e-10 (relative
to the largest entries). Powers far outside the physical range of an EUV
facility (a micro-watt to ten megawatts for sources, needs and limits) make
it fail or give meaningless answers, so they are refused before solving,
with the range in the message.
"""

from __future__ import annotations

import math

from beamplan.errors import Diagnostic, LayoutError
from beamplan.network.graph import Network

__all__ = ["MAX_POWER_W", "MIN_POWER_W", "check_magnitudes", "solver_failure"]

MIN_POWER_W = 1e-6
MAX_POWER_W = 1e7
_RANGE = "between 1 µW (1e-6 W) and 10 MW (1e7 W)"


def _bad(value: float | None, zero_ok: bool) -> bool:
    if value is None:
        return False
    if not math.isfinite(value):
        return True
    if value == 0.0 and zero_ok:
        return False
    return not MIN_POWER_W <= value <= MAX_POWER_W


def check_magnitudes(network: Network) -> None:
    """Refuse source powers, needs and limits outside 1 µW to 10 MW.

    Zero stays allowed where it means "none" (a source given 0 W, a heat limit
    or max_power of 0 W).

    Raises
    ------
    LayoutError
        One located diagnostic per value out of range (exit code 1).

    Examples
    --------
    >>> import beamplan
    >>> from beamplan.network.graph import build_network
    >>> check_magnitudes(build_network(beamplan.load("layouts/pilot-line.yaml")))
    """
    problems = []

    def refuse(node_id: str, kind: str, what: str, value: float, where: object) -> None:
        shown = f"{value:.3g} W" if math.isfinite(value) else repr(value)
        problems.append(Diagnostic(
            "error", "out-of-range", f"{kind} '{node_id}': {what} {shown} is outside the range "
            f"the planner handles ({_RANGE})", where,  # type: ignore[arg-type]
            "give a power in that range; check its unit and any --scale"))

    for node in network.nodes:
        if node.is_source and _bad(node.available_w, True):
            refuse(node.id, "source", "power", node.available_w, node.location)
        if node.is_scanner and node.in_use and _bad(node.need_w, False):
            refuse(node.id, "scanner", "need", node.need_w, node.location)
        if node.is_scanner and _bad(node.max_given_w, True):
            refuse(node.id, "scanner", "max_power", node.max_given_w or 0.0, node.location)
        if _bad(node.heat_limit_w, True):
            refuse(node.id, node.kind, "heat_limit", node.heat_limit_w or 0.0, node.location)
    problems += _wall_plug(network)
    if problems:
        raise LayoutError(problems)


def _wall_plug(network: Network) -> list[Diagnostic]:
    """A source's electrical draw must cover its EUV output (a case may change either)."""
    out = []
    for node in network.sources:
        full, fixed = node.electrical_w, node.electrical_fixed_w
        if full is None or not node.in_use:
            continue
        if not (math.isfinite(full) and full > 0 and full >= node.available_w):
            out.append(Diagnostic(
                "error", "out-of-range", f"source '{node.id}': electrical draw {full:.3g} W at "
                f"full output is below its EUV power {node.available_w:.3g} W", node.location,
                "a source cannot give more light than it draws; raise 'electrical'"))
        elif fixed > full:
            out.append(Diagnostic(
                "error", "out-of-range", f"source '{node.id}': electrical_fixed {fixed:.3g} W is "
                f"above the draw at full output {full:.3g} W", node.location,
                "the fixed part is part of the draw at full output"))
    return out


def solver_failure(stage: int, status: str) -> LayoutError:
    """The user-facing error for an LP stage that the solver could not finish.

    Examples
    --------
    >>> print(solver_failure(2, "unbounded"))  # doctest: +ELLIPSIS
    error: the LP solver could not finish stage 2 of the plan (it ended unbounded); ...
    """
    return LayoutError([Diagnostic(
        "error", "solver-failed",
        f"the LP solver could not finish stage {stage} of the plan (it ended {status})", None,
        f"keep powers {_RANGE} and gains and efficiencies not far below 1e-6, then try "
        "again; if the layout is within those ranges, please report it")])
