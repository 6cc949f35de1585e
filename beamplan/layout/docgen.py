"""The key tables of docs/layout-format.md, generated from the key tables.

The generated text sits between :data:`BEGIN` and :data:`END` in the docs;
``beamplan schema --docs docs/layout-format.md`` rewrites it, and a test
fails when the committed file is stale.
"""

from __future__ import annotations

from beamplan.layout.spec import KINDS, SECTIONS, KeySpec

__all__ = ["BEGIN", "END", "key_tables", "updated"]

BEGIN = "<!-- generated key tables: begin (beamplan schema --docs docs/layout-format.md) -->"
END = "<!-- generated key tables: end -->"

_TITLES = {"top": "Top level", "source": "Sources (`sources:`)",
           "undulator": "Source `undulator`", "element": "Every element (and part)",
           "output": "Splitter outputs (`outputs: {NAME: ...}`)",
           "coating": "Mirror `coating` (as a mapping)",
           "multilayer": "`multilayer` (mirrors; `mirror_multilayer` of scanners)",
           "interlayers": "Multilayer `interlayers`",
           "scanner": "Scanners and profiles (`scanners:`, `profiles:`)",
           "cases-top": "Case files: top level", "case": "Case files: one case"}
_ORDER = ("top", "source", "undulator", "element", *KINDS, "output", "coating", "multilayer",
          "interlayers", "scanner", "cases-top", "case")


def _type(spec: KeySpec) -> str:
    if spec.type == "quantity":
        return spec.dimension + (" (unit required)" if spec.unit_required else "")
    if spec.type == "choice":
        return " \\| ".join(f"`{c}`" for c in spec.choices)
    if spec.type in ("map", "map-of", "text-or-map", "none-or-map"):
        return f"{spec.type} ({spec.nested})" if spec.nested else spec.type
    if spec.type == "range":
        return "fraction or [low, high]"
    return spec.type


def _range(spec: KeySpec) -> str:
    if spec.minimum is None and spec.maximum is None:
        return ""
    low = "" if spec.minimum is None else ("> " if spec.exclusive else "≥ ") + f"{spec.minimum:g}"
    high = "" if spec.maximum is None else f"≤ {spec.maximum:g}"
    return ", ".join(part for part in (low, high) if part)


def _table(section: str) -> list[str]:
    title = _TITLES.get(section, f"Kind `{section}`")
    table = SECTIONS[section]
    lines = [f"#### {title}", ""]
    if not table:
        lines += ["No keys of its own.", ""]
        return lines
    lines += ["| key | type | required | default | range | what-if | meaning |",
              "|---|---|---|---|---|---|---|"]
    for spec in table:
        what_if = "set, scale" if spec.settable and spec.type != "id" else (
            "set" if spec.settable else "")
        lines.append(f"| `{spec.name}` | {_type(spec)} | {'yes' if spec.required else ''} | "
                     f"{spec.default} | {_range(spec)} | {what_if} | {spec.doc} |")
    lines.append("")
    return lines


def key_tables() -> str:
    """Every key table, as Markdown (between the markers, markers excluded).

    Examples
    --------
    >>> "| `power` | power | yes |" in key_tables()
    True
    """
    lines = ["", "Ranges are in SI units (see the dimension table above). Generated from "
             "`beamplan/layout/spec.py`; do not edit by hand.", ""]
    for section in _ORDER:
        lines += _table(section)
    return "\n".join(lines)


def updated(text: str) -> str:
    """``text`` with its generated key tables replaced by today's.

    Examples
    --------
    >>> updated(f"a\\n{BEGIN}\\nold\\n{END}\\nb").startswith(f"a\\n{BEGIN}\\n\\nRanges")
    True
    """
    head, begin, rest = text.partition(BEGIN)
    _, end, tail = rest.partition(END)
    if not begin or not end:
        raise ValueError("the file has no generated key tables markers")
    return f"{head}{BEGIN}\n{key_tables()}\n{END}{tail}"
