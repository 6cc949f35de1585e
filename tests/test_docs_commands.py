"""Every command shown in README.md and docs/*.md runs, in a scratch copy of the demo layouts.

The markdown is parsed, not copied here, so a command added to the docs later is
covered without touching this file. The rules:

- a command is a line in a fenced code block that begins with ``beamplan `` (or
  ``$ beamplan `` in a terminal transcript); a line ending in ``\\`` continues on
  the next line; a shell comment after ``#`` is dropped, and so is anything from
  the first pipe ``|`` or redirection ``>`` on (only beamplan's part runs);
- lines that set up an environment (``pip``, ``venv``, ``pytest``) are skipped
  by rule: they are not beamplan commands;
- the command runs through :func:`beamplan.cli.main.main` in a temporary
  directory holding a copy of ``layouts/``, so outputs (``-o two-bay.png``,
  ``--csv out/``) land there;
- the exit code must be the documented one: the one a comment names (``exit 1``),
  3 where the comment says the needs cannot be met or scanners are short, 3 for
  any ``plan``, ``cases`` or ``draw --plan`` of a layout whose own ``plan`` is
  documented so (``overbooked``), and 0 otherwise. A transcript
  (``$ beamplan ...``) whose shown output is a ``beamplan: error:`` line must
  fail with exit 1 or 2 and print that very line;
- no command may print a Python traceback;
- every ``python`` code block runs as a script in the same kind of directory.
"""

from __future__ import annotations

import re
import shlex
import shutil
from dataclasses import dataclass
from pathlib import Path

import pytest

from beamplan.cli.main import main
from tests.conftest import ROOT

DOCS = [ROOT / "README.md", *sorted((ROOT / "docs").glob("*.md"))]
FENCE = re.compile(r"^\s*(```|~~~)(?P<lang>[\w+-]*)")
SETUP = re.compile(r"\b(pip|venv|pytest)\b")  # environment set-up, not beamplan commands
SHORT_WORDS = ("cannot be met", "scanners short", "scanner short", "left short")


@dataclass(frozen=True)
class Command:
    """One documented command: where it is, its words, and the exit codes it may end with."""

    doc: str
    line: int
    argv: tuple[str, ...]
    expected: frozenset[int]
    shown_error: str = ""

    @property
    def id(self) -> str:
        return f"{self.doc}:{self.line}"


@dataclass(frozen=True)
class Snippet:
    """One python code block."""

    doc: str
    line: int
    code: str


def _blocks(path: Path) -> list[tuple[str, int, list[str]]]:
    """The fenced code blocks of a markdown file: (language, first line number, lines)."""
    out: list[tuple[str, int, list[str]]] = []
    current: list[str] | None = None
    lang, start = "", 0
    for number, text in enumerate(path.read_text(encoding="utf-8").splitlines(), 1):
        fence = FENCE.match(text)
        if fence and current is None:
            current, lang, start = [], fence["lang"].lower(), number + 1
        elif fence and current is not None:
            out.append((lang, start, current))
            current = None
        elif current is not None:
            current.append(text)
    return out


def _expected(comment: str) -> frozenset[int]:
    named = re.search(r"\bexit (?:code )?(\d+)", comment)
    if named:
        return frozenset({int(named[1])})
    if any(word in comment.lower() for word in SHORT_WORDS):
        return frozenset({3})
    return frozenset({0})


def _split(text: str) -> tuple[list[str], str]:
    """The words of a shell line before any pipe or redirection, and its comment."""
    lexer = shlex.shlex(text, posix=True, punctuation_chars="|&;<>")
    lexer.commenters = ""
    lexer.whitespace_split = True
    words: list[str] = []
    comment = ""
    for word in lexer:
        if word.startswith("#"):
            comment = " ".join([word, *lexer])
            break
        if word in ("|", ">", ">>", "<", "&&", ";", "||", "&"):
            rest = [w for w in lexer]
            tail = [i for i, w in enumerate(rest) if w.startswith("#")]
            comment = " ".join(rest[tail[0]:]) if tail else ""
            break
        words.append(word)
    return words, comment


def collect() -> tuple[list[Command], list[Snippet], list[str]]:
    """Every documented command and python snippet, and the set-up lines skipped."""
    commands: list[Command] = []
    snippets: list[Snippet] = []
    skipped: list[str] = []
    for path in DOCS:
        name = path.name
        for lang, start, lines in _blocks(path):
            if lang in ("python", "py") and not any(
                    ln.startswith(">>>") for ln in lines):
                snippets.append(Snippet(name, start, "\n".join(lines)))
                continue
            i = 0
            while i < len(lines):
                number, text = start + i, lines[i].strip()
                while text.endswith("\\") and i + 1 < len(lines):
                    i += 1
                    text = text[:-1] + " " + lines[i].strip()
                i += 1
                if SETUP.search(text.split("#", 1)[0]):
                    skipped.append(f"{name}:{number}")
                    continue
                transcript = text.startswith("$ beamplan ")
                if transcript:
                    text = text[2:]
                if not text.startswith("beamplan "):
                    continue
                words, comment = _split(text)
                shown = ""
                if transcript:
                    after = [ln for ln in lines[i:i + 3] if ln.startswith("beamplan: error:")]
                    shown = after[0] if after else ""
                expected = frozenset({1, 2}) if shown else _expected(comment)
                commands.append(Command(name, number, tuple(words[1:]), expected, shown))
    short = {c.argv[1] for c in commands
             if c.expected == {3} and c.argv[:1] == ("plan",) and len(c.argv) > 1}
    planned = ("plan", "cases")
    commands = [Command(c.doc, c.line, c.argv, frozenset({3}), c.shown_error)
                if c.expected == {0} and c.argv and (c.argv[0] in planned or (
                    c.argv[0] == "draw" and "--plan" in c.argv))
                and any(word in short for word in c.argv[1:2]) else c for c in commands]
    return commands, snippets, skipped


COMMANDS, SNIPPETS, SKIPPED = collect()


@pytest.fixture
def scratch(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A temporary working directory with a copy of the demo layouts."""
    shutil.copytree(ROOT / "layouts", tmp_path / "layouts")
    monkeypatch.chdir(tmp_path)
    return tmp_path


def test_the_docs_show_commands_to_run() -> None:
    # The parser finds the README quick start and each page's examples (hand count of the
    # pages that have them today); a parser that finds nothing would pass every test below.
    pages = {c.doc for c in COMMANDS}
    assert {"README.md", "calculators.md", "cases.md", "pictures.md"} <= pages
    assert len(COMMANDS) >= 40
    assert any(s.doc == "README.md" for s in SNIPPETS)
    # The set-up line of the README quick start (venv, pip) is skipped by rule, not run.
    assert any(where.startswith("README.md:") for where in SKIPPED)


@pytest.mark.parametrize("command", [pytest.param(c, id=c.id) for c in COMMANDS])
def test_documented_command_runs(command: Command, scratch: Path,
                                 capfd: pytest.CaptureFixture[str]) -> None:
    code = main(list(command.argv))
    out, err = capfd.readouterr()
    assert "Traceback" not in out + err, err
    assert code in command.expected, (
        f"{command.id}: exit {code}, documented {sorted(command.expected)}\n{err[-2000:]}")
    if command.shown_error:
        assert command.shown_error.strip() in err, err


@pytest.mark.parametrize("snippet", [pytest.param(s, id=f"{s.doc}:{s.line}") for s in SNIPPETS])
def test_documented_python_runs(snippet: Snippet, scratch: Path) -> None:
    exec(compile(snippet.code, f"{snippet.doc}:{snippet.line}", "exec"), {"__name__": "doc"})
