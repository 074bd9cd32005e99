"""The probe's serial tests use the rows in time order, whatever order the frame holds them in.

Reference: statsmodels' own ``durbin_watson`` and ``acorr_breusch_godfrey`` on the same model fitted
to the rows sorted by time (both are defined on the series in time order; OLS itself does not
depend on the row order, so the two fits have the same residuals, permuted). The data are invented:
monthly harbour tonnage with AR(1) errors, with a fixed seed.
"""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
import statsmodels.formula.api as smf
from statsmodels.stats.diagnostic import acorr_breusch_godfrey
from statsmodels.stats.stattools import durbin_watson

PROBE = Path(__file__).resolve().parents[1] / "src" / "regvet" / "runtime" / "probe"
sys.path.insert(0, str(PROBE))
from regvet_stats import fit_statistics  # noqa: E402

pytestmark = pytest.mark.filterwarnings("ignore::UserWarning", "ignore::FutureWarning")


def _tonnage(n: int = 180, seed: int = 11) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    cranes = rng.normal(5, 1, n)
    e = np.zeros(n)
    for t in range(1, n):
        e[t] = 0.7 * e[t - 1] + rng.standard_normal()
    tons = 40 + 3 * cranes + e
    return pd.DataFrame({"tons": tons, "cranes": cranes}, index=pd.date_range("2010-01-01", periods=n, freq="MS"))


def _shuffled(frame: pd.DataFrame, seed: int = 3) -> pd.DataFrame:
    return frame.iloc[np.random.default_rng(seed).permutation(len(frame))]


def _fit(frame: pd.DataFrame) -> Any:
    return sm.OLS(frame["tons"], sm.add_constant(frame[["cranes"]])).fit()


@pytest.mark.parametrize("chunk", [65_536, 17])
def test_unsorted_date_index_gives_the_sorted_series_values(chunk: int) -> None:
    frame = _tonnage()
    shuffled_fit, sorted_fit = _fit(_shuffled(frame)), _fit(frame)
    out = fit_statistics(shuffled_fit, {"chunk_rows": chunk})
    assert "sort them by time" in out["time_ordered"]
    # the frequency is inferred after sorting: monthly data, 12 lags (common practice)
    assert out["breusch_godfrey"]["lags"] == 12
    np.testing.assert_allclose(out["durbin_watson"], durbin_watson(sorted_fit.resid), rtol=1e-9)
    ref = acorr_breusch_godfrey(sorted_fit, nlags=12)
    np.testing.assert_allclose([out["breusch_godfrey"]["lm"], out["breusch_godfrey"]["lm_pvalue"]], ref[:2], rtol=1e-8)
    # and the row order alone would have hidden the autocorrelation (DW near 2 on shuffled rows)
    assert durbin_watson(shuffled_fit.resid) > 1.5 > out["durbin_watson"]


def test_sorted_rows_are_left_as_they_are() -> None:
    fit = _fit(_tonnage())
    out = fit_statistics(fit, {})
    assert "sort" not in out["time_ordered"]
    np.testing.assert_allclose(out["durbin_watson"], durbin_watson(fit.resid), rtol=1e-9)


def test_unsorted_time_column_is_sorted_too() -> None:
    frame = _shuffled(_tonnage()).reset_index(names="month")
    fit = smf.ols("tons ~ cranes", data=frame).fit()
    ordered = smf.ols("tons ~ cranes", data=frame.sort_values("month")).fit()
    out = fit_statistics(fit, {"time_column": "month"})
    assert "sort them by time" in out["time_ordered"] and out["breusch_godfrey"]["lags"] == 12
    np.testing.assert_allclose(out["durbin_watson"], durbin_watson(ordered.resid), rtol=1e-9)
    np.testing.assert_allclose(out["breusch_godfrey"]["lm"], acorr_breusch_godfrey(ordered, nlags=12)[0], rtol=1e-8)


def test_a_stacked_panel_gets_no_serial_number_but_a_reason() -> None:
    one = _tonnage(n=60)
    panel = pd.concat([one.assign(berth=b) for b in ("north", "south", "east")])
    fit = _fit(panel)
    out = fit_statistics(fit, {})
    assert out["time_ordered"] is not None
    assert out["durbin_watson"] is None and out["breusch_godfrey"] is None
    assert "stacked panel" in out["errors"]["durbin_watson"]
    assert "stacked panel" in out["errors"]["breusch_godfrey"]


def _berths(n_weeks: int = 50, rho: float = 0.6, seed: int = 21) -> pd.DataFrame:
    """Weekly tonnage at four berths, AR(1) errors within each berth, rows shuffled."""
    rng = np.random.default_rng(seed)
    weeks = pd.date_range("2022-01-03", periods=n_weeks, freq="W-MON")
    parts = []
    for berth in ("north", "south", "east", "west"):
        e = np.zeros(n_weeks)
        for t in range(1, n_weeks):
            e[t] = rho * e[t - 1] + rng.standard_normal()
        cranes = rng.normal(4, 1, n_weeks)
        parts.append(pd.DataFrame({"week": weeks, "berth": berth, "cranes": cranes, "tons": 20 + 2 * cranes + e}))
    return _shuffled(pd.concat(parts, ignore_index=True))


@pytest.mark.parametrize("rho", [0.6, 0.0])
def test_serial_test_within_units_matches_statsmodels_cluster_regression(rho: float) -> None:
    frame = _berths(rho=rho)
    fit = smf.ols("tons ~ cranes", data=frame).fit()
    out = fit_statistics(fit, {"time_column": "week", "unit_column": "berth"})
    assert out["breusch_godfrey"] is None and "see serial_within_units" in out["errors"]["breusch_godfrey"]
    within = out["serial_within_units"]
    # Reference: statsmodels' OLS of each residual on its berth's previous one (rows sorted by berth
    # and week), cluster-robust by berth with t(G - 1) inference.
    resid = frame.assign(u=fit.resid).sort_values(["berth", "week"])
    resid["u_prev"] = resid.groupby("berth")["u"].shift(1)
    pairs = resid.dropna(subset=["u_prev"])
    ref = sm.OLS(pairs["u"], sm.add_constant(pairs["u_prev"])).fit(
        cov_type="cluster", cov_kwds={"groups": pd.factorize(pairs["berth"])[0]}, use_t=True
    )
    np.testing.assert_allclose(
        [within["rho"], within["se"], within["t"], within["pvalue"]],
        [ref.params["u_prev"], ref.bse["u_prev"], ref.tvalues["u_prev"], ref.pvalues["u_prev"]],
        rtol=1e-9,
    )
    assert (within["units"], within["pairs"], within["df"]) == (4, 4 * 49, 3)
    if rho:
        assert within["pvalue"] < 0.01


def test_a_unit_time_index_gives_the_units_itself() -> None:
    frame = _berths().set_index(["berth", "week"])
    fit = smf.ols("tons ~ cranes", data=frame).fit()
    out = fit_statistics(fit, {})
    assert "(unit, time) index" in out["time_ordered"]
    assert out["serial_within_units"]["units"] == 4 and "berth" in out["serial_within_units"]["units_from"]
