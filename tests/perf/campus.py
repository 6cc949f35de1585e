"""A synthetic campus layout for benchmarks: one source, a trunk, bays of taps.

``campus_yaml(scanners=200)`` gives about ten elements per scanner: each bay
line taps a scanner branch off with an adjustable splitter, and each branch
has fold mirrors, a drift and an attenuator. Invented numbers, for speed
measurements only.
"""

from __future__ import annotations


def campus_yaml(scanners: int = 200, per_bay: int = 10) -> str:
    """YAML text of a campus with ``scanners`` scanners in bays of ``per_bay``."""
    bays = (scanners + per_bay - 1) // per_bay
    lines = [
        "layout: campus", "format: 1",
        f"sources: {{fel: {{power: {max(20, scanners * 0.8):.0f} kW}}}}",
        "parts:",
        "  fold: {kind: mirror, reflectivity: 0.97, heat_limit: 220 W}",
        "  tap: {kind: splitter, outputs: {pick: {efficiency: 0.97, fraction: [0.0, 0.5]},"
        " pass: {efficiency: 0.99}}}",
        "  pipe: {kind: drift, transmission: 0.995}",
        "elements:",
        "  m0: {kind: mirror, reflectivity: 0.96}",
    ]
    beamlines = ["fel -> m0 -> trunk-0"]
    for b in range(bays):
        lines.append(f"  trunk-{b}: {{part: tap}}")
        nxt = f"trunk-{b + 1}" if b + 1 < bays else f"end-{b}"
        if b + 1 == bays:
            lines.append(f"  {nxt}: {{kind: dump}}")
        beamlines.append(f"trunk-{b}.pass -> {nxt}")
        beamlines.append(f"trunk-{b}.pick -> bay-{b}-m1 -> bay-{b}-m2 -> tap-{b}-0")
        lines += [f"  bay-{b}-m1: {{part: fold}}", f"  bay-{b}-m2: {{part: fold}}"]
        count = min(per_bay, scanners - b * per_bay)
        for k in range(count):
            tap = f"tap-{b}-{k}"
            lines.append(f"  {tap}: {{part: tap}}")
            branch = [f"{tap}.pick"]
            for name, part in (("f1", "fold"), ("f2", "fold"), ("d", "pipe"), ("f3", "fold"),
                               ("f4", "fold"), ("d2", "pipe"), ("f5", "fold"), ("f6", "fold")):
                eid = f"s{b}-{k}-{name}"
                lines.append(f"  {eid}: {{part: {part}}}")
                branch.append(eid)
            att = f"s{b}-{k}-att"
            lines.append(f"  {att}: {{kind: attenuator, transmission: [0.2, 1.0]}}")
            branch += [att, f"litho-{b}-{k}"]
            beamlines.append(" -> ".join(branch))
            after = f"tap-{b}-{k + 1}" if k + 1 < count else f"bay-{b}-dump"
            if k + 1 == count:
                lines.append(f"  {after}: {{kind: dump}}")
            beamlines.append(f"{tap}.pass -> {after}")
    lines.append("scanners:")
    for b in range(bays):
        for k in range(min(per_bay, scanners - b * per_bay)):
            lines.append(f"  litho-{b}-{k}: {{power: {250 + 10 * ((b * 7 + k * 3) % 20)} W}}")
    lines.append("beamlines:")
    lines += [f"  - {chain}" for chain in beamlines]
    return "\n".join(lines) + "\n"
