"""The broken-layout corpus: every mistake is an error, located where a user would look.

Each file in ``tests/broken/`` holds one mistake and starts with a comment
``# expect: CODE LINE:COLUMN``: the diagnostic code and the 1-based position
that we decided a user wants pointed at (the offending token, key or value;
for a beamline, the start of the offending ``id`` or ``id.output`` token).
The token was chosen by hand and its column counted with a string search on
that line, never copied from beamplan's output ("hand count").

Where beamplan disagrees, the case is marked ``xfail(strict=True)`` with the
reason: those are beamplan problems, recorded here, not fixed. When one is
fixed the strict xfail turns into a failure; then remove its entry.
The exit code of the command line is checked elsewhere (by the lead).
"""

from __future__ import annotations

import functools
import pathlib
import re

import pytest

import beamplan
from beamplan.errors import Diagnostic, LayoutError

# A recorded beamplan problem: the test states the right behaviour and fails today.
known_bug = functools.partial(pytest.mark.xfail, strict=True, raises=AssertionError)

BROKEN = pathlib.Path(__file__).resolve().parent / "broken"
CORPUS = sorted(BROKEN.glob("*.yaml"))
EXPECT = re.compile(r"^# expect: (?P<code>[a-z][a-z-]*) (?P<line>\d+):(?P<column>\d+)$")

# -- known beamplan problems (do not fix here; see the report) -------------------

# Mistakes that beamplan does not report at all: the file loads.
NOT_DETECTED: dict[str, str] = {}

# Mistakes that are reported, but not with the expected code at the expected place.
WRONG_PLACE: dict[str, str] = {}


def _expectations(path: pathlib.Path) -> list[tuple[str, int, int]]:
    """The ``# expect:`` lines at the top of a file, as (code, line, column)."""
    found = []
    for text in path.read_text(encoding="utf-8").splitlines():
        match = EXPECT.match(text)
        if match is None:
            break
        found.append((match["code"], int(match["line"]), int(match["column"])))
    return found


def _diagnostics(path: pathlib.Path) -> tuple[Diagnostic, ...]:
    with pytest.raises(LayoutError) as caught:
        beamplan.load(str(path))
    return caught.value.diagnostics


def _cases(*, skip_location_bugs: bool = True) -> list[object]:
    cases = []
    for path in CORPUS:
        marks = []
        if path.stem in NOT_DETECTED:
            marks.append(pytest.mark.xfail(strict=True, raises=pytest.fail.Exception,
                                           reason=NOT_DETECTED[path.stem]))
        elif skip_location_bugs and path.stem in WRONG_PLACE:
            marks.append(pytest.mark.xfail(strict=True, raises=AssertionError,
                                           reason=WRONG_PLACE[path.stem]))
        cases.append(pytest.param(path, id=path.stem, marks=marks))
    return cases


def test_corpus_is_complete() -> None:
    # The brief asks for at least 18 files, one mistake each, each with an expectation.
    assert len(CORPUS) >= 18
    for path in CORPUS:
        assert len(_expectations(path)) == 1, f"{path.name}: needs one '# expect:' first line"
    assert set(NOT_DETECTED) | set(WRONG_PLACE) <= {p.stem for p in CORPUS}


@pytest.mark.parametrize("path", _cases(skip_location_bugs=False))
def test_loading_raises_layout_error(path: pathlib.Path) -> None:
    errors = [d for d in _diagnostics(path) if d.is_error]
    assert errors, "a LayoutError must carry at least one error"


@pytest.mark.parametrize("path", _cases())
def test_expected_code_at_expected_position(path: pathlib.Path) -> None:
    [(code, line, column)] = _expectations(path)  # hand count, see the module docstring
    found = [(d.code, d.location.line, d.location.column)
             for d in _diagnostics(path) if d.is_error and d.location is not None]
    assert (code, line, column) in found


@pytest.mark.parametrize("path", _cases(skip_location_bugs=False))
def test_every_error_is_one_located_line(path: pathlib.Path) -> None:
    errors = [d for d in _diagnostics(path) if d.is_error]
    assert errors
    for d in errors:
        assert d.location is not None, d
        assert d.location.file == str(path)
        text = d.format()
        assert "\n" not in text and "\r" not in text
        assert text.startswith(f"{path}:{d.location.line}:{d.location.column}: error: ")
        assert d.location.line >= 1 and d.location.column >= 1


def test_three_independent_mistakes_are_reported_at_once() -> None:
    path = BROKEN / "multiple" / "three-mistakes.yaml"
    expected = _expectations(path)  # hand count
    assert len(expected) == 3
    errors = [d for d in _diagnostics(path) if d.is_error]
    found = [(d.code, d.location.line, d.location.column) for d in errors if d.location]
    assert sorted(found) == sorted(expected)  # all three, and nothing else
    with pytest.raises(LayoutError) as caught:
        beamplan.load(str(path))
    assert str(caught.value).endswith("(and 2 more)")  # the exception text counts the others


# -- message quality: more beamplan problems, one test each ----------------------


def _load_text(tmp_path: pathlib.Path, text: str) -> tuple[Diagnostic, ...]:
    path = tmp_path / "case.yaml"
    path.write_text(text, encoding="utf-8")
    return _diagnostics(path)


TINY = """\
layout: tiny
format: 1
sources: {fel: {power: 10 kW}}
elements:
%s
scanners:
  litho-1: {power: 500 W}
beamlines:
  - fel -> m1 -> litho-1
"""


def test_unknown_id_is_reported_once_per_token() -> None:
    # 'fel -> m11 -> litho-1': one unknown token, one error (not one per link).
    codes = [d.code for d in _diagnostics(BROKEN / "unknown-id-in-beamline.yaml")]
    assert codes.count("unknown-id") == 1


def test_fan_in_message_names_the_outputs() -> None:
    # The user wrote t1.pick and t1.pass: the message names both links that way.
    [d] = [d for d in _diagnostics(BROKEN / "fed-twice.yaml") if d.code == "fan-in"]
    assert "t1.pick" in d.message and "t1.pass" in d.message


def test_quoted_format_is_not_called_missing() -> None:
    # format: "1" is a type error, and only that: the format is not missing.
    messages = [d.message for d in _diagnostics(BROKEN / "format-as-text.yaml")]
    assert not any("missing" in m for m in messages), messages


def test_missing_kind_does_not_flag_valid_keys() -> None:
    # Without 'kind' the other keys cannot be judged: one error, no cascade.
    codes = [d.code for d in _diagnostics(BROKEN / "missing-kind.yaml")]
    assert codes == ["missing-key"]


def test_part_that_is_not_a_mapping(tmp_path: pathlib.Path) -> None:
    # The part exists; what is wrong is that it is not a mapping.
    text = "parts:\n  fold: 3\n" + TINY % "  m1: {part: fold}"
    [d] = [d for d in _load_text(tmp_path, text) if d.is_error]
    assert "did you mean 'fold'" not in d.format()
    assert "must be a mapping" in d.message


def test_empty_element_hint_fits_an_element(tmp_path: pathlib.Path) -> None:
    # An element's hint shows element keys (power is a scanner key).
    [d] = [d for d in _load_text(tmp_path, TINY % "  m1:") if d.code == "bad-type"]
    assert "power" not in d.hint


def test_flow_mapping_comma_in_a_note_is_caught(tmp_path: pathlib.Path) -> None:
    # Written by accident while making layouts/two-bay.yaml: a comma in an unquoted
    # note inside {...} starts a new key. beamplan catches it (a good message would
    # also say to quote the note; see the report).
    text = TINY % "  m1: {kind: mirror, reflectivity: 0.9, note: east wall, bay P}"
    [d] = [d for d in _load_text(tmp_path, text) if d.is_error]
    assert d.code == "unknown-key" and "'bay P'" in d.message
    assert (d.location.line, d.location.column) == (5, 58)  # hand count
