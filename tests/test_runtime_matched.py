"""Tests that match the fit they judge (issue 9): the probe's RESET, White and Chow against outside references.

* RESET for a fit with HC covariance: the robust Wald test of the added powers, checked against
  statsmodels 0.15's ``linear_reset(res, power=3, test_type="fitted", use_f=True, cov_type=...)``
  and against a direct sandwich computation written out here with numpy; a small Monte Carlo
  (fixed seed) shows why it matters.
* Auxiliary regressions that are not identified (fitted values with two values, saturated dummy
  designs): no p-value, and the reason. The reference is the rank of the augmented design, computed
  here independently with ``numpy.linalg.matrix_rank`` on unit-length columns built from exact cell
  means.
* Chow: per-group ranks, checked against separate statsmodels OLS fits per group.

Data are invented (harbours, ferries, bakeries), with fixed numpy seeds. The probe is imported the
way the runtime mode imports it: from its own directory on ``sys.path``.
"""

from __future__ import annotations

import json
import sys
import warnings
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
import statsmodels.formula.api as smf
from scipy import stats
from statsmodels.stats.diagnostic import het_breuschpagan, het_white, linear_reset

PROBE = Path(__file__).resolve().parents[1] / "src" / "regvet" / "runtime" / "probe"
sys.path.insert(0, str(PROBE))
from regvet_stats import fit_statistics  # noqa: E402

RTOL = 1e-8

pytestmark = pytest.mark.filterwarnings("ignore::UserWarning", "ignore::FutureWarning", "ignore::RuntimeWarning")


def run(res: Any, **options: Any) -> dict[str, Any]:
    out = fit_statistics(res, options)
    json.dumps(out, allow_nan=False)
    return out


def close(actual: Any, expected: Any, rtol: float = RTOL) -> None:
    assert actual is not None
    np.testing.assert_allclose(np.asarray(actual, dtype=float), np.asarray(expected, dtype=float), rtol=rtol, atol=0)


def _ferries(seed: int = 41, n: int = 300) -> pd.DataFrame:
    """Crossing times on distance and its square, error spread growing with the distance."""
    rng = np.random.default_rng(seed)
    distance = rng.uniform(0.0, 3.0, n)
    wind = rng.normal(0.0, 1.0, n)
    minutes = 1.0 + distance + 0.5 * distance**2 + 0.3 * wind + rng.normal(size=n) * (0.2 + distance**2)
    return pd.DataFrame({"distance": distance, "wind": wind, "minutes": minutes})


# ------------------------------------------------------------------------------------------
# RESET with the fit's robust covariance


def _direct_robust_reset(res: Any, hc: str) -> tuple[float, float]:
    """The robust Wald F of ŷ², ŷ³ written out: OLS of y on [X, ŷ², ŷ³], HC sandwich, Wald of the last two."""
    X = np.asarray(res.model.exog, dtype=float)
    y = np.asarray(res.model.endog, dtype=float)
    yhat = np.asarray(res.fittedvalues, dtype=float)
    W = np.column_stack([X, yhat**2, yhat**3])
    n, p = W.shape
    q, r = np.linalg.qr(W)
    beta = np.linalg.solve(r, q.T @ y)
    e = y - W @ beta
    rinv = np.linalg.inv(r)
    bread = rinv @ rinv.T  # (W'W)^-1
    h = np.sum(q * q, axis=1)
    omega = {"HC0": e**2, "HC1": e**2 * n / (n - p), "HC2": e**2 / (1 - h), "HC3": e**2 / (1 - h) ** 2}[hc]
    cov = bread @ (W.T * omega) @ W @ bread
    g = beta[-2:]
    f = float(g @ np.linalg.solve(cov[-2:, -2:], g)) / 2
    return f, float(stats.f.sf(f, 2, n - p))


@pytest.mark.parametrize("hc", ["HC0", "HC1", "HC2", "HC3"])
@pytest.mark.parametrize("chunk", [65_536, 37])
def test_robust_reset_equals_linear_reset_with_the_fits_cov_type(hc: str, chunk: int) -> None:
    res = smf.ols("minutes ~ distance + wind", data=_ferries()).fit(cov_type=hc)
    reset = run(res, chunk_rows=chunk)["reset"]
    robust = reset["robust"]
    assert robust is not None and robust["cov_type"] == hc
    # Reference: statsmodels 0.15 linear_reset(res, power=3, test_type="fitted", use_f=True, cov_type=hc).
    ref = linear_reset(res, power=3, test_type="fitted", use_f=True, cov_type=hc)
    close([robust["f"], robust["pvalue"]], [ref.fvalue, ref.pvalue])
    assert (robust["df_num"], robust["df_denom"]) == (int(ref.df_num), int(ref.df_denom)) == (2, 295)
    # Reference: the sandwich written out above (numpy QR of the augmented design).
    close([robust["f"], robust["pvalue"]], _direct_robust_reset(res, hc))
    # The classical F stays beside it: statsmodels' linear_reset with the default nonrobust covariance.
    classical = linear_reset(res, power=3, use_f=True)
    close([reset["f"], reset["pvalue"]], [classical.fvalue, classical.pvalue])


def test_a_robust_copy_gets_the_robust_reset_and_a_plain_fit_none() -> None:
    plain = smf.ols("minutes ~ distance", data=_ferries()).fit()
    assert run(plain)["reset"]["robust"] is None
    copy = plain.get_robustcov_results("HC1")
    robust = run(copy)["reset"]["robust"]
    # Reference: statsmodels' linear_reset of the plain fit with cov_type="HC1".
    ref = linear_reset(plain, power=3, use_f=True, cov_type="HC1")
    close([robust["f"], robust["pvalue"]], [ref.fvalue, ref.pvalue])


def test_a_hac_fit_keeps_the_classical_reset_and_says_why_there_is_no_robust_one() -> None:
    res = smf.ols("minutes ~ distance", data=_ferries()).fit(cov_type="HAC", cov_kwds={"maxlags": 2})
    out = run(res)
    assert out["reset"]["robust"] is None and out["reset"]["f"] is not None
    assert "HAC is not an HC type" in out["errors"]["reset_robust"]


def test_robust_reset_for_wls_uses_the_whitened_model() -> None:
    data = _ferries()
    weights = 1.0 / (0.2 + data["distance"].to_numpy() ** 2)
    res = sm.WLS(data["minutes"], sm.add_constant(data[["distance"]]), weights=weights).fit(cov_type="HC3")
    robust = run(res)["reset"]["robust"]
    # Reference: linear_reset of the OLS fit of the whitened data (statsmodels' own linear_reset refits a
    # WLS model without its weights, so it cannot serve directly).
    sw = np.sqrt(weights)
    whitened = sm.OLS(data["minutes"] * sw, sm.add_constant(data[["distance"]]).mul(sw, axis=0)).fit(cov_type="HC3")
    ref = linear_reset(whitened, power=3, use_f=True, cov_type="HC3")
    close([robust["f"], robust["pvalue"]], [ref.fvalue, ref.pvalue])


def test_classical_reset_over_rejects_a_correct_quadratic_under_heteroskedasticity_and_hc3_does_not() -> None:
    """Monte Carlo, 200 replications of a correctly specified quadratic in a standard normal x, n = 100,
    error standard deviation sqrt(1 + x²).

    The issue measured about 32 % rejections at 5 % for the classical RESET and about 9 % for the HC3
    form. With 200 replications a rate's standard error is at most 3.5 points, so the bounds below
    (classical above 20 %, HC3 below 15 %) leave three standard errors either side of the issue's rates.
    In every replication the probe's decisions equal those of statsmodels' linear_reset (reference).
    """
    rng = np.random.default_rng(2026)
    n, reps = 100, 200
    classical = robust = 0
    for _ in range(reps):
        x = rng.normal(0.0, 1.0, n)
        frame = pd.DataFrame({"x": x, "y": 1.0 + x + 0.5 * x**2 + rng.normal(size=n) * np.sqrt(1.0 + x**2)})
        res = smf.ols("y ~ x + I(x**2)", data=frame).fit(cov_type="HC3")
        reset = run(res)["reset"]
        classical += reset["pvalue"] < 0.05
        robust += reset["robust"]["pvalue"] < 0.05
        ref_c = linear_reset(res, power=3, use_f=True).pvalue < 0.05
        ref_r = linear_reset(res, power=3, use_f=True, cov_type="HC3").pvalue < 0.05
        assert (reset["pvalue"] < 0.05, reset["robust"]["pvalue"] < 0.05) == (ref_c, ref_r)
    assert classical / reps > 0.20, classical
    assert robust / reps < 0.15, robust
    assert classical > 2 * robust


# ------------------------------------------------------------------------------------------
# auxiliary regressions that are not identified


def _harbours(seed: int = 8, n: int = 240) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    frame = pd.DataFrame(
        {
            "pilot": rng.integers(0, 2, n),
            "harbour": rng.choice(["Kelp Bay", "Gull Point", "Saltmarsh"], n),
            "season": rng.choice(["summer", "winter"], n),
        }
    )
    frame["delay"] = 20.0 + 5.0 * frame["pilot"] + rng.normal(size=n) * (1.0 + 2.0 * frame["pilot"])
    frame["berth_hours"] = 1e6 + 1e-3 * frame["pilot"] + 1e-3 * rng.normal(size=n)  # a large offset
    return frame


def _augmented_rank(frame: pd.DataFrame, res: Any, cells: list[str]) -> tuple[int, int]:
    """(rank of X, rank of [X, ŷ², ŷ³]) with ŷ the exact cell means (pandas groupby), unit-length columns."""
    X = np.asarray(res.model.exog, dtype=float)
    means = frame.groupby(cells)[res.model.endog_names].transform("mean").to_numpy()
    means = means - means.mean()
    aug = np.column_stack([X, means**2, means**3])
    unit = aug / np.linalg.norm(aug, axis=0)
    return int(np.linalg.matrix_rank(X / np.linalg.norm(X, axis=0))), int(np.linalg.matrix_rank(unit))


@pytest.mark.parametrize(
    ("formula", "cells", "why"),
    [
        ("delay ~ pilot", ["pilot"], "take only two values"),
        ("berth_hours ~ pilot", ["pilot"], "take only two values"),
        ("delay ~ C(harbour)", ["harbour"], "every cell its own mean"),
        ("delay ~ C(harbour) * C(season)", ["harbour", "season"], "every cell its own mean"),
    ],
)
def test_reset_on_a_saturated_or_two_valued_design_is_not_identified(formula: str, cells: list[str], why: str) -> None:
    frame = _harbours()
    res = smf.ols(formula, data=frame).fit()
    out = run(res)
    # Reference: the powers of the exact cell means add nothing to the design's rank.
    rank_x, rank_aug = _augmented_rank(frame, res, cells)
    assert rank_aug == rank_x
    assert out["reset"] is None
    assert out["errors"]["reset"].startswith("not identified:") and why in out["errors"]["reset"]
    # statsmodels' linear_reset does not see it and reports a p-value far below any alpha (recorded here
    # to show what the probe no longer does; the augmented design it fits is singular).
    if formula == "delay ~ pilot":
        assert linear_reset(res, power=3, use_f=True).pvalue < 1e-10


def test_reset_on_an_additive_dummy_design_is_identified_and_says_dummies_only() -> None:
    frame = _harbours()
    res = smf.ols("delay ~ C(harbour) + C(season)", data=frame).fit()
    reset = run(res)["reset"]
    # Reference: six cells, four parameters: the powers of the exact cell means add two directions.
    rank_x, rank_aug = _augmented_rank(frame, res, ["harbour", "season"])
    assert (rank_x, rank_aug) == (4, 6)
    ref = linear_reset(res, power=3, use_f=True)  # statsmodels, well defined here
    close([reset["f"], reset["pvalue"]], [ref.fvalue, ref.pvalue], rtol=1e-7)
    assert reset["dummies_only"] is True and reset["df_num"] == 2
    assert run(smf.ols("minutes ~ distance", data=_ferries()).fit())["reset"]["dummies_only"] is False


def test_white_on_a_single_binary_regressor_is_identified_with_one_df() -> None:
    frame = _harbours()
    res = smf.ols("delay ~ pilot", data=frame).fit()
    out = run(res)
    white = out["white"]
    # Reference: statsmodels' het_white (df from the rank of [1, d, d²]) and, since d² = d, het_breuschpagan.
    lm, lm_p, f, f_p = het_white(res.resid, res.model.exog)
    close([white["lm"], white["lm_pvalue"], white["f"], white["f_pvalue"]], [lm, lm_p, f, f_p])
    assert white["df"] == 1
    bp = het_breuschpagan(res.resid, res.model.exog)
    close(white["lm"], bp[0])


def test_white_whose_auxiliary_regression_reproduces_the_squared_residuals_is_not_identified() -> None:
    """Two rows per cell of a saturated design: the residuals of a cell are ±e, so û² is constant within
    cells and the White regression on the cells fits it exactly (R² = 1, LM = n)."""
    rng = np.random.default_rng(3)
    frame = pd.DataFrame({"bakery": np.repeat([f"b{i}" for i in range(6)], 2)})
    frame["loaves"] = 50.0 + rng.normal(size=12) * 4.0
    res = smf.ols("loaves ~ C(bakery)", data=frame).fit()
    out = run(res)
    # Reference: statsmodels' het_white gives LM = n here, a p-value that tests nothing.
    lm = het_white(res.resid, res.model.exog)[0]
    assert abs(lm - 12.0) < 1e-6
    assert out["white"] is None and out["errors"]["white"].startswith("not identified:")
    assert out["breusch_pagan"] is None and out["errors"]["breusch_pagan"].startswith("not identified:")


def test_not_identified_designs_still_give_every_other_statistic() -> None:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        out = run(smf.ols("delay ~ pilot", data=_harbours()).fit())
    assert out["reset"] is None and out["breusch_pagan"] is not None and out["jarque_bera"] is not None


# ------------------------------------------------------------------------------------------
# Chow: only where it tests something, degrees of freedom from the ranks each group identifies


def _crossings(seed: int = 19, n: int = 180) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    frame = pd.DataFrame(
        {
            "port": rng.choice(["Kelp Bay", "Gull Point", "Saltmarsh"], n),
            "fare": rng.uniform(2.0, 9.0, n),
            "wind": rng.normal(0.0, 1.0, n),
            "night": rng.integers(0, 2, n),
        }
    )
    slope = frame["port"].map({"Kelp Bay": -10.0, "Gull Point": -12.0, "Saltmarsh": -9.0})
    frame["riders"] = 400.0 + slope * frame["fare"] + 3.0 * frame["wind"] + rng.normal(0.0, 5.0, n)
    return frame


def _separate_fits(frame: pd.DataFrame, formula: str, group: str, pooled: Any) -> tuple[float, float, int, int]:
    """The Chow F from separate statsmodels OLS fits per group (the pooled fit's design, each group's rows):
    df_num = Σ rank_g − rank, df_denom = n − Σ rank_g, with each rank as statsmodels identifies it."""
    X = np.asarray(pooled.model.exog, dtype=float)
    y = np.asarray(pooled.model.endog, dtype=float)
    labels = frame.loc[pooled.model.data.row_labels, group].to_numpy()
    ssr = 0.0
    ranks = 0
    for value in np.unique(labels):
        rows = labels == value
        part = sm.OLS(y[rows], X[rows]).fit()
        ssr += float(part.ssr)
        ranks += int(part.model.rank)
    n = y.size
    df_num, df_denom = ranks - int(pooled.model.rank), n - ranks
    f = ((float(pooled.ssr) - ssr) / df_num) / (ssr / df_denom)
    return f, float(stats.f.sf(f, df_num, df_denom)), df_num, df_denom


def test_no_chow_test_where_the_model_already_interacts_every_regressor_with_the_candidate() -> None:
    frame = _crossings()
    res = smf.ols("riders ~ C(port) * (fare + wind)", data=frame).fit()
    out = run(res, break_candidates=["port"])
    [chow] = out["chow"]
    assert chow["f"] is None and chow["pvalue"] is None
    assert out["errors"]["chow:port"].startswith("not run:") and "unrestricted" in out["errors"]["chow:port"]
    # Reference: separate statsmodels OLS fits per port add no parameter and no fit to the pooled model.
    X, y = np.asarray(res.model.exog), np.asarray(res.model.endog)
    parts = [sm.OLS(y[frame["port"] == g], X[frame["port"] == g]).fit() for g in frame["port"].unique()]
    assert sum(int(p.model.rank) for p in parts) == int(res.model.rank)
    close(sum(float(p.ssr) for p in parts), res.ssr, rtol=1e-9)


def test_chow_where_the_model_interacts_only_some_regressors_tests_the_rest() -> None:
    frame = _crossings()
    formula = "riders ~ C(port) * fare + wind"
    res = smf.ols(formula, data=frame).fit()
    chow = run(res, break_candidates=["port"])["chow"][0]
    f, pvalue, df_num, df_denom = _separate_fits(frame, formula, "port", res)  # reference: statsmodels per group
    assert (chow["df_num"], chow["df_denom"]) == (df_num, df_denom) == (2, 180 - 9)
    close([chow["f"], chow["pvalue"]], [f, pvalue])


@pytest.mark.parametrize("chunk", [65_536, 7])
def test_chow_degrees_of_freedom_come_from_the_ranks_each_group_identifies(chunk: int) -> None:
    """One port where `gust` is exactly twice `wind`, one with fewer rows than parameters, one where the
    night dummy never varies: each group identifies fewer directions than the design has columns."""
    frame = _crossings()
    rng = np.random.default_rng(4)
    frame["gust"] = rng.normal(0.0, 1.0, len(frame))
    kelp = frame["port"] == "Kelp Bay"
    frame.loc[kelp, "gust"] = 2.0 * frame.loc[kelp, "wind"]
    frame.loc[frame["port"] == "Saltmarsh", "night"] = 1
    tiny = frame.index[frame["port"] == "Gull Point"][:3]
    frame = frame[(frame["port"] != "Gull Point") | frame.index.isin(tiny)]
    formula = "riders ~ fare + wind + gust + night"
    res = smf.ols(formula, data=frame).fit()
    chow = run(res, break_candidates=["port"], chunk_rows=chunk)["chow"][0]
    f, pvalue, df_num, df_denom = _separate_fits(frame, formula, "port", res)  # reference: statsmodels per group
    # Ranks: Kelp Bay 4 (gust = 2·wind), Gull Point 3 (three rows), Saltmarsh 4 (night constant); pooled 5.
    assert (chow["df_num"], chow["df_denom"]) == (df_num, df_denom) == (4 + 3 + 4 - 5, len(frame) - 11)
    close([chow["f"], chow["pvalue"]], [f, pvalue])


def test_no_chow_entry_for_a_candidate_the_fits_data_does_not_have() -> None:
    frame = _crossings()
    res = smf.ols("riders ~ fare", data=frame).fit()
    out = run(res, break_candidates=["timetable", "timetable == 2", "fare >", "night == 1"])
    assert [c["candidate"] for c in out["chow"]] == ["fare >", "night == 1"]
    assert "chow:fare >" in out["errors"] and not any("timetable" in key for key in out["errors"])
    arrays = sm.OLS(frame["riders"].to_numpy(), sm.add_constant(frame[["fare"]].to_numpy())).fit()
    out = run(arrays, break_candidates=["timetable", "x1 > 5"])
    assert [c["candidate"] for c in out["chow"]] == ["x1 > 5"]  # names a design column, but no frame to query
    assert "no data frame" in out["errors"]["chow:x1 > 5"]
