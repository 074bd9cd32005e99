"""Edges of what a scan reads: a named file that does not parse, a bad interpreter for runs.

Real `regvet` subprocesses on real files.
"""

from __future__ import annotations

import json
import subprocess
import sys

REGVET = [sys.executable, "-m", "regvet"]


def _run(*args, cwd):
    return subprocess.run([*REGVET, *args], cwd=cwd, capture_output=True, text=True, timeout=300)


def test_a_named_file_that_does_not_parse_is_a_parse_error_even_without_statsmodels(tmp_path):
    (tmp_path / "notes.py").write_text("def tally(:\n    return 1\n")
    proc = _run("check", "notes.py", "--format", "json", "--no-config", cwd=tmp_path)
    findings = json.loads(proc.stdout)["findings"]
    assert [(f["rule"], f["line"]) for f in findings] == [("parse-error", 1)]
    assert proc.returncode == 1


def test_in_a_folder_scan_a_file_without_statsmodels_stays_unparsed(tmp_path):
    # documented in the README: folder scans skip such files unread, for speed
    (tmp_path / "notes.py").write_text("def tally(:\n    return 1\n")
    proc = _run("check", ".", "--format", "json", "--no-config", cwd=tmp_path)
    assert json.loads(proc.stdout)["findings"] == [] and proc.returncode == 0


def test_a_named_file_that_parses_and_has_no_fits_gives_nothing(tmp_path):
    (tmp_path / "notes.py").write_text("def tally(xs):\n    return sum(xs)\n")
    proc = _run("check", "notes.py", "--format", "json", "--no-config", cwd=tmp_path)
    assert json.loads(proc.stdout)["findings"] == [] and proc.returncode == 0


def test_a_bad_interpreter_is_one_configuration_error(tmp_path):
    for name in ("a.py", "b.py"):
        (tmp_path / name).write_text(
            "import statsmodels.formula.api as smf\nres = smf.ols('y ~ x', data=d).fit()\nprint(res.params)\n"
        )
    (tmp_path / "regvet.toml").write_text('python = "/nonexistent/bin/python3"\n')
    proc = _run("run", ".", cwd=tmp_path)
    assert proc.returncode == 2
    assert proc.stderr.count("no such interpreter") == 1 and "regvet.toml" in proc.stderr
    assert "run-failed" not in proc.stdout and "Traceback" not in proc.stderr
