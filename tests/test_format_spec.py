"""One description of the layout format: schema, docs, settable keys, tool keys from it.

The JSON Schema is checked with the independent ``jsonschema`` validator (draft
2020-12) against every demo, every case file and generated layouts; a list of
broken layouts whose mistake is a schema matter must fail it.
"""

from __future__ import annotations

import dataclasses
import json

import jsonschema
import pytest
import yaml

from beamplan.analyses.changes import SETTABLE
from beamplan.cli.main import main
from beamplan.errors import LayoutError
from beamplan.layout import spec as spec_module
from beamplan.layout.docgen import key_tables, updated
from beamplan.layout.endpoints import TOOL_KEYS
from beamplan.layout.loader import load_layout
from beamplan.layout.reader import MapReader
from beamplan.layout.schema import case_schema, layout_schema
from beamplan.layout.spec import SECTIONS, KeySpec, settable
from beamplan.layout.yamlpos import parse_yaml
from beamplan.physics.demand import ScannerTool
from tests.conftest import ROOT
from tests.layoutgen import random_layout

LAYOUTS = sorted((ROOT / "layouts").glob("*.yaml"))
CASES = sorted((ROOT / "layouts" / "cases").glob("*.yaml"))
# Broken layouts whose mistake the schema sees (unknown key, wrong type, out-of-range
# number, missing required key); the others are units, beamlines or graph matters.
SCHEMA_BROKEN = (
    "beamlines-not-a-list",  # wrong type
    "format-as-text",  # wrong type
    "in-service-key",  # unknown key
    "missing-format",  # missing required key
    "missing-kind",  # missing required key (kind, or a part)
    "missing-required-key",  # a scanner without power or dose and wph
    "multilayer-old-key",  # unknown key
    "multilayer-periods-out-of-range",  # out of range
    "non-ascii-digit",  # not a number with a unit
    "one-output-splitter",  # too few outputs
    "reflectivity-above-one",  # out of range
    "too-many-periods",  # out of range
    "unknown-element-key",  # unknown key
    "unknown-kind",  # not one of the kinds
    "unknown-top-key",  # unknown key
    "unparsable-quantity",  # not a number with a unit
    "wrong-format-version",  # out of range
)


def _validator(schema: dict[str, object]) -> jsonschema.Draft202012Validator:
    jsonschema.Draft202012Validator.check_schema(schema)
    return jsonschema.Draft202012Validator(schema)


@pytest.mark.parametrize("path", LAYOUTS, ids=lambda p: p.name)
def test_every_demo_is_valid_under_the_schema(path):
    errors = list(_validator(layout_schema()).iter_errors(yaml.safe_load(path.read_text())))
    assert errors == []


@pytest.mark.parametrize("path", CASES, ids=lambda p: p.name)
def test_every_case_file_is_valid_under_the_case_schema(path):
    errors = list(_validator(case_schema()).iter_errors(yaml.safe_load(path.read_text())))
    assert errors == []


def test_generated_layouts_are_valid_under_the_schema():
    validator = _validator(layout_schema())
    for seed in range(25):
        text = random_layout(seed)
        load_layout_text = parse_yaml(text, f"seed-{seed}.yaml")
        assert load_layout_text.data  # the generator's layouts load
        assert list(validator.iter_errors(yaml.safe_load(text))) == [], seed


@pytest.mark.parametrize("name", SCHEMA_BROKEN)
def test_broken_layouts_fail_the_schema(name):
    data = yaml.safe_load((ROOT / "tests" / "broken" / f"{name}.yaml").read_text())
    assert list(_validator(layout_schema()).iter_errors(data)), name


def test_schema_command_prints_both_schemas(capsys):
    assert main(["schema"]) == 0
    assert json.loads(capsys.readouterr().out)["title"].startswith("beamplan layout")
    assert main(["schema", "--cases"]) == 0
    assert "cases" in json.loads(capsys.readouterr().out)["required"]


def test_committed_docs_key_tables_are_current():
    text = (ROOT / "docs" / "layout-format.md").read_text(encoding="utf-8")
    assert updated(text) == text, (
        "docs/layout-format.md is stale: run "
        "'python -m beamplan.cli.main schema --docs docs/layout-format.md'")


def test_settable_and_tool_keys_come_from_the_tables():
    assert {group: settable(group) for group in ("source", "element", "scanner")} == SETTABLE
    # the keys the change language had before the tables (hand-listed then)
    assert set(SETTABLE["element"]) == {"heat_limit", "derate", "reflectivity", "transmission",
                                        "efficiency", "grazing", "incidence", "roughness",
                                        "select"}
    fields = {f.name for f in dataclasses.fields(ScannerTool)}
    assert {field for _, field in TOOL_KEYS.values()} <= fields
    assert len(TOOL_KEYS) == 13


def _asked_keys(monkeypatch) -> list[tuple[str, set[str], set[str]]]:
    seen: list[tuple[str, set[str], set[str]]] = []
    original = MapReader.finish

    def spy(self, hint_keys=(), table=()):
        seen.append((self.subject, set(self.asked) - set(hint_keys),
                     {s.name for s in table}))
        return original(self, hint_keys, table)

    monkeypatch.setattr(MapReader, "finish", spy)
    return seen


def test_readers_ask_only_described_keys(monkeypatch):
    seen = _asked_keys(monkeypatch)
    for path in LAYOUTS:
        load_layout(str(path))
    for seed in range(10):
        from beamplan.layout.loader import parse_layout

        parse_layout(parse_yaml(random_layout(seed), "x.yaml"))
    checked = [(subject, asked - table) for subject, asked, table in seen if table]
    assert checked and all(not extra for _, extra in checked), checked
    assert {"in_service"} >= set().union(*(e for _, e in checked))


NEW_KEY = KeySpec("sag", "quantity", "sagitta of the mirror figure", "length", "0 m",
                  minimum=0.0, maximum=0.01, settable="sag_m")
LAYOUT = """layout: marrowfield-sag
format: 1
sources: {fel: {power: 1 kW}}
elements:
  m1: {kind: mirror, reflectivity: 0.9, SAG}
scanners: {s1: {power: 100 W}}
beamlines: ["fel -> m1 -> s1"]
"""


def test_a_key_added_in_one_place_appears_everywhere(monkeypatch):
    monkeypatch.setitem(SECTIONS, "mirror", (*SECTIONS["mirror"], NEW_KEY))
    # validation: accepted, range-checked with a located error, near misses hinted
    from beamplan.layout.loader import parse_layout

    assert parse_layout(parse_yaml(LAYOUT.replace("SAG", "sag: 2 mm"), "a.yaml"))
    with pytest.raises(LayoutError) as bad:
        parse_layout(parse_yaml(LAYOUT.replace("SAG", "sag: 5 cm"), "b.yaml"))
    assert "b.yaml:5:" in str(bad.value) and "'sag'" in str(bad.value)
    with pytest.raises(LayoutError) as typo:
        parse_layout(parse_yaml(LAYOUT.replace("SAG", "sagg: 1 mm"), "c.yaml"))
    assert "'sag'" in str(typo.value)  # did you mean
    # docs, JSON Schema, what-if changes, completion
    assert "| `sag` | length |" in key_tables()
    schema = layout_schema()
    mirror = next(b for b in schema["$defs"]["element"]["allOf"]
                  if b["if"]["properties"].get("kind", {}).get("const") == "mirror")
    assert mirror["then"]["properties"]["sag"]["anyOf"][0]["maximum"] == 0.01
    assert settable("element")["sag"] == ("sag_m", "length")
    from beamplan.cli.completion import settable_keys

    assert "m1.sag=" in settable_keys(parse_layout(parse_yaml(
        LAYOUT.replace("SAG", "sag: 2 mm"), "a.yaml")))
    assert spec_module.find("mirror", "sag") is NEW_KEY


@pytest.mark.parametrize("shell", ["bash", "zsh", "fish"])
def test_completion_scripts_mention_every_subcommand(shell, capsys):
    import shutil
    import subprocess

    from beamplan.cli.main import build_parser

    assert main(["completion", shell]) == 0
    text = capsys.readouterr().out
    commands = next(a for a in build_parser()._actions if a.choices and "plan" in a.choices)
    assert text and all(name in text for name in commands.choices)
    assert "beamplan ids" in text or "_beamplan_layout_ids" in text
    if shell == "bash" and shutil.which("bash"):
        assert subprocess.run(["bash", "-n"], input=text, text=True).returncode == 0


def test_ids_lists_the_layout_ids(capsys):
    assert main(["ids", "beamplan", "cases", "layouts/two-bay.yaml", "--fail"]) == 0
    ids = capsys.readouterr().out.split()
    assert ids == list(load_layout("layouts/two-bay.yaml").node_ids)
    assert main(["ids", "beamplan", "plan"]) == 0
    assert capsys.readouterr().out == ""


def test_new_writes_a_layout_that_checks_and_plans(tmp_path, capsys):
    target = tmp_path / "bay.yaml"
    assert main(["new", str(target), "--bays", "3", "--scanners-per-bay", "2", "-q"]) == 0
    text = target.read_text()
    assert text.startswith("# yaml-language-server: $schema=")
    assert main(["check", str(target), "-q"]) == 0
    # 10 kW shared by six 500 W needs behind R = 0.9 folds and 0.98 outputs: all met
    # (hand calculation: 6 x 500 W / (0.9 x 0.98 x 0.98) = 3.5 kW < 10 kW)
    assert main(["plan", str(target), "-q"]) == 0
    assert list(_validator(layout_schema()).iter_errors(yaml.safe_load(text))) == []
    # never over an existing file: exit 2, the file untouched
    assert main(["new", str(target), "--bays", "1"]) == 2
    assert target.read_text() == text
    assert "never writes over" in capsys.readouterr().err


def test_new_with_a_recipe_and_a_small_source_falls_short(tmp_path, capsys):
    target = tmp_path / "short.yaml"
    # four scanners of 500 W from a 1 kW source cannot all be served (hand calculation)
    assert main(["new", str(target), "--bays", "2", "--source-power", "1kW", "-q"]) == 0
    assert main(["plan", str(target), "-q"]) == 3
    recipe = tmp_path / "recipe.yaml"
    assert main(["new", str(recipe), "--recipe", "30mJ/cm^2,150", "-q"]) == 0
    assert "dose: 30 mJ/cm^2" in recipe.read_text()
    assert main(["check", str(recipe), "-q"]) == 0
    assert main(["new", "-", "--bays", "1", "--scanners-per-bay", "1"]) == 0
    assert "marrowfield-fel -> fold-1 -> litho-1-1" in capsys.readouterr().out
    assert main(["new", str(tmp_path / "x.yaml"), "--recipe", "30"]) == 2
    assert main(["new", str(tmp_path / "x.yaml"), "--source-power", "5 mJ"]) == 2
    assert not (tmp_path / "x.yaml").exists()
