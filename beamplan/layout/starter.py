"""A starter layout, written as commented YAML for ``beamplan new``.

One source feeds a splitter that shares the beam between the bays; in each
bay a fold mirror and, for two or more scanners, a bay splitter feed the
scanners. The values are illustrative defaults ("common practice, no
source"), marked as such in the file's comments.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["Starter", "starter_layout"]


@dataclass(frozen=True)
class Starter:
    """What the starter layout holds.

    Attributes
    ----------
    name
        The layout's name (an id).
    bays, per_bay
        Number of bays and scanners per bay (each at least 1).
    source_w
        Source power in W.
    scanner_w
        Each scanner's IF power need in W, used without a recipe.
    dose_j_m2, wph
        A scanner recipe (dose and throughput), or None for a fixed power need.
    """

    name: str = "marrowfield-starter"
    bays: int = 2
    per_bay: int = 2
    source_w: float = 10e3
    scanner_w: float = 500.0
    dose_j_m2: float | None = None
    wph: float | None = None


def _power(watts: float) -> str:
    return f"{watts / 1e3:g} kW" if watts >= 1e3 else f"{watts:g} W"


def _splitter(sid: str, outputs: list[str], indent: str) -> list[str]:
    lines = [f"{indent}{sid}:", f"{indent}  kind: splitter",
             f"{indent}  outputs:                 # the plan chooses each share in [0, 1]"]
    lines += [f"{indent}    {name}: {{efficiency: 0.98}}" for name in outputs]
    return lines


def starter_layout(s: Starter) -> str:
    """The starter layout's YAML text.

    Examples
    --------
    >>> text = starter_layout(Starter(bays=1, per_bay=1))
    >>> "marrowfield-fel -> fold-1 -> litho-1-1" in text
    True
    """
    recipe = s.dose_j_m2 is not None and s.wph is not None
    out = ["# yaml-language-server: $schema=beamplan-layout.schema.json",
           "# A starter layout written by 'beamplan new'. Check it with 'beamplan check FILE'",
           "# and plan it with 'beamplan plan FILE'; the keys are described in",
           "# docs/layout-format.md. Every value below is an illustrative default",
           "# (common practice, no source): replace it with your own.",
           f"layout: {s.name}",
           "format: 1",
           "wavelength: 13.5 nm",
           "",
           "sources:",
           f"  marrowfield-fel: {{power: {_power(s.source_w)}}}   # EUV power at the source exit",
           "",
           "parts:",
           "  fold: {kind: mirror, reflectivity: 0.9}   # a grazing fold mirror "
           "(illustrative)"]
    if recipe:
        assert s.dose_j_m2 is not None and s.wph is not None
        out += ["", "profiles:",
                "  recipe:                   # the need follows from dose and throughput",
                f"    dose: {s.dose_j_m2 / 10:g} mJ/cm^2",
                f"    wph: {s.wph:g}"]
    out += ["", "elements:"]
    bays = [f"bay-{b}" for b in range(1, s.bays + 1)]
    if s.bays > 1:
        out += _splitter("campus", bays, "  ")
    lines = []
    for b in range(1, s.bays + 1):
        scanners = [f"litho-{b}-{i}" for i in range(1, s.per_bay + 1)]
        out.append(f"  fold-{b}: {{part: fold}}")
        head = f"campus.bay-{b} -> fold-{b}" if s.bays > 1 else f"marrowfield-fel -> fold-{b}"
        if s.per_bay > 1:
            out += _splitter(f"split-{b}", [f"to-{i}" for i in range(1, s.per_bay + 1)], "  ")
            lines.append(f"{head} -> split-{b}")
            lines += [f"split-{b}.to-{i} -> {sid}" for i, sid in enumerate(scanners, 1)]
        else:
            lines.append(f"{head} -> {scanners[0]}")
    out += ["", "scanners:"]
    for b in range(1, s.bays + 1):
        for i in range(1, s.per_bay + 1):
            body = "{profile: recipe}" if recipe else f"{{power: {_power(s.scanner_w)}}}"
            out.append(f"  litho-{b}-{i}: {body}")
    out += ["", "beamlines:"]
    if s.bays > 1:
        out.append("  - marrowfield-fel -> campus")
    out += [f"  - {line}" for line in lines]
    return "\n".join(out) + "\n"
