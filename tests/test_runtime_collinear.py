"""Collinearity statistics and QR-based robust SEs of the runtime probe, against outside references.

References, named beside each check: statsmodels' ``variance_inflation_factor`` and its HC0-HC3
covariances (``fit(cov_type=...)``); numpy's SVD of the design with unit-length columns (the
Belsley-Kuh-Welsch condition indexes and variance-decomposition proportions, recomputed here from
their definition); the generalized VIF of Fox and Monette (1992) straight from determinants of the
regressors' correlation matrix, det(R_SS)·det(R_rest)/det(R); and an exact HC3 in 60-digit
arithmetic (``mpmath``) for an ill-conditioned design. The data are invented (harbour and bakery
scenarios, fixed seeds). The rule ``collinear-design`` is exercised on the probe's real output.
"""

from __future__ import annotations

import sys
import warnings
from pathlib import Path
from typing import Any

import mpmath
import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
import statsmodels.formula.api as smf
from statsmodels.stats.outliers_influence import variance_inflation_factor

from regvet.rules import collinear_design

PROBE = Path(__file__).resolve().parents[1] / "src" / "regvet" / "runtime" / "probe"
sys.path.insert(0, str(PROBE))
from regvet_stats import fit_statistics  # noqa: E402

pytestmark = pytest.mark.filterwarnings("ignore::UserWarning", "ignore::FutureWarning")


def stats(res: Any, **options: Any) -> dict[str, Any]:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return fit_statistics(res, options)


def harbour(seed: int = 7, n: int = 400) -> pd.DataFrame:
    """Harbour traffic: crane hours, tide, a categorical berth; `tonnage` nearly tracks crane hours."""
    rng = np.random.default_rng(seed)
    cranes = rng.uniform(2, 9, n)
    frame = pd.DataFrame(
        {
            "cranes": cranes,
            "tide": rng.normal(0, 1, n),
            "tonnage": 3 * cranes + rng.normal(0, 0.4, n),
            "berth": rng.choice(["east", "north", "west"], n),
        }
    )
    frame["ships"] = 5 + 0.8 * cranes - 0.3 * frame["tide"] + rng.normal(0, 1 + 0.3 * cranes, n)
    return frame


def fox_monette(exog: np.ndarray, cols: list[int]) -> float:
    """GVIF of the columns ``cols`` of the non-constant regressors ``exog``: det R_SS det R_rest / det R."""
    r = np.corrcoef(exog, rowvar=False)
    rest = [j for j in range(exog.shape[1]) if j not in cols]
    return float(np.linalg.det(r[np.ix_(cols, cols)]) * np.linalg.det(r[np.ix_(rest, rest)]) / np.linalg.det(r))


def bkw(exog: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Condition indexes and proportions[j, k] from numpy's SVD of the unit-length-scaled design."""
    _, sv, wt = np.linalg.svd(exog / np.linalg.norm(exog, axis=0), full_matrices=False)
    phi = (wt.T / sv) ** 2
    return sv[0] / sv, phi / phi.sum(axis=1, keepdims=True)


# ------------------------------------------------------------------------------------------
# numbers


@pytest.mark.parametrize("chunk", [65_536, 29])
def test_condition_indexes_and_proportions_equal_numpy_svd_of_the_scaled_design(chunk: int) -> None:
    res = smf.ols("ships ~ cranes + tonnage + tide + C(berth)", data=harbour()).fit()
    ci = stats(res, chunk_rows=chunk)["condition_index"]
    index, props = bkw(res.model.exog)  # reference: numpy SVD on the scaled design
    np.testing.assert_allclose(ci["value"], index.max(), rtol=1e-9)
    names = res.model.exog_names
    shown = sorted((k for k in range(len(index)) if index[k] >= 10), key=lambda k: -index[k])
    assert [d["index"] for d in ci["dimensions"]] == pytest.approx([index[k] for k in shown], rel=1e-9)
    for dim, k in zip(ci["dimensions"], shown, strict=False):
        expected = {names[j]: props[j, k] for j in range(len(names)) if props[j, k] >= 0.1}
        assert dim["proportions"].keys() == expected.keys()
        for name, value in expected.items():
            assert dim["proportions"][name] == pytest.approx(value, rel=1e-8, abs=1e-12)
    assert ci["constant"] == "Intercept"


def test_vifs_equal_statsmodels_variance_inflation_factor() -> None:
    res = smf.ols("ships ~ cranes + tonnage + tide + C(berth)", data=harbour()).fit()
    vif = stats(res, chunk_rows=53)["vif"]
    exog = res.model.exog
    for i, name in enumerate(res.model.exog_names):
        if name != "Intercept":  # reference: statsmodels' variance_inflation_factor
            assert vif["values"][name] == pytest.approx(variance_inflation_factor(exog, i), rel=1e-9)


def test_generalized_vifs_equal_the_fox_monette_determinants_per_term() -> None:
    frame = harbour()
    res = smf.ols("ships ~ cranes + I(cranes ** 2) + tonnage + C(berth) + tide * tonnage", data=frame).fit()
    g = stats(res)["gvif"]
    names = res.model.exog_names
    slopes = [n for n in names if n != "Intercept"]
    exog = res.model.exog[:, [names.index(n) for n in slopes]]
    by_term = {t["term"]: t for t in g["terms"]}
    # One term per predictor with its square; the berth dummies; tide and tonnage joined by their interaction.
    assert by_term["cranes"]["columns"] == ["cranes", "I(cranes ** 2)"]
    assert by_term["berth"]["columns"] == ["C(berth)[T.north]", "C(berth)[T.west]"]
    assert set(by_term["tonnage * tide"]["columns"]) == {"tonnage", "tide", "tide:tonnage"}
    assert sum(t["df"] for t in g["terms"]) == len(slopes)
    for term in g["terms"]:
        cols = [slopes.index(c) for c in term["columns"]]
        expected = fox_monette(exog, cols)  # reference: Fox and Monette (1992), determinants
        assert term["gvif"] == pytest.approx(expected, rel=1e-8)
        assert term["scaled"] == pytest.approx(expected ** (1 / (2 * len(cols))), rel=1e-8)
        assert term["df"] == len(cols)
    # cranes (with its square) against tonnage = 3·cranes + noise: the one large generalized VIF.
    assert g["term"] == "cranes" and g["max"] > np.sqrt(10)


def test_array_designs_group_columns_whose_names_show_powers() -> None:
    frame = harbour()
    exog = sm.add_constant(
        pd.DataFrame({"tide": frame["tide"], "tide**2": frame["tide"] ** 2, "I(tide ** 3)": frame["tide"] ** 3})
    )
    res = sm.OLS(frame["ships"], exog.assign(cranes=frame["cranes"])).fit()
    terms = {t["term"]: t["columns"] for t in stats(res)["gvif"]["terms"]}
    assert terms == {"tide": ["tide", "tide**2", "I(tide ** 3)"], "cranes": ["cranes"]}
    plain = sm.OLS(frame["ships"].to_numpy(), sm.add_constant(frame[["tide", "cranes"]].to_numpy())).fit()
    assert [t["columns"] for t in stats(plain)["gvif"]["terms"]] == [["x1"], ["x2"]]


# ------------------------------------------------------------------------------------------
# robust standard errors from the QR factor


@pytest.mark.parametrize("hc", ["HC0", "HC1", "HC2", "HC3"])
def test_robust_ses_do_not_move_with_the_block_size_and_equal_statsmodels(hc: str) -> None:
    res = smf.ols("ships ~ cranes + tonnage + tide + C(berth)", data=harbour(n=3000)).fit()
    ses = [
        np.array([c["se_robust"] for c in stats(res, robust_se=hc, chunk_rows=chunk)["coefficients"]])
        for chunk in (65_536, 1000, 97, 13)
    ]
    for other in ses[1:]:
        np.testing.assert_allclose(other, ses[0], rtol=1e-12, atol=0)
    reference = smf.ols("ships ~ cranes + tonnage + tide + C(berth)", data=harbour(n=3000)).fit(cov_type=hc).bse
    np.testing.assert_allclose(ses[0], reference, rtol=1e-10, atol=0)  # reference: statsmodels' cov_type


def _exact_hc3(x: np.ndarray, u: np.ndarray) -> list[float]:
    """HC3 standard errors of OLS on (x, y) in 60-digit arithmetic (mpmath), residuals ``u`` exact."""
    with mpmath.workdps(60):
        X = mpmath.matrix(x.tolist())
        xtx_inv = (X.T * X) ** -1
        n, k = x.shape
        meat = mpmath.zeros(k, k)
        for i in range(n):
            row = X[i, :]
            h = (row * xtx_inv * row.T)[0, 0]
            meat += (u[i] ** 2 / (1 - h) ** 2) * (row.T * row)
        cov = xtx_inv * meat * xtx_inv
        return [float(mpmath.sqrt(cov[j, j])) for j in range(k)]


def test_hc3_on_an_ill_conditioned_design_matches_an_exact_computation() -> None:
    # A bakery's oven temperature and a second probe reading it with 1e-6 noise: scaled condition ~1e7,
    # so a Gram-matrix inverse (condition squared) keeps about 2 digits, the QR factor about 8.
    rng = np.random.default_rng(31)
    n = 80
    temp = rng.uniform(180, 220, n)
    probe = temp + 1e-6 * rng.standard_normal(n)
    x = np.column_stack([np.ones(n), temp, probe])
    # The outcome is built from exact residuals orthogonal to the design, so they are the OLS residuals.
    u = rng.standard_normal(n) * (1 + 0.05 * (temp - 180))
    q, _ = np.linalg.qr(x)
    u = u - q @ (q.T @ u)
    y = x @ np.array([2.0, 0.5, -0.4]) + u
    res = sm.OLS(y, x).fit()
    exact = _exact_hc3(x, res.resid)
    got = [c["se_robust"] for c in stats(res, robust_se="HC3")["coefficients"]]
    # The slopes to 1e-6 (a Gram-matrix inverse, condition squared, misses them by far; statsmodels' own
    # HC3_se is 28 % off here, measured). The intercept sits 200 degrees from the data, so mapping it
    # back from the centred basis costs digits whatever the leverages: 1e-2.
    np.testing.assert_allclose(got[1:], exact[1:], rtol=1e-6)
    np.testing.assert_allclose(got[0], exact[0], rtol=1e-2)


# ------------------------------------------------------------------------------------------
# the rule on the probe's output


def test_an_index_whose_variance_sits_on_the_constant_is_not_flagged() -> None:
    # Boston-housing style: regressors far from zero (rooms ~6, a ratio ~18, a year ~1950), nearly
    # uncorrelated: the scaled condition index is large, its variance is the intercept's.
    rng = np.random.default_rng(5)
    n = 500
    frame = pd.DataFrame(
        {
            "rooms": rng.normal(6.3, 0.7, n),
            "ratio": rng.normal(18.5, 2.0, n),
            "built": rng.normal(1950, 15, n),
        }
    )
    frame["price"] = 20 + 5 * frame["rooms"] - frame["ratio"] + rng.normal(0, 3, n)
    out = stats(smf.ols("price ~ rooms + ratio + built", data=frame).fit())
    ci = out["condition_index"]
    assert ci["value"] > 30
    top = ci["dimensions"][0]
    assert top["proportions"]["Intercept"] > 0.5
    assert max(out["vif"]["values"].values()) < 9
    assert collinear_design._dependence(out) is None and collinear_design._inflation(out) is None


def test_a_square_beside_its_variable_is_never_flagged_but_two_collinear_regressors_are() -> None:
    frame = harbour()
    square = stats(smf.ols("ships ~ cranes + I(cranes ** 2) + tide", data=frame).fit())
    assert square["vif"]["max"] > 10  # the plain VIF of x beside x² is large ...
    assert collinear_design._inflation(square) is None  # ... but it is inside one term
    assert collinear_design._dependence(square) is None
    both = stats(smf.ols("ships ~ cranes + tonnage + tide", data=frame).fit())
    text = collinear_design._inflation(both)
    assert text is not None and "`tonnage`" in text and "VIF" in text
    dependence = collinear_design._dependence(both)
    assert dependence is not None and "`cranes`" in dependence and "`tonnage`" in dependence


def squared_hours(x: Any) -> Any:
    """A user's own transform, as analysts write them (``myfunc(exper)`` in a real notebook)."""
    return x**2


@pytest.mark.parametrize(
    "formula",
    [
        "ships ~ cranes + I((cranes ** 2) / 100) + tide",  # a scaled square, seen in a real notebook
        "ships ~ cranes + squared_hours(cranes) + tide",  # a function of the analyst's own
        "ships ~ I(cranes - 5) + I(100 * cranes ** 2) + tide",  # centred, and a scaled square
    ],
)
def test_any_function_of_one_regressor_is_in_its_term(formula: str) -> None:
    frame = harbour()
    res = smf.ols(formula, data=frame).fit()
    result = stats(res)
    terms = {t["term"]: t for t in result["gvif"]["terms"]}
    slopes = [n for n in res.model.exog_names if n != "Intercept"]
    assert set(terms) == {"cranes", "tide"}
    assert terms["cranes"]["columns"] == [n for n in slopes if n != "tide"]
    exog = res.model.exog[:, [res.model.exog_names.index(n) for n in slopes]]
    if np.linalg.matrix_rank(exog) == exog.shape[1]:  # reference: Fox and Monette (1992), determinants
        cols = [slopes.index(c) for c in terms["cranes"]["columns"]]
        assert terms["cranes"]["gvif"] == pytest.approx(fox_monette(exog, cols), rel=1e-6)
    assert result["vif"]["max"] > 10  # the plain VIFs are large ...
    assert collinear_design._inflation(result) is None  # ... but only inside the term of cranes


def test_functions_of_different_regressors_stay_apart() -> None:
    frame = harbour()
    res = smf.ols("ships ~ np.log(cranes) + np.log(tonnage) + tide", data=frame).fit()
    terms = [t["columns"] for t in stats(res)["gvif"]["terms"]]
    assert terms == [["np.log(cranes)"], ["np.log(tonnage)"], ["tide"]]
    text = collinear_design._inflation(stats(res))  # tonnage tracks cranes: two terms, truly collinear
    assert text is not None and "VIF" in text and "`np.log(c" in text
