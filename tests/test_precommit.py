"""The pre-commit hook, end to end with the real ``pre-commit`` tool in a temporary git repository.

``pre-commit try-repo`` builds the hook's own environment from this repository (its working
tree, uncommitted changes included), exactly as a user's ``.pre-commit-config.yaml`` would.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from regvet.precommit import main as hook_main

ROOT = Path(__file__).resolve().parents[1]
PRE_COMMIT = Path(sys.executable).with_name("pre-commit")

DIRTY = textwrap.dedent(
    """\
    import pandas as pd
    import statsmodels.formula.api as smf

    crossings = pd.read_csv("crossings.csv")
    res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
    print(res.summary())
    """
)
CLEAN = DIRTY.replace(
    "print(res.summary())",
    "from statsmodels.stats.diagnostic import het_breuschpagan, linear_reset\n"
    "print(linear_reset(res, power=3, use_f=True), het_breuschpagan(res.resid, res.model.exog))\n"
    "print(res.summary())",
)


def git(repo: Path, *args: str) -> None:
    subprocess.run(
        ["git", *args],
        cwd=repo,
        check=True,
        capture_output=True,
        env={
            **os.environ,
            "GIT_AUTHOR_NAME": "t",
            "GIT_AUTHOR_EMAIL": "t@example.invalid",
            "GIT_COMMITTER_NAME": "t",
            "GIT_COMMITTER_EMAIL": "t@example.invalid",
        },
    )


@pytest.fixture(scope="module")
def hook_home(tmp_path_factory):
    """One pre-commit cache for the module: the hook environment is built once."""
    return tmp_path_factory.mktemp("pre-commit-home")


def try_repo(repo: Path, home: Path, *files: str) -> subprocess.CompletedProcess:
    env = {**os.environ, "PRE_COMMIT_HOME": str(home), "PRE_COMMIT_COLOR": "never"}
    env.pop("VIRTUAL_ENV", None)
    return subprocess.run(
        [str(PRE_COMMIT), "try-repo", str(ROOT), "regvet", "--files", *files],
        cwd=repo,
        capture_output=True,
        text=True,
        env=env,
        timeout=900,
    )


@pytest.mark.skipif(shutil.which("git") is None, reason="git is needed for pre-commit")
def test_hook_fails_a_commit_with_a_finding_and_passes_a_clean_one(tmp_path, hook_home):
    repo = tmp_path / "analysis"
    repo.mkdir()
    git(repo, "init", "-q")
    (repo / "dirty.py").write_text(DIRTY)
    (repo / "clean.py").write_text(CLEAN)
    (repo / "notes.txt").write_text("not python\n")
    git(repo, "add", "-A")
    proc = try_repo(repo, hook_home, "dirty.py", "notes.txt")
    assert proc.returncode == 1, proc.stdout + proc.stderr
    assert "Failed" in proc.stdout
    assert "dirty.py:5:7: res (riders ~ fare + fuel_price)\n" in proc.stdout  # the fit's header, its findings below
    assert "\n  warning no-form-test: " in proc.stdout
    assert "\n  warning no-variance-test: " in proc.stdout
    proc = try_repo(repo, hook_home, "clean.py")
    assert proc.returncode == 0, proc.stdout + proc.stderr
    assert "Passed" in proc.stdout


def test_hook_manifest_is_valid():
    proc = subprocess.run(
        [str(PRE_COMMIT), "validate-manifest", str(ROOT / ".pre-commit-hooks.yaml")], capture_output=True, text=True
    )
    assert proc.returncode == 0, proc.stdout + proc.stderr


def test_projects_own_hook_config_is_valid_and_runs_the_checks():
    """The project's .pre-commit-config.yaml (its own linter and type checker) is one pre-commit accepts."""
    config = ROOT / ".pre-commit-config.yaml"
    proc = subprocess.run([str(PRE_COMMIT), "validate-config", str(config)], capture_output=True, text=True)
    assert proc.returncode == 0, proc.stdout + proc.stderr
    text = config.read_text(encoding="utf-8")
    assert ".venv/bin/ruff check" in text and ".venv/bin/mypy" in text


def test_hook_refuses_the_runtime_mode(capsys):
    assert hook_main(["--run", "model.py"]) == 2
    assert "never runs it" in capsys.readouterr().err
