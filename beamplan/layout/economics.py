"""Economics and reliability inputs: an economics file, or a layout's ``economics:`` section.

One format serves ``beamplan cost`` and ``beamplan availability`` (see docs/cost.md).
Every value left out takes an illustrative default, and the result remembers which
ones did (:attr:`Economics.defaulted`) so reports can mark them. Bad input gives
the same located one-line errors as a layout.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from beamplan.errors import Diagnostic, LayoutError, Location, did_you_mean
from beamplan.layout.econ_values import EconReader
from beamplan.layout.model import Layout
from beamplan.layout.reader import Context, MapReader
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
    reader = EconReader(r, defaulted, "")
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
    rd = EconReader(top, defaulted, "")
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
        sr = EconReader(r, defaulted, f"sources.{r.where[-1]}.")
        sources.append((str(r.where[-1]), SourceEconomics(
            sr.amount("capital", SHARED_CAPITAL), sr.years("life", 20.0),
            sr.amount("maintenance", SHARED_MAINTENANCE), r.flag("kept_warm", default=False))))
        r.finish()
    default_scanner, scanners = ScannerEconomics(), []
    for r in _entries(ctx, top, "scanners"):
        name = str(r.where[-1])
        sr = EconReader(r, defaulted if name == "default" else [], f"scanners.{name}.")
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
        pr = EconReader(r, defaulted, "plasma.")
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
        rr = EconReader(rel, defaulted, "reliability.")
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
