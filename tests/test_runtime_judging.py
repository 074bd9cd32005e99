"""The runtime rules judge the test that matches the fit (issue 9), on one real run of invented data.

One script (fixed seeds, ferries and harbours) makes a fit for each case; it runs for real in a child
process (probe, statsmodels) and the findings of each fit are checked:

* ``form-rejected`` judges the robust RESET for a fit with HC3 covariance: a correct quadratic with
  heteroskedastic errors, where the classical F rejects (p < 0.001) and the HC3 Wald test does not
  (p = 0.56), gets no finding; a misspecified HC3 fit gets one that names both tests;
* a design of dummies whose cells interact gets the interactions advice, not logs or squares;
* RESET that is not identified (one binary regressor) gives no finding;
* ``heteroskedastic-plain-se``: an error when Breusch-Pagan and White's test both reject, a warning
  that says so when only one of them does.

The p-values quoted were computed by the probe for these seeds; statsmodels' own functions agree with
them (``tests/test_runtime_matched.py`` checks the statistics themselves against statsmodels).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from regvet.model.finding import Severity
from test_runtime_rules import run_example

SCRIPT = """\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

rng = np.random.default_rng(3)
x = rng.normal(0, 1, 100)
quad = pd.DataFrame({"x": x, "y": 1 + x + 0.5 * x**2 + rng.normal(size=100) * np.sqrt(1 + x**2)})
correct = smf.ols("y ~ x + I(x**2)", data=quad).fit(cov_type="HC3")
print(correct.params)

rng = np.random.default_rng(12)
fare = rng.uniform(2.0, 9.0, 300)
crossings = pd.DataFrame({"fare": fare, "riders": np.exp(6.5 - 0.35 * fare + rng.normal(0, 0.05, 300))})
curved = smf.ols("riders ~ fare", data=crossings).fit(cov_type="HC3")
print(curved.params)

rng = np.random.default_rng(8)
calls = pd.DataFrame({"harbour": rng.choice(["kelp", "gull", "salt"], 240), "season": rng.choice(["summer", "winter"], 240)})
cell = (calls["harbour"] == "salt") & (calls["season"] == "winter")
calls["delay"] = 20 + 4 * (calls["harbour"] == "gull") + 3 * (calls["season"] == "winter") + 9 * cell + rng.normal(0, 1, 240)
additive = smf.ols("delay ~ C(harbour) + C(season)", data=calls).fit(cov_type="HC3")
print(additive.params)

calls["pilot"] = rng.integers(0, 2, 240)
calls["wait"] = 10 + 6 * calls["pilot"] + rng.normal(0, 1, 240)
binary = smf.ols("wait ~ pilot", data=calls).fit(cov_type="HC3")
print(binary.params)

rng = np.random.default_rng(1)
gusts = pd.DataFrame({"wind": rng.normal(0, 1, 150), "fare": rng.uniform(2, 9, 150)})
gusts["riders"] = 300 - 8 * gusts["fare"] + 5 * gusts["wind"] + rng.normal(size=150) * (2 + 3 * np.abs(gusts["wind"]))
only_white = smf.ols("riders ~ fare + wind", data=gusts).fit()
print(only_white.summary())

rng = np.random.default_rng(34)
routes = pd.DataFrame({c: rng.normal(0, 1, 80) for c in ["fare", "wind", "tide", "rain", "temp"]})
routes["riders"] = 300 - 8 * routes["fare"] + rng.normal(size=80) * np.exp(0.5 * routes["fare"])
only_bp = smf.ols("riders ~ fare + wind + tide + rain + temp", data=routes).fit()
print(only_bp.summary())

rng = np.random.default_rng(11)
fares = rng.uniform(2.0, 9.0, 200)
spread = pd.DataFrame({"fare": fares, "riders": 400 - 12 * fares + rng.normal(0, 1, 200) * fares**2})
both = smf.ols("riders ~ fare", data=spread).fit()
print(both.summary())
"""


@pytest.fixture(scope="module")
def findings(tmp_path_factory: pytest.TempPathFactory) -> dict[str, list]:
    """The findings of each fit of the script's run, by the fit's result name."""
    folder: Path = tmp_path_factory.mktemp("judging")
    report, result = run_example(folder, "judging", SCRIPT)
    assert result is not None and result.end is not None and result.end["status"] == "ok", result.output_tail
    names = {fit.id: fit.result_name for fit in report.rule_input.facts.fits}
    out: dict[str, list] = {}
    for f in report.findings:
        for fid in f.fits:
            out.setdefault(names[fid], []).append(f)
    return out


def _of(findings: dict[str, list], fit: str, rule: str) -> list:
    return [f for f in findings.get(fit, []) if f.rule == rule]


def test_a_correct_model_with_hc3_covariance_is_not_rejected_by_the_classical_reset(findings) -> None:
    assert _of(findings, "correct", "form-rejected") == []


def test_a_misspecified_hc3_fit_is_rejected_by_the_robust_reset_and_shows_the_classical_one(findings) -> None:
    [f] = _of(findings, "curved", "form-rejected")
    assert f.message.startswith("`curved` fails Ramsey's RESET with HC3 covariance, F(2, 296) = ")
    assert "; classical F = " in f.message and "Try logs, squares or interactions" in f.message


def test_a_dummy_design_gets_the_interactions_advice(findings) -> None:
    [f] = _of(findings, "additive", "form-rejected")
    assert "are all dummies" in f.message and "interactions of the categories" in f.message
    assert "logs" not in f.message and "squares" not in f.message


def test_reset_that_is_not_identified_gives_no_finding(findings) -> None:
    assert _of(findings, "binary", "form-rejected") == []


def test_both_heteroskedasticity_tests_rejecting_is_an_error(findings) -> None:
    [f] = _of(findings, "both", "heteroskedastic-plain-se")
    assert f.severity is Severity.ERROR
    assert " fails Breusch-Pagan in Koenker's form, LM = " in f.message and ", and White's test, LM = " in f.message
    assert "its error variance is not constant" in f.message


def test_only_white_rejecting_is_a_warning_that_says_so(findings) -> None:
    [f] = _of(findings, "only_white", "heteroskedastic-plain-se")
    assert f.severity is Severity.WARNING
    assert "may have an error variance that is not constant: only White's test rejects, LM = " in f.message
    assert "; Breusch-Pagan in Koenker's form does not, LM = " in f.message
    assert "may have an error variance that is not constant" in f.message


def test_only_breusch_pagan_rejecting_is_a_warning_that_says_so(findings) -> None:
    [f] = _of(findings, "only_bp", "heteroskedastic-plain-se")
    assert f.severity is Severity.WARNING
    assert "not constant: only Breusch-Pagan in Koenker's form rejects, LM = " in f.message
    assert "; White's test does not, LM = " in f.message
