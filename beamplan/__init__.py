"""beamplan: plan how one shared EUV source feeds many lithography scanners.

The Python API for notebooks and scripts::

    import beamplan
    layout = beamplan.load("layouts/pilot-line.yaml")
    plan = beamplan.plan(layout, goal="headroom")
    plan.headroom_factor

Results are planning estimates, not a safety system.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from beamplan.vocabulary import Goal, Solver

__version__ = "0.1.0"
__all__ = ["__version__", "load", "plan"]

if TYPE_CHECKING:
    from beamplan.layout.model import Layout
    from beamplan.optimise.result import Plan


def __dir__() -> list[str]:
    """The public names only (not the typing helpers this module uses)."""
    return sorted(__all__)


def load(path: str) -> Layout:
    """Load and validate a layout file (schema and graph checks).

    Raises
    ------
    beamplan.errors.LayoutError
        With every problem found, each located.

    Examples
    --------
    >>> load("layouts/pilot-line.yaml").name
    'pilot-line'
    """
    from beamplan.layout.loader import load_layout
    from beamplan.network.graph import build_network

    layout = load_layout(path)
    build_network(layout)  # graph checks
    return layout


def plan(layout: Any, goal: Goal | str = Goal.HEADROOM, solver: Solver | str = Solver.AUTO) -> Plan:
    """Plan a layout (a :class:`~beamplan.layout.model.Layout`, network or path).

    Parameters
    ----------
    layout
        A loaded layout, a built network, or a path to a layout file.
    goal
        ``"headroom"`` (default), ``"min-source"`` or ``"priority"``.
    solver
        ``"auto"`` (HiGHS in process, CBC where highspy is missing),
        ``"highs"`` or ``"cbc"``.

    Returns
    -------
    beamplan.optimise.result.Plan
        A frozen, verified result with the same fields as the JSON report.

    Examples
    --------
    >>> result = plan(load("layouts/pilot-line.yaml"), goal="min-source")
    >>> result.status
    'met'
    """
    from beamplan.layout.loader import load_layout
    from beamplan.layout.model import Layout
    from beamplan.network.graph import Network, build_network
    from beamplan.optimise.planner import plan_network

    if isinstance(layout, str):
        layout = load_layout(layout)
    network = layout if isinstance(layout, Network) else build_network(layout)
    if not isinstance(layout, (Layout, Network)):
        raise TypeError("plan() takes a Layout, a Network or a path")
    return plan_network(network, goal, solver)
