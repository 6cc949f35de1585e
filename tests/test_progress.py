"""Progress on a terminal: shown on a pseudo-terminal, never in a pipe or with ``-q``.

Each command runs in a child process whose stderr is a pseudo-terminal (``pty``)
or a pipe; the stage names (``loading``, ``planning``, ``drawing``, ``writing
the HTML report``) must appear on the terminal and nowhere else.
"""

from __future__ import annotations

import os
import pathlib
import pty
import select
import subprocess
import sys

import pytest

from tests.conftest import ROOT
from tests.perf.campus import campus_yaml

pytestmark = pytest.mark.skipif(sys.platform == "win32", reason="no pseudo-terminals")


def run(args: list[str], *, terminal: bool) -> tuple[int, str]:
    """Run beamplan with stderr on a pseudo-terminal (or a pipe); its exit code and stderr."""
    env = {**os.environ, "PYTHONPATH": str(ROOT), "TERM": "xterm", "COLUMNS": "100"}
    env.pop("NO_COLOR", None)
    command = [sys.executable, "-m", "beamplan.cli.main", *args]
    if not terminal:
        done = subprocess.run(command, capture_output=True, text=True, env=env, timeout=300,
                              check=False)
        return done.returncode, done.stderr
    main_fd, child_fd = pty.openpty()
    child = subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=child_fd, env=env)
    os.close(child_fd)
    chunks = []
    while True:
        ready, _, _ = select.select([main_fd], [], [], 0.2)
        if ready:
            try:
                data = os.read(main_fd, 65536)
            except OSError:  # the child closed the terminal
                break
            if not data:
                break
            chunks.append(data)
        elif child.poll() is not None:
            break
    os.close(main_fd)
    return child.wait(timeout=300), b"".join(chunks).decode("utf-8", "replace")


@pytest.fixture(scope="module")
def campus(tmp_path_factory: pytest.TempPathFactory) -> pathlib.Path:
    path = tmp_path_factory.mktemp("campus") / "campus.yaml"
    path.write_text(campus_yaml(50), encoding="utf-8")
    return path


def test_draw_and_plan_show_their_stages_on_a_terminal(campus: pathlib.Path,
                                                      tmp_path: pathlib.Path) -> None:
    code, err = run(["draw", str(campus), "-o", str(tmp_path / "c.svg"), "--plan"],
                    terminal=True)
    assert code == 0, err
    assert "drawing the summary" in err and "planning" in err
    code, err = run(["plan", str(campus), "--html", str(tmp_path / "c.html")], terminal=True)
    assert code == 0, err
    assert "writing the HTML report" in err


def test_no_progress_with_q_or_in_a_pipe(tmp_path: pathlib.Path) -> None:
    layout = str(ROOT / "layouts" / "two-bay.yaml")
    code, err = run(["draw", layout, "-o", str(tmp_path / "c.svg"), "--plan", "-q"],
                    terminal=True)
    assert code == 0, err
    assert "planning" not in err and "drawing" not in err and "\x1b[" not in err
    code, err = run(["plan", layout, "--html", str(tmp_path / "c.html")], terminal=False)
    assert code == 0, err
    assert "planning" not in err and "writing" not in err and "\x1b[" not in err
    # and the same command on a terminal does name its stages
    code, err = run(["plan", layout, "--html", str(tmp_path / "c.html")], terminal=True)
    assert code == 0, err
    assert "planning" in err
