"""The text output a person reads: findings under their fit's header, notebook places counted from 1,
wrapping to a width; and `--format lines`, one line per finding for tools."""

from __future__ import annotations

import json
import textwrap

import pytest

from conftest import FIXTURES

TWO_FITS = textwrap.dedent(
    """\
    import pandas as pd
    import statsmodels.formula.api as smf

    crossings = pd.read_csv("crossings.csv")
    m1 = smf.ols("riders ~ fare", data=crossings).fit()
    m2 = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
    print(m1.summary())
    print(m2.params)
    print(m1.rsquared > m2.rsquared)
    """
)


@pytest.fixture
def project(tmp_path, monkeypatch):
    (tmp_path / ".git").mkdir()
    monkeypatch.chdir(tmp_path)
    monkeypatch.delenv("COLUMNS", raising=False)
    (tmp_path / "two.py").write_text(TWO_FITS)
    return tmp_path


def test_each_fit_has_one_header_and_its_findings_below(project, run_cli):
    code, out, err = run_cli("check", "two.py")
    assert code == 1 and err == ""
    lines = out.splitlines()
    headers = [line for line in lines if line.startswith("two.py:")]
    assert headers[:2] == ["two.py:5:6: m1 (riders ~ fare)", "two.py:6:6: m2 (riders ~ fare + fuel_price)"]
    m1 = lines[lines.index(headers[0]) + 1 : lines.index(headers[1])]
    assert [line.split(":")[0] for line in m1 if not line.startswith("    ")] == [
        "  warning no-form-test",
        "  warning no-variance-test",
    ]
    # a comparison of two fits belongs to neither: it stands on its own line with its place
    assert headers[2].startswith("two.py:9:7: warning r2-unadjusted-compare: This compares plain R²")
    assert lines[-1] == "regvet: 4 findings (0 errors, 4 warnings, 0 info) in 1 of 1 file"


def test_text_wraps_to_the_width_and_lines_keep_one_finding_per_line(project, run_cli, monkeypatch):
    code, wide, _ = run_cli("check", "two.py")
    assert max(map(len, wide.splitlines())) <= 120  # the width when standard output is not a terminal
    monkeypatch.setenv("COLUMNS", "72")
    code, narrow, _ = run_cli("check", "two.py")
    assert max(map(len, narrow.splitlines())) <= 72 and len(narrow.splitlines()) > len(wide.splitlines())
    # the words are the same, only the line breaks differ
    assert " ".join(narrow.split()) == " ".join(wide.split())
    code, lines, _ = run_cli("check", "two.py", "--format", "lines")
    findings = lines.splitlines()[:-1]
    assert len(findings) == 4 and all(
        f.startswith(("two.py:5:6: warning ", "two.py:6:6: warning ", "two.py:9:7: warning ")) for f in findings
    )
    assert max(map(len, findings)) > 120  # unwrapped


def test_colour_marks_the_place_severity_and_rule(project, run_cli):
    code, out, _ = run_cli("check", "two.py", "--color", "always")
    assert "\033[1mtwo.py:5:6: \033[0mm1 (riders ~ fare)" in out
    assert "  \033[33mwarning\033[0m \033[2mno-form-test\033[0m: `m1`" in out
    code, plain, _ = run_cli("check", "two.py", "--color", "never")
    assert "\033[" not in plain


def test_notebook_places_count_cells_from_one_and_json_keeps_the_index(run_cli, monkeypatch):
    monkeypatch.chdir(FIXTURES / "demo")
    monkeypatch.delenv("COLUMNS", raising=False)
    code, out, _ = run_cli("check", "04_timetable_change.ipynb", "--no-baseline")
    assert out.startswith("04_timetable_change.ipynb, cell 4, line 10:14: pooled_hc3 (np.log(riders) ~")
    assert "(`params`, cell 8, line 8)" in out  # the messages count cells the same way
    assert ":cell " not in out
    code, lines, _ = run_cli("check", "04_timetable_change.ipynb", "--format", "lines")
    assert lines.startswith("04_timetable_change.ipynb, cell 4, line 10:14: warning no-serial-test ")
    code, data, _ = run_cli("check", "04_timetable_change.ipynb", "--format", "json")
    first = next(f for f in json.loads(data)["findings"] if f["rule"] == "no-serial-test")
    assert (first["cell"], first["line"], first["column"]) == (3, 10, 14)  # 0-based cell index for programs
    nb = json.loads((FIXTURES / "demo" / "04_timetable_change.ipynb").read_text())
    assert "pooled_hc3" in "".join(nb["cells"][3]["source"])  # the fourth cell on screen


def test_a_finding_away_from_its_fit_shows_its_own_place_under_the_header():
    from dataclasses import replace

    from regvet.engine import analyze
    from regvet.model.settings import Settings
    from regvet.model.span import Span
    from regvet.output.text import render

    report = analyze(TWO_FITS, "two.py", Settings())
    moved = [f.with_(span=Span(7, 0, 7, 17)) if f.rule == "no-variance-test" else f for f in report.findings]
    out = render([replace(report, findings=tuple(moved))]).splitlines()
    start = out.index("two.py:5:6: m1 (riders ~ fare)")
    under = [line for line in out[start + 1 :] if not line.startswith("    ")][:2]
    assert under[0].startswith("  warning no-form-test: ")  # at the fit's own place: no place repeated
    assert under[1].startswith("  7:1: warning no-variance-test: ")  # elsewhere: its line and column first
