"""Compared fits of a log (log10, log2, log1p, sqrt) and a level outcome: the probe's ``regvet_pairs``.

References named beside each check:

* numpy: ``np.corrcoef`` for the squared correlation of the level outcome with the back-transformed
  fitted values, and ``np.log`` & co. for the outcome columns;
* statsmodels: ``OLS`` refits on each training fold, its ``rsquared``, and the probe's own
  ``fit_statistics`` cross-validation (itself checked against statsmodels refits in
  ``test_runtime_stats.py``);
* Duan, N. (1983), "Smearing estimate: a nonparametric retransformation method", JASA 78, 605-610
  (from memory): E[y | x] = mean_i g⁻¹(x'b + e_i) over the estimation residuals e_i; for a log model
  exp(x'b)·mean(exp(e_i)); computed here directly from statsmodels refits.

Data are invented (a ferry operator's riders), from fixed seeds.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path
from typing import Any, get_type_hints

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
import statsmodels.formula.api as smf

from regvet.model.stats_schema import LevelCrossValidation, LevelErrors, PairRecord

PROBE = Path(__file__).resolve().parents[1] / "src" / "regvet" / "runtime" / "probe"
sys.path.insert(0, str(PROBE))
from regvet_pairs import pair_record, recognise  # noqa: E402
from regvet_stats import fit_statistics  # noqa: E402

pytestmark = pytest.mark.filterwarnings("ignore::RuntimeWarning")

FORWARD = {"log": np.log, "log10": np.log10, "log2": np.log2, "log1p": np.log1p, "sqrt": np.sqrt}
INVERSE = {"log": np.exp, "log10": lambda z: 10.0**z, "log2": np.exp2, "log1p": np.expm1, "sqrt": np.square}
OPTS = {"cv_folds": 5, "cv_seed": 2}


@pytest.fixture(scope="module")
def crossings() -> pd.DataFrame:
    rng = np.random.default_rng(9)
    n = 240
    df = pd.DataFrame({"fare": rng.uniform(2, 9, n), "wind": rng.uniform(0, 30, n)})
    df["riders"] = np.exp(5 - 0.12 * df["fare"] - 0.01 * df["wind"] + rng.normal(0, 0.35, n))
    for name, fn in FORWARD.items():
        df[f"{name}_riders"] = fn(df["riders"])
    return df


def _duan_cv(frame: pd.DataFrame, outcome: str, name: str | None, folds: int, seed: int) -> tuple[float, float]:
    """Level-scale k-fold errors from statsmodels refits, retransformed with Duan's smearing (direct)."""
    X = sm.add_constant(frame[["fare", "wind"]].to_numpy())
    y = frame[outcome].to_numpy()
    level = frame["riders"].to_numpy()
    n = len(y)
    errors = []
    for part in np.array_split(np.random.default_rng(seed).permutation(n), folds):
        train = np.setdiff1d(np.arange(n), part)
        refit = sm.OLS(y[train], X[train]).fit()
        pred = X[part] @ refit.params
        if name is None:
            errors.append(level[part] - pred)
        else:  # Duan (1983): the mean of g⁻¹(prediction + each training residual)
            smeared = INVERSE[name](pred[:, None] + refit.resid[None, :]).mean(axis=1)
            errors.append(level[part] - smeared)
    e = np.concatenate(errors)
    return float(np.sqrt(np.mean(e**2))), float(np.mean(np.abs(e)))


@pytest.mark.parametrize("name", list(FORWARD))
def test_an_outcome_column_that_is_a_transform_of_the_level_outcome_is_recognised(crossings, name) -> None:
    level = smf.ols("riders ~ fare + wind", data=crossings).fit()
    transformed = smf.ols(f"{name}_riders ~ fare + wind", data=crossings).fit()
    assert recognise(transformed, level) == (0, name, 240)
    assert recognise(level, transformed) == (1, name, 240)  # either order of the fits
    record = pair_record(level, transformed, 1, 2, OPTS)
    assert record is not None and (record["transformed"], record["level"], record["transform"]) == (2, 1, name)
    # numpy: corr(y, g⁻¹(ŷ))²; statsmodels: R² of the level model (it has a constant)
    expected = np.corrcoef(crossings["riders"], INVERSE[name](transformed.fittedvalues))[0, 1] ** 2
    assert record["level_r2"] == pytest.approx(expected, rel=1e-10)
    assert record["level_model_r2"] == pytest.approx(level.rsquared, rel=1e-10)


@pytest.mark.parametrize("name", ["log", "log10", "log1p", "sqrt"])
@pytest.mark.parametrize("chunk", [65_536, 37])
def test_level_scale_cv_equals_a_direct_duan_smearing_computation(crossings, name, chunk) -> None:
    level = smf.ols("riders ~ fare + wind", data=crossings).fit()
    transformed = smf.ols(f"{name}_riders ~ fare + wind", data=crossings).fit()
    record = pair_record(transformed, level, 1, 2, {**OPTS, "chunk_rows": chunk})
    assert record is not None and record["errors"] == {}
    cv = record["cv"]
    rmse, mae = _duan_cv(crossings, f"{name}_riders", name, 5, 2)  # Duan (1983), statsmodels refits
    assert cv["transformed"]["rmse"] == pytest.approx(rmse, rel=1e-9)
    assert cv["transformed"]["mae"] == pytest.approx(mae, rel=1e-9)
    # an OLS level model's level-scale errors are its own cross-validation (same folds): not repeated
    assert cv["level"] is None
    rmse_l, mae_l = _duan_cv(crossings, "riders", None, 5, 2)  # statsmodels refits of the level model
    own = fit_statistics(level, {"cv": True, **OPTS, "chunk_rows": chunk})["cv"]
    assert own["rmse"] == pytest.approx(rmse_l, rel=1e-9) and own["mae"] == pytest.approx(mae_l, rel=1e-9)
    if name in ("log", "log10", "log1p"):  # the full-sample smearing factor, directly
        base = {"log": np.e, "log10": 10.0, "log1p": np.e}[name]
        assert cv["transformed"]["smearing"] == pytest.approx(np.mean(base ** transformed.resid.to_numpy()))
    json.dumps(record, allow_nan=False)


def test_common_rows_are_aligned_by_label(crossings) -> None:
    holed = crossings.copy()
    holed.loc[::9, "wind"] = np.nan  # the level fit drops these rows
    shuffled = crossings.sample(frac=1.0, random_state=3)  # the log fit's rows in another order
    level = smf.ols("riders ~ fare + wind", data=holed).fit()
    logged = smf.ols("log_riders ~ fare", data=shuffled).fit()
    assert recognise(logged, level) == (0, "log", int(level.nobs))
    # plain arrays: by position
    X = sm.add_constant(crossings[["fare"]].to_numpy())
    arrays = sm.OLS(crossings["riders"].to_numpy(), X).fit(), sm.OLS(crossings["sqrt_riders"].to_numpy(), X).fit()
    assert recognise(arrays[1], arrays[0]) == (0, "sqrt", 240)


def test_outcomes_that_are_not_a_transform_are_not_paired(crossings) -> None:
    level = smf.ols("riders ~ fare + wind", data=crossings).fit()
    assert recognise(smf.ols("riders ~ fare", data=crossings).fit(), level) is None  # the same outcome
    assert recognise(smf.ols("wind ~ fare", data=crossings).fit(), level) is None
    near = crossings.assign(near=crossings["log_riders"] + 1e-7)  # off by 1e-7 in logs: not the log
    assert recognise(smf.ols("near ~ fare", data=near).fit(), level) is None
    one_row = crossings.assign(bent=crossings["log_riders"])
    one_row.loc[crossings.index[123], "bent"] += 1e-3  # the sampled rows agree, one other row does not
    assert recognise(smf.ols("bent ~ fare", data=one_row).fit(), level) is None
    other_rows = crossings.set_index(crossings.index + 10_000)  # no row in common
    assert recognise(smf.ols("log_riders ~ fare", data=other_rows).fit(), level) is None


def test_a_transformed_wls_fit_gets_no_level_scale_errors(crossings) -> None:
    w = 1.0 + crossings["fare"].to_numpy()
    level = smf.ols("riders ~ fare + wind", data=crossings).fit()
    logged = smf.wls("log_riders ~ fare + wind", data=crossings, weights=w).fit()
    record = pair_record(logged, level, 1, 2, OPTS)
    assert record is not None and record["cv"] is None and "WLS" in record["errors"]["cv"]
    assert record["level_r2"] == pytest.approx(
        np.corrcoef(crossings["riders"], np.exp(logged.fittedvalues))[0, 1] ** 2  # numpy
    )
    # a WLS level model: its level-scale errors are those of WLS refits, unweighted (statsmodels refits)
    wlevel = smf.wls("riders ~ fare + wind", data=crossings, weights=w).fit()
    ols_log = smf.ols("log_riders ~ fare + wind", data=crossings).fit()
    record = pair_record(ols_log, wlevel, 1, 2, OPTS)
    assert record is not None
    X = sm.add_constant(crossings[["fare", "wind"]].to_numpy())
    y = crossings["riders"].to_numpy()
    errors = []
    for part in np.array_split(np.random.default_rng(2).permutation(240), 5):
        train = np.setdiff1d(np.arange(240), part)
        errors.append(y[part] - X[part] @ sm.WLS(y[train], X[train], weights=w[train]).fit().params)
    e = np.concatenate(errors)
    assert record["cv"]["level"]["rmse"] == pytest.approx(np.sqrt(np.mean(e**2)), rel=1e-9)


def _declared(kind: Any, value: dict[str, Any], where: str) -> None:
    hints = get_type_hints(kind)
    assert set(value) <= set(hints), f"{where}: undeclared keys {sorted(set(value) - set(hints))}"
    assert kind.__required_keys__ <= set(value), f"{where}: missing {sorted(kind.__required_keys__ - set(value))}"


def test_the_pair_record_matches_its_schema(crossings) -> None:
    level = smf.ols("riders ~ fare + wind", data=crossings).fit()
    record = pair_record(smf.ols("log_riders ~ fare + wind", data=crossings).fit(), level, 1, 2, OPTS)
    assert record is not None
    _declared(PairRecord, record, "pair")
    assert set(get_type_hints(PairRecord)) == set(record)  # every declared key is written
    _declared(LevelCrossValidation, record["cv"], "pair.cv")
    _declared(LevelErrors, record["cv"]["transformed"], "pair.cv.transformed")
    assert record["cv"]["level"] is None  # an OLS level model: its own cv
    wlevel = smf.wls("riders ~ fare + wind", data=crossings, weights=1.0 + crossings["fare"]).fit()
    record = pair_record(smf.ols("log_riders ~ fare + wind", data=crossings).fit(), wlevel, 1, 2, OPTS)
    assert record is not None
    _declared(LevelErrors, record["cv"]["level"], "pair.cv.level")


def test_zero_weight_rows_are_not_observations_of_the_level_scale_errors(crossings) -> None:
    w = 1.0 + crossings["fare"].to_numpy()
    w[::10] = 0.0
    wlevel = smf.wls("riders ~ fare + wind", data=crossings, weights=w).fit()
    record = pair_record(smf.ols("log_riders ~ fare + wind", data=crossings).fit(), wlevel, 1, 2, OPTS)
    assert record is not None
    kept = np.flatnonzero(w > 0)
    X = sm.add_constant(crossings[["fare", "wind"]].to_numpy())[kept]
    y, wk = crossings["riders"].to_numpy()[kept], w[kept]
    errors = []  # statsmodels WLS refits over the observations (weights > 0) only
    for part in np.array_split(np.random.default_rng(2).permutation(kept.size), 5):
        train = np.setdiff1d(np.arange(kept.size), part)
        errors.append(y[part] - X[part] @ sm.WLS(y[train], X[train], weights=wk[train]).fit().params)
    e = np.concatenate(errors)
    assert record["cv"]["level"]["rmse"] == pytest.approx(np.sqrt(np.mean(e**2)), rel=1e-9)
    assert record["cv"]["level"]["mae"] == pytest.approx(np.mean(np.abs(e)), rel=1e-9)
