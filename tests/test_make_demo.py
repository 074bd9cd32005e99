"""`make demo` installs what the demo needs and nothing more; `make demo-run` adds the statistics stack.

Real `make`, a real new virtual environment (in a temporary folder, through the Makefile's own
``VENV`` variable) and real pip, from the package index this machine can reach.
"""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

pytestmark = pytest.mark.precommit  # builds a Python environment, like the pre-commit tests


@pytest.mark.skipif(shutil.which("make") is None, reason="make is not installed")
def test_make_demo_installs_regvet_alone_and_scans_the_demo(tmp_path):
    venv = tmp_path / "venv"
    proc = subprocess.run(
        ["make", "demo", f"VENV={venv}", f"PYTHON={sys.executable}"],
        cwd=ROOT,
        capture_output=True,
        text=True,
        timeout=900,
    )
    assert proc.returncode == 0, proc.stdout[-3000:] + proc.stderr[-3000:]
    assert "no-form-test" in proc.stdout  # the demo's findings were printed
    listed = subprocess.run(
        [str(venv / "bin" / "python"), "-m", "pip", "list", "--format=freeze"],
        capture_output=True,
        text=True,
        timeout=120,
    ).stdout.lower()
    assert "regvet==" in listed
    for heavy in ("numpy", "pandas", "statsmodels", "scipy", "pytest"):  # the demo runs none of them
        assert f"{heavy}==" not in listed, f"make demo installed {heavy}"


def test_make_demo_run_runs_the_demo_in_the_runtime_mode():
    dry = subprocess.run(["make", "-n", "demo-run"], cwd=ROOT, capture_output=True, text=True, timeout=60)
    assert dry.returncode == 0
    assert "regvet run fixtures/demo" in dry.stdout and "'.[stats]'" in dry.stdout
