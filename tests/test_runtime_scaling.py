"""The probe's own rank, its thresholds relative to eps x condition, and WLS rows of weight zero.

References, named beside each check:

* a design on which statsmodels loses rank (raw columns on very different scales) spans the same
  space as its centred and rescaled version, on which statsmodels keeps full rank: statsmodels' own
  diagnostic functions on that rescaled fit are the reference for the probe's refit (rtol 1e-7);
* a WLS fit with rows of weight zero is the WLS fit without those rows: the probe's statistics on the
  first equal its statistics on the second, which ``tests/test_runtime_stats.py`` checks against
  statsmodels' functions; the coefficients against statsmodels' WLS on the kept rows;
* a fit with residuals of 3e-12 relative (far above rounding for a well-conditioned design): its
  Breusch-Pagan statistic against statsmodels' ``het_breuschpagan`` on the same fit.

All data is invented here with fixed seeds.
"""

from __future__ import annotations

import sys
import warnings
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
import statsmodels.formula.api as smf
from statsmodels.stats.diagnostic import het_breuschpagan, het_white, linear_reset

PROBE = Path(__file__).resolve().parents[1] / "src" / "regvet" / "runtime" / "probe"
sys.path.insert(0, str(PROBE))
from regvet_stats import fit_statistics  # noqa: E402

pytestmark = pytest.mark.filterwarnings("ignore::UserWarning", "ignore::RuntimeWarning")


def _quiet(fn: Any, *args: Any, **kwargs: Any) -> Any:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return fn(*args, **kwargs)


@pytest.fixture(scope="module")
def scaled() -> tuple[Any, Any, np.ndarray]:
    """(statsmodels' truncated fit on raw columns, its fit on the rescaled columns, y)."""
    rng = np.random.default_rng(31)
    n = 80
    a, b = rng.normal(0, 1, n), rng.uniform(0, 1, n)
    y = 1 + a + 2 * b + rng.normal(0, 1 + b, n)
    raw = np.column_stack([np.ones(n), a * 1e-8, b * 1e8])
    good = np.column_stack([np.ones(n), a, b])
    return _quiet(sm.OLS(y, raw).fit), _quiet(sm.OLS(y, good).fit), y


def test_statsmodels_loses_rank_on_the_raw_columns(scaled) -> None:
    truncated, rescaled, _ = scaled
    assert truncated.model.rank == 2 and rescaled.model.rank == 3  # the premise of the other tests


def test_the_refit_gives_statsmodels_values_of_the_rescaled_fit(scaled) -> None:
    truncated, rescaled, _ = scaled
    out = fit_statistics(truncated)
    refit = out["scaled_refit"]
    assert refit is not None and refit["statsmodels_rank"] == 2 and refit["rank"] == 3
    assert refit["ssr"] == pytest.approx(rescaled.ssr, rel=1e-9)  # reference: statsmodels on rescaled columns
    assert refit["statsmodels_ssr"] == pytest.approx(truncated.ssr, rel=1e-12)
    bp = het_breuschpagan(rescaled.resid, rescaled.model.exog)  # reference: statsmodels
    assert out["breusch_pagan"]["lm"] == pytest.approx(bp[0], rel=1e-7)
    white = het_white(rescaled.resid, rescaled.model.exog)  # reference: statsmodels
    assert out["white"]["lm"] == pytest.approx(white[0], rel=1e-7)
    reset = linear_reset(rescaled, power=3, use_f=True)  # reference: statsmodels
    assert out["reset"]["f"] == pytest.approx(float(reset.fvalue), rel=1e-7)
    assert out["df_resid"] == rescaled.df_resid
    # Coefficients of the raw columns: the rescaled fit's, unscaled (same column space).
    coef = out["coefficients"]
    scale = np.array([1.0, 1e-8, 1e8])
    for j in range(3):
        assert coef[j]["estimate"] == pytest.approx(rescaled.params[j] / scale[j], rel=1e-7)
        assert coef[j]["se"] == pytest.approx(rescaled.bse[j] / scale[j], rel=1e-7)
        assert coef[j]["se_robust"] == pytest.approx(rescaled.HC3_se[j] / scale[j], rel=1e-7)
    assert out["vif"] is not None and out["vif"]["max"] < 2  # near 1: the regressors are independent


def test_an_exact_rank_deficiency_is_left_to_statsmodels() -> None:
    rng = np.random.default_rng(32)
    n = 50
    a, b = rng.integers(0, 20, n).astype(float), rng.integers(0, 20, n).astype(float)
    X = np.column_stack([np.ones(n), a, b, a + b])
    res = _quiet(sm.OLS(a - b + rng.normal(0, 1, n), X).fit)
    out = fit_statistics(res)
    assert out["scaled_refit"] is None
    assert "rank-deficient" in out["errors"]["vif"]


def _numbers(entry: dict[str, Any]) -> dict[str, Any]:
    flat = {k: v for k, v in entry.items() if isinstance(v, (int, float)) and not isinstance(v, bool)}
    flat.update({f"values.{k}": v for k, v in (entry.get("values") or {}).items()})
    return flat


def test_zero_weight_rows_are_no_observations() -> None:
    rng = np.random.default_rng(33)
    n = 90
    months = pd.date_range("2019-01-01", periods=n, freq="MS")
    df = pd.DataFrame(
        {"fare": rng.uniform(2, 9, n), "wind": rng.uniform(0, 30, n), "post": np.repeat([0, 1], n // 2)},
        index=months,
    )
    df["riders"] = 300 - 10 * df["fare"] + 0.5 * df["wind"] + rng.normal(0, 1 + df["fare"], n)
    w = rng.uniform(0.5, 2.0, n)
    w[::7] = 0.0
    df.loc[w == 0, "riders"] = 1e6  # values with weight zero must change nothing
    keep = w > 0
    options = {"break_candidates": ["post"], "cv": True, "serial_lags": 2}  # the kept rows have gaps
    full = smf.wls("riders ~ fare + wind", data=df, weights=w).fit()
    kept = smf.wls("riders ~ fare + wind", data=df[keep], weights=w[keep]).fit()
    got, want = fit_statistics(full, options), fit_statistics(kept, options)
    assert got["nobs"] == want["nobs"] == int(keep.sum())
    assert got["zero_weight_rows"] == int((~keep).sum()) and want["zero_weight_rows"] == 0
    assert got["df_resid"] == kept.df_resid  # reference: statsmodels' WLS without the rows
    assert got["rows"] == want["rows"]
    for key in ("breusch_pagan", "white", "reset", "jarque_bera", "vif", "breusch_godfrey", "cv"):
        assert got[key] is not None, got["errors"]
        assert _numbers(got[key]) == pytest.approx(_numbers(want[key]), rel=1e-9), key
    assert got["durbin_watson"] == pytest.approx(want["durbin_watson"], rel=1e-9)
    assert [c["f"] for c in got["chow"]] == pytest.approx([c["f"] for c in want["chow"]], rel=1e-9)
    for g, w_, b, se in zip(got["coefficients"], want["coefficients"], kept.params, kept.bse, strict=True):
        assert g["estimate"] == pytest.approx(b, rel=1e-9)  # reference: statsmodels on the kept rows
        assert g["se"] == pytest.approx(se, rel=1e-9)
        assert g["se_robust"] == pytest.approx(w_["se_robust"], rel=1e-9)


def test_tiny_residuals_far_above_rounding_get_statistics() -> None:
    rng = np.random.default_rng(34)
    n = 60
    x = rng.uniform(0, 1, n)
    X = np.column_stack([np.ones(n), x])
    y = 100 + 10 * x + 1e-10 * rng.normal(0, 1, n) * (1 + 5 * x)
    res = sm.OLS(y, X).fit()
    assert np.sqrt(res.ssr / (y @ y)) < 1e-11  # below the old fixed threshold of 1e-10
    out = fit_statistics(res)
    bp = het_breuschpagan(res.resid, X)  # reference: statsmodels on the same fit
    assert out["breusch_pagan"]["lm"] == pytest.approx(bp[0], rel=1e-5)


def test_a_perfect_fit_and_constant_fitted_values_get_none() -> None:
    rng = np.random.default_rng(35)
    n = 40
    a = rng.integers(0, 30, n).astype(float)
    X = np.column_stack([np.ones(n), a])
    out = fit_statistics(sm.OLS(3 + 2 * a, X).fit())
    assert out["breusch_pagan"] is None and "perfect fit" in out["errors"]["breusch_pagan"]
    flat = fit_statistics(sm.OLS(rng.normal(5, 1, n), np.ones((n, 1))).fit())
    assert flat["reset"] is None and flat["white"] is None
