"""The project's own words: goals, solvers, statuses, node kinds and constraint families.

Every layer imports these from here (the module sits beside :mod:`beamplan.units`
and :mod:`beamplan.errors` at the bottom of the layers), so a word has one owner
and a typo is a type error, not a silent mismatch. Each enum member *is* its
string (``Goal.HEADROOM == "headroom"``), prints as it, and is written to JSON
and CSV as it, so the outputs read exactly as before.

Examples
--------
>>> Goal("min-source") is Goal.MIN_SOURCE
True
>>> f"{ScannerStatus.CUT_OFF}", str(Solver.AUTO)
('cut off', 'auto')
>>> FAMILIES[Family.SHARE_LOW].label, FAMILIES[Family.SHARE_LOW].per_element
('lowest share', True)
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import Enum

__all__ = ["FAMILIES", "GOALS", "SOLVERS", "Family", "FamilyInfo", "Goal", "NodeKind",
           "ScannerStatus", "Solver", "Word", "reported_families"]


class Word(str, Enum):
    """A word of the project's vocabulary: a string that is also an enum member.

    ``str()`` and ``format()`` give the plain word (as :class:`enum.StrEnum`
    does from Python 3.11 on; this base works on 3.10 too).

    Examples
    --------
    >>> str(Goal.PRIORITY), f"{Goal.PRIORITY:>9}", [Goal.PRIORITY]
    ('priority', ' priority', ['priority'])
    """

    def __str__(self) -> str:
        return str(self.value)

    def __format__(self, spec: str) -> str:
        return format(str(self.value), spec)

    def __repr__(self) -> str:  # reads as the string it is, in reprs of results
        return repr(str(self.value))


class Goal(Word):
    """A planning goal (``SCREEN`` is the outage sweep's fast form of ``HEADROOM``)."""

    HEADROOM = "headroom"
    MIN_SOURCE = "min-source"
    PRIORITY = "priority"
    SCREEN = "screen"


#: The goals a user may choose, in the order the command line offers them.
GOALS: tuple[Goal, ...] = (Goal.HEADROOM, Goal.MIN_SOURCE, Goal.PRIORITY)


class Solver(Word):
    """An LP back end: HiGHS in process, CBC, or ``AUTO`` (HiGHS when it is installed)."""

    AUTO = "auto"
    HIGHS = "highs"
    CBC = "cbc"


#: The solvers, in the order the command line offers them.
SOLVERS: tuple[Solver, ...] = (Solver.AUTO, Solver.HIGHS, Solver.CBC)


class ScannerStatus(Word):
    """How a scanner (or, with ``MET`` and ``SHORT``, a whole plan) fares."""

    MET = "met"
    SHORT = "short"
    CUT_OFF = "cut off"
    OUT_OF_SERVICE = "out of service"


class NodeKind(Word):
    """What a node of the network is: a source, a scanner, or an element kind."""

    SOURCE = "source"
    SCANNER = "scanner"
    MIRROR = "mirror"
    SPLITTER = "splitter"
    ATTENUATOR = "attenuator"
    DRIFT = "drift"
    DUMP = "dump"
    SWITCH = "switch"


class Family(Word):
    """A family of LP constraints (one row per element, port or scanner)."""

    BALANCE = "balance"
    RANGE_LOW = "range-low"
    RANGE_HIGH = "range-high"
    SHARE_SUM = "share-sum"
    SHARE_LOW = "share-low"
    SHARE_HIGH = "share-high"
    SHARE_OUT = "share-out"
    HEAT = "heat"
    SOURCE = "source"
    AVAILABLE = "available"
    DEMAND = "demand"
    MAX_POWER = "max-power"
    DEVIATION = "deviation"


@dataclass(frozen=True)
class FamilyInfo:
    """What one constraint family means, for every report that names it.

    Attributes
    ----------
    words
        The bound's name in a binding-constraint line ("heat limit of ...").
    label
        The short label beside a box of the diagram, or "" when never binding.
    meaning
        One sentence for the HTML report's key, or "" when never reported.
    bound
        The limit's name in the sizing report (what it takes), or "" when
        sizing never relaxes it.
    per_element
        True when the bound is a fraction of the element's incident power (a
        share or a transmission), so its price is per percentage point, not per W.
    """

    words: str
    label: str = ""
    meaning: str = ""
    bound: str = ""
    per_element: bool = False


#: Every family, with its wording; the reported ones carry a label and a meaning.
FAMILIES: dict[Family, FamilyInfo] = {
    Family.HEAT: FamilyInfo(
        "heat limit", "heat limit", "an element absorbs as much as its heat limit allows",
        "heat limit"),
    Family.AVAILABLE: FamilyInfo(
        "available power", "all power drawn", "a source gives all the power it has"),
    Family.MAX_POWER: FamilyInfo(
        "max_power", "max_power", "a scanner takes as much as its max_power accepts",
        "max_power"),
    Family.SHARE_LOW: FamilyInfo(
        "lower share bound", "lowest share",
        "a splitter output is at the lower end of its share range", "share, lower bound",
        per_element=True),
    Family.SHARE_HIGH: FamilyInfo(
        "upper share bound", "highest share",
        "a splitter output is at the upper end of its share range", "share, upper bound",
        per_element=True),
    Family.RANGE_LOW: FamilyInfo(
        "lowest transmission", "lowest transmission",
        "an attenuator is at its lowest transmission", "transmission, lower bound",
        per_element=True),
    Family.RANGE_HIGH: FamilyInfo(
        "highest transmission", "highest transmission",
        "an attenuator is at its highest transmission", "transmission, upper bound",
        per_element=True),
    Family.DEMAND: FamilyInfo(
        "need", "need", "a scanner gets exactly its need, and that need holds the goal back"),
    Family.BALANCE: FamilyInfo("power balance"),
    Family.SHARE_SUM: FamilyInfo("shares add up to one"),
    Family.SHARE_OUT: FamilyInfo("splitter output"),
    Family.SOURCE: FamilyInfo("source power", bound="source power"),
    Family.DEVIATION: FamilyInfo("deviation from the steady shares"),
}


def reported_families() -> tuple[Family, ...]:
    """The families a plan reports as binding, in the registry's order.

    Examples
    --------
    >>> [str(f) for f in reported_families()][:3]
    ['heat', 'available', 'max-power']
    """
    return tuple(f for f, info in FAMILIES.items() if info.meaning)
