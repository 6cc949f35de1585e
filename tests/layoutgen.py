"""Random, valid beamplan layouts as YAML text, for property and cross-check tests.

Two front ends share one generator:

* :func:`random_layout` / :func:`random_spec`: plain seeded randomness
  (``random.Random(seed)``), deterministic for a given seed;
* :func:`layouts` / :func:`layout_specs`: hypothesis strategies whose
  choices shrink towards small, simple layouts (one source, two scanners,
  free splitters, no limits).

A layout has 1–2 sources (1–20 kW), trees of mirrors (R 0.5–0.99), drifts,
fixed and adjustable attenuators and splitters with 2–4 outputs
(efficiencies 0.8–1, fraction bounds that always admit a sum of one, some
fixed), optional heat limits sized from the most power an element can see
(so that some bind), optional dumps on splitter outputs, occasionally a
switch that combines beams of two sources (sometimes with ``select``), and
2–30 scanners (needs 50–2000 W, optional ``max_power``). Every splitter
output is connected and every chain ends at a scanner or a dump.

:class:`LayoutSpec` keeps the plain data, so that tests can change one thing
(a source's power, a mirror's reflectivity, drop a scanner) and render again.
"""

from __future__ import annotations

import copy
import random
from dataclasses import dataclass, field
from typing import Any, Protocol

from hypothesis import strategies as st

__all__ = [
    "LayoutSpec",
    "generate",
    "layout_specs",
    "layouts",
    "random_layout",
    "random_spec",
]

Settings = dict[str, Any]


# -- the choices a generator makes -------------------------------------------------


class Choices(Protocol):
    """Where the generator's randomness comes from."""

    def integer(self, low: int, high: int) -> int:
        """A whole number in [low, high]; ``low`` is the simplest."""

    def uniform(self, low: float, high: float, digits: int) -> float:
        """A number in [low, high] rounded to ``digits`` decimals."""

    def chance(self, p: float) -> bool:
        """True with probability about ``p``; False is the simplest."""


class SeededChoices:
    """Choices from ``random.Random(seed)``: deterministic for a seed."""

    def __init__(self, seed: int) -> None:
        self.rng = random.Random(seed)

    def integer(self, low: int, high: int) -> int:
        return self.rng.randint(low, high)

    def uniform(self, low: float, high: float, digits: int) -> float:
        return _clip(round(self.rng.uniform(low, high), digits), low, high)

    def chance(self, p: float) -> bool:
        return self.rng.random() < p


class DrawChoices:
    """Choices drawn by hypothesis (shrinking towards ``low`` and False)."""

    def __init__(self, draw: Any) -> None:
        self.draw = draw

    def integer(self, low: int, high: int) -> int:
        return int(self.draw(st.integers(low, high)))

    def uniform(self, low: float, high: float, digits: int) -> float:
        scale = 10**digits
        steps = self.draw(st.integers(round(low * scale), round(high * scale)))
        return _clip(round(steps / scale, digits), low, high)

    def chance(self, p: float) -> bool:
        # draws 0..99; 0 (what hypothesis shrinks to) means False
        return bool(self.draw(st.integers(0, 99)) >= round(100 * (1.0 - p)))


def _clip(x: float, low: float, high: float) -> float:
    return min(max(x, low), high)


# -- the layout as plain data ----------------------------------------------------


@dataclass
class LayoutSpec:
    """A generated layout: sections as dicts of settings, beamlines as chains.

    Powers are in W and fractions plain numbers, so that every value reads
    back exactly. :meth:`yaml` renders the layout file.
    """

    name: str
    sources: dict[str, Settings] = field(default_factory=dict)
    elements: dict[str, Settings] = field(default_factory=dict)
    scanners: dict[str, Settings] = field(default_factory=dict)
    beamlines: list[list[str]] = field(default_factory=list)

    def copy(self) -> LayoutSpec:
        """A deep copy to change."""
        return copy.deepcopy(self)

    def yaml(self) -> str:
        """The layout file text."""
        lines = [f"layout: {self.name}", "format: 1", "sources:"]
        lines += [f"  {sid}: {_flow(s)}" for sid, s in self.sources.items()]
        if self.elements:
            lines.append("elements:")
            lines += [f"  {eid}: {_flow(e)}" for eid, e in self.elements.items()]
        lines.append("scanners:")
        lines += [f"  {sid}: {_flow(s)}" for sid, s in self.scanners.items()]
        lines.append("beamlines:")
        lines += [f"  - {' -> '.join(chain)}" for chain in self.beamlines]
        return "\n".join(lines) + "\n"

    # -- edits used by the property tests --------------------------------------
    def mirrors(self) -> list[str]:
        """Ids of the mirrors."""
        return [eid for eid, e in self.elements.items() if e["kind"] == "mirror"]

    def drop_scanner(self, scanner_id: str) -> LayoutSpec:
        """A copy with ``scanner_id`` removed and its feed sent to a new dump."""
        out = self.copy()
        del out.scanners[scanner_id]
        dump = f"gone-{scanner_id}"
        out.elements[dump] = {"kind": "dump"}
        out.beamlines = [[dump if tok == scanner_id else tok for tok in chain]
                         for chain in out.beamlines]
        return out

    def without_limits(self, keep: str | None = None) -> LayoutSpec:
        """A copy without heat limits (except on ``keep``) and without max_power."""
        out = self.copy()
        for eid, e in out.elements.items():
            if eid != keep:
                e.pop("heat_limit", None)
        for s in out.scanners.values():
            s.pop("max_power", None)
        return out


def _num(x: float) -> str:
    text = repr(float(x))
    assert "e" not in text and "inf" not in text and "nan" not in text, text
    return text


def _value(key: str, value: Any) -> str:
    if isinstance(value, dict):
        return _flow(value)
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(_num(v) for v in value) + "]"
    if isinstance(value, str):
        return value
    if isinstance(value, int) and not isinstance(value, bool):
        return str(value)
    if key in ("power", "max_power", "heat_limit"):
        return f"{_num(value)} W"
    return _num(value)


def _flow(settings: Settings) -> str:
    return "{" + ", ".join(f"{k}: {_value(k, v)}" for k, v in settings.items()) + "}"


# -- the generator ---------------------------------------------------------------


class _Builder:
    def __init__(self, ch: Choices, name: str, tree: bool = False) -> None:
        self.ch = ch
        self.tree = tree  # free splitter shares only
        self.spec = LayoutSpec(name)
        self.counts: dict[str, int] = {}
        self.switch_inputs: list[str] = []

    def new_id(self, prefix: str) -> str:
        self.counts[prefix] = self.counts.get(prefix, 0) + 1
        return f"{prefix}{self.counts[prefix]:02d}"

    # A beamline chain starts at ``head`` (a source, or ``splitter.port``);
    # ``pmax`` is the most power that can reach its first element.
    def branch(self, head: str, leaves: list[str], pmax: float) -> None:
        ch = self.ch
        chain = [head]
        for _ in range(ch.integer(0, 3)):
            eid, pmax = self.simple_element(pmax)
            chain.append(eid)
        if len(leaves) == 1 and not ch.chance(0.15):
            self.end(chain, leaves[0])
            return
        tap = self.splitter(chain, leaves, pmax)
        chain.append(tap)
        self.spec.beamlines.append(chain)

    def end(self, chain: list[str], leaf: str) -> None:
        if leaf.startswith("sw"):
            tail = chain[-1].split(".")[0]
            self.switch_inputs.append(tail)
        chain.append(leaf)
        self.spec.beamlines.append(chain)

    def heat_limit(self, settings: Settings, absorbed_max: float) -> None:
        if absorbed_max > 1.0 and self.ch.chance(0.3):
            settings["heat_limit"] = max(1.0, round(absorbed_max * self.ch.uniform(
                0.2, 1.3, 3), 1))

    def simple_element(self, pmax: float) -> tuple[str, float]:
        ch = self.ch
        kind = ch.integer(0, 3)
        if kind == 0:
            eid = self.new_id("m")
            r = ch.uniform(0.5, 0.99, 3)
            e: Settings = {"kind": "mirror", "reflectivity": r}
            self.heat_limit(e, (1.0 - r) * pmax)
            gain = r
        elif kind == 1:
            eid = self.new_id("d")
            tr = ch.uniform(0.9, 1.0, 3)
            e = {"kind": "drift", "transmission": tr}
            self.heat_limit(e, (1.0 - tr) * pmax)
            gain = tr
        elif kind == 2:
            eid = self.new_id("a")
            tr = ch.uniform(0.5, 1.0, 3)
            e = {"kind": "attenuator", "transmission": tr}
            self.heat_limit(e, (1.0 - tr) * pmax)
            gain = tr
        else:
            eid = self.new_id("v")
            low = ch.uniform(0.0, 0.9, 3)
            high = ch.uniform(max(low, 0.3), 1.0, 3)
            if high <= low:
                high = 1.0
            e = {"kind": "attenuator", "transmission": [low, high]}
            self.heat_limit(e, (1.0 - low) * pmax)
            gain = high
        self.spec.elements[eid] = e
        return eid, pmax * gain

    def fractions(self, k: int) -> list[float]:
        """A partition of 1 in steps of 1/100, each at least 0.05."""
        units = [5] * k
        spare = 100 - 5 * k
        for i in range(k - 1):
            extra = self.ch.integer(0, spare)
            units[i] += extra
            spare -= extra
        units[-1] += spare
        return [u / 100 for u in units]

    def splitter(self, chain: list[str], leaves: list[str], pmax: float) -> str:
        ch = self.ch
        tap = self.new_id("t")
        live = 1 if len(leaves) == 1 else ch.integer(2, min(4, len(leaves)))
        dumps = 1 if live == 1 or (live < 4 and ch.chance(0.3)) else 0
        if live + dumps < 4 and dumps and ch.chance(0.2):
            dumps += 1
        k = live + dumps
        # group sizes: each live output gets at least one leaf
        sizes = [1] * live
        spare = len(leaves) - live
        for i in range(live - 1):
            extra = ch.integer(0, spare)
            sizes[i] += extra
            spare -= extra
        sizes[-1] += spare
        kinds: list[list[str] | None] = []
        start = 0
        for size in sizes:
            kinds.append(leaves[start:start + size])
            start += size
        kinds += [None] * (k - live)  # None: a dump
        turn = ch.integer(0, k - 1)
        kinds = kinds[turn:] + kinds[:turn]
        base = self.fractions(k)
        outputs: Settings = {}
        ports: list[tuple[str, float]] = []
        worst = 0.0
        for i, frac in enumerate(base):
            port = f"o{i + 1}"
            out: Settings = {}
            if ch.chance(0.6):
                out["efficiency"] = ch.uniform(0.8, 1.0, 3)
            mode = 0 if self.tree else 2 if ch.chance(0.2) else 1 if ch.chance(0.35) else 0
            low, high = 0.0, 1.0
            if mode == 1:
                low = round(max(0.0, frac - ch.uniform(0.0, 0.5, 2)), 2)
                high = round(min(1.0, frac + ch.uniform(0.0, 0.5, 2)), 2)
                out["fraction"] = [low, high]
            elif mode == 2:
                low = high = frac
                out["fraction"] = frac
            eff = float(out.get("efficiency", 1.0))
            worst = max(worst, 1.0 - eff)
            outputs[port] = out
            ports.append((port, pmax * eff * high))
        settings: Settings = {"kind": "splitter", "outputs": outputs}
        self.heat_limit(settings, worst * pmax)
        self.spec.elements[tap] = settings
        for (port, port_max), group in zip(ports, kinds, strict=True):
            head = f"{tap}.{port}"
            if group is None:
                dump = self.new_id("x")
                e: Settings = {"kind": "dump"}
                if ch.chance(0.1):
                    e["heat_limit"] = max(1.0, round(port_max * ch.uniform(0.1, 1.0, 3), 1))
                self.spec.elements[dump] = e
                self.spec.beamlines.append([head, dump])
            else:
                self.branch(head, group, port_max)
        return tap

    def scanner(self) -> str:
        ch = self.ch
        sid = self.new_id("litho-")
        need = ch.uniform(50.0, 2000.0, 1)
        s: Settings = {"power": need}
        if ch.chance(0.3):
            s["max_power"] = round(need * ch.uniform(0.8, 3.0, 3), 1)
        if ch.chance(0.2):
            s["priority"] = 2
        self.spec.scanners[sid] = s
        return sid


def generate(ch: Choices, name: str = "generated", max_scanners: int = 30,
             tree: bool = False) -> LayoutSpec:
    """Generate one layout (2 to ``max_scanners`` scanners) with the given choices.

    ``tree``: one source and splitter shares free in [0, 1] (the layouts that
    water-filling solves without the LP).
    """
    b = _Builder(ch, name, tree)
    n_sources = 1 if tree else 2 if ch.chance(0.35) else 1
    n_scanners = ch.integer(2, max(2, min(max_scanners, 30)))
    scanners = [b.scanner() for _ in range(n_scanners)]
    powers = [ch.uniform(1000.0, 20000.0, 1) for _ in range(n_sources)]
    source_ids = ["src-a", "src-b"][:n_sources]
    for sid, power in zip(source_ids, powers, strict=True):
        b.spec.sources[sid] = {"power": power}
    if n_sources == 1:
        b.branch("src-a", scanners, powers[0])
        return b.spec
    use_switch = ch.chance(0.5)
    if not use_switch:
        cut = ch.integer(1, n_scanners - 1)
        b.branch("src-a", scanners[:cut], powers[0])
        b.branch("src-b", scanners[cut:], powers[1])
        return b.spec
    # a switch combines one beam of each source; its own tree gets >= 1 scanner
    n_shared = ch.integer(1, n_scanners)
    shared, rest = scanners[:n_shared], scanners[n_shared:]
    cut = ch.integer(0, len(rest))
    switch = "sw1"
    b.branch("src-a", [*rest[:cut], switch], powers[0])
    b.branch("src-b", [*rest[cut:], switch], powers[1])
    sw: Settings = {"kind": "switch"}
    if ch.chance(0.5):
        sw["efficiency"] = ch.uniform(0.8, 1.0, 3)
    if ch.chance(0.3):
        sw["select"] = b.switch_inputs[ch.integer(0, len(b.switch_inputs) - 1)]
    b.spec.elements[switch] = sw
    b.branch(switch, shared, sum(powers))
    return b.spec


def random_spec(seed: int, max_scanners: int = 30, tree: bool = False) -> LayoutSpec:
    """A random layout from a seed (the same seed gives the same layout)."""
    return generate(SeededChoices(seed), f"random-{seed}", max_scanners, tree)


def random_layout(seed: int, max_scanners: int = 30, tree: bool = False) -> str:
    """A random layout's YAML text from a seed (deterministic)."""
    return random_spec(seed, max_scanners, tree).yaml()


@st.composite
def layout_specs(draw: Any, max_scanners: int = 30, tree: bool = False) -> LayoutSpec:
    """Hypothesis strategy: a random :class:`LayoutSpec` (``tree``: see :func:`generate`)."""
    return generate(DrawChoices(draw), "hypothesis", max_scanners, tree)


def layouts(max_scanners: int = 30) -> st.SearchStrategy[str]:
    """Hypothesis strategy: a random layout's YAML text."""
    return layout_specs(max_scanners).map(LayoutSpec.yaml)
