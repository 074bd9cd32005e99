"""The runtime-agreement harness (bench/realcode/runtime_agreement.py) end to end on an invented script.

A bakery's daily sales (invented here, simulated from a fixed seed, with a daily date index): the
harness runs the real ``regvet run --format json`` and the script again under its statsmodels hook,
pairs the fits by line and compares every statistic with statsmodels' own function on the same
results object. The references, named beside each check: ``het_breuschpagan``, ``het_white``,
``linear_reset`` (classical and with ``cov_type="HC3"``), ``jarque_bera``,
``variance_inflation_factor``, ``durbin_watson``, ``acorr_breusch_godfrey`` and
``get_robustcov_results(cov_type="HC3")``. A reference value perturbed on purpose must be reported
as a disagreement (and the mpmath arbiter must side with regvet), so the check can fail.
"""

from __future__ import annotations

import copy
import os
import sys
from pathlib import Path
from types import ModuleType

import pytest

from conftest import load_realcode

ROOT = Path(__file__).resolve().parents[1]

SCRIPT = """\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

rng = np.random.default_rng(20261204)
n = 150
days = pd.date_range("2025-03-01", periods=n, freq="D")
temperature = rng.normal(14.0, 5.0, n)
promo = (rng.random(n) < 0.3).astype(float)
flour_price = rng.normal(0.9, 0.05, n)
noise = rng.normal(0.0, 1.0, n) * (1.0 + 0.08 * np.abs(temperature - 14.0))
loaves = 120.0 + 1.8 * temperature + 25.0 * promo - 30.0 * flour_price + 6.0 * noise
sales = pd.DataFrame(
    {"loaves": loaves, "temperature": temperature, "promo": promo, "flour_price": flour_price}, index=days
)

plain = smf.ols("loaves ~ temperature + promo + flour_price", data=sales).fit()
print(plain.summary())

robust = smf.ols("loaves ~ temperature + promo", data=sales).fit(cov_type="HC3")
print(robust.summary())
"""

GROUPS = {
    "breusch_pagan.lm": "het_breuschpagan",
    "breusch_pagan.lm_pvalue": "het_breuschpagan",
    "white.lm": "het_white",
    "reset.f": "linear_reset",
    "reset.pvalue": "linear_reset",
    "reset.robust.f": "linear_reset(cov_type='HC3')",
    "jarque_bera.statistic": "jarque_bera",
    "vif": "variance_inflation_factor",
    "durbin_watson": "durbin_watson",
    "breusch_godfrey.lm": "acorr_breusch_godfrey",
    "coef.se_robust": "get_robustcov_results(cov_type='HC3')",
    "coef.p": "OLSResults.pvalues",
}


@pytest.fixture(scope="module")
def measured(tmp_path_factory: pytest.TempPathFactory) -> tuple[ModuleType, dict, Path]:
    folder = tmp_path_factory.mktemp("bakery")
    (folder / "daily_sales.py").write_text(SCRIPT, encoding="utf-8")
    harness = load_realcode("runtime_agreement")
    env_path = os.environ.get("PYTHONPATH", "")
    os.environ["PYTHONPATH"] = os.pathsep.join([str(ROOT / "src"), *([env_path] if env_path else [])])
    try:
        result = harness.measure(folder, [sys.executable, "-m", "regvet"], sys.executable, timeout=120)
    finally:
        if env_path:
            os.environ["PYTHONPATH"] = env_path
        else:
            del os.environ["PYTHONPATH"]
    return harness, result, folder


def test_real_statistics_are_compared_and_agree(measured: tuple[ModuleType, dict, Path]) -> None:
    _, result, _ = measured
    s = result["summary"]
    assert result["regvet_error"] is None
    assert s["scripts"] == 1 and s["scripts_failed"] == 0, result["failed_scripts"]
    assert s["reference_fits"] == 2 and s["fits_compared"] == 2, result
    assert s["statistics_compared"] >= 60
    assert s["disagree"] == 0, result["disagreements"]
    assert s["agree"] == s["statistics_compared"]
    assert s["decisions_compared"] >= 20 and s["decisions_agree"] == s["decisions_compared"]
    per = result["per_statistic"]
    for group, reference in GROUPS.items():  # each against the statsmodels function named beside it
        assert per.get(group, {}).get("agree", 0) >= 1, (group, reference, per.get(group))
        assert per[group].get("disagree", 0) == 0, (group, reference)
    assert result["per_file"]["daily_sales.py"]["fits_compared"] == 2


def test_a_perturbed_reference_is_reported_as_a_disagreement(measured: tuple[ModuleType, dict, Path]) -> None:
    harness, _, folder = measured
    # Run the pieces again to get one real pair (regvet's fit and the reference record).
    env_path = os.environ.get("PYTHONPATH", "")
    os.environ["PYTHONPATH"] = os.pathsep.join([str(ROOT / "src"), *([env_path] if env_path else [])])
    try:
        findings, error = harness.run_regvet([sys.executable, "-m", "regvet"], folder, ["daily_sales.py"], 120)
    finally:
        if env_path:
            os.environ["PYTHONPATH"] = env_path
        else:
            del os.environ["PYTHONPATH"]
    assert error is None
    fits, _ = harness.regvet_fits(findings)
    work = folder.parent / "work-perturbed"
    work.mkdir(exist_ok=True)
    run = harness.run_reference(sys.executable, folder, "daily_sales.py", work, 120)
    pairs, unpaired = harness.pair_fits(fits["daily_sales.py"], run["fits"])
    assert len(pairs) == 2 and not unpaired
    entry, rec = next((e, r) for e, r in pairs if e["fit"] == "plain")
    dis, _, skip = harness.compare_pair(entry, rec, True, {})
    assert skip is None and dis == []
    # het_breuschpagan's LM off by one part in 10,000: far outside the tolerance.
    bad = copy.deepcopy(rec)
    bad["ref"]["breusch_pagan.lm"] *= 1.0001
    dis, results, _ = harness.compare_pair(entry, bad, True, {})
    assert [d["statistic"] for d in dis] == ["breusch_pagan.lm"]
    assert dis[0]["regvet"] == entry["stats"]["breusch_pagan"]["lm"]
    assert dis[0]["reason"].startswith("statsmodels is wrong")  # the exact (mpmath) value sides with regvet
    assert ("breusch_pagan.lm", "disagree", None) in results
    # A p-value moved across 5 %: a disagreement whose decision differs too.
    bad = copy.deepcopy(rec)
    bad["ref"]["coef.flour_price.p"] = 0.5 if entry["stats"]["coefficients"][3]["p"] < 0.05 else 0.001
    dis, _, _ = harness.compare_pair(entry, bad, False, {})
    assert [(d["statistic"], d["decision_5pct_agrees"]) for d in dis] == [("coef.flour_price.p", False)]
    # Different data (an unseeded simulation): not compared, the reason given.
    bad = copy.deepcopy(rec)
    bad["ref"]["ssr"] *= 1.5
    dis, results, skip = harness.compare_pair(entry, bad, False, {})
    assert dis == [] and results == [] and skip is not None and "not the same data" in skip
