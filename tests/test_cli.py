"""The command line: exit codes, output formats, paths, and the import-free static path."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from regvet.model.finding import Severity

UNCHECKED = textwrap.dedent(
    """\
    import pandas as pd
    import statsmodels.formula.api as smf

    crossings = pd.read_csv("crossings.csv")
    res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
    print(res.summary())
    """
)
CHECKED = textwrap.dedent(
    """\
    import pandas as pd
    import statsmodels.formula.api as smf
    from statsmodels.stats.diagnostic import het_breuschpagan, linear_reset

    crossings = pd.read_csv("crossings.csv")
    res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
    print(linear_reset(res, power=3, use_f=True))
    print(het_breuschpagan(res.resid, res.model.exog))
    print(res.summary())
    """
)
INFO_ONLY = textwrap.dedent(
    """\
    import pandas as pd
    import statsmodels.formula.api as smf
    from statsmodels.stats.diagnostic import linear_reset

    crossings = pd.read_csv("crossings.csv")
    res = smf.ols("riders ~ fare + C(season)", data=crossings).fit(cov_type="HC3")
    print(linear_reset(res, power=3, use_f=True))
    print(res.summary())
    """
)


@pytest.fixture
def project(tmp_path, monkeypatch):
    (tmp_path / ".git").mkdir()
    monkeypatch.chdir(tmp_path)
    return tmp_path


def test_exit_0_when_clean_and_1_with_findings(project, run_cli):
    (project / "clean.py").write_text(CHECKED)
    (project / "dirty.py").write_text(UNCHECKED)
    assert run_cli("check", "clean.py")[0] == 0
    code, out, err = run_cli("check", "dirty.py")
    assert code == 1 and err == ""
    lines = out.strip().split("\n")
    assert lines[0] == "dirty.py:5:7: res (riders ~ fare + fuel_price)"  # the fit's header, then its findings
    assert lines[1].startswith("  warning no-form-test: `res` has its estimates used")
    assert lines[-1].startswith("regvet: 2 findings (0 errors, 2 warnings, 0 info) in 1 of 1 file")


def test_fail_on_levels(project, run_cli):
    (project / "info.py").write_text(INFO_ONLY)
    assert run_cli("check", "info.py")[0] == 0  # default: warning
    assert run_cli("check", "info.py", "--fail-on", "info")[0] == 1
    (project / "dirty.py").write_text(UNCHECKED)
    assert run_cli("check", "dirty.py", "--fail-on", "error")[0] == 0


def test_usage_errors_exit_2(project, run_cli):
    code, out, err = run_cli("check", "missing.py")
    assert code == 2 and "no such file or folder: missing.py" in err
    assert run_cli("check", "--format", "xml")[0] == 2
    assert run_cli("explain", "no-such-rule")[0] == 2
    assert run_cli("check", "--config", "nope.toml")[0] == 2


def test_exit_3_when_a_rule_crashes_and_other_rules_still_report(project, run_cli, monkeypatch):
    import regvet.engine as engine
    from regvet.rules.base import Rule

    def boom(inp):
        raise RuntimeError("deliberate test failure")
        yield  # pragma: no cover

    broken = Rule("broken-rule", Severity.WARNING, "s", "r", "", "", boom)
    monkeypatch.setattr(engine, "ALL_RULES", (*engine.ALL_RULES, broken))
    (project / "dirty.py").write_text(UNCHECKED)
    (project / "clean.py").write_text(CHECKED)
    code, out, err = run_cli("check", ".")
    assert code == 3
    assert "dirty.py: regvet failed in rule broken-rule: RuntimeError: deliberate test failure" in err
    assert "clean.py: regvet failed in rule broken-rule" in err
    assert (
        "dirty.py:5:7: res (riders ~ fare + fuel_price)\n  warning no-form-test: " in out
    )  # the other rules' findings are kept


def test_unreadable_and_undecodable_files_are_parse_errors(project, run_cli):
    (project / "latin.py").write_bytes(b"# -*- coding: utf-8 -*-\nx = '\xff'\nimport statsmodels\n")
    (project / "dirty.py").write_text(UNCHECKED)
    code, out, err = run_cli("check", ".")
    assert code == 1
    assert "latin.py:2:1: error parse-error" in out
    assert "dirty.py:5:7:" in out  # the scan went on


def test_syntax_error_position_and_scan_continues(project, run_cli):
    (project / "broken.py").write_text("import statsmodels.api as sm\nres = sm.OLS(y, X).fit(\nprint(1)\n")
    (project / "dirty.py").write_text(UNCHECKED)
    code, out, _ = run_cli("check", ".", "--format", "json")
    data = json.loads(out)
    errors = [f for f in data["findings"] if f["rule"] == "parse-error"]
    assert len(errors) == 1 and errors[0]["path"] == "broken.py"
    assert (errors[0]["line"], errors[0]["column"]) == (2, 23)
    assert any(f["path"] == "dirty.py" for f in data["findings"])


def test_json_shape(project, run_cli):
    sub = project / "analysis"
    sub.mkdir()
    (sub / "dirty.py").write_text(
        UNCHECKED.replace("fit()", "fit()  # regvet: waive no-form-test because fare is linear by design")
    )
    code, out, _ = run_cli("check", "analysis", "--format", "json")
    data = json.loads(out)
    assert data["version"] == 1
    by_rule = {f["rule"]: f for f in data["findings"]}
    f = by_rule["no-variance-test"]
    assert set(f) == {
        "rule",
        "severity",
        "path",
        "line",
        "column",
        "end_line",
        "end_column",
        "cell",
        "message",
        "related",
        "waived",
        "reason",
        "stats",
    }
    assert f["path"] == "analysis/dirty.py" and (f["line"], f["column"]) == (5, 7) and f["cell"] is None
    assert f["end_line"] == 5 and f["end_column"] == 66
    assert f["related"] == [
        {
            "path": "analysis/dirty.py",
            "line": 6,
            "column": 7,
            "cell": None,
            "message": "inference used here (`summary`)",
        }
    ]
    assert f["waived"] is False and f["reason"] is None and f["stats"] is None
    w = by_rule["no-form-test"]
    assert w["waived"] is True and w["reason"] == "fare is linear by design"
    assert code == 1


def test_github_annotations(project, run_cli):
    (project / "dirty.py").write_text(UNCHECKED)
    code, out, _ = run_cli("check", "dirty.py", "--format", "github")
    lines = out.strip().split("\n")
    assert len(lines) == 2
    assert lines[0].startswith("::warning file=dirty.py,line=5,endLine=5,col=7,endColumn=66,title=regvet no-")
    assert "\n" not in lines[0] and "::" in lines[1]


def test_rules_and_explain(run_cli):
    code, out, _ = run_cli("rules")
    assert code == 0
    from regvet.rules import ALL_RULES

    table = out.strip().split("\n\n")[0].split("\n")
    assert [line.split()[0] for line in table] == [r.id for r in ALL_RULES]
    # the runtime-only rules are marked `run` in their own column, the static ones are not
    marked = {line.split()[0] for line in table if line.split()[2] == "run"}
    assert marked == {r.id for r in ALL_RULES if r.needs_run} and marked
    assert "run: judges the statistics of a run" in out
    code, out, _ = run_cli("explain", "no-variance-test")
    assert code == 0 and "Long, J. S. and Ervin" in out and "qualified statistician" in out


@pytest.mark.parametrize("spelt", ["No-Form-Test", "NO-FORM-TEST", "no_form_test", " no-form-test"])
def test_explain_accepts_any_letter_case(run_cli, spelt):
    code, out, err = run_cli("explain", spelt)
    assert code == 0 and err == "" and out.startswith("no-form-test (warning by default)")


@pytest.mark.parametrize(
    "typo,meant",
    [
        ("no-from-test", "no-form-test"),
        ("No-Varience-Test", "no-variance-test"),
        ("waiver-unkown-rule", "waiver-unknown-rule"),
        ("brake-rejected", "break-rejected"),
    ],
)
def test_explain_suggests_the_nearest_rule_on_a_typo(run_cli, typo, meant):
    code, out, err = run_cli("explain", typo)
    assert code == 2 and out == ""
    assert err == f"regvet: error: no rule `{typo}`; did you mean `{meant}`?\n"


def test_explain_without_a_close_rule_points_to_the_catalogue(run_cli):
    code, out, err = run_cli("explain", "ferry-timetable")
    assert code == 2 and "no rule `ferry-timetable`; `regvet rules` lists them" in err and "did you mean" not in err


def test_explain_shows_examples_without_test_harness_comments(run_cli):
    from regvet.rules import ALL_RULES

    code, out, _ = run_cli("explain", *[r.id for r in ALL_RULES])
    assert code == 0
    assert "# expect" not in out and "expect:" not in out
    assert "regvet config for this example" not in out
    # the configuration an example needs is said in words instead
    assert 'With `break_candidates = ["post_timetable"]` under `[tool.regvet]`:' in out
    # the flagged line itself is still shown, without its marker
    assert '    res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()\n' in out


def test_explain_prints_the_caution_once_at_the_end(run_cli):
    from regvet.rules.texts import CAUTION

    for rules in (["no-form-test"], ["no-form-test", "run-failed", "waiver-unknown-rule"]):
        code, out, _ = run_cli("explain", *rules)
        assert code == 0 and out.count("does not make a model right") == 1
        assert out.endswith("\n\n" + CAUTION + "\n")
        assert out.count(" (warning by default") + out.count(" (error by default") == len(rules)
    # shorter than before (it was 453 characters) and it keeps its four points
    assert len(CAUTION) < 300
    for point in (
        "Passing regvet does not make a model right",
        "missing or failed",
        "judgement about the economics stays with the analyst",
        "qualified statistician or econometrician under the rules of their field or institution",
    ):
        assert point in CAUTION


def test_colour_only_when_asked_or_on_a_terminal(project, run_cli):
    (project / "dirty.py").write_text(UNCHECKED)
    assert "\033[" not in run_cli("check", "dirty.py")[1]  # captured stdout is not a terminal
    assert "\033[" in run_cli("check", "dirty.py", "--color", "always")[1]


def test_default_path_is_the_current_folder(project, run_cli):
    (project / "dirty.py").write_text(UNCHECKED)
    code, out, _ = run_cli()
    assert code == 1 and out.startswith("dirty.py:5:7:")


def test_check_runs_without_numpy_pandas_statsmodels_libcst_pygls(project):
    """The static path must neither import nor need the heavy packages (pre-commit start-up time)."""
    (project / "dirty.py").write_text(UNCHECKED)
    blocked = ["numpy", "pandas", "statsmodels", "scipy", "libcst", "pygls", "lsprotocol"]
    code = textwrap.dedent(
        f"""
        import sys
        for name in {blocked!r}:
            sys.modules[name] = None  # any import of these now raises ImportError
        from regvet.cli import main
        rc = main(["check", "dirty.py", "--format", "sarif"])
        rc2 = main(["check", "dirty.py"])
        sys.exit(rc * 10 + rc2)
        """
    )
    proc = subprocess.run([sys.executable, "-c", code], cwd=project, capture_output=True, text=True)
    assert proc.returncode == 11, proc.stderr
    assert "no-form-test" in proc.stdout
    loaded = subprocess.run(
        [
            sys.executable,
            "-c",
            "import sys; from regvet.cli import main; main(['check', 'dirty.py']); "
            "print(sorted(m for m in sys.modules if m.split('.')[0] in ('numpy','pandas','statsmodels','libcst','pygls')))",
        ],
        cwd=project,
        capture_output=True,
        text=True,
    )
    assert loaded.stdout.strip().split("\n")[-1] == "[]"


def test_console_script_and_module_entry_points(project):
    (project / "dirty.py").write_text(UNCHECKED)
    exe = Path(sys.executable).with_name("regvet")
    proc = subprocess.run([str(exe), "check", "dirty.py"], cwd=project, capture_output=True, text=True)
    assert proc.returncode == 1 and "dirty.py:5:7:" in proc.stdout
    proc = subprocess.run(
        [sys.executable, "-m", "regvet", "check", "dirty.py", "--format", "json"],
        cwd=project,
        capture_output=True,
        text=True,
        env={**os.environ, "NO_COLOR": "1"},
    )
    assert proc.returncode == 1 and json.loads(proc.stdout)["version"] == 1
