"""Output files and documents: atomic writes, the CSV set as a whole, stdout, strict JSON.

Each test is a regression test for one point of the hardening of outputs
(docs/exit-codes.md, docs/json-format.md). Expected behaviour is from POSIX
file semantics (rename is atomic within a file system) and RFC 8259 (JSON has
no NaN or Infinity); expected numbers are hand calculations.
"""

from __future__ import annotations

import errno
import json
import os
import pathlib
import re
import stat
import subprocess
import sys
import threading
import time
from typing import Any

import pytest

import beamplan
from beamplan.cli.main import main
from beamplan.report import files
from beamplan.report.document import number
from beamplan.report.output_paths import TABLES_MARKER

PILOT = "layouts/pilot-line.yaml"
DEMOS = sorted(p.name for p in pathlib.Path("layouts").glob("*.yaml"))
TABLES = ["binding.csv", "elements.csv", "losses.csv", "scanners.csv", "sources.csv"]
# A negative zero as text: "-0", "-0.0", "−0 W" (the sign, a zero, no other digit after).
NEGATIVE_ZERO = re.compile(r"(?<![\w.])[-−]0(?:\.0*)?(?![\d.eE])")


def run(capsys: pytest.CaptureFixture[str], *args: str) -> tuple[int, str, str]:
    code = main(list(args))
    out, err = capsys.readouterr()
    return code, out, err


def _refuse_constant(name: str) -> Any:
    raise ValueError(f"not strict JSON: {name}")


def strict_loads(text: str) -> Any:
    """``json.loads`` that refuses NaN, Infinity and -Infinity (RFC 8259)."""
    return json.loads(text, parse_constant=_refuse_constant)


def _ours(folder: pathlib.Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.name.startswith(".beamplan-")
                  and p.name != TABLES_MARKER)


def _snapshot(folder: pathlib.Path) -> dict[str, bytes | None]:
    """Every path under ``folder`` with its bytes (None for a folder or a link)."""
    return {str(p.relative_to(folder)): None if p.is_dir() or p.is_symlink() else p.read_bytes()
            for p in sorted(folder.rglob("*"))}


# --- the CSV set -----------------------------------------------------------------------------


def test_csv_set_interrupted_midway_leaves_the_previous_set(
        capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch,
        tmp_path: pathlib.Path) -> None:
    tables = tmp_path / "tables"
    assert run(capsys, "plan", PILOT, "--csv", str(tables), "-q")[0] == 0
    before = _snapshot(tables)
    assert sorted(before) == [TABLES_MARKER, *TABLES]
    real_write = files._write_all
    calls = []

    def fail_after_the_first_table(handle: int, data: bytes) -> None:
        calls.append(1)
        if len(calls) > 1:
            raise KeyboardInterrupt  # as a Ctrl-C in the middle of the set
        real_write(handle, data)

    monkeypatch.setattr(files, "_write_all", fail_after_the_first_table)
    code, _, _ = run(capsys, "plan", PILOT, "-g", "min-source", "--csv", str(tables), "-q")
    assert code == 130 and len(calls) == 2
    assert _snapshot(tables) == before  # the old set, whole
    assert _ours(tmp_path) == []  # no temporary folder left
    calls.clear()

    def disk_full(handle: int, data: bytes) -> None:
        calls.append(1)
        if len(calls) > 1:
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
        real_write(handle, data)

    monkeypatch.setattr(files, "_write_all", disk_full)
    code, _, err = run(capsys, "plan", PILOT, "-g", "min-source", "--csv", str(tables), "-q")
    assert code == 5 and "No space left on device" in err and err.count("\n") == 1
    assert _snapshot(tables) == before and _ours(tmp_path) == []


def test_csv_set_interrupted_between_the_renames_puts_the_previous_set_back(
        capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch,
        tmp_path: pathlib.Path) -> None:
    tables = tmp_path / "tables"
    assert run(capsys, "plan", PILOT, "--csv", str(tables), "-q")[0] == 0
    before = _snapshot(tables)
    real_rename = os.rename
    calls = []

    def rename(src: str, dst: str) -> None:
        calls.append((src, dst))
        if len(calls) == 2:  # the old set is aside, the new one not yet in place
            raise KeyboardInterrupt
        real_rename(src, dst)

    monkeypatch.setattr(os, "rename", rename)
    code, _, _ = run(capsys, "plan", PILOT, "-g", "min-source", "--csv", str(tables), "-q")
    monkeypatch.undo()
    assert code == 130 and len(calls) == 3  # aside, (interrupted), back
    assert _snapshot(tables) == before and _ours(tmp_path) == []


def test_csv_set_replaces_a_previous_set_but_not_foreign_files(
        capsys: pytest.CaptureFixture[str], tmp_path: pathlib.Path) -> None:
    tables = tmp_path / "tables"
    assert run(capsys, "plan", PILOT, "--csv", str(tables), "-q")[0] == 0
    assert run(capsys, "cases", PILOT, "--scale", "halo-fel.power=0.5", "--csv", str(tables),
               "-q")[0] == 3  # half the source leaves a scanner short
    # The plan's set is replaced as a whole by the cases set: no plan table is left over.
    assert sorted(os.listdir(tables)) == [TABLES_MARKER, "cases.csv", "scanners.csv"]
    mine = tmp_path / "mine"
    mine.mkdir()
    (mine / "notes.txt").write_text("keep me\n")
    code, _, err = run(capsys, "sweep", PILOT, "--csv", str(mine), "-q")
    assert code == 2 and "did not write (notes.txt)" in err
    assert os.listdir(mine) == ["notes.txt"] and _ours(tmp_path) == []
    (mine / "notes.txt").rename(mine / "mine.csv")  # a CSV file of the user's own
    code, _, err = run(capsys, "plan", PILOT, "--csv", str(mine), "-q")
    assert code == 2 and "did not write (mine.csv)" in err
    assert os.listdir(mine) == ["mine.csv"] and _ours(tmp_path) == []


def test_csv_keeps_the_mode_of_each_table(capsys: pytest.CaptureFixture[str],
                                          tmp_path: pathlib.Path) -> None:
    tables = tmp_path / "tables"
    assert run(capsys, "plan", PILOT, "--csv", str(tables), "-q")[0] == 0
    (tables / "sources.csv").chmod(0o600)
    tables.chmod(0o750)
    assert run(capsys, "plan", PILOT, "--csv", str(tables), "-q")[0] == 0
    assert stat.S_IMODE((tables / "sources.csv").stat().st_mode) == 0o600
    assert stat.S_IMODE(tables.stat().st_mode) == 0o750


@pytest.mark.parametrize("depth", ["", "sub"])
def test_an_input_inside_the_csv_folder_is_refused_before_any_work(
        capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch,
        tmp_path: pathlib.Path, depth: str) -> None:
    folder = tmp_path / "out"
    (folder / depth).mkdir(parents=True, exist_ok=True)
    layout = folder / depth / "pilot.yaml"
    layout.write_text(pathlib.Path(PILOT).read_text())
    link = tmp_path / "link"
    link.symlink_to(folder)  # the same folder through a symlink
    before = _snapshot(tmp_path)

    def no_planning(*args: Any, **kwargs: Any) -> None:
        raise AssertionError("planned before refusing the outputs")

    monkeypatch.setattr("beamplan.optimise.planner.plan_network", no_planning)
    for target in (folder, link):
        code, _, err = run(capsys, "plan", str(layout), "--csv", str(target), "-q")
        assert code == 2 and "is inside it" in err
    assert _snapshot(tmp_path) == before


# --- single files ----------------------------------------------------------------------------


def test_an_output_that_links_to_an_input_is_refused(
        capsys: pytest.CaptureFixture[str], tmp_path: pathlib.Path) -> None:
    layout = tmp_path / "pilot.yaml"
    layout.write_text(pathlib.Path(PILOT).read_text())
    before = layout.read_bytes()
    link = tmp_path / "report.json"
    link.symlink_to(layout)
    code, _, err = run(capsys, "plan", str(layout), "--json", str(link), "-q")
    assert code == 2 and "refusing to write over the input file" in err
    assert layout.read_bytes() == before and link.is_symlink()


def test_a_symlink_is_written_through_atomically_at_its_target(
        capsys: pytest.CaptureFixture[str], tmp_path: pathlib.Path) -> None:
    real = tmp_path / "real" / "plan.json"
    real.parent.mkdir()
    real.write_text("old\n")
    link = tmp_path / "plan.json"
    link.symlink_to(real)
    assert run(capsys, "plan", PILOT, "--json", str(link), "-q")[0] == 0
    assert link.is_symlink() and os.readlink(link) == str(real)
    assert strict_loads(real.read_text())["format"] == "beamplan-plan/1"
    assert _ours(real.parent) == [] and _ours(tmp_path) == []


def test_a_fifo_is_written_into_not_replaced(capsys: pytest.CaptureFixture[str],
                                             tmp_path: pathlib.Path) -> None:
    fifo = tmp_path / "plan.fifo"
    os.mkfifo(fifo)
    received: list[bytes] = []
    reader = threading.Thread(target=lambda: received.append(fifo.read_bytes()), daemon=True)
    reader.start()
    code = main(["plan", PILOT, "--json", str(fifo), "-q"])
    reader.join(timeout=30)
    capsys.readouterr()
    assert code == 0 and stat.S_ISFIFO(fifo.lstat().st_mode)
    assert strict_loads(received[0].decode())["status"] == "met"
    # A character device is written into, never replaced (as root, a rename would replace it).
    assert run(capsys, "plan", PILOT, "--json", "/dev/null", "-q")[0] == 0
    assert stat.S_ISCHR(os.lstat("/dev/null").st_mode)


def test_dev_stdout_is_written_directly() -> None:
    env = {**os.environ, "NO_COLOR": "1"}
    proc = subprocess.run([sys.executable, "-m", "beamplan.cli.main", "plan", PILOT, "--json",
                           "/dev/stdout", "-q"], capture_output=True, text=True, env=env,
                          check=False)
    assert proc.returncode == 0, proc.stderr
    assert strict_loads(proc.stdout)["format"] == "beamplan-plan/1"


def test_overwriting_keeps_the_mode_and_new_files_get_the_umask(
        capsys: pytest.CaptureFixture[str], tmp_path: pathlib.Path) -> None:
    old = tmp_path / "old.json"
    old.write_text("{}\n")
    old.chmod(0o604)
    mask = os.umask(0o027)
    try:
        assert run(capsys, "plan", PILOT, "--json", str(old), "--html",
                   str(tmp_path / "new.html"), "-q")[0] == 0
    finally:
        os.umask(mask)
    assert stat.S_IMODE(old.stat().st_mode) == 0o604
    assert stat.S_IMODE((tmp_path / "new.html").stat().st_mode) == 0o640  # 0o666 & ~0o027


def test_a_write_killed_halfway_leaves_no_partial_file_and_no_litter(
        capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch,
        tmp_path: pathlib.Path) -> None:
    kept = tmp_path / "kept.json"
    kept.write_text("previous\n")

    def killed(handle: int) -> None:
        raise KeyboardInterrupt

    monkeypatch.setattr(os, "fsync", killed)
    for target in (kept, tmp_path / "new.json"):
        assert run(capsys, "plan", PILOT, "--json", str(target), "-q")[0] == 130
    monkeypatch.undo()
    assert kept.read_text() == "previous\n" and not (tmp_path / "new.json").exists()
    assert _ours(tmp_path) == []


def test_stale_temporary_files_of_ours_are_removed_once_old(tmp_path: pathlib.Path) -> None:
    stale = tmp_path / ".beamplan-abc.tmp"
    fresh = tmp_path / ".beamplan-def.tmp"
    other = tmp_path / ".beamplan-notes.txt"
    for path in (stale, fresh, other):
        path.write_text("x")
    hours_ago = time.time() - 2 * 3600
    os.utime(stale, (hours_ago, hours_ago))
    os.utime(other, (hours_ago, hours_ago))
    files.write_atomic(str(tmp_path / "out.txt"), "y")
    assert sorted(p.name for p in tmp_path.iterdir()) == [
        ".beamplan-def.tmp", ".beamplan-notes.txt", "out.txt"]


def test_an_output_that_cannot_be_written_exits_5_with_one_line(
        capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch,
        tmp_path: pathlib.Path) -> None:
    afile = tmp_path / "a-file"
    afile.write_text("x")
    for target in (tmp_path / "missing" / "plan.json", afile / "plan.json", "/dev/full"):
        code, _, err = run(capsys, "plan", PILOT, "--json", str(target), "-q")
        assert code == 5 and err.startswith("beamplan: error: cannot write") \
            and err.count("\n") == 1, (target, err)

    def denied(*args: Any, **kwargs: Any) -> None:
        raise PermissionError(errno.EACCES, os.strerror(errno.EACCES))

    monkeypatch.setattr("tempfile.mkstemp", denied)
    monkeypatch.setattr("tempfile.mkdtemp", denied)
    for option, target in (("--html", "p.html"), ("--csv", "tables")):
        code, _, err = run(capsys, "plan", PILOT, option, str(tmp_path / target), "-q")
        assert code == 5 and "Permission denied" in err and err.count("\n") == 1
    assert sorted(os.listdir(tmp_path)) == ["a-file"]


# --- '-' is stdout ---------------------------------------------------------------------------


@pytest.mark.parametrize(("args", "start"), [
    (["plan", PILOT, "--json", "-"], "{"),
    (["plan", PILOT, "--html", "-"], "<!DOCTYPE html>"),
    (["cases", PILOT, "--scale", "halo-fel.power=0.5", "--json", "-"], "{"),
    (["cases", PILOT, "--scale", "halo-fel.power=0.5", "--html", "-"], "<!DOCTYPE html>"),
    (["sweep", PILOT, "--json", "-"], "{"),
    (["sweep", PILOT, "--html", "-"], "<!DOCTYPE html>"),
    (["draw", PILOT, "-o", "-"], "<?xml"),
    (["draw", PILOT, "-o", "-", "--format", "dot"], "digraph"),
], ids=lambda v: " ".join(v) if isinstance(v, list) else v)
def test_dash_is_stdout_for_every_output_option(
        capsys: pytest.CaptureFixture[str], tmp_path: pathlib.Path, monkeypatch: pytest.MonkeyPatch,
        args: list[str], start: str) -> None:
    monkeypatch.chdir(tmp_path)  # a file named '-' would land here
    args = [pathlib.Path(__file__).parent.parent.joinpath(a).as_posix() if a == PILOT else a
            for a in args]
    code, out, _ = run(capsys, *args)
    assert code in (0, 3) and out.lstrip().startswith(start)
    assert os.listdir(tmp_path) == []
    if start == "{":
        strict_loads(out)  # the document and nothing else


def test_dash_for_csv_and_two_outputs_to_stdout_are_usage_errors(
        capsys: pytest.CaptureFixture[str]) -> None:
    code, _, err = run(capsys, "plan", PILOT, "--csv", "-")
    assert code == 2 and "--csv -: CSV output is a folder" in err
    code, _, err = run(capsys, "sweep", PILOT, "--json", "-", "--html", "-")
    assert code == 2 and "both write to stdout" in err
    code, _, err = run(capsys, "plan", PILOT, "--json", "x.out", "--html", "x.out")
    assert code == 2 and "both name 'x.out'" in err
    code, _, err = run(capsys, "plan", PILOT, "--json", "t/x.json", "--csv", "t")
    assert code == 2 and "lies in the --csv folder" in err
    assert not os.path.exists("x.out") and not os.path.exists("t")


# --- numbers ---------------------------------------------------------------------------------


def test_the_rounding_rule() -> None:
    # Hand calculations of the rule in docs/json-format.md.
    assert number(1399.9999991, "delivered_w") == 1400.0  # 9 significant digits
    assert number(1234.56789049, "need_w") == 1234.56789  # 9 significant digits
    assert number(0.1234567890123, "need_w") == 0.123457  # 1 µW
    assert number(4e-7, "shortfall_w") == 0.0 and number(-4e-7, "shortfall_w") == 0.0
    assert str(number(-4e-7, "shortfall_w")) == "0.0"  # no negative zero
    assert number(0.3499999986, "headroom") == 0.35  # 1e-8 for ratios
    assert number(-2.220446049250313e-16, "headroom") == 0.0
    assert number(6.796057366e16, "photon_flux_per_w") == 6.79605737e16
    assert number(1.35e-8, "wavelength_m") == 1.35e-8  # no absolute resolution for lengths
    assert number(float("nan"), "headroom") is None and number(float("-inf")) is None


def _every_json(layout: str, capsys: pytest.CaptureFixture[str]) -> list[tuple[str, str]]:
    from beamplan.analyses import outages

    # A rerun is a new process: forget the sweep's warm model from the run before. (Within
    # one process a warm start may pick another of equally good answers where the LP leaves
    # a value free, e.g. the source power of an outage that cuts off every scanner.)
    outages._WORKERS.clear()
    outages._BASES.clear()
    path = f"layouts/{layout}"
    plan = beamplan.plan(path)
    source, element = plan.sources[0].id, plan.elements[0].id
    runs = [["plan", path, "-g", goal] for goal in ("headroom", "min-source", "priority")]
    runs += [["cases", path, "--fail", element, "--scale", f"{source}.power=0.5"],
             ["cases", path, "--fail", element, "--steady"],
             ["sweep", path]]
    texts = []
    for args in runs:
        code, out, _ = run(capsys, *args, "--json", "-")
        assert code in (0, 3), args
        texts.append((" ".join(args), out))
    return texts


@pytest.mark.parametrize("layout", DEMOS)
def test_every_json_is_strict_rounded_and_byte_identical_on_rerun(
        capsys: pytest.CaptureFixture[str], layout: str) -> None:
    first = _every_json(layout, capsys)
    for command, text in first:
        strict_loads(text)
        assert not NEGATIVE_ZERO.search(text), command
        assert not re.search(r"\d\.\d*(?:9{6}|0{6})\d", text), command  # solver noise shown
    assert _every_json(layout, capsys) == first


@pytest.mark.parametrize("args", [
    ["calc", "demand", "--dose", "30mJ/cm^2", "--wph", "150", "--json"],
    ["calc", "demand", "--dose", "30mJ/cm^2", "--power", "0W", "--json"],
    ["calc", "undulator", "--energy", "1GeV", "--period", "2.8cm", "--k", "0", "--json"],
])
def test_calculator_json_is_strict(capsys: pytest.CaptureFixture[str], args: list[str]) -> None:
    code, out, err = run(capsys, *args)
    assert code in (0, 1), err
    if code == 0:
        strict_loads(out)


@pytest.mark.parametrize("layout", DEMOS)
def test_no_negative_zero_or_second_minus_sign_in_any_report(
        capsys: pytest.CaptureFixture[str], tmp_path: pathlib.Path, layout: str) -> None:
    path = f"layouts/{layout}"
    plan = beamplan.plan(path)
    texts = []
    for goal in ("headroom", "min-source", "priority"):
        code, out, _ = run(capsys, "plan", path, "-g", goal, "--csv", str(tmp_path / goal))
        assert code in (0, 3)
        texts.append(out)
        texts += [p.read_text() for p in (tmp_path / goal).glob("*.csv")]
    texts.append(run(capsys, "cases", path, "--fail", plan.elements[0].id, "--scale",
                     f"{plan.sources[0].id}.power=0.5", "--csv", str(tmp_path / "c"))[1])
    texts += [p.read_text() for p in (tmp_path / "c").glob("*.csv")]
    texts.append(run(capsys, "sweep", path, "--csv", str(tmp_path / "s"))[1])
    texts += [p.read_text() for p in (tmp_path / "s").glob("*.csv")]
    for text in texts:
        assert not NEGATIVE_ZERO.search(text), NEGATIVE_ZERO.search(text)
        assert "−" not in text  # one minus sign: ASCII


@pytest.mark.parametrize("layout", DEMOS)
def test_no_negative_zero_in_html_and_pictures(capsys: pytest.CaptureFixture[str],
                                               layout: str) -> None:
    path = f"layouts/{layout}"
    pages = [run(capsys, "plan", path, "-g", "min-source", "--html", "-")[1],
             run(capsys, "sweep", path, "--html", "-")[1],
             run(capsys, "draw", path, "-g", "min-source", "-o", "-", "--format", "dot")[1]]
    for text in pages:
        text = re.sub(r"<[^>]*>", " ", text)  # the words shown, not the drawing data
        assert not NEGATIVE_ZERO.search(text), NEGATIVE_ZERO.search(text)
        assert not re.search(r"−\d", text)  # a number's sign is ASCII, as in the terminal
