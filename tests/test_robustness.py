"""regvet never crashes on real code: the installed statsmodels (sources and tests) and the standard library.

Files that do not parse become ``parse-error`` findings; nothing else may go wrong.
"""

from __future__ import annotations

import io
import json
import sysconfig
from contextlib import redirect_stderr, redirect_stdout
from pathlib import Path

from regvet.cli import main
from regvet.engine import analyze


def test_scan_of_installed_statsmodels_has_no_crashes():
    import statsmodels

    root = Path(statsmodels.__file__).parent
    out, err = io.StringIO(), io.StringIO()
    with redirect_stdout(out), redirect_stderr(err):
        code = main(["check", str(root), "--format", "json", "--no-config"])
    assert err.getvalue() == "" and code in (0, 1)
    findings = json.loads(out.getvalue())["findings"]
    # statsmodels' own tests fit many OLS models and read their inference without checks.
    assert any(f["rule"] == "no-variance-test" for f in findings)
    assert len(list(root.rglob("test_*.py"))) > 100  # the tests were part of the scan


def test_standard_library_analysed_file_by_file_without_crashes():
    root = Path(sysconfig.get_paths()["stdlib"])
    analysed = 0
    parse_errors = []
    for path in sorted(root.rglob("*.py")):
        if "site-packages" in path.parts:
            continue
        try:
            text = path.read_bytes().decode("utf-8")
        except (OSError, UnicodeDecodeError):
            continue
        report = analyze(text, str(path), skip_unrelated=False)
        assert report.crashes == (), (path, report.crashes)
        analysed += 1
        parse_errors += [f for f in report.findings if f.rule == "parse-error"]
    assert analysed > 1000
    # lib2to3's and the test suite's deliberately broken files become findings, not failures
    assert all(f.message.startswith("This file cannot be analysed") for f in parse_errors)
