"""Solver back ends behind one small interface: a live HiGHS model, or CBC.

The pulp model is built once. :class:`HighsBackend` hands it to HiGHS in
process (through highspy) and then changes costs, bounds and coefficients on
the live model, so re-solves are warm-started. :class:`CbcBackend` applies
the same edits to the pulp model and solves it with pulp's bundled CBC; it is
the fallback where highspy is missing.

Both work in our own column and row numbers (the build order of
:class:`~beamplan.optimise.lp.LpModel`), and both solve minimisations only,
so dual values have one sign convention: a row's dual is the rate of change
of the objective with its right-hand side.
"""

from __future__ import annotations

import contextlib
import os
import warnings
from collections.abc import Iterator, Mapping
from dataclasses import dataclass
from typing import Protocol

import numpy as np

from beamplan.optimise.lp import LpModel

__all__ = ["Backend", "CbcBackend", "HighsBackend", "RawSolution", "make_backend"]

INF = float("inf")


@dataclass(frozen=True)
class RawSolution:
    """What a solve returns, in our column and row order."""

    status: str  # "optimal", "infeasible", "unbounded", "error"
    objective: float
    columns: np.ndarray
    row_duals: np.ndarray


class Backend(Protocol):
    """The operations the goals need."""

    name: str
    version: str
    freeze_slack: float
    freeze_abs_w: float

    def set_objective(self, costs: Mapping[int, float]) -> None:
        """Replace the objective: minimise Σ cost × column."""

    def set_bounds(self, col: int, low: float, high: float) -> None:
        """Set a column's bounds."""

    def set_rhs(self, row: int, value: float) -> None:
        """Set the right-hand side of a one-sided or equality row."""

    def set_coefficient(self, row: int, col: int, value: float) -> None:
        """Set one matrix coefficient."""

    def solve(self) -> RawSolution:
        """Solve and return the solution."""


@contextlib.contextmanager
def quiet_stdout() -> Iterator[None]:
    """Send file descriptor 1 to /dev/null: HiGHS prints a banner from C code."""
    try:
        fd = os.dup(1)
    except OSError:  # no stdout at all
        yield
        return
    try:
        with open(os.devnull, "w") as null:
            os.dup2(null.fileno(), 1)
            yield
    finally:
        os.dup2(fd, 1)
        os.close(fd)


class HighsBackend:
    """A live in-process HiGHS model built from the pulp model."""

    name = "HiGHS"
    freeze_slack = 1e-9
    freeze_abs_w = 1e-8
    # Sweeps re-set every demand row for each case: skip coefficients that do not change
    # and pass the right-hand sides to HiGHS in one call before each solve. Same LP, same
    # answers; False makes every edit a HiGHS call at once.
    batch_edits = True

    def __init__(self, model: LpModel) -> None:
        import highspy
        import pulp

        self._highspy = highspy
        solver = pulp.HiGHS(msg=False)
        with quiet_stdout():
            solver.createAndConfigureSolver(model.problem)
        self.highs = model.problem.solverModel
        for option, value in (("output_flag", False), ("primal_feasibility_tolerance", 1e-10),
                              ("dual_feasibility_tolerance", 1e-10),
                              ("simplex_dual_edge_weight_strategy", 1)):
            self.highs.setOptionValue(option, value)
        solver.buildSolverModel(model.problem)
        self.col = np.array([v.index for v in model.columns], dtype=np.int64)
        self.row = np.array([r.index for r in model.rows], dtype=np.int64)
        self.senses = [r.sense for r in model.rows]
        self._sense = np.array(self.senses, dtype=np.int64)
        self._rhs_now: dict[int, float] = {}  # right-hand sides applied, by our row
        self._rhs_todo: dict[int, float] = {}  # set since the last solve
        self._coef_now: dict[tuple[int, int], float] = {}
        self._warm = False
        self.ncols = len(model.columns)
        self.version = (f"{self.highs.versionMajor()}.{self.highs.versionMinor()}."
                        f"{self.highs.versionPatch()}")

    def set_objective(self, costs: Mapping[int, float]) -> None:
        values = np.zeros(self.ncols)
        for col, cost in costs.items():
            values[col] = cost
        self.highs.changeColsCost(self.ncols, self.col, values)

    def set_bounds(self, col: int, low: float, high: float) -> None:
        self.highs.changeColBounds(int(self.col[col]), low, high)

    def set_rhs(self, row: int, value: float) -> None:
        if self.batch_edits:
            self._rhs_todo[row] = value
            return
        sense = self.senses[row]
        low = value if sense >= 0 else -INF
        high = value if sense <= 0 else INF
        self.highs.changeRowBounds(int(self.row[row]), low, high)

    def set_coefficient(self, row: int, col: int, value: float) -> None:
        if self.batch_edits:
            if self._coef_now.get((row, col)) == value:
                return
            self._coef_now[(row, col)] = value
        self.highs.changeCoeff(int(self.row[row]), int(self.col[col]), value)

    def _apply_rhs(self) -> None:
        """Pass the right-hand sides set since the last solve that changed, in one call."""
        now = self._rhs_now
        todo = {r: v for r, v in self._rhs_todo.items() if now.get(r) != v}
        self._rhs_todo.clear()
        if not todo:
            return
        now.update(todo)
        rows = np.fromiter(todo, dtype=np.int64, count=len(todo))
        values = np.fromiter(todo.values(), dtype=np.float64, count=len(todo))
        sense = self._sense[rows]
        low = np.where(sense >= 0, values, -INF)
        high = np.where(sense <= 0, values, INF)
        self.highs.changeRowsBounds(len(todo), self.row[rows].astype(np.int32), low, high)

    def solve(self) -> RawSolution:
        status_enum = self._highspy.HighsModelStatus
        self._apply_rhs()
        self.highs.run()
        status = self.highs.getModelStatus()
        if status != status_enum.kOptimal and self._warm:
            # A warm start from a stale basis may misjudge the LP: solve it afresh.
            self.highs.setOptionValue("presolve", "on")
            self.highs.clearSolver()
            self.highs.run()
            status = self.highs.getModelStatus()
            self._warm = False
        if status != status_enum.kOptimal:
            # Simplex can lose its way when powers span many decades (a micro-watt
            # need beside a megawatt source): the interior-point solver copes.
            self.highs.setOptionValue("solver", "ipm")
            self.highs.clearSolver()
            self.highs.run()
            status = self.highs.getModelStatus()
            self.highs.setOptionValue("solver", "choose")
        if status == status_enum.kOptimal and not self._warm:
            # Presolve pays on a cold solve; re-solves of an edited model start from
            # the last optimal basis, and presolving them again costs a third more.
            self.highs.setOptionValue("presolve", "off")
            self._warm = True
        if status == status_enum.kOptimal:
            text = "optimal"
        elif status in (status_enum.kInfeasible, status_enum.kUnboundedOrInfeasible):
            text = "infeasible"
        elif status == status_enum.kUnbounded:
            text = "unbounded"
        else:
            text = "error"
        if text != "optimal":
            return RawSolution(text, float("nan"), np.empty(0), np.empty(0))
        solution = self.highs.getSolution()
        cols = np.asarray(solution.col_value)[self.col]
        duals = np.asarray(solution.row_dual)[self.row]
        return RawSolution(text, float(self.highs.getInfo().objective_function_value), cols,
                           duals)


class CbcBackend:
    """Apply edits to the pulp model and solve it with pulp's CBC (fallback)."""

    name = "CBC"
    freeze_slack = 1e-7  # CBC's solution file carries fewer digits
    freeze_abs_w = 1e-6

    def __init__(self, model: LpModel) -> None:
        import pulp

        self._pulp = pulp
        self.model = model
        self.version = str(getattr(pulp, "__version__", "?"))

    def set_objective(self, costs: Mapping[int, float]) -> None:
        pulp = self._pulp
        self.model.problem.setObjective(
            pulp.lpSum(cost * self.model.columns[col] for col, cost in costs.items()))

    def set_bounds(self, col: int, low: float, high: float) -> None:
        var = self.model.columns[col]
        var.lowBound = None if low == -INF else low
        var.upBound = None if high == INF else high

    def set_rhs(self, row: int, value: float) -> None:
        self.model.rows[row].changeRHS(value)

    def set_coefficient(self, row: int, col: int, value: float) -> None:
        row_obj = self.model.rows[row]
        row_obj.expr[self.model.columns[col]] = value
        row_obj.modified = True

    def solve(self) -> RawSolution:
        pulp = self._pulp
        problem = self.model.problem
        with warnings.catch_warnings():  # pulp 3.3 deprecates the bundled CBC for 4.0
            warnings.simplefilter("ignore", DeprecationWarning)
            status = problem.solve(pulp.PULP_CBC_CMD(msg=False))
        if status != pulp.LpStatusOptimal or problem.sol_status != 1:
            text = {pulp.LpStatusInfeasible: "infeasible",
                    pulp.LpStatusUnbounded: "unbounded"}.get(status, "error")
            return RawSolution(text, float("nan"), np.empty(0), np.empty(0))
        cols = np.array([v.varValue or 0.0 for v in self.model.columns])
        duals = np.array([r.pi or 0.0 for r in self.model.rows])
        return RawSolution("optimal", float(pulp.value(problem.objective) or 0.0), cols, duals)


def make_backend(model: LpModel, solver: str = "auto") -> Backend:
    """Pick a back end: ``"highs"``, ``"cbc"`` or ``"auto"`` (HiGHS when available).

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> from beamplan.optimise.lp import build_lp
    >>> lp = build_lp(build_network(load_layout("layouts/pilot-line.yaml")))
    >>> make_backend(lp).name
    'HiGHS'
    """
    if solver in ("auto", "highs"):
        try:
            return HighsBackend(model)
        except ImportError:
            if solver == "highs":
                raise
    return CbcBackend(model)
