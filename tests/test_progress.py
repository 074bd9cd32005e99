"""Long work shows progress on standard error when it is a terminal, and nothing otherwise.

Real subprocesses: standard error is the slave side of a real pseudo-terminal (``pty``) for the
terminal case, a pipe for the other.
"""

from __future__ import annotations

import os
import pty
import select
import subprocess
import sys
import time
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
REGVET = [sys.executable, "-m", "regvet"]


def _run_with_terminal_stderr(argv: list[str], cwd: Path, timeout: float = 600) -> tuple[int, str, str]:
    """(exit code, standard output, what reached the terminal on standard error)."""
    master, slave = pty.openpty()
    # Standard output goes to a file: a pipe nobody reads while the terminal is read would fill and block.
    sink = open(cwd / ".stdout", "w+b")  # noqa: SIM115 (closed below)
    proc = subprocess.Popen(argv, cwd=cwd, stdout=sink, stderr=slave, stdin=subprocess.DEVNULL)
    os.close(slave)
    seen = bytearray()
    deadline = time.monotonic() + timeout
    while True:
        ready, _, _ = select.select([master], [], [], 0.2)
        if ready:
            try:
                chunk = os.read(master, 65536)
            except OSError:  # the child closed the terminal
                chunk = b""
            if not chunk and proc.poll() is not None:
                break
            seen += chunk
        elif proc.poll() is not None:
            break
        if time.monotonic() > deadline:
            proc.kill()
            raise AssertionError("timed out")
    code = proc.wait()
    sink.seek(0)
    out = sink.read().decode(errors="replace")
    sink.close()
    os.close(master)
    return code, out, seen.decode(errors="replace")


def _big_tree(tmp_path: Path) -> Path:
    """The installed statsmodels package (913 files): its reading takes several seconds with one job."""
    import statsmodels

    return Path(statsmodels.__file__).parent


@pytest.mark.scan
def test_check_on_a_big_tree_shows_a_progress_line_after_two_seconds(tmp_path):
    tree = _big_tree(tmp_path)
    code, out, err = _run_with_terminal_stderr(
        [*REGVET, "check", str(tree), "--no-cache", "--jobs", "1", "--no-config"], tmp_path
    )
    assert code in (0, 1), err
    assert "regvet: read " in err and " files, last " in err, err[-500:]
    assert err.rstrip().endswith("\x1b[K") or "\r\x1b[K" in err  # the line is cleared at the end
    assert "regvet: read" not in out  # progress never goes to standard output


@pytest.mark.scan
def test_no_progress_when_standard_error_is_not_a_terminal(tmp_path):
    tree = _big_tree(tmp_path)
    proc = subprocess.run(
        [*REGVET, "check", str(tree), "--no-cache", "--jobs", "1", "--no-config"],
        cwd=tmp_path,
        capture_output=True,
        text=True,
        timeout=600,
    )
    assert proc.returncode in (0, 1)
    assert "regvet: read" not in proc.stderr and "\r" not in proc.stderr


def test_a_small_check_shows_no_progress_line(tmp_path):
    script = tmp_path / "one.py"
    script.write_text(
        "import statsmodels.formula.api as smf\nres = smf.ols('y ~ x', data=d).fit()\nprint(res.params)\n"
    )
    code, _, err = _run_with_terminal_stderr([*REGVET, "check", str(script), "--no-config"], tmp_path)
    assert code in (0, 1) and "regvet: read" not in err


@pytest.mark.runtime
def test_run_shows_each_file_and_cached_on_the_second_run(tmp_path):
    project = tmp_path / "p"
    project.mkdir()
    (project / "tons.py").write_text(
        "import numpy as np\nimport pandas as pd\nimport statsmodels.formula.api as smf\n"
        "rng = np.random.default_rng(2)\nd = pd.DataFrame({'x': rng.normal(size=40)})\n"
        "d['y'] = 1 + d['x'] + rng.normal(size=40)\nres = smf.ols('y ~ x', data=d).fit()\nprint(res.params)\n"
    )
    env_cache = tmp_path / "cache"
    os.environ["XDG_CACHE_HOME"] = str(env_cache)
    try:
        code, _, err = _run_with_terminal_stderr([*REGVET, "run", str(project), "--no-config"], tmp_path)
        assert code in (0, 1), err
        assert "regvet: running file 1 of 1, tons.py" in err
        code, _, err = _run_with_terminal_stderr([*REGVET, "run", str(project), "--no-config"], tmp_path)
        assert "tons.py: cached" in err, err
    finally:
        del os.environ["XDG_CACHE_HOME"]
