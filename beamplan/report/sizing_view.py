"""What it takes (sizing) in a report: the terminal section, the JSON object, the CSV table.

Powers are shown in W or kW, share and transmission bounds in percent, their
changes in percentage points. See :mod:`beamplan.optimise.sizing`.
"""

from __future__ import annotations

from typing import Any

from rich import box
from rich.console import Group
from rich.table import Table
from rich.text import Text

from beamplan.optimise.sizing import Answer, Sizing
from beamplan.units import format_power
from beamplan.vocabulary import FAMILIES

__all__ = ["key_words", "sizing_csv", "sizing_document", "sizing_renderable"]

#: The words for each limit that sizing may relax (from the vocabulary's registry).
LIMIT_WORDS: dict[str, str] = {f: info.bound for f, info in FAMILIES.items() if info.bound}


def _round(value: float | None) -> float | None:
    if value is None:
        return None
    out = float(f"{value:.10g}")
    return 0.0 if out == 0 else out


def _value(answer: Answer, value: float) -> str:
    return f"{value:.1%}" if answer.unit == "fraction" else format_power(value)


def _amount(answer: Answer, value: float) -> str:
    """A change as a magnitude: W or percentage points."""
    if answer.unit == "fraction":
        return f"{abs(value) * 100:.1f} points"
    return format_power(abs(value))


def _where(answer: Answer) -> str:
    return f"{answer.element}.{answer.port}" if answer.port else answer.element


def key_words(key: str) -> str:
    """A limit's key in words: ``heat:cs-fold`` -> ``heat limit of cs-fold``.

    Examples
    --------
    >>> key_words("share-high:c-split.north")
    'share, upper bound of c-split.north'
    """
    family, _, where = key.partition(":")
    return f"{LIMIT_WORDS.get(family, family)} of {where}"


def _change(answer: Answer, gap: bool) -> str:
    if answer.change is None:
        if not answer.blocked_by:
            return "cannot close the gap (no change of these limits can)"
        also = "; ".join(key_words(k) for k in answer.blocked_by)
        text = f"cannot close the gap alone; {also} must change too"
        more = answer.change_with_others
        if more is not None and more > 0:
            sign = "-" if answer.family.endswith("low") else "+"
            text += f" (then {sign}{_amount(answer, more)})"
        return text
    if not gap:
        return _amount(answer, answer.change) if answer.change < 0 else "none: at the limit"
    if answer.change <= 0:
        return "no change needed"
    sign = "-" if answer.family.endswith("low") else "+"
    return f"{sign}{_amount(answer, answer.change)}"


def _checked(answer: Answer) -> str:
    return {True: "all met", False: "FAILED", None: "-"}[answer.checked]


def _table(title: str, answers: tuple[Answer, ...], gap: bool) -> Table:
    table = Table(title=title, title_justify="left", box=box.SIMPLE_HEAD, padding=(0, 1),
                  title_style="bold")
    for name, justify in (("limit", "left"), ("element", "left"), ("now", "right"),
                          ("needed", "right"), ("change" if gap else "margin", "left"),
                          ("re-plan", "left")):
        table.add_column(name, justify=justify, overflow="fold")  # type: ignore[arg-type]
    for a in answers:
        table.add_row(LIMIT_WORDS[a.family], _where(a), _value(a, a.limit),
                      "-" if a.needed is None else _value(a, a.needed), _change(a, gap),
                      _checked(a))
    return table


def sizing_renderable(sizing: Sizing) -> Group:
    """The "What it takes" section of a plan report.

    Examples
    --------
    >>> import io
    >>> from rich.console import Console
    >>> from beamplan.optimise.sizing import Answer, Sizing
    >>> src = Answer("source", "fel", None, "W", 1000.0, 1250.0, 250.0, ("litho-1",), (), True)
    >>> console = Console(file=io.StringIO(), width=100, color_system=None)
    >>> console.print(sizing_renderable(Sizing(("litho-1",), (), src, (), (), True)))
    >>> "+250.0 W" in console.file.getvalue()
    True
    """
    parts: list[Any] = []
    if sizing.gap:
        parts.append(Text(f"What it takes to serve every need ({len(sizing.short)} scanner"
                          f"{'s' if len(sizing.short) != 1 else ''} short: "
                          f"{', '.join(sizing.short)})", style="bold"))
        combined = {a.key for a in sizing.combined}
        shown = tuple(a for a in sizing.limits
                      if (a.change is not None and a.change > 0) or a.key in combined)
        parts.append(_table("One change alone (every other limit as it is)",
                            (sizing.source, *shown), True))
        hidden = len(sizing.limits) - len(shown)
        if hidden:
            parts.append(Text(f"{hidden} other limit{'s' if hidden != 1 else ''} reached in "
                              "the plan cannot close the gap alone or need no change (the "
                              "JSON and CSV reports list every one).", style="dim"))
        if sizing.combined:
            parts.append(_table("All together, least cost", sizing.combined, True))
            parts.append(Text(sizing.costs, style="dim"))
        elif not sizing.combined_possible:
            parts.append(Text("No change of these limits serves every need.", style="bold"))
    else:
        parts.append(Text("What it takes: every need is met; margins before a scanner falls "
                          "short (each limit alone)", style="bold"))
        parts.append(_table("Margins", (sizing.source, *sizing.limits), False))
    if sizing.unreachable:
        parts.append(Text(f"No power can reach {', '.join(sizing.unreachable)} (an outage or "
                          "a switch setting): no limit serves them, and the answers leave "
                          "them out.", style="bold"))
    parts.append(Text("needed: the least (for a lower bound, the greatest) value of the "
                      "limit with which every scanner meets its need; re-plan: planned again "
                      "with the change applied, checked by re-planning.", style="dim"))
    return Group(*parts)


def _answer_doc(a: Answer) -> dict[str, Any]:
    return {"limit": a.family, "element": a.element, "port": a.port, "unit": a.unit,
            "value": _round(a.limit), "needed": _round(a.needed), "change": _round(a.change),
            "unblocks": list(a.unblocks), "blocked_by": list(a.blocked_by),
            "checked_by_replanning": a.checked,
            "parts_w": {k: _round(v) for k, v in a.parts},
            "change_with_others": _round(a.change_with_others)}


def sizing_document(sizing: Sizing) -> dict[str, Any]:
    """The ``sizing`` object of the plan JSON (docs/json-format.md)."""
    return {"mode": "gap" if sizing.gap else "margins", "short": list(sizing.short),
            "unreachable": list(sizing.unreachable),
            "source": _answer_doc(sizing.source),
            "limits": [_answer_doc(a) for a in sizing.limits],
            "combined_possible": sizing.combined_possible,
            "combined": [_answer_doc(a) for a in sizing.combined],
            "combined_cost": _round(sizing.combined_cost),
            "costs": sizing.costs}


def sizing_csv(sizing: Sizing) -> tuple[list[str], list[list[Any]]]:
    """The sizing table: one row per answer (``answer`` is single or combined)."""
    header = ["answer", "limit", "element", "port", "unit", "value", "needed", "change",
              "unblocks", "blocked_by", "change_with_others", "checked_by_replanning"]
    rows = [[kind, a.family, a.element, a.port, a.unit, _round(a.limit), _round(a.needed),
             _round(a.change), ";".join(a.unblocks), ";".join(a.blocked_by),
             _round(a.change_with_others), a.checked]
            for kind, group in (("single", (sizing.source, *sizing.limits)),
                                ("combined", sizing.combined)) for a in group]
    return header, rows
