"""Cost: annuity, energy arithmetic, break-even, trade facts, located input errors, CLI."""

from __future__ import annotations

import json
import pathlib

import pytest

import beamplan
from beamplan.analyses.cost import cost_of
from beamplan.cli.main import main
from beamplan.errors import LayoutError
from beamplan.layout.economics import SHARED_W_PER_W, Economics, PlasmaOption, parse_economics
from beamplan.layout.yamlpos import parse_yaml
from beamplan.network.graph import build_network
from beamplan.physics.economics import (
    annual_capital,
    annuity_factor,
    break_even_count,
    dose_for_throughput,
    energy_mwh,
)
from beamplan.physics.scanner_tool import ScannerTool


def test_annuity_by_hand() -> None:
    # hand calculation: 0.1 / (1 - 1.1**-2) = 0.1 / (1 - 0.826446) = 0.576190
    assert annuity_factor(0.10, 2) == pytest.approx(0.5761905, rel=1e-6)
    # hand calculation: a 2-year loan of 1000 at 10 %: 576.19 a year repays it exactly
    pay = annual_capital(1000.0, 0.10, 2)
    assert (1000.0 * 1.1 - pay) * 1.1 - pay == pytest.approx(0.0, abs=1e-9)
    assert annuity_factor(0.0, 4) == 0.25  # hand calculation: no interest, C / n
    with pytest.raises(ValueError):
        annuity_factor(0.05, 0.0)


def test_energy_arithmetic_by_hand() -> None:
    # hand calculation: 16.332797 MW × 8200 h = 133,928.94 MWh; × 95 per MWh = 12.72 million
    assert energy_mwh(16.332797e6, 8200.0) == pytest.approx(133928.935, rel=1e-6)
    net = build_network(beamplan.load("layouts/two-bay.yaml"))
    econ = Economics(price_per_kwh=0.095, hours_per_year=8200.0)
    report = cost_of(beamplan.plan(net), net, econ)
    main_src = report.sources[0]
    assert main_src.energy_mwh == pytest.approx(main_src.electrical_w * 8200 / 1e6)
    assert main_src.electricity_per_year == pytest.approx(main_src.energy_mwh * 95.0)
    # the scanners' shares add up to the fab
    assert sum(s.total_per_year for s in report.scanners) == pytest.approx(report.total_per_year)
    one = report.scanners[0]
    # hand calculation: passes = wph × hours × exposing share
    assert one.passes_per_year == pytest.approx(one.wph * 8200.0 * 0.8)


def test_break_even_by_hand() -> None:
    # hand calculation: shared 100 per year per source + 2 per scanner; plasma 12 per scanner:
    # 100 + 2N <= 12N from N = 10 on
    assert break_even_count(100.0, 1e4, 100.0, 2.0, 12.0) == 10
    # with 1 kW per scanner a 10 kW source serves 10: at N = 10 one source, 120 <= 120
    assert break_even_count(100.0, 1e4, 1e3, 2.0, 12.0) == 10
    # 11 scanners need a second source: the step at 11 (222 > 132), so 10 stays the answer
    # and a source too small for one scanner's share never wins
    assert break_even_count(100.0, 1e3, 1e3, 2.0, 12.0, max_count=50) is None


def test_trade_facts_from_the_illustrative_defaults() -> None:
    # common practice, no source: ~10 kW EUV for ~7 MW (0.7 MW per kW) shared,
    # ~1.1 MW for 250 W at IF (4.4 MW per kW) for a plasma source
    assert pytest.approx(7.0) == SHARED_W_PER_W * 10e3 / 1e6
    assert pytest.approx(0.7) == SHARED_W_PER_W * 1e3 / 1e6
    plasma = PlasmaOption()
    assert plasma.electrical_w / plasma.power_w * 1e3 / 1e6 == pytest.approx(4.4)
    econ = Economics()
    money = econ.source("any", 10e3)
    assert (money.capital, money.maintenance_per_year) == (400e6, 40e6)  # trade facts


def test_dose_for_throughput_inverts_the_throughput_model() -> None:
    # the example of throughput_at_power: 300 J/m² at 200 W gives 149.75 wph
    assert dose_for_throughput(ScannerTool(), 200.0, 149.75) == pytest.approx(300.0, rel=1e-4)
    with pytest.raises(ValueError):
        dose_for_throughput(ScannerTool(), 200.0, 250.0)  # beyond the stage (about 200 wph)


@pytest.mark.parametrize(("text", "where", "words"), [
    ("electricity_price: 0.1", "e.yaml:1:20", "needs its energy unit"),
    ("discount_rate: 140 %", "e.yaml:1:16", "at most 1"),
    ("sources:\n  fel: {capital: lots}", "e.yaml:2:18", "expected an amount"),
    ("reliability:\n  kinds:\n    mirror: {mtbf: 5 h}", "e.yaml:3:5", "'mttr'"),
    ("hours_per_year: 9000 h", "e.yaml:1:17", "at most 8784"),
    ("currency: cr\nprice: 3", "e.yaml:2:1", "unknown key 'price'"),
])
def test_located_errors(text: str, where: str, words: str) -> None:
    with pytest.raises(LayoutError) as info:
        parse_economics(parse_yaml(text, "e.yaml"))
    message = str(info.value)
    assert where in message and words in message, message


def test_cost_cli_json_and_done_when(tmp_path: pytest.TempPathFactory) -> None:
    out = f"{tmp_path}/c.json"
    code = main(["cost", "layouts/two-bay.yaml", "layouts/economics/two-bay.economics.yaml",
                 "--availability", "--json", out, "-q"])
    assert code == 0
    doc = json.loads(pathlib.Path(out).read_text(encoding="utf-8"))
    assert doc["format"] == "beamplan-cost/1" and doc["currency"] == "cr"
    assert doc["break_even"]["scanners"] >= 1
    assert doc["fab"]["cost_per_wafer"] == pytest.approx(doc["fab"]["cost_per_pass"] * 20,
                                                         rel=1e-6)
    assert doc["availability"]["fab"]["passes_lost_per_year"] > 0
    assert doc["availability"]["ranking"][0]["id"] == "fel-main"  # the source's 1.6 % dominate
    again = f"{tmp_path}/d.json"
    main(["cost", "layouts/two-bay.yaml", "layouts/economics/two-bay.economics.yaml",
          "--availability", "--json", again, "-q"])
    text = pathlib.Path(again).read_text(encoding="utf-8")
    assert text == pathlib.Path(out).read_text(encoding="utf-8")


def test_cost_cli_bad_economics_is_located(tmp_path: pytest.TempPathFactory,
                                           capsys: pytest.CaptureFixture[str]) -> None:
    bad = tmp_path / "bad.economics.yaml"  # type: ignore[operator]
    bad.write_text("currency: cr\ndiscount_rate: lots\n")
    assert main(["cost", "layouts/pilot-line.yaml", str(bad)]) == 1
    err = capsys.readouterr().err
    assert "bad.economics.yaml:2:16" in err and "Traceback" not in err


def test_cost_compare_html_csv(tmp_path: pytest.TempPathFactory) -> None:
    html, folder = f"{tmp_path}/c.html", f"{tmp_path}/csv"
    code = main(["cost", "layouts/pilot-line.yaml", "--compare", "layouts/pilot-line.yaml",
                 "layouts/coated-line.yaml", "--html", html, "--csv", folder, "-q"])
    assert code == 0
    page = pathlib.Path(html).read_text(encoding="utf-8")
    assert "<svg" in page and "Break-even" in page
    import os

    tables = sorted(n for n in os.listdir(folder) if n.endswith(".csv"))
    assert tables == ["break_even.csv", "cost_scanners.csv", "cost_sources.csv"]


def test_economics_section_of_a_layout(tmp_path: pathlib.Path,
                                       capsys: pytest.CaptureFixture[str]) -> None:
    text = pathlib.Path("layouts/pilot-line.yaml").read_text(encoding="utf-8")
    good = tmp_path / "with-economics.yaml"
    good.write_text(text + "\neconomics:\n  currency: cr\n  electricity_price: 80 per MWh\n")
    assert main(["check", str(good), "-q"]) == 0  # the loader lets the section through
    out = tmp_path / "c.json"
    assert main(["cost", str(good), "--json", str(out), "-q"]) == 0
    doc = json.loads(out.read_text(encoding="utf-8"))
    assert doc["currency"] == "cr" and doc["inputs"]["price_per_kwh"] == 0.08  # 80 per MWh
    lines = len(text.splitlines())
    bad = tmp_path / "bad-economics.yaml"
    bad.write_text(text + "\neconomics:\n  hours_per_year: lots\n")
    assert main(["cost", str(bad)]) == 1
    err = capsys.readouterr().err
    # located in the layout file, at the value (two lines below the end of the layout)
    assert f"bad-economics.yaml:{lines + 3}:19: error: economics: 'hours_per_year'" in err


def test_names_the_layout_does_not_know_and_wph_beyond_the_stage(
        tmp_path: pathlib.Path, capsys: pytest.CaptureFixture[str]) -> None:
    econ = tmp_path / "e.yaml"
    econ.write_text("reliability:\n  ids:\n    halo-fle: {mtbf: 10 h, mttr: 1 h}\n")
    assert main(["availability", "layouts/pilot-line.yaml", str(econ)]) == 1
    err = capsys.readouterr().err
    assert "e.yaml:3:5: error: economics: 'halo-fle' is not a source, element or scanner" in err
    assert "did you mean 'halo-fel'" in err
    # hand calculation: the default tool's stage allows 3600 / 18 s = 200 wph at most
    econ.write_text("scanners:\n  default: {wph: 210}\n")
    assert main(["cost", "layouts/pilot-line.yaml", str(econ)]) == 1
    assert "e.yaml:2:13: error: economics: scanner 'litho-p1'" in capsys.readouterr().err


def test_cost_page_with_availability_is_well_formed(tmp_path: pathlib.Path) -> None:
    from tests.test_html import parse

    html = tmp_path / "c.html"
    assert main(["cost", "layouts/pilot-line.yaml", "--availability", "--html", str(html),
                 "-q"]) == 0
    checker = parse(html.read_text(encoding="utf-8"))
    assert checker.problems == [] and checker.stack == []  # every tag closed, in order
    assert checker.seen.count("svg") == 3  # cost breakdown, break-even, passes lost
    ids = [v for _, k, v in checker.attrs if k == "id"]
    assert len(ids) == len(set(ids))


def test_a_source_without_a_draw_takes_the_trade_fact_and_the_curve_gives_the_count() -> None:
    text = pathlib.Path("layouts/pilot-line.yaml").read_text(encoding="utf-8")
    bare = text.replace("halo-fel: {power: 6 kW, electrical: 9 MW, electrical_fixed: 3 MW}",
                        "halo-fel: {power: 6 kW}")
    assert bare != text
    from tests.conftest import network_from_text

    net = network_from_text(bare)
    report = cost_of(beamplan.plan(net), net, Economics())
    src = report.sources[0]
    # common practice, no source: 0.7 MW of wall-plug draw per kW of EUV
    assert src.electrical_w == pytest.approx(700.0 * src.output_w)
    assert src.draw_basis.startswith("illustrative")
    # the break-even count is the first N of the curve at which the shared side costs less
    first = next(p.scanners for p in report.curve if p.shared_per_year <= p.plasma_per_year)
    assert report.break_even == first
    # hand calculation of the first point: one source's fixed cost + one scanner's draw
    one = report.curve[0]
    fixed = src.capital_per_year + src.maintenance_per_year  # no fixed draw without a layout draw
    variable = 700.0 * report.per_scanner_source_w * 8000.0 / 1e6 * 1e3 * 0.10
    assert one.shared_per_year == pytest.approx(fixed + variable)
