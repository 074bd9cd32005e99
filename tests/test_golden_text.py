"""The demo's text output, as a person reads it, against golden files in tests/golden/; and its width.

The golden files are the exact output of ``regvet check .`` (and ``regvet run .``) in fixtures/demo
when standard output is not a terminal (``COLUMNS`` unset: lines wrapped at 120). A deliberate change
of the output (a message, the layout, the demo) is recorded by regenerating them::

    REGVET_UPDATE_GOLDEN=1 .venv/bin/python -m pytest tests/test_golden_text.py

then reading the diff (``git diff tests/golden``) before committing it. The runtime file needs the
demo's statistics (numpy, pandas, statsmodels): it is in the ``runtime`` group.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

from conftest import FIXTURES

DEMO = FIXTURES / "demo"
GOLDEN = Path(__file__).parent / "golden"
#: The issue's limit for any line at the default width (the default width itself is 120).
LIMIT = 160


def _regvet(*args: str, cache: Path, columns: int | None = None) -> subprocess.CompletedProcess:
    env = {k: v for k, v in os.environ.items() if k not in ("COLUMNS", "NO_COLOR")}
    env["REGVET_CACHE_DIR"] = str(cache)
    if columns is not None:
        env["COLUMNS"] = str(columns)
    return subprocess.run(
        [sys.executable, "-m", "regvet", *args], cwd=DEMO, capture_output=True, text=True, env=env, timeout=900
    )


def _compare(name: str, proc: subprocess.CompletedProcess) -> None:
    assert proc.returncode == 1 and proc.stderr == "", proc.stderr
    path = GOLDEN / name
    if os.environ.get("REGVET_UPDATE_GOLDEN") == "1":
        path.parent.mkdir(exist_ok=True)
        path.write_text(proc.stdout, encoding="utf-8")
    assert path.is_file(), f"no golden file {path}: run with REGVET_UPDATE_GOLDEN=1 to write it"
    golden = path.read_text(encoding="utf-8")
    assert proc.stdout == golden, (
        f"the demo's text output differs from {path.name}; if the change is meant, regenerate it with "
        "REGVET_UPDATE_GOLDEN=1 (see this module's docstring)"
    )


def _too_long(text: str, limit: int) -> list[str]:
    return [line for line in text.splitlines() if len(line) > limit]


def test_demo_check_text_matches_the_golden_file(tmp_path):
    proc = _regvet("check", ".", cache=tmp_path / "cache")
    _compare("demo_check.txt", proc)


def test_no_line_of_the_demo_exceeds_the_width(tmp_path):
    default = _regvet("check", ".", "--show-waived", "--counts", cache=tmp_path / "cache")
    assert _too_long(default.stdout, 120) == [] and _too_long(default.stdout, LIMIT) == []
    # the one-line form really is longer: the limit is the text form's doing
    lines = _regvet("check", ".", "--format", "lines", cache=tmp_path / "cache")
    assert len(_too_long(lines.stdout, LIMIT)) >= 5
    # a narrower terminal (COLUMNS, as a terminal's width would be) wraps narrower
    narrow = _regvet("check", ".", cache=tmp_path / "cache", columns=80)
    assert _too_long(narrow.stdout, 80) == []
    assert " ".join(narrow.stdout.split()) == " ".join(_regvet("check", ".", cache=tmp_path / "cache").stdout.split())


@pytest.mark.runtime
def test_demo_run_text_matches_the_golden_file(tmp_path):
    proc = _regvet("run", ".", "-j", "1", cache=tmp_path / "cache")
    _compare("demo_run.txt", proc)
    assert _too_long(proc.stdout, 120) == []
    # the statistics of a fit once per fit, in its header block
    blocks: list[list[str]] = []
    for line in proc.stdout.splitlines():
        if line and not line.startswith(" "):
            blocks.append([])
        elif blocks:
            blocks[-1].append(line)
    assert all(sum(line.startswith("  run: ") for line in b) <= 1 for b in blocks)
    fits_with_runs = sum(any(line.startswith("  run: ") for line in b) for b in blocks)
    lines = _regvet("run", ".", "-j", "1", "--format", "lines", cache=tmp_path / "cache").stdout  # cached now
    assert fits_with_runs >= 5 and lines.count("[run: ") > fits_with_runs  # the lines form repeats them


def test_the_readme_example_is_the_demo_output():
    """Each line of the README's text example is a line (or the start of one, before `...`) of the golden file."""
    readme = (Path(__file__).resolve().parents[1] / "README.md").read_text()
    block = readme.split("Example from the demo (`regvet check .` in `fixtures/demo`):\n\n```text\n", 1)[1].split(
        "```", 1
    )[0]
    golden = (GOLDEN / "demo_check.txt").read_text().splitlines()
    shown = [line for line in block.splitlines() if line.strip()]
    assert len(shown) >= 7
    for line in shown:
        head = line.removesuffix(" ...").removesuffix("...")
        assert any(g == line or (line.endswith("...") and g.startswith(head)) for g in golden), line
