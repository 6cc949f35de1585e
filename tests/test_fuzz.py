"""Fuzz the command line with mutated layouts, case files and calculator arguments.

Seeds: the demo layouts (``layouts/*.yaml``), a case file for the two-bay
demo, and the ``beamplan calc`` commands shown in docs/calculators.md. They
are mutated at the YAML-text level (lines deleted or repeated, characters
swapped, aliases, tags, huge numbers, unicode and control characters
injected) and at the value level (a value replaced by another type, an
extreme or negative number, an empty list or mapping), then run through
``beamplan.cli.main.main``. Every run must:

* end with a documented exit code other than 4 (docs/exit-codes.md);
* print errors as single lines, escaped, without a traceback;
* finish well within a generous time limit (this catches hangs; it is not a
  timing test);
* leave the input file as it was;
* on ``--json -``, print strict JSON (no NaN or Infinity), and for a plan,
  keep conservation: source = delivered + absorbed + dumped.

The default run is seeded (derandomized) and small. The long run is behind
the ``slow_fuzz`` marker (see DEVELOPERS.md)::

    BEAMPLAN_FUZZ_EXAMPLES=5000 python -m pytest tests/test_fuzz.py -m slow_fuzz
"""

from __future__ import annotations

import contextlib
import hashlib
import io
import json
import os
import pathlib
import re
import shlex
import signal
import time
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from typing import Any

import pytest
import yaml
from hypothesis import HealthCheck, given, seed, settings
from hypothesis import strategies as st

from beamplan.cli.main import main

ROOT = pathlib.Path(__file__).resolve().parent.parent
LAYOUTS = sorted((ROOT / "layouts").glob("*.yaml"))
DOCUMENTED_EXITS = {0, 1, 2, 3, 5}  # docs/exit-codes.md; 4 is a bug
TIME_LIMIT_S = 10.0  # generous: a plan of a demo takes well under a second
LONG_EXAMPLES = int(os.environ.get("BEAMPLAN_FUZZ_EXAMPLES", "3000"))
LONG_SEED = int(os.environ.get("BEAMPLAN_FUZZ_SEED", "0"))

CASES_TEXT = """\
format: 1
cases:
  bay-b-grows:
    note: a seventh scanner in bay B on the spare port
    changes:
      - add: {scanner: litho-b7, at: b-split.spare, power: 400 W}
      - scale: {fel-main.power: 0.9}
  fold-ages:
    changes:
      - scale: {an-fold.reflectivity: 0.97}
      - set: {litho-a2.power: 420 W, an-fold.heat_limit: 150 W}
  b-service:
    changes:
      - drop: [litho-b1, litho-b2]
  new-tap:
    changes:
      - add: {scanner: litho-a7, behind: an-gap, part: tap, power: 200 W}
  worst-day:
    changes:
      - include: bay-b-grows
      - fail: an-fold
"""


def _calc_commands() -> list[list[str]]:
    """The ``beamplan calc`` commands of docs/calculators.md, as argument lists."""
    out = []
    text = (ROOT / "docs" / "calculators.md").read_text(encoding="utf-8")
    for line in text.replace("\\\n", " ").splitlines():
        if line.startswith("beamplan calc "):
            words = shlex.split(re.sub(r"\s+#.*$", "", line))
            out.append(words[1:])
    return out


CALC = _calc_commands()

# Text injected into a YAML file or an argument: the classes of trouble seen.
NASTY = [
    "&a ", "*a", "*nope", "<<: *a", "!foo ", "!!python/object:os.system ", "!!binary ",
    "!!int ", "!!float ", "!!str ", "1e999", "-1e308", "9" * 400, "1" * 5000, "0x1F", "1_000",
    "2024-01-01", "~", "null", "yes", ".nan", "-.inf", "1,5 kW", "１ kW", "1٣ W", "𝟙",
    "\x1b[2J", "\x07", "\x00", "\u202e", "\u2028", "\t", "'", '"', "[", "]", "{", "}", ": ",
    "- ", "? ", "#", "---\n", "|\n", "%YAML 1.1\n", "x" * 3000, "-1", "0", "1e-300 W",
    "1e300 W", "1e9 W", "1e15 W", "-5 kW", "nan W", "5 kg", "500 W", "95 %", "5 deg",
    "1000000", "100000000", "-.5", "&b [*a, *a, *a, *a, *a, *a, *a, *a, *a]",
]


class _Hang(BaseException):
    """Raised by the alarm when one run passes the time limit (not an Exception)."""


@contextlib.contextmanager
def _alarm(seconds: float) -> Iterator[None]:
    def ring(signum: int, frame: Any) -> None:
        raise _Hang(f"no answer within {seconds} s")

    old = signal.signal(signal.SIGALRM, ring)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, old)


def _strict_json(text: str) -> Any:
    def refuse(name: str) -> Any:
        raise AssertionError(f"non-finite number {name} in JSON output")

    return json.loads(text, parse_constant=refuse)


_LOCATED = re.compile(r"^(?:\S.*?:\d+:\d+|--[a-z-]+, argument \d+|<command line>|beamplan)"
                      r"(?::| error:) ")


def run(args: list[str], inputs: list[pathlib.Path]) -> tuple[int, str, str]:
    """Run the command line and check everything that must hold for any input."""
    before = [hashlib.sha256(p.read_bytes()).hexdigest() for p in inputs]
    out, err = io.StringIO(), io.StringIO()
    start = time.perf_counter()
    with _alarm(3 * TIME_LIMIT_S), contextlib.redirect_stdout(out), \
            contextlib.redirect_stderr(err):
        code = main(args)
    took = time.perf_counter() - start
    stdout, stderr = out.getvalue(), err.getvalue()
    shown = f"{args!r}\nexit {code}\nstderr: {stderr[:2000]}"
    assert code in DOCUMENTED_EXITS, shown
    assert took < TIME_LIMIT_S, f"took {took:.1f} s: {shown}"
    assert "Traceback" not in stderr and "internal error" not in stderr, shown
    for line in stderr.splitlines():
        assert line.isprintable(), f"unescaped character in {line!r}"
        assert len(line) <= 1100, f"a line of {len(line)} characters: {shown}"
    if code == 1:
        assert any(": error: " in line and _LOCATED.match(line)
                   for line in stderr.splitlines()), shown
    after = [hashlib.sha256(p.read_bytes()).hexdigest() for p in inputs]
    assert after == before, f"an input file changed: {shown}"
    return code, stdout, stderr


def _check_plan_json(stdout: str) -> None:
    document = _strict_json(stdout)
    losses = document["losses"]
    total = losses["delivered_w"] + losses["absorbed_w"] + losses["dumped_w"]
    # conservation (docs/json-format.md): source = delivered + absorbed + dumped
    assert total == pytest.approx(losses["source_w"], rel=1e-6, abs=1e-6), losses


# -- mutations ----------------------------------------------------------------------

def mutate_text(text: str, ops: list[tuple[str, int, int, str]]) -> str:
    """Apply text-level mutations (line deletions and repeats, swaps, injections)."""
    for op, i, j, nasty in ops:
        lines = text.split("\n")
        n = i % max(1, len(lines))
        if op == "delete" and len(lines) > 1:
            del lines[n]
        elif op == "repeat":
            lines.insert(n, lines[n])
        elif op == "swap" and len(text) > 1:
            a, b = sorted((i % len(text), j % len(text)))
            text = text[:a] + text[b] + text[a + 1:b] + text[a] + text[b + 1:]
            continue
        elif op == "inject":
            k = j % (len(text) + 1)
            text = text[:k] + nasty + text[k:]
            continue
        elif op == "number":
            numbers = list(re.finditer(r"\d+(?:\.\d+)?", text))
            if numbers:
                m = numbers[j % len(numbers)]
                text = text[:m.start()] + nasty + text[m.end():]
            continue
        text = "\n".join(lines)
    return text


def _paths(data: Any, path: tuple[Any, ...] = ()) -> Iterator[tuple[Any, ...]]:
    yield path
    if isinstance(data, dict):
        for key, value in data.items():
            yield from _paths(value, (*path, key))
    elif isinstance(data, list):
        for index, value in enumerate(data):
            yield from _paths(value, (*path, index))


def mutate_values(text: str, ops: list[tuple[str, int, Any]]) -> str:
    """Apply value-level mutations to the parsed document and write it back."""
    data = yaml.safe_load(text)
    for op, i, value in ops:
        paths = [p for p in _paths(data) if p]
        if not paths:
            break
        path = paths[i % len(paths)]
        parent = data
        for step in path[:-1]:
            parent = parent[step]
        last = path[-1]
        if op == "replace":
            parent[last] = value
        elif op == "delete":
            del parent[last]
        elif isinstance(parent, dict) and isinstance(value, (str, int, float)):
            parent[str(value)] = parent.pop(last)
    return yaml.safe_dump(data, sort_keys=False, allow_unicode=True, width=4096)


# -- the checks ---------------------------------------------------------------------


def check_layout(folder: pathlib.Path, text: str) -> None:
    """check, and plan --json - where the layout is valid."""
    path = folder / "layout.yaml"
    path.write_text(text, encoding="utf-8", errors="surrogatepass")
    code, _, _ = run(["check", str(path), "-q"], [path])
    if code == 0:
        code, stdout, _ = run(["plan", str(path), "--json", "-", "-q"], [path])
        if code in (0, 3):
            _check_plan_json(stdout)


def check_cases(folder: pathlib.Path, text: str, extra: tuple[str, ...] = ()) -> None:
    """cases against the two-bay demo with a mutated case file (and options)."""
    layout = ROOT / "layouts" / "two-bay.yaml"
    path = folder / "cases.yaml"
    path.write_text(text, encoding="utf-8", errors="surrogatepass")
    code, stdout, _ = run(["cases", str(layout), str(path), *extra, "--json", "-", "-q"],
                          [layout, path])
    if code in (0, 3):
        _strict_json(stdout)


def check_calc(args: list[str]) -> None:
    code, stdout, _ = run(args, [])
    if "--json" in args and code in (0, 1) and stdout.strip():
        _strict_json(stdout)


def mutate_args(args: list[str], ops: list[tuple[str, int, int, str]]) -> list[str]:
    """Mutate a calculator argument list (the sub-command name is kept)."""
    head, rest = args[:2], list(args[2:])
    options = sorted({a for command in CALC for a in command if a.startswith("--")})
    for op, i, j, nasty in ops:
        n = i % max(1, len(rest))
        if op == "delete" and rest:
            del rest[n]
        elif op == "repeat" and rest:
            rest.insert(n, rest[n])
        elif op == "replace" and rest:
            rest[n] = nasty
        elif op == "append":
            rest += [options[j % len(options)], nasty]
        elif op == "swap" and len(rest) > 1:
            m = j % len(rest)
            rest[n], rest[m] = rest[m], rest[n]
    return head + [a.replace("\x00", "") for a in rest]


IDS = ["fel-main", "an-fold", "litho-a1", "litho-b7", "b-split.spare", "an-gap", "tap", "nope"]
KEYS = ["power", "reflectivity", "heat_limit", "derate", "transmission", "dose", "wph", "x"]


# -- the tests: a short seeded run by default, a long one behind a marker -------------


def _short(examples: int) -> Callable[[Any], Any]:
    return settings(max_examples=examples, derandomize=True, deadline=None, database=None,
                    suppress_health_check=list(HealthCheck))


def _long(test: Any) -> Any:
    marked = pytest.mark.slow_fuzz(test)
    return seed(LONG_SEED)(settings(max_examples=LONG_EXAMPLES, deadline=None, database=None,
                                    suppress_health_check=list(HealthCheck))(marked))


@pytest.fixture(scope="module")
def folder(tmp_path_factory: pytest.TempPathFactory) -> pathlib.Path:
    return tmp_path_factory.mktemp("fuzz")


@dataclass(frozen=True)
class Inputs:
    """The strategies of one run, drawing injected text from ``nasty``."""

    layout_text: Any
    layout_values: Any
    case_text: Any
    change_options: Any
    calc_args: Any


def _inputs(nasty: list[str], tiny: bool) -> Inputs:
    floats = st.floats(allow_nan=True, allow_infinity=True)
    if not tiny:
        floats = floats.filter(lambda x: not 0 < abs(x) < 1e-6)
    scalars = st.one_of(
        st.none(), st.booleans(), st.integers(-(10**30), 10**30), floats,
        st.text(max_size=20),
        st.sampled_from(nasty), st.just([]), st.just({}),
        st.lists(st.integers(-5, 5), max_size=3),
        st.dictionaries(st.text(max_size=4), st.integers(-5, 5), max_size=2),
    )
    text_ops = st.lists(st.tuples(st.sampled_from(["delete", "repeat", "swap", "inject",
                                                   "number"]),
                                  st.integers(0, 10**6), st.integers(0, 10**6),
                                  st.sampled_from(nasty)), min_size=1, max_size=4)
    value_ops = st.lists(st.tuples(st.sampled_from(["replace", "delete", "rekey"]),
                                   st.integers(0, 10**6), scalars), min_size=1, max_size=3)
    arg_ops = st.lists(st.tuples(st.sampled_from(["delete", "repeat", "replace", "append",
                                                  "swap"]),
                                 st.integers(0, 10**6), st.integers(0, 10**6),
                                 st.one_of(st.sampled_from(nasty), st.text(max_size=12))),
                       min_size=1, max_size=3)
    change_options = st.lists(st.one_of(
        st.tuples(st.sampled_from(["--drop", "--fail"]),
                  st.one_of(st.sampled_from(IDS), st.sampled_from(nasty))),
        st.tuples(st.sampled_from(["--set", "--scale"]),
                  st.builds(lambda i, k, v: f"{i}.{k}={v}", st.sampled_from(IDS),
                            st.sampled_from(KEYS), st.sampled_from(nasty))),
        st.tuples(st.just("--add"),
                  st.builds(lambda s, w, v: f"{s} {w} power={v}", st.sampled_from(IDS),
                            st.sampled_from(["at=b-split.spare", "behind=an-gap part=tap",
                                             "at=nope.x", "behind=tap"]),
                            st.sampled_from(nasty))),
    ), min_size=1, max_size=3)

    def layout(i: int) -> str:
        return LAYOUTS[i % len(LAYOUTS)].read_text(encoding="utf-8")

    return Inputs(
        layout_text=st.builds(lambda i, ops: mutate_text(layout(i), ops),
                              st.integers(0, 100), text_ops),
        layout_values=st.builds(lambda i, ops: mutate_values(layout(i), ops),
                                st.integers(0, 100), value_ops),
        case_text=st.one_of(st.builds(mutate_text, st.just(CASES_TEXT), text_ops),
                            st.builds(mutate_values, st.just(CASES_TEXT), value_ops)),
        change_options=change_options,
        calc_args=st.builds(lambda i, ops: mutate_args(["calc", *CALC[i % len(CALC)]], ops),
                            st.integers(0, 1000), arg_ops),
    )


# Every class of nasty value goes into the default run too, tiny floats included: needs of a
# nanowatt or less are refused with the planner's range (they ended the LP "unbounded"), and a
# multilayer of a million periods is refused by the range of 'periods' (it ran for minutes).
SHORT = _inputs(NASTY, tiny=True)
LONG = _inputs(NASTY, tiny=True)


def test_seeds_are_valid(folder: pathlib.Path) -> None:
    # The seeds themselves must pass, or the fuzz would only test refusals.
    assert len(LAYOUTS) >= 3 and len(CALC) >= 8
    for layout in LAYOUTS:
        assert run(["check", str(layout), "-q"], [layout])[0] == 0
    path = folder / "seed-cases.yaml"
    path.write_text(CASES_TEXT, encoding="utf-8")
    layout = ROOT / "layouts" / "two-bay.yaml"
    assert run(["cases", str(layout), str(path), "-q"], [layout, path])[0] in (0, 3)


@_short(80)
@given(text=SHORT.layout_text)
def test_layout_text_mutations(folder: pathlib.Path, text: str) -> None:
    check_layout(folder, text)


@_short(60)
@given(text=SHORT.layout_values)
def test_layout_value_mutations(folder: pathlib.Path, text: str) -> None:
    check_layout(folder, text)


@_short(40)
@given(text=SHORT.case_text)
def test_case_file_mutations(folder: pathlib.Path, text: str) -> None:
    check_cases(folder, text)


@_short(30)
@given(options=SHORT.change_options)
def test_command_line_changes(folder: pathlib.Path, options: list[tuple[str, str]]) -> None:
    layout = ROOT / "layouts" / "two-bay.yaml"
    args = ["cases", str(layout), *[w for pair in options for w in pair], "--json", "-", "-q"]
    code, stdout, _ = run(args, [layout])
    if code in (0, 3):
        _strict_json(stdout)


@_short(80)
@given(args=SHORT.calc_args)
def test_calculator_argument_mutations(args: list[str]) -> None:
    check_calc(args)


@_long
@given(text=st.one_of(LONG.layout_text, LONG.layout_values))
def test_long_layouts(folder: pathlib.Path, text: str) -> None:
    check_layout(folder, text)


@_long
@given(text=LONG.case_text, options=st.one_of(st.just([]), LONG.change_options))
def test_long_cases(folder: pathlib.Path, text: str, options: list[tuple[str, str]]) -> None:
    check_cases(folder, text, tuple(w for pair in options for w in pair))


@_long
@given(args=LONG.calc_args)
def test_long_calculators(args: list[str]) -> None:
    check_calc(args)
