"""The LP's columns, rows and maps (:class:`LpModel`), kept apart from its builder.

:mod:`beamplan.optimise.lp` writes the rows; this module holds what a built
LP is made of and how it is read (coefficient maps, sparse arrays, the pulp
view for the CBC fallback).
"""

from __future__ import annotations

import contextlib
import gc
from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from beamplan.network.graph import Network
from beamplan.vocabulary import Family

__all__ = ["INF", "Coefs", "LpModel", "Row", "gc_paused", "plus"]

INF = float("inf")
Coefs = dict[int, float]  # a linear expression: column -> coefficient


@dataclass(frozen=True)
class Row:
    """What one constraint means, for reports and explanations.

    ``family`` is one of ``balance``, ``range-low``, ``range-high``,
    ``share-sum``, ``share-low``, ``share-high``, ``share-out``, ``heat``,
    ``source``, ``available``, ``demand``, ``max-power`` (max_power or the
    useful ceiling, whichever is lower).
    """

    name: str
    family: Family
    node: str
    port: str | None = None


def plus(*terms: tuple[float, Coefs]) -> Coefs:
    """Σ scale × expression, as one coefficient map."""
    out: Coefs = {}
    for scale, coefs in terms:
        for col, value in coefs.items():
            out[col] = out.get(col, 0.0) + scale * value
    return out


@dataclass
class LpModel:
    """The LP's columns and rows, and the maps from network objects to them.

    Each row reads ``low ≤ Σ coef × column ≤ high`` with one side infinite,
    or ``low == high`` for an equality; its ``sense`` is +1 (≥), −1 (≤) or 0
    (=), as pulp numbers them.
    """

    network: Network
    col_name: list[str] = field(default_factory=list)
    col_low: list[float] = field(default_factory=list)
    col_high: list[float] = field(default_factory=list)
    row_coefs: list[Coefs] = field(default_factory=list)
    row_low: list[float] = field(default_factory=list)
    row_high: list[float] = field(default_factory=list)
    row_info: list[Row] = field(default_factory=list)
    link_col: dict[int, int] = field(default_factory=dict)
    link_coef: dict[int, float] = field(default_factory=dict)
    source_col: dict[str, int] = field(default_factory=dict)
    share_col: dict[tuple[str, str | None], int] = field(default_factory=dict)
    shortfall_col: dict[str, int] = field(default_factory=dict)
    factor_col: int = -1
    demand_row: dict[str, int] = field(default_factory=dict)
    heat_row: dict[str, int] = field(default_factory=dict)
    available_row: dict[str, int] = field(default_factory=dict)
    max_row: dict[str, int] = field(default_factory=dict)
    # (switch, input link) -> the input column's coefficient in the switch's balance row
    switch_coef: dict[tuple[str, int], float] = field(default_factory=dict)
    out_of_service: set[str] = field(default_factory=set)  # outages applied in place
    unreachable: set[str] = field(default_factory=set)  # scanners no power can reach
    _pulp: Any = field(default=None, repr=False)  # (problem, variables, constraints)

    # -- building -------------------------------------------------------------------
    def add_column(self, name: str, low: float | None = 0.0, high: float | None = None) -> int:
        """Add a variable; return its column number."""
        self.col_name.append(name)
        self.col_low.append(-INF if low is None else low)
        self.col_high.append(INF if high is None else high)
        return len(self.col_name) - 1

    def add_row(self, expression: Any, info: Row, low: float = -INF, high: float = INF) -> int:
        """Add a named constraint ``low ≤ expression ≤ high``; return its row number.

        ``expression`` is a coefficient map (column -> coefficient), or a pulp
        constraint over :meth:`var` variables (then ``low`` and ``high`` come
        from it).
        """
        if not isinstance(expression, dict):
            expression, low, high = self._from_pulp(expression)
        self.row_coefs.append(expression)
        self.row_low.append(low)
        self.row_high.append(high)
        self.row_info.append(info)
        return len(self.row_info) - 1

    def _from_pulp(self, constraint: Any) -> tuple[Coefs, float, float]:
        index = {id(var): col for col, var in enumerate(self.columns)}
        coefs = plus(*((float(value), {index[id(var)]: 1.0})
                        for var, value in constraint.items()))
        rhs = -float(constraint.constant)
        sense = int(constraint.sense)
        return coefs, (rhs if sense >= 0 else -INF), (rhs if sense <= 0 else INF)

    # -- reading --------------------------------------------------------------------
    @property
    def sense(self) -> list[int]:
        """Each row's sense: +1 (≥ low), −1 (≤ high), 0 (equality)."""
        return [0 if lo == hi else (1 if hi == INF else -1)
                for lo, hi in zip(self.row_low, self.row_high, strict=True)]

    def coefficient(self, row: int, col: int) -> float:
        """The built matrix entry of a row and a column (0 when absent)."""
        return self.row_coefs[row].get(col, 0.0)

    def triplets(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """The matrix's non-zero entries: columns, rows, values (in row order)."""
        cols: list[int] = []
        rows: list[int] = []
        values: list[float] = []
        for r, coefs in enumerate(self.row_coefs):
            for col, value in coefs.items():
                if value != 0.0:
                    cols.append(col)
                    rows.append(r)
                    values.append(value)
        return (np.asarray(cols, dtype=np.int64), np.asarray(rows, dtype=np.int32),
                np.asarray(values, dtype=float))

    def csc(self, order: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """The matrix column-wise: starts, row indices, values (zeros left out).

        ``order`` lists the model's columns in the order wanted (default: theirs).
        """
        cols, rows, values = self.triplets()
        ncol = len(self.col_name)
        if order is not None:
            rank = np.empty(ncol, dtype=np.int64)
            rank[order] = np.arange(ncol, dtype=np.int64)
            cols = rank[cols]
        sort = np.argsort(cols, kind="stable")
        starts = np.zeros(ncol + 1, dtype=np.int32)
        np.cumsum(np.bincount(cols, minlength=ncol), out=starts[1:])
        return starts, rows[sort], values[sort]

    def link_coefs(self, index: int, scale: float = 1.0) -> Coefs:
        """The power on a link: its column times its coefficient (see _link_columns)."""
        return {self.link_col[index]: scale * self.link_coef[index]}

    def inflow_coefs(self, node_id: str, scale: float = 1.0) -> Coefs:
        """The power entering a node, as a coefficient map."""
        out: Coefs = {}
        for link in self.network.in_links[node_id]:
            col = self.link_col[link.index]
            out[col] = out.get(col, 0.0) + scale * self.link_coef[link.index]
        return out

    def link_value(self, index: int, columns: Any) -> float:
        """The power on a link in a solution's column values."""
        return self.link_coef[index] * float(columns[self.link_col[index]])

    # -- the pulp view, for the CBC fallback and pulp-written extra rows -------------
    def _pulp_view(self) -> tuple[Any, list[Any], list[Any]]:
        """The pulp problem, its variables and constraints, extended to the rows added so far."""
        import pulp

        if self._pulp is None:
            self._pulp = (pulp.LpProblem("beamplan", pulp.LpMinimize), [], [])
            self._pulp[0].setObjective(pulp.lpSum([]))
        problem, variables, constraints = self._pulp
        for col in range(len(variables), len(self.col_name)):
            lo, hi = self.col_low[col], self.col_high[col]
            variables.append(problem.add_variable(self.col_name[col],
                                                  lowBound=None if lo == -INF else lo,
                                                  upBound=None if hi == INF else hi))
        for row in range(len(constraints), len(self.row_info)):
            lo, hi = self.row_low[row], self.row_high[row]
            expr = pulp.LpAffineExpression([(variables[c], v)
                                            for c, v in self.row_coefs[row].items()])
            name = self.row_info[row].name
            problem.addConstraint(expr == lo if lo == hi else
                                  (expr >= lo if hi == INF else expr <= hi), name)
            constraints.append(problem.get_constraint_by_name(name))
        return problem, variables, constraints

    @property
    def problem(self) -> Any:
        """The same LP as a pulp problem (built on first use)."""
        return self._pulp_view()[0]

    @property
    def columns(self) -> list[Any]:
        """The pulp variables, in column order (built on first use)."""
        return self._pulp_view()[1]

    @property
    def rows(self) -> list[Any]:
        """The pulp constraints, in row order (built on first use)."""
        return self._pulp_view()[2]

    def var(self, col: int) -> Any:
        """The pulp variable of a column."""
        return self.columns[col]

    def link_expr(self, index: int) -> Any:
        """The power on a link as a pulp expression."""
        return self.link_coef[index] * self.columns[self.link_col[index]]

    def inflow(self, node_id: str) -> Any:
        """The power entering a node as a pulp expression."""
        import pulp

        return pulp.lpSum(self.link_expr(link.index) for link in self.network.in_links[node_id])


@contextlib.contextmanager
def gc_paused() -> Iterator[None]:
    """Pause the cyclic garbage collector while a plan makes its many small objects.

    Building the LP and the result of a large network makes hundreds of
    thousands of dicts and records that all stay alive; each automatic
    collection would walk every live object again, which makes the whole
    quadratic. Reference counting still frees what dies.

    Examples
    --------
    >>> with gc_paused():
    ...     gc.isenabled()
    False
    """
    was = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was:
            gc.enable()
