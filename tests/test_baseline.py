"""The baseline: today's findings recorded, only new ones reported by check, the pre-commit hook and the
language server; fingerprints that survive inserted lines, reformatting and renames elsewhere."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from conftest import FIXTURES
from regvet.baseline import BASELINE_NAME, entries_for, fingerprint, split
from regvet.engine import analyze

DEMO = FIXTURES / "demo"

SCRIPT = """\
import pandas as pd
import statsmodels.formula.api as smf

crossings = pd.read_csv("crossings.csv")
level = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
print(level.summary())
weeks = len(crossings)
print(weeks)
"""


def keys(text: str) -> list[tuple[str, str]]:
    report = analyze(text, "fares.py")
    return sorted((f.rule, fingerprint(report, f)) for f in report.findings)


def test_fingerprints_survive_inserted_lines_reformatting_and_a_rename_elsewhere():
    base = keys(SCRIPT)
    assert [r for r, _ in base] == ["no-form-test", "no-variance-test"]
    moved = SCRIPT.replace("crossings = pd", "# a new comment\n\n\nSEASONS = 4\ncrossings = pd")
    assert keys(moved) == base
    reformatted = SCRIPT.replace(
        'level = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()',
        "level = smf.ols(\n    'riders ~ fare+fuel_price',  # the base model\n    data = crossings,\n).fit( )",
    )
    assert keys(reformatted) == base
    renamed = SCRIPT.replace("weeks", "n_weeks")
    assert keys(renamed) == base
    # a different specification or different data is a different fit
    assert keys(SCRIPT.replace("+ fuel_price", "+ wind_speed")) != base
    assert keys(SCRIPT.replace("data=crossings", "data=crossings.dropna()")) != base


def test_identical_fits_are_counted_so_a_third_copy_is_new():
    twice = SCRIPT + 'again = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()\nprint(again.summary())\n'
    report = analyze(twice, "fares.py")
    recorded = entries_for(report, "fares.py")
    assert len(recorded) == 4 and len({e.key for e in recorded}) == 2
    thrice = twice + 'third = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()\nprint(third.summary())\n'
    now = analyze(thrice, "fares.py")
    from collections import Counter

    result = split(now, Counter(e.key for e in recorded))
    assert result.known == 4 and result.gone == 0
    assert sorted((f.rule, f.span.line) for f in result.report.findings) == [
        ("no-form-test", 11),
        ("no-variance-test", 11),
    ]


@pytest.fixture
def demo(tmp_path, monkeypatch) -> Path:
    folder = tmp_path / "analysis"
    shutil.copytree(DEMO, folder, ignore=shutil.ignore_patterns("__pycache__"))
    (folder / ".git").mkdir()  # the project root, where the baseline goes
    monkeypatch.chdir(folder)
    return folder


def test_adopting_regvet_on_the_demo(run_cli, demo):
    code, out, err = run_cli("baseline", ".")
    assert code == 0, err
    data = json.loads((demo / BASELINE_NAME).read_text())
    assert data["format"] == "regvet-baseline" and data["version"] == 1
    recorded = sorted((path, e["rule"], e["line"]) for path, items in data["files"].items() for e in items)
    # every open finding except the engine's own (a waiver without a reason, or naming no rule, is never hidden)
    assert len(recorded) == 10 and ("03_model_choice.py", "waiver-without-reason", 50) not in recorded
    assert ("03_model_choice.py", "waiver-unknown-rule", 43) not in recorded
    assert all(len(e["fingerprint"]) == 20 for items in data["files"].values() for e in items)
    code, out, err = run_cli("check", "--format", "lines", ".")
    assert code == 1
    assert [line.split(": ")[1].split()[1] for line in out.splitlines() if ": warning " in line] == [
        "waiver-unknown-rule",
        "waiver-without-reason",
    ]
    assert "regvet: baseline regvet-baseline.json: 10 known findings not shown\n" in out

    # edits that keep every finding known: lines inserted above the fits, a variable renamed elsewhere
    weather = demo / "02_weather_effects.py"
    text = weather.read_text()
    text = text.replace(
        "crossings = pd.read_csv", "# Data checked on 2 December.\nROUTES = 3\n\ncrossings = pd.read_csv", 1
    )
    text = text.replace("checks = run_diagnostics(weather)", "battery = run_diagnostics(weather)")
    text = text.replace("checks.items()", "battery.items()")
    weather.write_text(text)
    code, out, err = run_cli("check", ".", "--format", "json")
    assert [f["rule"] for f in json.loads(out)["findings"] if not f["waived"]] == [
        "waiver-unknown-rule",
        "waiver-without-reason",
    ]
    assert "10 known findings not shown" in err  # machine formats keep stdout clean

    # a new fit is reported
    weather.write_text(
        text + 'fuel_res = smf.ols("riders ~ fuel_price", data=crossings).fit()\nprint(fuel_res.summary())\n'
    )
    code, out, err = run_cli("check", ".", "--format", "json")
    new = sorted(
        (f["path"], f["line"], f["rule"])
        for f in json.loads(out)["findings"]
        if not f["rule"].startswith("waiver-") and not f["waived"]
    )
    fit_line = text.count("\n") + 1
    assert new == [
        ("02_weather_effects.py", fit_line, r) for r in ("no-form-test", "no-serial-test", "no-variance-test")
    ]

    # a fixed finding is "no longer found" until the baseline is refreshed; --update adds nothing new
    run_cli("mend", "03_model_choice.py")
    code, out, err = run_cli("check", ".")
    assert "9 known findings not shown, 1 no longer found (refresh it with `regvet baseline --update`)" in out
    code, out, err = run_cli("baseline", ".", "--update")
    assert code == 0 and "(1 gone)" in out
    code, out, err = run_cli("check", ".", "--format", "lines")
    assert "9 known findings not shown\n" in out
    assert out.count("02_weather_effects.py:") == 3  # the new fit's findings are still reported
    code, out, err = run_cli("check", ".", "--no-baseline", "--format", "json")
    assert len([f for f in json.loads(out)["findings"] if not f["waived"]]) == 14


def test_a_broken_baseline_is_a_clear_error(run_cli, demo):
    (demo / BASELINE_NAME).write_text('{"format": "regvet-baseline", "version": 1, "files": []}')
    code, out, err = run_cli("check", ".")
    assert code == 2 and "regvet-baseline.json" in err and '"files" must be an object' in err
    assert "Traceback" not in err
    (demo / BASELINE_NAME).write_text("{not json")
    code, out, err = run_cli("check", ".")
    assert code == 2 and "not valid JSON (line 1" in err
    code, out, err = run_cli("baseline", ".", "--update", "--baseline", "nowhere.json")
    assert code == 2 and "there is no baseline at nowhere.json yet" in err


def test_the_pre_commit_hook_honours_the_baseline(run_cli, demo, capsys):
    from regvet.precommit import main as hook

    run_cli("baseline", ".")
    assert hook(["01_fare_elasticity.py", "02_weather_effects.py"]) == 0
    out = capsys.readouterr().out
    assert "regvet: baseline regvet-baseline.json: 5 known findings not shown" in out
    path = demo / "01_fare_elasticity.py"
    path.write_text(
        path.read_text() + 'extra = smf.ols("riders ~ holiday", data=crossings).fit()\nprint(extra.pvalues)\n'
    )
    assert hook(["01_fare_elasticity.py"]) == 1
    assert "01_fare_elasticity.py:63:" in capsys.readouterr().out


async def test_the_language_server_hides_baselined_findings(demo):
    from lsp_client import session
    from regvet.cli import main

    assert main(["baseline", "."]) == 0
    text = (demo / "02_weather_effects.py").read_text()
    async with session(demo) as c:
        uri = c.open(demo / "02_weather_effects.py", text)
        diags = await c.diagnostics_for(uri, 1)
        assert [str(d.code) for d in diags] == []
        version = c.replace(
            uri,
            "# moved down\n"
            + text
            + 'fuel = smf.ols("riders ~ fuel_price", data=crossings).fit()\nprint(fuel.summary())\n',
        )
        diags = await c.diagnostics_for(uri, version)
        assert sorted(str(d.code) for d in diags) == ["no-form-test", "no-serial-test", "no-variance-test"]
        assert {d.range.start.line for d in diags} == {len(text.splitlines()) + 1}
