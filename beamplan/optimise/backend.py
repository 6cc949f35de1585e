"""Solver back ends behind one small interface: a live HiGHS model, or CBC.

The model is built once as sparse arrays. :class:`HighsBackend` passes them
to HiGHS in process (through highspy) and then changes costs, bounds and
coefficients on the live model, so re-solves are warm-started.
:class:`CbcBackend` applies the same edits to the model's pulp view and
solves it with pulp's bundled CBC; it is the fallback where highspy is
missing.

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
from typing import Any, Protocol

import numpy as np

from beamplan.optimise.lp import LpModel
from beamplan.vocabulary import Solver

__all__ = ["Backend", "CbcBackend", "HighsBackend", "RawSolution", "highs_lp", "highs_order",
           "make_backend"]

INF = float("inf")
LARGE_COLUMNS = 20_000  # from here on HiGHS gets the columns in build order (highs_order)


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


def highs_order(model: LpModel) -> np.ndarray:
    """The model's columns in the order HiGHS gets them.

    The build order (links in topological order, then shares and scanners)
    on large models; by name, as pulp hands columns to a solver, on small
    ones, so that a degenerate LP (several optima) ends at the same vertex as
    it always has. On a 10,000-scanner campus the name order made the first
    simplex solve fail (then the interior-point solver took twice as long).
    """
    if len(model.col_name) >= LARGE_COLUMNS:
        return np.arange(len(model.col_name), dtype=np.int64)
    return np.array(sorted(range(len(model.col_name)), key=model.col_name.__getitem__),
                    dtype=np.int64)


def highs_lp(model: LpModel, order: np.ndarray | None = None) -> Any:
    """The model as a ``highspy.HighsLp``: bounds and one column-wise sparse matrix.

    Column j of HiGHS is the model's column ``order[j]`` (default
    :func:`highs_order`); rows keep the model's numbers.
    """
    import highspy

    order = highs_order(model) if order is None else order
    inf = highspy.kHighsInf
    lp = highspy.HighsLp()
    lp.num_col_ = len(model.col_name)
    lp.num_row_ = len(model.row_info)
    lp.col_cost_ = np.zeros(lp.num_col_)
    lp.col_lower_ = np.clip(np.asarray(model.col_low, dtype=float), -inf, inf)[order]
    lp.col_upper_ = np.clip(np.asarray(model.col_high, dtype=float), -inf, inf)[order]
    lp.row_lower_ = np.clip(np.asarray(model.row_low, dtype=float), -inf, inf)
    lp.row_upper_ = np.clip(np.asarray(model.row_high, dtype=float), -inf, inf)
    starts, index, values = model.csc(order)
    lp.a_matrix_.format_ = highspy.MatrixFormat.kColwise
    lp.a_matrix_.start_ = starts
    lp.a_matrix_.index_ = index
    lp.a_matrix_.value_ = values
    return lp


def _within(value: float, low: float, high: float) -> bool:
    """Whether a value lies within bounds, to a feasibility tolerance."""
    give = 1e-9 * (1.0 + abs(value))
    return low - give <= value <= high + give


class HighsBackend:
    """A live in-process HiGHS model passed the model's sparse arrays directly."""

    name = "HiGHS"
    freeze_slack = 1e-9
    freeze_abs_w = 1e-8
    primal_resolves = True  # re-solve with primal simplex when the last optimum stays feasible
    # Sweeps re-set every demand row for each case: skip coefficients that do not change
    # and pass the right-hand sides to HiGHS in one call before each solve. Same LP, same
    # answers; False makes every edit a HiGHS call at once.
    batch_edits = True

    def __init__(self, model: LpModel) -> None:
        import highspy

        self._highspy = highspy
        with quiet_stdout():
            self.highs = highspy.Highs()  # type: ignore[no-untyped-call]
        for option, value in (("output_flag", False), ("primal_feasibility_tolerance", 1e-10),
                              ("dual_feasibility_tolerance", 1e-10)):
            self.highs.setOptionValue(option, value)
        order = highs_order(model)
        self.highs.passModel(highs_lp(model, order))
        self.ncols = len(model.col_name)
        self.col = np.empty(self.ncols, dtype=np.int64)  # our column -> HiGHS's
        self.col[order] = np.arange(self.ncols, dtype=np.int64)
        self.row = np.arange(len(model.row_info), dtype=np.int64)
        self.senses = model.sense
        self._sense = np.array(self.senses, dtype=np.int64)
        self._rhs_now: dict[int, float] = {}  # right-hand sides applied, by our row
        self._rhs_todo: dict[int, float] = {}  # set since the last solve
        self._coef_now: dict[tuple[int, int], float] = {}
        self._warm = False
        # What is needed to tell whether the last optimum is still primal feasible
        # after the edits since (see _still_feasible): then primal simplex re-solves.
        self._model = model
        self._col_low = np.asarray(model.col_low, dtype=float)
        self._col_high = np.asarray(model.col_high, dtype=float)
        self._row_low = np.asarray(model.row_low, dtype=float)
        self._row_high = np.asarray(model.row_high, dtype=float)
        self._coef: dict[tuple[int, int], float] = {}
        self._x: np.ndarray | None = None  # the last optimum's columns and row activities
        self._act: np.ndarray | None = None
        self._feasible = False
        self.version = (f"{self.highs.versionMajor()}.{self.highs.versionMinor()}."
                        f"{self.highs.versionPatch()}")

    def set_objective(self, costs: Mapping[int, float]) -> None:
        values = np.zeros(self.ncols)
        for col, cost in costs.items():
            values[col] = cost
        self.highs.changeColsCost(self.ncols, self.col, values)

    def set_bounds(self, col: int, low: float, high: float) -> None:
        self.highs.changeColBounds(int(self.col[col]), low, high)
        self._col_low[col], self._col_high[col] = low, high
        if self._x is not None and not _within(float(self._x[col]), low, high):
            self._feasible = False

    def set_rhs(self, row: int, value: float) -> None:
        sense = self.senses[row]
        low = value if sense >= 0 else -INF
        high = value if sense <= 0 else INF
        self._row_low[row], self._row_high[row] = low, high
        if self._act is not None and not _within(float(self._act[row]), low, high):
            self._feasible = False
        if self.batch_edits:
            self._rhs_todo[row] = value
            return
        self.highs.changeRowBounds(int(self.row[row]), low, high)

    def set_coefficient(self, row: int, col: int, value: float) -> None:
        if self.batch_edits:
            if self._coef_now.get((row, col)) == value:
                return
            self._coef_now[(row, col)] = value
        self.highs.changeCoeff(int(self.row[row]), int(self.col[col]), value)
        old = self._coef.get((row, col))
        if old is None:
            old = self._model.coefficient(row, col)
        self._coef[(row, col)] = value
        if self._act is not None and self._x is not None:
            self._act[row] += (value - old) * float(self._x[col])
            if not _within(float(self._act[row]), self._row_low[row], self._row_high[row]):
                self._feasible = False

    def set_coefficients(self, rows: list[int], cols: list[int], values: list[float]) -> None:
        """:meth:`set_coefficient` for each entry in turn, with the bookkeeping in lists.

        The same edits in the same order and the same feasibility tracking;
        for a tolerance run's thousand edits per sample.
        """
        now, coef, model, change = self._coef_now, self._coef, self._model, \
            self.highs.changeCoeff
        hrow, hcol = self.row.tolist(), self.col.tolist()
        track = self._act is not None and self._x is not None
        x = self._x.tolist() if self._x is not None else []
        act = self._act.tolist() if self._act is not None else []
        low, high = (self._row_low.tolist(), self._row_high.tolist()) if track else ([], [])
        feasible = True
        for row, col, value in zip(rows, cols, values, strict=True):
            key = (row, col)
            if self.batch_edits:
                if now.get(key) == value:
                    continue
                now[key] = value
            change(hrow[row], hcol[col], value)
            old = coef.get(key)
            if old is None:
                old = model.coefficient(row, col)
            coef[key] = value
            if track:
                act[row] += (value - old) * x[col]
                if feasible and not _within(act[row], low[row], high[row]):
                    feasible = False
        if track:
            self._act = np.array(act)
            self._feasible = self._feasible and feasible

    def _cold_options(self) -> None:
        self.highs.setOptionValue("simplex_strategy", 1)
        self.highs.setOptionValue("simplex_dual_edge_weight_strategy", -1)

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
        self.highs.changeRowsBounds(  # type: ignore[attr-defined]
            len(todo), self.row[rows].astype(np.int32), low, high)

    def solve(self) -> RawSolution:
        status_enum = self._highspy.HighsModelStatus
        self._apply_rhs()
        # After edits that keep the last optimum feasible (a level frozen in
        # progressive filling, a new objective), primal simplex starts from a
        # feasible basis and needs few iterations; dual simplex would start from
        # every newly violated optimality condition.
        primal = self.primal_resolves and self._warm and self._feasible
        self.highs.setOptionValue("simplex_strategy", 4 if primal else 1)
        self.highs.run()
        status = self.highs.getModelStatus()
        if status != status_enum.kOptimal and self._warm:
            # A warm start from a stale basis may misjudge the LP: solve it afresh.
            self._cold_options()
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
            # Devex pricing for warm dual re-solves (a sweep's outages); a cold solve
            # keeps HiGHS's own choice, which is steadier on a large model.
            self.highs.setOptionValue("simplex_dual_edge_weight_strategy", 1)
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
            self._x = self._act = None
            self._feasible = False
            return RawSolution(text, float("nan"), np.empty(0), np.empty(0))
        solution = self.highs.getSolution()
        cols = np.asarray(solution.col_value)[self.col]
        duals = np.asarray(solution.row_dual)[self.row]
        self._x = cols
        self._act = np.array(solution.row_value)[self.row]
        self._feasible = True
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


def make_backend(model: LpModel, solver: Solver | str = Solver.AUTO) -> Backend:
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
    if solver in (Solver.AUTO, Solver.HIGHS):
        try:
            return HighsBackend(model)
        except ImportError:
            if solver == Solver.HIGHS:
                raise
    return CbcBackend(model)
