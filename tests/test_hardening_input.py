"""Hardening of the input side: one regression test per class of trouble found by fuzzing.

Limits (size, nodes, alias expansion, depth), aliases and merge keys, tags,
numbers (digits, decimal comma, huge integers, ranges), messages (one line,
escaped, short excerpts), case files and command-line changes. Time and
memory bounds here are generous ceilings that catch a runaway (seconds, tens
of MB), not timing tests.
"""

from __future__ import annotations

import contextlib
import io
import pathlib
import sys
import time
import tracemalloc

import pytest

from beamplan.cli.main import main
from beamplan.errors import Diagnostic, LayoutError, Location, excerpt, printable
from beamplan.layout.limits import LIMITS, STANDARD
from beamplan.layout.loader import parse_layout
from beamplan.layout.yamlbuild import measure_events
from beamplan.layout.yamlpos import _events, load_yaml, parse_yaml
from beamplan.units import UnitError, parse_quantity

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parent / "perf"))
from campus import campus_yaml

ROOT = pathlib.Path(__file__).resolve().parent.parent

TINY = """\
layout: tiny
format: 1
sources: {fel: {power: 10 kW}}
elements:
  m1: {kind: mirror, reflectivity: 0.9}
scanners:
  litho-1: {power: %s}
beamlines:
  - fel -> m1 -> litho-1
"""

# The "billion laughs": nine references per level, 9**10 leaves in 11 short lines.
BOMB = "a: &a [x, x, x, x, x, x, x, x, x]\n" + "".join(
    f"{chr(98 + i)}: &{chr(98 + i)} [{', '.join(['*' + chr(97 + i)] * 9)}]\n"
    for i in range(10))


def _error(text: str, file: str = "t.yaml") -> Diagnostic:
    with pytest.raises(LayoutError) as caught:
        parse_layout(parse_yaml(text, file))
    [error] = caught.value.errors
    return error


def _cli(args: list[str]) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(args)
    return code, out.getvalue(), err.getvalue()


# -- limits ---------------------------------------------------------------------------


def test_alias_bomb_is_refused_fast_and_small() -> None:
    tracemalloc.start()
    start = time.perf_counter()
    with pytest.raises(LayoutError) as caught:
        parse_yaml(BOMB, "bomb.yaml")
    took = time.perf_counter() - start
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    [error] = caught.value.errors
    assert error.code == "too-large" and "aliases expand" in error.message
    # the third level (c) already expands to 9 + 81 nodes; d passes 100,000 only at
    # level 6 (9**6 = 531,441): hand calculation
    assert error.location == Location("bomb.yaml", 6, 8)
    assert took < 5.0  # generous ceiling: measured well under 0.01 s
    assert peak < 50e6  # bytes; generous: measured under 0.1 MB


def test_recursive_alias_is_located() -> None:
    with pytest.raises(LayoutError) as caught:
        parse_yaml("a: 1\nb: &x [1, *x]\n", "r.yaml")
    [error] = caught.value.errors
    assert (error.code, error.location) == ("recursive-alias", Location("r.yaml", 2, 11))


def test_an_aliased_node_is_built_once_and_located_where_written() -> None:
    text = "parts: {}\nbase: &b {x: 1, y: [1, 2]}\nc1: *b\nc2: *b\n"
    doc = parse_yaml(text, "a.yaml")
    assert doc.data["c1"] is doc.data["c2"] is doc.data["base"]  # shared, not re-walked
    assert str(doc.positions.value(("c2", "y", 1))) == "a.yaml:2:24"  # hand count


@pytest.mark.parametrize("text", [
    "[" * 100_000 + "]" * 100_000,  # flow nesting: libyaml's own limit, located
    "a: " + "[" * 65 + "]" * 65,  # one past the depth limit of 64
    "".join("  " * i + f"k{i}:\n" for i in range(200)) + "  " * 200 + "v\n",  # block
    "a: &a " + "[" * 40 + "]" * 40 + "\nb: " + "[" * 30 + "*a" + "]" * 30,  # via an alias
])
def test_deep_nesting_is_a_located_error(text: str) -> None:
    with pytest.raises(LayoutError) as caught:
        parse_yaml(text, "deep.yaml")
    [error] = caught.value.errors
    assert error.code in ("too-deep", "yaml-syntax") and error.location is not None


def test_node_limit_and_the_large_preset() -> None:
    text = "[" + ", ".join(["0"] * (STANDARD.max_nodes + 10)) + "]"
    start = time.perf_counter()
    with pytest.raises(LayoutError) as caught:
        parse_yaml(text, "n.yaml")
    assert time.perf_counter() - start < 5.0  # ceiling; measured about 0.3 s
    [error] = caught.value.errors
    assert error.code == "too-large" and "--limits large" in error.hint
    measure_events(_events(text), "n.yaml", LIMITS["large"])  # within the large limits


def test_file_size_limit(tmp_path: pathlib.Path) -> None:
    path = tmp_path / "big.yaml"
    path.write_text("# " + "x" * STANDARD.max_bytes + "\n", encoding="utf-8")
    with pytest.raises(LayoutError) as caught:
        load_yaml(str(path))
    [error] = caught.value.errors
    assert (error.code, error.location) == ("too-large", Location(str(path), 1, 1))
    code, _, err = _cli(["check", str(path)])
    assert code == 1 and err.startswith(f"{path}:1:1: error: the file is larger than")
    assert load_yaml(str(path), LIMITS["large"]).data == {}


def test_a_large_campus_loads_with_the_default_limits() -> None:
    # 2,000 scanners (about 21,000 elements) pass without options
    layout = parse_layout(parse_yaml(campus_yaml(2000), "campus.yaml"))
    assert len(layout.scanners) == 2000


def test_a_10000_scanner_campus_fits_the_large_limits() -> None:
    text = campus_yaml(10_000)  # about 104,000 elements
    measure_events(_events(text), "campus.yaml", LIMITS["large"])  # no error


def test_limits_option_on_the_command_line(tmp_path: pathlib.Path) -> None:
    path = tmp_path / "campus.yaml"
    path.write_text(campus_yaml(20), encoding="utf-8")
    assert _cli(["check", str(path), "-q", "--limits", "large"])[0] == 0
    assert _cli(["check", str(path), "-q", "--limits", "huge"])[0] == 2


# -- loader leniencies ----------------------------------------------------------------


def test_merge_key_override_wins() -> None:
    text = ("layout: t\nformat: 1\nsources: {fel: {power: 10 kW}}\n"
            "base: &base {kind: mirror, reflectivity: 0.9}\n"
            "elements:\n  m1: {<<: *base, reflectivity: 0.8}\n  m2:\n    <<: *base\n"
            "scanners:\n  s1: {power: 300 W}\nbeamlines: [fel -> m1 -> m2 -> s1]\n")
    doc = parse_yaml(text, "m.yaml")
    assert doc.data["elements"]["m1"] == {"kind": "mirror", "reflectivity": 0.8}
    assert doc.data["elements"]["m2"] == {"kind": "mirror", "reflectivity": 0.9}
    # a merged key is located where it was written: in the anchored mapping
    assert str(doc.positions.value(("elements", "m2", "reflectivity"))) == "m.yaml:4:42"


def test_a_key_written_twice_is_still_an_error() -> None:
    with pytest.raises(LayoutError) as caught:
        parse_yaml("a: {x: 1, x: 2}\n", "d.yaml")
    assert caught.value.errors[0].code == "duplicate-key"


@pytest.mark.parametrize(("value", "where"), [
    ("!!python/object:os.system {kind: mirror}", 5), ("!foo 0.9", 5), ("!!binary aGk=", 5),
])
def test_tags_are_refused(value: str, where: int) -> None:
    error = _error(TINY.replace("{kind: mirror, reflectivity: 0.9}",
                                "{kind: mirror, reflectivity: " + value + "}") % "300 W")
    assert error.code == "bad-tag" and error.location is not None
    assert error.location.line == where


def test_standard_scalar_tags_are_accepted() -> None:
    assert parse_yaml("a: !!str 5\nb: !!float 2\n", "t.yaml").data == {"a": "5", "b": 2.0}


@pytest.mark.parametrize("text", ["1٣ W", "３ kW", "𝟙 kW"])
def test_non_ascii_digits_are_not_numbers(text: str) -> None:
    with pytest.raises(UnitError) as caught:
        parse_quantity(text, "power")
    assert "digits 0-9" in caught.value.message  # Python's float() would accept them


def test_decimal_comma_message_everywhere(tmp_path: pathlib.Path) -> None:
    error = _error(TINY.replace("{power: %s}", "\n    power: 1,5 kW"))
    assert "decimal comma" in error.message and "'1.5 kW'" in error.hint
    # in a flow mapping the comma starts a new key, '5 kW': the hint says why
    error = _error(TINY.replace("{power: %s}", "{power: 1,5 kW}"))
    assert error.code == "unknown-key" and "decimal comma" in error.hint
    # command-line changes and calculators read quantities the same way
    code, _, err = _cli(["cases", str(ROOT / "layouts" / "pilot-line.yaml"),
                         "--set", "litho-p1.power=1,5kW"])
    assert code == 1 and "decimal comma" in err


@pytest.mark.parametrize(("value", "code"), [
    ("1" + "0" * 5000, "bad-number"),  # past Python's int-string limit
    ("1" + "0" * 400, "bad-number"),  # would overflow float()
    ("1" + "0" * 40, "bad-unit"),  # a number, but out of range for a power
    (".nan", "bad-unit"), ("-.inf", "bad-unit"), ("1e15 W", "bad-unit"),
])
def test_huge_and_non_finite_numbers(value: str, code: str) -> None:
    error = _error(TINY % value)
    assert error.code == code and error.location == Location("t.yaml", 7, 20)
    if code == "bad-unit":
        assert "at most 1e+09 W" in error.message  # the range is in the message


def test_overflowing_int_value_is_a_unit_error() -> None:
    with pytest.raises(UnitError):
        parse_quantity(10**400, "power")


@pytest.mark.parametrize(("multilayer", "fragment"), [
    ("{periods: 100000000}", "from 1 to 1000"), ("{periods: 0}", "from 1 to 1000"),
    ("{period: 1e9 m}", "at most 1e+06 m"),
])
def test_counts_and_lengths_are_bounded(multilayer: str, fragment: str) -> None:
    element = "{kind: mirror, incidence: 5 deg, multilayer: " + multilayer + "}"
    error = _error(TINY.replace("{kind: mirror, reflectivity: 0.9}", element) % "300 W")
    assert fragment in error.format()


# -- messages -------------------------------------------------------------------------


def test_control_characters_are_escaped(tmp_path: pathlib.Path) -> None:
    path = tmp_path / "esc.yaml"
    path.write_text(TINY % '"5\\e[2J\\u202e W"', encoding="utf-8")
    code, _, err = _cli(["check", str(path)])
    assert code == 1 and "\x1b" not in err and "\u202e" not in err
    assert "\\x1b[2J" in err and "\\u202e" in err
    assert printable("a\nb\rc\x00") == "a\\nb\\rc\\x00"


def test_long_values_are_cut_short() -> None:
    error = _error(TINY % ("x" * 20_000))
    assert len(error.format()) < 400 and "…" in error.format()
    assert len(excerpt("y" * 1000)) <= 62


def test_yaml_syntax_errors_are_one_line(tmp_path: pathlib.Path) -> None:
    path = tmp_path / "syntax.yaml"
    path.write_text("a: [1, 2\nb: 3\n", encoding="utf-8")
    code, _, err = _cli(["check", str(path)])
    lines = err.splitlines()
    assert code == 1 and len(lines) == 2 and lines[1] == "1 error; nothing was planned"
    assert lines[0].startswith(f"{path}:2:2: error: YAML syntax: ")  # hand count


def test_every_error_path_prints_escaped_text() -> None:
    code, _, err = _cli(["plan", "no\x1b[2Jsuch.yaml"])
    assert code == 2 and "\x1b" not in err and "\\x1b" in err


# -- case files and command-line changes -----------------------------------------------


@pytest.mark.parametrize("body", [
    "cases: [1, 2]",
    "cases: {c: {changes: {drop: x}}}",
    "cases: {c: {changes: [{set: {5: 1}}]}}",
    "cases: {c: {changes: [{set: [1, 2]}]}}",
    "cases: {c: {changes: [{drop: {a: b}}]}}",
    "cases: {c: {changes: [{drop: []}]}}",
    "cases: {c: {changes: [{fail: [[1]]}]}}",
    "cases: {c: {changes: [{add: {scanner: [1], at: m1}}]}}",
    "cases: {c: {changes: [{add: {scanner: new, at: [1]}}]}}",
    "cases: {c: {changes: [{add: {scanner: new, behind: m1, part: {}}}]}}",
    "cases: {c: {changes: [{include: [a, b]}]}}",
    "cases: {c: {changes: [{scale: {litho-p1.power: 1e300}}]}}",
    "cases: {c: {changes: [{scale: {litho-p1.power: .nan}}]}}",
    "cases: {c: {changes: [{set: {litho-p1.power: [1]}}]}}",
    "cases: {c: {changes: [{set: {litho-p1.priority: 2}}]}}",
    "cases: {c: {note: [1], changes: [{drop: litho-p1}]}}",
    "cases: {c: {changes: [{drop: litho-p1}], extra: 1}}",
    "cases: {c: {changes: [null, 1, {}]}}",
])
def test_case_file_mistakes_are_located(tmp_path: pathlib.Path, body: str) -> None:
    path = tmp_path / "c.yaml"
    path.write_text(f"format: 1\n{body}\n", encoding="utf-8")
    code, _, err = _cli(["cases", str(ROOT / "layouts" / "pilot-line.yaml"), str(path), "-q"])
    assert code == 1, err
    assert err.splitlines()[0].startswith(f"{path}:"), err


def test_command_line_changes_name_the_option_and_occurrence() -> None:
    code, _, err = _cli(["cases", str(ROOT / "layouts" / "pilot-line.yaml"),
                         "--fail", "m3", "--fail", "m99", "-q"])
    assert code == 1
    assert err.startswith("--fail, argument 2: error: ")
    code, _, err = _cli(["cases", str(ROOT / "layouts" / "pilot-line.yaml"),
                         "--set", "m3.reflectivity=0.9", "--set", "m3=1", "-q"])
    assert code == 1 and err.startswith("--set, argument 2: error: ")


@pytest.mark.parametrize(("includes", "fragment"), [
    (1, "includes nest more than 50 deep"),  # a chain of 200 includes
    (2, "more than 10,000 changes"),  # each level includes the next twice: 2**20 changes
])
def test_include_chains_are_bounded(tmp_path: pathlib.Path, includes: int,
                                    fragment: str) -> None:
    levels = 200 if includes == 1 else 20
    lines = ["format: 1", "cases:"]
    for i in range(levels):
        body = ", ".join([f"{{include: c{i + 1}}}"] * includes)
        lines.append(f"  c{i}: {{changes: [{body}]}}")
    lines.append(f"  c{levels}: {{changes: [{{fail: m3}}]}}")
    path = tmp_path / "chain.yaml"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    code, _, err = _cli(["cases", str(ROOT / "layouts" / "pilot-line.yaml"), str(path),
                         "--only", "c0", "-q"])
    assert code == 1 and fragment in err and err.startswith(f"{path}:")


@pytest.mark.parametrize(("electrical", "fragment"), [
    ("0 W", "it must be above 0"), ("5 kW", "is below the EUV power"),
])
def test_electrical_power_is_validated(electrical: str, fragment: str) -> None:
    text = TINY.replace("{fel: {power: 10 kW}}",
                        "{fel: {power: 10 kW, electrical: " + electrical + "}}") % "300 W"
    error = _error(text)
    assert fragment in error.message and error.location == Location("t.yaml", 3, 43)  # hand count


def test_wall_plug_ratio_needs_every_source_in_use_to_give_its_electrical_power(
        tmp_path: pathlib.Path) -> None:
    # source a gives its electrical power, b does not: no ratio (it crashed: "efficiency 2 > 1")
    path = tmp_path / "mixed.yaml"
    path.write_text("layout: mixed\nformat: 1\nsources:\n  a: {power: 10 kW, electrical: 10 kW}\n"
                    "  b: {power: 10 kW}\nscanners:\n  s1: {power: 8 kW}\n  s2: {power: 8 kW}\n"
                    "beamlines: [a -> s1, b -> s2]\n", encoding="utf-8")
    code, out, _ = _cli(["plan", str(path), "--json", "-", "-q"])
    assert code == 0 and '"electrical_per_delivered": null' in out


def test_adding_behind_an_element_with_a_part_that_is_not_a_mapping(
        tmp_path: pathlib.Path) -> None:
    # an unused part that is a number is allowed in the layout; using it in a case was a
    # TypeError ("'int' object is not iterable")
    text = (ROOT / "layouts" / "pilot-line.yaml").read_text(encoding="utf-8")
    path = tmp_path / "layout.yaml"
    path.write_text(text.replace("parts:\n", "parts:\n  odd: 5\n", 1), encoding="utf-8")
    code, _, err = _cli(["cases", str(path), "--add", "new behind=m1 part=odd power=1W", "-q"])
    assert code == 1 and err.startswith("--add, argument 1: error: ")
    assert "part 'odd' is not a splitter" in err
