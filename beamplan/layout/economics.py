"""Economics and reliability inputs: an economics file, or a layout's ``economics:`` section.

One format serves ``beamplan cost`` and ``beamplan availability`` (see docs/cost.md).
Every value left out takes an illustrative default, and the result remembers which
ones did (:attr:`Economics.defaulted`) so reports can mark them. Bad input gives
the same located one-line errors as a layout.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Any

from beamplan.errors import Diagnostic, LayoutError, Location, did_you_mean
from beamplan.layout.model import Layout
from beamplan.layout.reader import MISSING, Context, MapReader
from beamplan.layout.yamlpos import Path, YamlDocument, load_yaml

__all__ = ["DEFAULT_RELIABILITY", "Economics", "PlasmaOption", "Reliability", "ScannerEconomics",
           "SourceEconomics", "check_against", "load_economics", "parse_economics"]

# Illustrative defaults: invented round numbers unless a trade fact is named
# ("common practice, no source", as the issue gives them).
SHARED_CAPITAL = 400e6  # a ~10 kW accelerator-driven source (trade fact)
SHARED_MAINTENANCE = 40e6  # per year (trade fact)
SHARED_RATED_W = 10e3
SHARED_W_PER_W = 700.0  # ~7 MW for ~10 kW of EUV (trade fact): when the layout gives no draw

DEFAULT_RELIABILITY: dict[str, tuple[float, float]] = {  # kind: (MTBF h, MTTR h), invented
    "source": (500.0, 8.0), "scanner": (1000.0, 6.0), "mirror": (100000.0, 24.0),
    "splitter": (50000.0, 24.0), "switch": (30000.0, 12.0), "attenuator": (40000.0, 12.0),
    "drift": (200000.0, 48.0), "dump": (100000.0, 24.0),
}


@dataclass(frozen=True)
class SourceEconomics:
    """A shared source's money: capital, life, maintenance per year, standby draw."""

    capital: float
    life_years: float
    maintenance_per_year: float
    kept_warm: bool = False  # a standby source draws its fixed part all year


@dataclass(frozen=True)
class ScannerEconomics:
    """A scanner's share of time exposing and how its throughput is modelled.

    ``wph_at_need`` gives a scanner stated by plain watts a throughput model: the
    default tool reaches that many wafers per hour at its need.
    """

    exposing: float = 0.8
    wph_at_need: float = 150.0


@dataclass(frozen=True)
class PlasmaOption:
    """The alternative: one plasma source per scanner, sized to the scanner's need."""

    power_w: float = 250.0  # at IF (trade fact)
    electrical_w: float = 1.1e6  # at that power (trade fact: ~4.4 MW per kW)
    capital: float = 25e6  # invented, illustrative
    life_years: float = 10.0  # invented, illustrative
    maintenance_per_year: float = 5e6  # invented, illustrative
    mtbf_h: float = 300.0  # invented, illustrative
    mttr_h: float = 4.0  # invented, illustrative


@dataclass(frozen=True)
class Reliability:
    """Mean time between failures and mean time to repair, in hours."""

    mtbf_h: float
    mttr_h: float


@dataclass(frozen=True)
class Economics:
    """Everything ``cost`` and ``availability`` read, in the user's currency."""

    file: str = "<illustrative defaults>"
    currency: str = "money units"
    price_per_kwh: float = 0.10
    discount_rate: float = 0.08
    hours_per_year: float = 8000.0
    passes_per_wafer: float = 20.0
    sources: tuple[tuple[str, SourceEconomics], ...] = ()
    scanners: tuple[tuple[str, ScannerEconomics], ...] = ()
    default_scanner: ScannerEconomics = ScannerEconomics()
    plasma: PlasmaOption = PlasmaOption()
    by_kind: tuple[tuple[str, Reliability], ...] = ()
    by_part: tuple[tuple[str, Reliability], ...] = ()
    by_id: tuple[tuple[str, Reliability], ...] = ()
    threshold: float = 1e-6
    switching_time_h: float = 0.0
    improvement: float = 0.5
    defaulted: tuple[str, ...] = field(default=())
    locations: tuple[tuple[str, Location], ...] = field(default=(), compare=False)

    def where(self, path: str) -> Location:
        """Where ``path`` (e.g. ``scanners.litho-a1.wph``) was written, else the file."""
        table = dict(self.locations)
        while path:
            if path in table:
                return table[path]
            path = path.rpartition(".")[0]
        return Location(self.file, 1, 1)

    def source(self, source_id: str, power_w: float) -> SourceEconomics:
        """A source's money; the illustrative default scales with its power from 10 kW."""
        for key, value in self.sources:
            if key == source_id:
                return value
        scale = power_w / SHARED_RATED_W
        return SourceEconomics(SHARED_CAPITAL * scale, 20.0, SHARED_MAINTENANCE * scale)

    def scanner(self, scanner_id: str) -> ScannerEconomics:
        """A scanner's exposing share and throughput assumption."""
        return dict(self.scanners).get(scanner_id, self.default_scanner)

    def reliability(self, node_id: str, kind: str, part: str | None) -> Reliability:
        """By id, else by part, else by kind, else the illustrative default of the kind."""
        for table, key in ((self.by_id, node_id), (self.by_part, part), (self.by_kind, kind)):
            found = dict(table).get(key or "")
            if found is not None:
                return found
        mtbf, mttr = DEFAULT_RELIABILITY.get(kind, (100000.0, 24.0))
        return Reliability(mtbf, mttr)


_NUMBER = r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?"
_AMOUNT = re.compile(rf"^\s*({_NUMBER})\s*(thousand|million|billion|k|M|bn)?\s*$")
_SCALE = {None: 1.0, "thousand": 1e3, "k": 1e3, "million": 1e6, "M": 1e6, "billion": 1e9,
          "bn": 1e9}
_PRICE = re.compile(rf"^\s*({_NUMBER})\s*(?:per|/)\s*(kWh|MWh|Wh)\s*$")
_PER_KWH = {"Wh": 1e3, "kWh": 1.0, "MWh": 1e-3}
_TIME = re.compile(rf"^\s*({_NUMBER})\s*(h|hours?|d|days?|y|yr|years?)?\s*$")
_HOURS = {"h": 1.0, "hour": 1.0, "hours": 1.0, "d": 24.0, "day": 24.0, "days": 24.0,
          "y": 8760.0, "yr": 8760.0, "year": 8760.0, "years": 8760.0}


class _Reader:
    """A MapReader with the economics value kinds (amounts, prices, times)."""

    def __init__(self, r: MapReader, defaulted: list[str], prefix: str) -> None:
        self.r, self.defaulted, self.prefix = r, defaulted, prefix

    def _value(self, key: str, pattern: re.Pattern[str], what: str, example: str
               ) -> tuple[float, str | None] | None:
        value = self.r.raw(key)
        if value is MISSING:
            self.defaulted.append(f"{self.prefix}{key}")
            return None
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            return float(value), None
        match = pattern.match(value) if isinstance(value, str) else None
        if match is None:
            self.r.ctx.error("bad-value", f"{self.r.subject}: '{key}' is {value!r}, expected "
                             f"{what}", self.r.value_loc(key), f"write e.g. '{key}: {example}'")
            return None
        return float(match.group(1)), match.group(2)

    def _check(self, key: str, number: float, low: float, high: float = float("inf"),
               strict: bool = False) -> float | None:
        if number < low or (strict and number <= low) or number > high:
            bound = f"above {low:g}" if strict else f"at least {low:g}"
            if high != float("inf"):
                bound += f" and at most {high:g}"
            self.r.ctx.error("out-of-range", f"{self.r.subject}: '{key}' is {number:g}, it must "
                             f"be {bound}", self.r.value_loc(key), "correct the value")
            return None
        return number

    def amount(self, key: str, default: float) -> float:
        got = self._value(key, _AMOUNT, "an amount (a number, or e.g. '400 million')",
                          "400 million")
        if got is None:
            return default
        checked = self._check(key, got[0] * _SCALE[got[1]], 0.0)
        return default if checked is None else checked

    def price(self, key: str, default: float) -> float:
        got = self._value(key, _PRICE, "a price per kWh or per MWh", "0.10 per kWh")
        if got is None:
            return default
        if got[1] is None:
            self.r.ctx.error("bad-unit", f"{self.r.subject}: '{key}' needs its energy unit",
                             self.r.value_loc(key), f"write e.g. '{key}: {got[0]:g} per kWh'")
            return default
        checked = self._check(key, got[0] * _PER_KWH[got[1]], 0.0)
        return default if checked is None else checked

    def hours(self, key: str, default: float, unit: str = "h", low: float = 0.0,
              high: float = float("inf"), strict: bool = True) -> float:
        got = self._value(key, _TIME, "a time (e.g. '8000 h', '20 years')", f"{default:g} {unit}")
        if got is None:
            return default
        checked = self._check(key, got[0] * _HOURS[got[1] or unit], low, high, strict)
        return default if checked is None else checked

    def years(self, key: str, default: float) -> float:
        return self.hours(key, default * 8760.0, "years") / 8760.0

    def share(self, key: str, default: float, strict: bool = False) -> float:
        if not self.r.has(key):
            self.r.raw(key)
            self.defaulted.append(f"{self.prefix}{key}")
            return default
        got = self.r.quantity(key, "fraction", minimum=0.0, maximum=1.0, strict_minimum=strict)
        return default if got is None else got

    def number(self, key: str, default: float, low: float = 0.0) -> float:
        got = self._value(key, _AMOUNT, "a number", f"{default:g}")
        if got is None:
            return default
        checked = self._check(key, got[0] * _SCALE[got[1]], low, strict=True)
        return default if checked is None else checked

    def power(self, key: str, default: float) -> float:
        if not self.r.has(key):
            self.r.raw(key)
            self.defaulted.append(f"{self.prefix}{key}")
            return default
        got = self.r.quantity(key, "power", minimum=0.0, strict_minimum=True)
        return default if got is None else got


def _entries(ctx: Context, top: MapReader, key: str) -> list[MapReader]:
    if top.mapping(key) is None:
        return []
    section = top.sub(key, f"economics '{key}'")
    out = []
    for name in list(section.data):
        if section.mapping(name) is not None:
            out.append(section.sub(name, f"{key} '{name}'"))
    section.finish()
    return out


def _reliability(ctx: Context, r: MapReader, defaulted: list[str]) -> Reliability | None:
    reader = _Reader(r, defaulted, "")
    mttr = reader.hours("mttr", 0.0, low=0.0, strict=True)
    if r.has("availability"):
        a = reader.share("availability", 1.0, strict=True)
        mtbf = a / (1.0 - a) * mttr if a < 1.0 else float("inf")
        if r.has("mtbf"):
            ctx.error("conflict", f"{r.subject}: give 'mtbf' or 'availability', not both",
                      r.key_loc("availability"), "remove one of them")
    else:
        mtbf = reader.hours("mtbf", 0.0, low=0.0, strict=True)
    if not r.has("mttr") or mtbf in (0.0, float("inf")):
        ctx.error("missing-key", f"{r.subject}: give 'mtbf' and 'mttr' (or 'availability' "
                  "below 100 % and 'mttr')", r.key_loc("mttr"), "e.g. {mtbf: 50000 h, mttr: 24 h}")
        return None
    r.finish()
    return Reliability(mtbf, mttr)


def parse_economics(doc: YamlDocument, where: Path = ()) -> Economics:
    """Read economics inputs from a document (the whole file, or a layout's section).

    Raises
    ------
    LayoutError
        Every problem, located (file:line:column) with a hint.

    Examples
    --------
    >>> from beamplan.layout.yamlpos import parse_yaml
    >>> e = parse_economics(parse_yaml("currency: cr\\nelectricity_price: 80 per MWh", "e.yaml"))
    >>> e.currency, round(e.price_per_kwh, 6), "discount_rate" in e.defaulted
    ('cr', 0.08, True)
    """
    ctx = Context(doc.positions)
    data: Any = doc.data
    for key in where:
        data = data[key]
    if not isinstance(data, dict):
        ctx.error("bad-type", "economics must be a mapping of keys such as 'currency:', "
                  "'electricity_price:', 'sources:'", doc.positions.value(where),
                  "see docs/cost.md")
        raise LayoutError(ctx.diagnostics)
    top = MapReader(ctx, data, {k: (*where, k) for k in data}, "economics", where)
    defaulted: list[str] = []
    rd = _Reader(top, defaulted, "")
    top.text("note")
    currency = top.text("currency", default="money units")
    if "currency" not in data:
        defaulted.append("currency")
    base = Economics()
    price = rd.price("electricity_price", base.price_per_kwh)
    rate = rd.share("discount_rate", base.discount_rate)
    hours = rd.hours("hours_per_year", base.hours_per_year, high=8784.0)
    passes = rd.number("passes_per_wafer", base.passes_per_wafer)
    sources = []
    for r in _entries(ctx, top, "sources"):
        sr = _Reader(r, defaulted, f"sources.{r.where[-1]}.")
        sources.append((str(r.where[-1]), SourceEconomics(
            sr.amount("capital", SHARED_CAPITAL), sr.years("life", 20.0),
            sr.amount("maintenance", SHARED_MAINTENANCE), r.flag("kept_warm", default=False))))
        r.finish()
    default_scanner, scanners = ScannerEconomics(), []
    for r in _entries(ctx, top, "scanners"):
        name = str(r.where[-1])
        sr = _Reader(r, defaulted if name == "default" else [], f"scanners.{name}.")
        base_s = default_scanner if name != "default" else ScannerEconomics()
        item = ScannerEconomics(sr.share("exposing", base_s.exposing),
                                sr.number("wph", base_s.wph_at_need))
        r.finish()
        if name == "default":
            default_scanner = item
        else:
            scanners.append((name, item))
    plasma = PlasmaOption()
    if top.mapping("plasma") is not None:
        r = top.sub("plasma", "economics 'plasma'")
        pr = _Reader(r, defaulted, "plasma.")
        plasma = PlasmaOption(pr.power("power", plasma.power_w),
                              pr.power("electrical", plasma.electrical_w),
                              pr.amount("capital", plasma.capital), pr.years("life", 10.0),
                              pr.amount("maintenance", plasma.maintenance_per_year),
                              pr.hours("mtbf", plasma.mtbf_h), pr.hours("mttr", plasma.mttr_h))
        r.finish()
    else:
        defaulted.append("plasma")
    tables: dict[str, list[tuple[str, Reliability]]] = {"kinds": [], "parts": [], "ids": []}
    threshold, switching, improvement = base.threshold, base.switching_time_h, base.improvement
    if top.mapping("reliability") is not None:
        rel = top.sub("reliability", "economics 'reliability'")
        rr = _Reader(rel, defaulted, "reliability.")
        threshold = rr.share("pair_threshold", base.threshold)
        switching = rr.hours("switching_time", 0.0, strict=False)
        improvement = rr.share("improvement", base.improvement, strict=True)
        for key in tables:
            for r in _entries(ctx, rel, key):
                got = _reliability(ctx, r, [])
                if got is not None:
                    tables[key].append((str(r.where[-1]), got))
        rel.finish()
    else:
        defaulted.append("reliability")
    top.finish()
    if ctx.failed:
        raise LayoutError(ctx.diagnostics)
    locations = tuple((".".join(str(k) for k in path[len(where):]), loc)
                      for path, loc in doc.positions.keys.items()
                      if path[:len(where)] == where and len(path) > len(where))
    return Economics(doc.positions.file, currency, price, rate, hours, passes, tuple(sources),
                     tuple(scanners), default_scanner, plasma, tuple(tables["kinds"]),
                     tuple(tables["parts"]), tuple(tables["ids"]), threshold, switching,
                     improvement, tuple(defaulted), locations)


def load_economics(path: str | None, layout_file: str) -> Economics:
    """An economics file, else the layout's ``economics:`` section, else the defaults.

    Examples
    --------
    >>> load_economics(None, "layouts/pilot-line.yaml").file
    '<illustrative defaults>'
    >>> load_economics("layouts/economics/two-bay.economics.yaml", "layouts/two-bay.yaml").currency
    'cr'
    """
    if path is not None:
        return parse_economics(load_yaml(path))
    doc = load_yaml(layout_file)
    if isinstance(doc.data, dict) and isinstance(doc.data.get("economics"), dict):
        return parse_economics(doc, ("economics",))
    return Economics(defaulted=("all",))


def check_against(econ: Economics, layout: Layout) -> None:
    """Refuse entries that name no source, scanner, part, kind or id of the layout.

    Raises
    ------
    LayoutError
        One located error per unknown name, with a "did you mean" hint.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.layout.yamlpos import parse_yaml
    >>> econ = parse_economics(parse_yaml("sources:\\n  halo-fle: {capital: 1}", "e.yaml"))
    >>> check_against(econ, load_layout("layouts/pilot-line.yaml"))
    Traceback (most recent call last):
    ...
    beamplan.errors.LayoutError: e.yaml:2:3: error: economics: 'halo-fle' is not a source of \
layout 'pilot-line'; did you mean 'halo-fel'?
    """
    kinds = {*DEFAULT_RELIABILITY, *(e.kind for e in layout.elements)}
    groups = [("sources", [name for name, _ in econ.sources], [x.id for x in layout.sources],
               "a source"),
              ("scanners", [name for name, _ in econ.scanners], [x.id for x in layout.scanners],
               "a scanner"),
              ("reliability.ids", [name for name, _ in econ.by_id], list(layout.node_ids),
               "a source, element or scanner"),
              ("reliability.parts", [name for name, _ in econ.by_part],
               sorted({e.part for e in layout.elements if e.part}), "a part used"),
              ("reliability.kinds", [name for name, _ in econ.by_kind], sorted(kinds), "a kind")]
    problems = []
    for section, names, known, noun in groups:
        for name in names:
            if name not in known:
                problems.append(Diagnostic(
                    "error", "unknown-id", f"economics: '{name}' is not {noun} of layout "
                    f"'{layout.name}'", econ.where(f"{section}.{name}"),
                    did_you_mean(name, known) or f"the choices are: {', '.join(known)}"))
    if problems:
        raise LayoutError(problems)
