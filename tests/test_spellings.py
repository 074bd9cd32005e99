"""The fact collector against the specification, one spelling per row.

Fits (every usual way to make a statsmodels OLS/WLS results object, and the
estimators that are not one), diagnostics under every public path statsmodels
and scipy export them, uses of a fit and comparisons of fit measures. Each row is
a small snippet of a ferry-ridership analysis; assertions read ``FileReport.facts``.
"""

from __future__ import annotations

import textwrap

import pytest

from regvet.engine import analyze

# --- helpers ---------------------------------------------------------------------------------


def _facts(code: str):
    report = analyze(textwrap.dedent(code), "snippet.py", strict=True)
    assert not report.skipped, "the snippet was not analysed at all"
    return report.facts


def _judged(facts):
    """Fits whose findings belong to the analysed file (as the rules see them)."""
    return [f for f in facts.fits if f.site.path is None and not f.auxiliary]


def _line_of(code: str, needle: str, last: bool = True) -> int:
    lines = textwrap.dedent(code).split("\n")
    hits = [i for i, line in enumerate(lines, start=1) if needle in line and not line.lstrip().startswith("#")]
    assert hits, f"{needle!r} not in the snippet"
    return hits[-1] if last else hits[0]


def _by_formula(facts, formula: str):
    matches = [f for f in facts.fits if f.formula == formula]
    assert len(matches) == 1, f"expected one fit of {formula!r}, got {len(matches)}"
    return matches[0]


# --- 1. fit spellings ------------------------------------------------------------------------
_HEAD = """\
import numpy as np
import pandas as pd
crossings = pd.read_csv("crossings.csv")
"""

#: (id, code after _HEAD, expected attributes of the one judged fit). ``fit_line`` is the text of the
#: line holding the call that produces the results object.
FIT_SPELLINGS = [
    (
        "smf.ols-chained",
        """
        import statsmodels.formula.api as smf
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="riders ~ fare + fuel_price",
            base="riders",
            transform=None,
            n_regressors=2,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = smf.ols",
        ),
    ),
    (
        "smf.wls-weights",
        """
        import statsmodels.formula.api as smf
        res = smf.wls("riders ~ fare + wind_speed", data=crossings, weights=1.0 / crossings["fare"]).fit()
        """,
        dict(
            api="formula",
            estimator="WLS",
            formula="riders ~ fare + wind_speed",
            base="riders",
            transform=None,
            n_regressors=2,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = smf.wls",
        ),
    ),
    (
        "from-formula-api-import-ols",
        """
        from statsmodels.formula.api import ols
        res = ols("riders ~ fare", data=crossings).fit()
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="riders ~ fare",
            base="riders",
            transform=None,
            n_regressors=1,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = ols",
        ),
    ),
    (
        "from-formula-api-import-wls-as-alias",
        """
        from statsmodels.formula.api import wls as weighted
        res = weighted("riders ~ fare + fuel_price", crossings, weights=crossings["crossings"]).fit()
        """,
        dict(
            api="formula",
            estimator="WLS",
            formula="riders ~ fare + fuel_price",
            base="riders",
            transform=None,
            n_regressors=2,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = weighted",
        ),
    ),
    (
        "formula-api-odd-alias",
        """
        import statsmodels.formula.api as ferry_models
        res = ferry_models.ols("riders ~ fare + fuel_price + wind_speed", data=crossings).fit()
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="riders ~ fare + fuel_price + wind_speed",
            base="riders",
            transform=None,
            n_regressors=3,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = ferry",
        ),
    ),
    (
        "from-statsmodels.formula-import-api",
        """
        from statsmodels.formula import api as fapi
        res = fapi.ols("riders ~ fare", data=crossings).fit()
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="riders ~ fare",
            base="riders",
            transform=None,
            n_regressors=1,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = fapi",
        ),
    ),
    (
        "formula-api-fully-qualified",
        """
        import statsmodels.formula.api
        res = statsmodels.formula.api.ols("riders ~ fare", data=crossings).fit()
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="riders ~ fare",
            base="riders",
            transform=None,
            n_regressors=1,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = statsmodels",
        ),
    ),
    (
        "from-statsmodels.api-import-formula",
        """
        from statsmodels.api import formula as smf
        res = smf.ols("riders ~ fare", data=crossings).fit()
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="riders ~ fare",
            base="riders",
            transform=None,
            n_regressors=1,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = smf",
        ),
    ),
    (
        "from-statsmodels-import-api",
        """
        from statsmodels import api as stm
        res = stm.OLS(crossings["riders"], stm.add_constant(crossings[["fare"]])).fit()
        """,
        dict(
            api="array",
            estimator="OLS",
            formula=None,
            base="riders",
            transform=None,
            n_regressors=1,
            cov_type="nonrobust",
            data_name=None,
            fit_line="res = stm",
        ),
    ),
    (
        "sm.formula.ols",
        """
        import statsmodels.api as sm
        res = sm.formula.ols("riders ~ fare", data=crossings).fit()
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="riders ~ fare",
            base="riders",
            transform=None,
            n_regressors=1,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = sm.formula",
        ),
    ),
    (
        "sm.formula.wls",
        """
        import statsmodels.api as sm
        res = sm.formula.wls("riders ~ fare", data=crossings, weights=crossings["crossings"]).fit()
        """,
        dict(
            api="formula",
            estimator="WLS",
            formula="riders ~ fare",
            base="riders",
            transform=None,
            n_regressors=1,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = sm.formula",
        ),
    ),
    (
        "sm.OLS-arrays-column-list",
        """
        import statsmodels.api as sm
        X = sm.add_constant(crossings[["fare", "fuel_price"]])
        res = sm.OLS(crossings["riders"], X).fit()
        """,
        dict(
            api="array",
            estimator="OLS",
            formula=None,
            base="riders",
            transform=None,
            n_regressors=2,
            cov_type="nonrobust",
            data_name=None,
            fit_line="res = sm.OLS",
        ),
    ),
    (
        "sm.OLS-y-traced-through-assignments",
        """
        import statsmodels.api as sm
        riders = crossings["riders"]
        y = riders
        cols = ["fare", "fuel_price", "wind_speed"]
        X = sm.add_constant(crossings[cols])
        res = sm.OLS(y, X).fit()
        """,
        dict(
            api="array",
            estimator="OLS",
            formula=None,
            base="riders",
            transform=None,
            n_regressors=3,
            cov_type="nonrobust",
            data_name=None,
            fit_line="res = sm.OLS",
        ),
    ),
    (
        "sm.OLS-log-outcome",
        """
        import statsmodels.api as sm
        y = np.log(crossings["riders"])
        X = sm.add_constant(crossings[["fare"]])
        res = sm.OLS(y, X).fit()
        """,
        dict(
            api="array",
            estimator="OLS",
            formula=None,
            base="riders",
            transform="log",
            n_regressors=1,
            cov_type="nonrobust",
            data_name=None,
            fit_line="res = sm.OLS",
        ),
    ),
    (
        "sm.OLS-keywords",
        """
        import statsmodels.api as sm
        X = sm.add_constant(crossings[["fare", "wind_speed"]])
        res = sm.OLS(endog=crossings["riders"], exog=X).fit()
        """,
        dict(
            api="array",
            estimator="OLS",
            formula=None,
            base="riders",
            transform=None,
            n_regressors=2,
            cov_type="nonrobust",
            data_name=None,
            fit_line="res = sm.OLS",
        ),
    ),
    (
        "sm.OLS-unknown-design",
        """
        import statsmodels.api as sm
        X = np.asarray(crossings.select_dtypes("number").drop(columns="riders"))
        res = sm.OLS(crossings["riders"], X).fit()
        """,
        dict(
            api="array",
            estimator="OLS",
            formula=None,
            base="riders",
            transform=None,
            n_regressors=None,
            cov_type="nonrobust",
            data_name=None,
            fit_line="res = sm.OLS",
        ),
    ),
    (
        "sm.WLS",
        """
        import statsmodels.api as sm
        X = sm.add_constant(crossings[["fare", "fuel_price"]])
        res = sm.WLS(crossings["riders"], X, weights=crossings["crossings"]).fit()
        """,
        dict(
            api="array",
            estimator="WLS",
            formula=None,
            base="riders",
            transform=None,
            n_regressors=2,
            cov_type="nonrobust",
            data_name=None,
            fit_line="res = sm.WLS",
        ),
    ),
    (
        "sm.OLS.from_formula",
        """
        import statsmodels.api as sm
        res = sm.OLS.from_formula("riders ~ fare + C(season)", data=crossings).fit()
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="riders ~ fare + C(season)",
            base="riders",
            transform=None,
            n_regressors=2,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = sm.OLS",
        ),
    ),
    (
        "sm.WLS.from_formula",
        """
        import statsmodels.api as sm
        res = sm.WLS.from_formula("riders ~ fare", data=crossings, weights=crossings["crossings"]).fit()
        """,
        dict(
            api="formula",
            estimator="WLS",
            formula="riders ~ fare",
            base="riders",
            transform=None,
            n_regressors=1,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = sm.WLS",
        ),
    ),
    (
        "linear_model.OLS-from-import",
        """
        from statsmodels.regression.linear_model import OLS
        from statsmodels.tools import add_constant
        res = OLS(crossings["riders"], add_constant(crossings[["fare", "fuel_price"]])).fit()
        """,
        dict(
            api="array",
            estimator="OLS",
            formula=None,
            base="riders",
            transform=None,
            n_regressors=2,
            cov_type="nonrobust",
            data_name=None,
            fit_line="res = OLS",
        ),
    ),
    (
        "linear_model-module-alias",
        """
        import statsmodels.regression.linear_model as lm
        res = lm.WLS(crossings["riders"], crossings[["fare"]], weights=crossings["crossings"]).fit()
        """,
        dict(
            api="array",
            estimator="WLS",
            formula=None,
            base="riders",
            transform=None,
            n_regressors=1,
            cov_type="nonrobust",
            data_name=None,
            fit_line="res = lm.WLS",
        ),
    ),
    (
        "linear_model.OLS-fully-qualified",
        """
        import statsmodels.regression.linear_model
        res = statsmodels.regression.linear_model.OLS(crossings["riders"], crossings[["fare"]]).fit()
        """,
        dict(
            api="array",
            estimator="OLS",
            formula=None,
            base="riders",
            transform=None,
            n_regressors=1,
            cov_type="nonrobust",
            data_name=None,
            fit_line="res = statsmodels",
        ),
    ),
    (
        "linear_model.OLS.from_formula",
        """
        from statsmodels.regression.linear_model import OLS as LinearModel
        res = LinearModel.from_formula("riders ~ fare + wind_speed", data=crossings).fit()
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="riders ~ fare + wind_speed",
            base="riders",
            transform=None,
            n_regressors=2,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = Linear",
        ),
    ),
    (
        "sm.regression.linear_model.OLS",
        """
        import statsmodels.api as sm
        res = sm.regression.linear_model.OLS(crossings["riders"], crossings[["fare"]]).fit()
        """,
        dict(
            api="array",
            estimator="OLS",
            formula=None,
            base="riders",
            transform=None,
            n_regressors=1,
            cov_type="nonrobust",
            data_name=None,
            fit_line="res = sm.regression",
        ),
    ),
    (
        "from-statsmodels-api-import-OLS-as-alias",
        """
        from statsmodels.api import OLS as FerryOLS, add_constant
        res = FerryOLS(crossings["riders"], add_constant(crossings[["fare"]])).fit()
        """,
        dict(
            api="array",
            estimator="OLS",
            formula=None,
            base="riders",
            transform=None,
            n_regressors=1,
            cov_type="nonrobust",
            data_name=None,
            fit_line="res = FerryOLS",
        ),
    ),
    (
        "statsmodels.api-fully-qualified",
        """
        import statsmodels.api
        res = statsmodels.api.OLS(crossings["riders"], crossings[["fare", "fuel_price"]]).fit()
        """,
        dict(
            api="array",
            estimator="OLS",
            formula=None,
            base="riders",
            transform=None,
            n_regressors=2,
            cov_type="nonrobust",
            data_name=None,
            fit_line="res = statsmodels",
        ),
    ),
    (
        "model-variable-then-fit",
        """
        import statsmodels.formula.api as smf
        model = smf.ols("riders ~ fare + fuel_price", data=crossings)
        res = model.fit()
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="riders ~ fare + fuel_price",
            base="riders",
            transform=None,
            n_regressors=2,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = model.fit()",
        ),
    ),
    (
        "formula-bound-to-a-name",
        """
        import statsmodels.formula.api as smf
        FORMULA = "riders ~ fare * wind_speed"
        res = smf.ols(FORMULA, data=crossings).fit()
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="riders ~ fare * wind_speed",
            base="riders",
            transform=None,
            n_regressors=3,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = smf.ols",
        ),
    ),
    (
        "formula-keyword",
        """
        import statsmodels.formula.api as smf
        res = smf.ols(formula="riders ~ fare + fuel_price", data=crossings).fit()
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="riders ~ fare + fuel_price",
            base="riders",
            transform=None,
            n_regressors=2,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = smf.ols",
        ),
    ),
    (
        "formula-log-outcome",
        """
        import statsmodels.formula.api as smf
        res = smf.ols("np.log(riders) ~ fare + fuel_price + C(season)", data=crossings).fit()
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="np.log(riders) ~ fare + fuel_price + C(season)",
            base="riders",
            transform="log",
            n_regressors=3,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = smf.ols",
        ),
    ),
    (
        "formula-sqrt-outcome",
        """
        import statsmodels.formula.api as smf
        res = smf.ols("np.sqrt(riders) ~ fare", data=crossings).fit()
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="np.sqrt(riders) ~ fare",
            base="riders",
            transform="sqrt",
            n_regressors=1,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = smf.ols",
        ),
    ),
    (
        "formula-data-positional-subset",
        """
        import statsmodels.formula.api as smf
        summer = crossings[crossings["season"] == "summer"]
        res = smf.ols("riders ~ fare", summer).fit()
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="riders ~ fare",
            base="riders",
            transform=None,
            n_regressors=1,
            cov_type="nonrobust",
            data_name="summer",
            fit_line="res = smf.ols",
        ),
    ),
    (
        "sm.OLS-attribute-column-values",
        """
        import statsmodels.api as sm
        y = crossings.riders.values
        res = sm.OLS(y, sm.add_constant(crossings[["fare", "wind_speed"]]).values).fit()
        """,
        dict(
            api="array",
            estimator="OLS",
            formula=None,
            base="riders",
            transform=None,
            n_regressors=2,
            cov_type="nonrobust",
            data_name=None,
            fit_line="res = sm.OLS",
        ),
    ),
    (
        "formula-Q-outcome",
        """
        import statsmodels.formula.api as smf
        res = smf.ols('Q("riders total") ~ fare + fuel_price', data=crossings).fit()
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula='Q("riders total") ~ fare + fuel_price',
            base="riders total",
            transform=None,
            n_regressors=2,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = smf.ols",
        ),
    ),
    (
        "formula-log1p-outcome-power-term",
        """
        import statsmodels.formula.api as smf
        res = smf.ols("np.log1p(riders) ~ fare + I(fare**2) + C(season)", data=crossings).fit()
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="np.log1p(riders) ~ fare + I(fare**2) + C(season)",
            base="riders",
            transform="log1p",
            n_regressors=3,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = smf.ols",
        ),
    ),
    (
        "formula-without-intercept",
        """
        import statsmodels.formula.api as smf
        res = smf.ols("riders ~ fare + fuel_price - 1", data=crossings).fit()
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="riders ~ fare + fuel_price - 1",
            base="riders",
            transform=None,
            n_regressors=2,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = smf.ols",
        ),
    ),
    (
        "alias-by-assignment",
        """
        import statsmodels.formula.api as smf
        fit_ols = smf.ols
        res = fit_ols("riders ~ fare + wind_speed", data=crossings).fit()
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="riders ~ fare + wind_speed",
            base="riders",
            transform=None,
            n_regressors=2,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = fit_ols",
        ),
    ),
    (
        "star-import",
        """
        from statsmodels.formula.api import *
        res = ols("riders ~ fare", data=crossings).fit()
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="riders ~ fare",
            base="riders",
            transform=None,
            n_regressors=1,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="res = ols",
        ),
    ),
    (
        "lambda-fitter",
        """
        import statsmodels.formula.api as smf
        fitter = lambda formula: smf.ols(formula, data=crossings).fit()
        res = fitter("riders ~ fare")
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="riders ~ fare",
            base="riders",
            transform=None,
            n_regressors=1,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line="fitter = lambda",
            site_line="res = fitter",
        ),
    ),
    (
        "cov_type-HC3",
        """
        import statsmodels.formula.api as smf
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit(cov_type="HC3")
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="riders ~ fare + fuel_price",
            base="riders",
            transform=None,
            n_regressors=2,
            cov_type="hc3",
            data_name="crossings",
            fit_line="res = smf.ols",
        ),
    ),
    (
        "cov_type-HAC-bound-name",
        """
        import statsmodels.formula.api as smf
        COV = "HAC"
        res = smf.ols("riders ~ fare", data=crossings).fit(cov_type=COV, cov_kwds={"maxlags": 4})
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="riders ~ fare",
            base="riders",
            transform=None,
            n_regressors=1,
            cov_type="hac",
            data_name="crossings",
            fit_line="res = smf.ols",
        ),
    ),
    (
        "cov_type-not-a-literal",
        """
        import os
        import statsmodels.formula.api as smf
        res = smf.ols("riders ~ fare", data=crossings).fit(cov_type=os.environ["COV"])
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="riders ~ fare",
            base="riders",
            transform=None,
            n_regressors=1,
            cov_type=None,
            data_name="crossings",
            fit_line="res = smf.ols",
        ),
    ),
    (
        "fit-call-on-its-own-line",
        """
        import statsmodels.formula.api as smf
        res = (
            smf.ols("riders ~ fare + fuel_price", data=crossings)
            .fit()
        )
        """,
        dict(
            api="formula",
            estimator="OLS",
            formula="riders ~ fare + fuel_price",
            base="riders",
            transform=None,
            n_regressors=2,
            cov_type="nonrobust",
            data_name="crossings",
            fit_line='smf.ols("riders',
        ),
    ),
]


@pytest.mark.parametrize("code, want", [pytest.param(c, w, id=i) for i, c, w in FIT_SPELLINGS])
def test_fit_spelling(code, want):
    full = _HEAD + textwrap.dedent(code)
    fits = _judged(_facts(full))
    assert len(fits) == 1, f"expected exactly one judged fit, got {len(fits)}"
    fit = fits[0]
    assert fit.api == want["api"]
    assert fit.estimator == want["estimator"]
    assert fit.formula == want["formula"]
    assert fit.outcome is not None, "the dependent variable was not found"
    assert (fit.outcome.base, fit.outcome.transform) == (want["base"], want["transform"])
    assert fit.n_regressors == want["n_regressors"]
    assert fit.cov_type == want["cov_type"]
    assert fit.data_name == want["data_name"]
    assert fit.fit_call.span.line == _line_of(full, want["fit_line"], last=False)
    if "site_line" in want:  # made inside a function: the fit is at the call site
        assert fit.site.span.line == _line_of(full, want["site_line"]) and fit.via == (fit.site,)
    else:
        assert fit.site == fit.fit_call and fit.via == ()


def test_get_robustcov_results_is_a_robust_copy_of_the_fit():
    code = _HEAD + textwrap.dedent(
        """
        import statsmodels.formula.api as smf
        base = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        robust = base.get_robustcov_results(cov_type="HC1")
        """
    )
    facts = _facts(code)
    fits = {f.cov_type: f for f in _judged(facts)}
    assert set(fits) == {"nonrobust", "hc1"}
    copy, original = fits["hc1"], fits["nonrobust"]
    assert copy.parent == original.id and facts.root(copy.id) == original.id
    assert copy.fit_call.span.line == _line_of(code, "get_robustcov_results")
    assert copy.formula == original.formula and copy.result_name == "robust"


# --- 1b. not OLS fits --------------------------------------------------------------------------
_SMF = "import statsmodels.formula.api as smf\n"
_SM = "import statsmodels.api as sm\n"
_Y, _X = 'crossings["riders"]', 'crossings[["fare"]]'
NOT_OLS = [
    ("smf.logit", _SMF + 'res = smf.logit("sold_out ~ fare", data=crossings).fit()'),
    ("smf.probit", _SMF + 'res = smf.probit("sold_out ~ fare", data=crossings).fit()'),
    ("smf.glm", _SMF + 'res = smf.glm("riders ~ fare", data=crossings).fit()'),
    ("smf.rlm", _SMF + 'res = smf.rlm("riders ~ fare", data=crossings).fit()'),
    ("smf.quantreg", _SMF + 'res = smf.quantreg("riders ~ fare", crossings).fit(q=0.5)'),
    ("smf.mixedlm", _SMF + 'res = smf.mixedlm("riders ~ fare", crossings, groups=crossings["season"]).fit()'),
    ("sm.Logit", _SM + f'res = sm.Logit(crossings["sold_out"], sm.add_constant({_X})).fit()'),
    ("sm.Probit", _SM + f'res = sm.Probit(crossings["sold_out"], {_X}).fit()'),
    ("sm.GLM-gaussian", _SM + f"res = sm.GLM({_Y}, {_X}, family=sm.families.Gaussian()).fit()"),
    ("sm.GLM.from_formula", _SM + 'res = sm.GLM.from_formula("riders ~ fare", data=crossings).fit()'),
    ("sm.RLM", _SM + f"res = sm.RLM({_Y}, {_X}).fit()"),
    ("sm.QuantReg", _SM + f"res = sm.QuantReg({_Y}, {_X}).fit(q=0.5)"),
    ("sm.GLS", _SM + f"res = sm.GLS({_Y}, {_X}).fit()"),
    ("linear_model.GLS", f"from statsmodels.regression.linear_model import GLS\nres = GLS({_Y}, {_X}).fit()"),
    ("tsa.ARIMA", f"from statsmodels.tsa.arima.model import ARIMA\nres = ARIMA({_Y}, order=(1, 0, 0)).fit()"),
    (
        "linearmodels.PanelOLS",
        _SM + "from linearmodels import PanelOLS\n"
        'panel = crossings.set_index(["route", "week"])\n'
        'res = PanelOLS.from_formula("riders ~ fare + EntityEffects", data=panel).fit()',
    ),
    (
        "linearmodels.PooledOLS",
        _SM + "from linearmodels.panel import PooledOLS\n"
        'panel = crossings.set_index(["route", "week"])\n'
        'res = PooledOLS(panel["riders"], sm.add_constant(panel[["fare"]])).fit()',
    ),
    (
        "linearmodels.IV2SLS-as-OLS",
        _SM + f"from linearmodels.iv import IV2SLS\nres = IV2SLS({_Y}, sm.add_constant({_X}), None, None).fit()",
    ),
    (
        "sklearn.LinearRegression",
        _SM + f"from sklearn.linear_model import LinearRegression\nres = LinearRegression().fit({_X}, {_Y})",
    ),
    (
        "sklearn-named-ols",
        _SM + f"from sklearn import linear_model\nols = linear_model.LinearRegression()\nres = ols.fit({_X}, {_Y})",
    ),
    ("fit-in-a-string", _SMF + "snippet = \"res = smf.ols('riders ~ fare', data=crossings).fit()\"\nprint(snippet)"),
    ("fit-in-a-comment", _SMF + '# res = smf.ols("riders ~ fare", data=crossings).fit()\nprint(crossings.shape)'),
    (
        "fit-in-a-docstring",
        _SM + '\n\ndef describe():\n    """Fit with ``sm.OLS(crossings["riders"], X).fit()``."""\n    return None\n',
    ),
    ("model-built-never-fitted", _SMF + 'model = smf.ols("riders ~ fare", data=crossings)\nprint(model.exog_names)'),
]


@pytest.mark.parametrize("code", [pytest.param(c, id=i) for i, c in NOT_OLS])
def test_not_an_ols_fit(code):
    report = analyze(_HEAD + code + "\n", "snippet.py", strict=True)
    fits = report.facts.fits if report.facts is not None else ()
    assert fits == ()
    assert report.findings == ()


# --- 3. diagnostics under every public path --------------------------------------------------
#: name -> (family, call with ``{f}`` for the function, real modules exporting it)
_DIAG = "statsmodels.stats.diagnostic"
_API = "statsmodels.stats.api"
_TOOLS = "statsmodels.stats.stattools"
_OI = "statsmodels.stats.outliers_influence"
_SCIPY = "scipy.stats"
DIAGNOSTICS = {
    "linear_reset": ("form", "{f}(res, power=3, use_f=True)", (_DIAG, _API)),
    "linear_harvey_collier": ("form", "{f}(res)", (_DIAG, _API)),
    "linear_rainbow": ("form", "{f}(res)", (_DIAG, _API)),
    "het_breuschpagan": ("variance", "{f}(res.resid, res.model.exog)", (_DIAG, _API)),
    "het_white": ("variance", "{f}(res.resid, res.model.exog)", (_DIAG, _API)),
    "het_goldfeldquandt": ("variance", "{f}(res.model.endog, res.model.exog)", (_DIAG, _API)),
    "jarque_bera": ("normality", "{f}(res.resid)", (_TOOLS, _API, _SCIPY)),
    "omni_normtest": ("normality", "{f}(res.resid)", (_TOOLS, _API)),
    "normal_ad": ("normality", "{f}(res.resid)", (_DIAG, _API)),
    "shapiro": ("normality", "{f}(res.resid)", (_SCIPY,)),
    "normaltest": ("normality", "{f}(res.resid)", (_SCIPY,)),
    "durbin_watson": ("serial", "{f}(res.resid)", (_TOOLS, _API)),
    "acorr_breusch_godfrey": ("serial", "{f}(res, nlags=4)", (_DIAG, _API)),
    "acorr_ljungbox": ("serial", "{f}(res.resid, lags=[4])", (_DIAG, _API)),
    "breaks_cusumolsresid": ("breaks", "{f}(res.resid, ddof=int(res.df_model) + 1)", (_DIAG, _API)),
    "variance_inflation_factor": (
        "collinearity",
        "[{f}(res.model.exog, i) for i in range(1, res.model.exog.shape[1])]",
        (_OI,),
    ),
}


def _diagnostic_paths():
    """(id, import line, expression naming the function, name) for every public path and import style."""
    out = []
    for name, (_, _, modules) in DIAGNOSTICS.items():
        rows = []
        for module in modules:
            rows += [
                (f"import-{module}-as-alias", f"import {module} as dm", f"dm.{name}"),
                (f"from-{module}-import-as", f"from {module} import {name} as chk", "chk"),
                (f"from-{module}-import", f"from {module} import {name}", name),
                (f"qualified-{module}", f"import {module}", f"{module}.{name}"),
            ]
        if _API in modules:  # statsmodels.api.stats is statsmodels.stats.api
            sub = "diagnostic" if _DIAG in modules else "stattools"
            rows += [
                ("sm.stats", "import statsmodels.api as sm", f"sm.stats.{name}"),
                ("from-statsmodels.api-import-stats", "from statsmodels.api import stats as sms", f"sms.{name}"),
                ("qualified-statsmodels.api.stats", "import statsmodels.api", f"statsmodels.api.stats.{name}"),
                (f"sm.stats.{sub}", "import statsmodels.api as sm", f"sm.stats.{sub}.{name}"),
                (f"qualified-stats.api.{sub}", "import statsmodels.stats.api", f"statsmodels.stats.api.{sub}.{name}"),
            ]
        if _SCIPY in modules:
            rows.append(("from-scipy-import-stats", "from scipy import stats as st", f"st.{name}"))
        out += [(f"{name}-{rid}", imp, expr, name) for rid, imp, expr in rows]
    return out


DIAGNOSTIC_PATHS = _diagnostic_paths()


@pytest.mark.parametrize("import_line, expr", [pytest.param(imp, e, id=i) for i, imp, e, _ in DIAGNOSTIC_PATHS])
def test_diagnostic_path_is_real(import_line, expr):
    """The snippets use real code: every path imports and names a callable in the installed packages."""
    namespace: dict = {}
    exec(import_line, namespace)
    assert callable(eval(expr, namespace))


@pytest.mark.parametrize(
    "import_line, expr, name", [pytest.param(imp, e, n, id=i) for i, imp, e, n in DIAGNOSTIC_PATHS]
)
def test_diagnostic_is_credited_to_the_fit(import_line, expr, name):
    family, call, _ = DIAGNOSTICS[name]
    code = (
        f"{import_line}\n"
        "import pandas as pd\n"
        "import statsmodels.formula.api as smf\n\n"
        'crossings = pd.read_csv("crossings.csv")\n'
        'res = smf.ols("riders ~ fare + fuel_price + wind_speed", data=crossings).fit()\n'
        f"out = {call.format(f=expr)}\n"
        "print(res.summary())\n"
    )
    facts = _facts(code)
    (fit,) = _judged(facts)
    credited = {(c.family, c.function) for c in facts.checks if c.fit == fit.id}
    assert (family, name) in credited
    assert {c.loc.span.line for c in facts.checks if c.fit == fit.id} == {_line_of(code, "out = ")}
    assert facts.mismatches == ()


#: Checks that are not one library call: (id, code, family, line marker of the check).
OTHER_CHECKS = [
    (
        "condition_number",
        """
        import statsmodels.api as sm
        X = sm.add_constant(crossings[["fare", "fuel_price"]])
        res = sm.OLS(crossings["riders"], X).fit()
        print(res.condition_number)
        """,
        "collinearity",
        "res.condition_number",
    ),
    (
        "hand-made-RESET-formula",
        """
        import statsmodels.formula.api as smf
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        crossings["yhat"] = res.fittedvalues
        aux = smf.ols("riders ~ fare + fuel_price + I(yhat**2) + I(yhat**3)", data=crossings).fit()
        """,
        "form",
        "aux = smf.ols",
    ),
    (
        "hand-made-RESET-column_stack",
        """
        import statsmodels.api as sm
        X = sm.add_constant(crossings[["fare", "fuel_price"]])
        res = sm.OLS(crossings["riders"], X).fit()
        X_aux = np.column_stack([X, res.fittedvalues**2, res.fittedvalues**3])
        aux = sm.OLS(crossings["riders"], X_aux).fit()
        """,
        "form",
        "aux = sm.OLS",
    ),
    (
        "hand-made-RESET-assign",
        """
        import statsmodels.formula.api as smf
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        augmented = crossings.assign(yhat=res.fittedvalues)
        aux = smf.ols("riders ~ fare + fuel_price + I(yhat**2)", data=augmented).fit()
        """,
        "form",
        "aux = smf.ols",
    ),
    (
        "het_breuschpagan-keywords",
        """
        import statsmodels.api as sm
        X = sm.add_constant(crossings[["fare", "fuel_price"]])
        res = sm.OLS(crossings["riders"], X).fit()
        bp = sm.stats.diagnostic.het_breuschpagan(resid=res.resid, exog_het=X)
        """,
        "variance",
        "bp = sm.stats",
    ),
    (
        "hand-made-variance-test",
        """
        import statsmodels.formula.api as smf
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        crossings["u2"] = res.resid**2
        aux = smf.ols("u2 ~ fare + fuel_price", data=crossings).fit()
        """,
        "variance",
        "aux = smf.ols",
    ),
    (
        "hand-made-variance-test-np.square-array",
        """
        import statsmodels.api as sm
        X = sm.add_constant(crossings[["fare", "fuel_price"]])
        res = sm.OLS(crossings["riders"], X).fit()
        aux = sm.OLS(np.square(res.resid), X).fit()
        """,
        "variance",
        "aux = sm.OLS",
    ),
]


@pytest.mark.parametrize("code, family, marker", [pytest.param(c, f, m, id=i) for i, c, f, m in OTHER_CHECKS])
def test_other_checks_are_credited(code, family, marker):
    full = _HEAD + textwrap.dedent(code)
    facts = _facts(full)
    (fit,) = _judged(facts)  # an auxiliary regression is not judged
    assert fit.result_name == "res"
    lines = {c.loc.span.line for c in facts.checks if c.fit == fit.id and c.family == family}
    assert lines == {_line_of(full, marker)}


# --- 4. uses of a fit ------------------------------------------------------------------------
#: (id, statements after the fit, expected (kind, member) uses; empty: no use at all)
USES = [
    ("params", "print(res.params)", {("estimate", "params")}),
    ("params-via-name", "coefs = res.params\nprint(coefs['fare'])", {("estimate", "params")}),
    ("predict", "crossings['pred'] = res.predict(crossings)", {("estimate", "predict")}),
    (
        "get_prediction",
        "frame = res.get_prediction(crossings).summary_frame(alpha=0.05)",
        {("inference", "get_prediction")},
    ),
    ("summary", "print(res.summary())", {("inference", "summary")}),
    ("summary-bound-then-printed", "table = res.summary()\nprint(table)", {("inference", "summary")}),
    ("summary2", "print(res.summary2())", {("inference", "summary2")}),
    ("summary-table-printed", "print(res.summary().tables[1])", {("inference", "summary")}),
    ("params-in-f-string", "print(f\"fare elasticity {res.params['fare']:.2f}\")", {("estimate", "params")}),
    ("pvalues", "print(res.pvalues)", {("inference", "pvalues")}),
    ("pvalues-indexed", "significant = res.pvalues['fare'] < 0.05", {("inference", "pvalues")}),
    ("bse", "print(res.bse)", {("inference", "bse")}),
    ("tvalues", "print(res.tvalues['fare'])", {("inference", "tvalues")}),
    ("conf_int", "print(res.conf_int(alpha=0.05))", {("inference", "conf_int")}),
    ("t_test", "print(res.t_test('fare = 0'))", {("inference", "t_test")}),
    ("f_test", "print(res.f_test('fare = 0, fuel_price = 0'))", {("inference", "f_test")}),
    ("wald_test", "print(res.wald_test('fare = 0', scalar=True))", {("inference", "wald_test")}),
    ("cov_params", "print(res.cov_params())", {("inference", "cov_params")}),
    (
        "summary_col",
        "from statsmodels.iolib.summary2 import summary_col\nprint(summary_col([res], stars=True))",
        {("inference", "summary_col")},
    ),
    (
        "sm.iolib-summary_col",
        "import statsmodels.api as sm\nprint(sm.iolib.summary2.summary_col([res]))",
        {("inference", "summary_col")},
    ),
    ("display-summary", "from IPython.display import display\ndisplay(res.summary())", {("inference", "summary")}),
    ("resid-alone", "print(res.resid.mean())", set()),
    ("fittedvalues-alone", "crossings['yhat'] = res.fittedvalues", set()),
    ("resid-and-fitted-plotted", "import matplotlib.pyplot as plt\nplt.scatter(res.fittedvalues, res.resid)", set()),
]


@pytest.mark.parametrize("stmts, want", [pytest.param(s, w, id=i) for i, s, w in USES])
def test_use_kind(stmts, want):
    code = (
        "import pandas as pd\nimport statsmodels.formula.api as smf\n\n"
        'crossings = pd.read_csv("crossings.csv")\n'
        'res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()\n' + stmts + "\n"
    )
    facts = _facts(code)
    (fit,) = _judged(facts)
    assert {(u.kind, u.member) for u in facts.uses if u.fit == fit.id} == want
    assert facts.escapes == ()


# --- 5. comparisons of fit measures -----------------------------------------------------------
#: (id, statements after fits ``a`` and ``b``, expected how, expected measure; None: no comparison)
COMPARISONS = [
    ("greater-rsquared", "better = a.rsquared > b.rsquared", "compare", "rsquared"),
    ("ge-rsquared_adj", "better = a.rsquared_adj >= b.rsquared_adj", "compare", "rsquared_adj"),
    ("conditional-bic", "best = a if a.bic < b.bic else b", "compare", "bic"),
    ("if-aic", "if a.aic < b.aic:\n    print('small model')", "compare", "aic"),
    ("max-key-lambda", "best = max([a, b], key=lambda r: r.rsquared)", "max", "rsquared"),
    ("min-key-lambda", "best = min((a, b), key=lambda r: r.aic)", "min", "aic"),
    ("sorted-key-lambda", "ranked = sorted([a, b], key=lambda r: r.bic)", "sorted", "bic"),
    (
        "sorted-key-attrgetter",
        "from operator import attrgetter\nranked = sorted([a, b], key=attrgetter('bic'))",
        "sorted",
        "bic",
    ),
    ("min-dict-get", "aics = {'small': a.aic, 'large': b.aic}\nbest = min(aics, key=aics.get)", "min", "aic"),
    ("max-of-two-measures", "top = max(a.rsquared, b.rsquared)", "max", "rsquared"),
    ("difference-aic", "gain = a.aic - b.aic", "difference", "aic"),
    ("lr-statistic-llf", "lr = 2 * (b.llf - a.llf)", "difference", "llf"),
    ("ratio-llf", "ratio = a.llf / b.llf", "ratio", "llf"),
    ("one-fit-against-a-constant", "good = a.rsquared > 0.5", None, None),
    ("one-fit-minus-a-constant", "penalised = a.aic - 2", None, None),
    ("measures-printed", "print(a.rsquared, b.rsquared)", None, None),
]


@pytest.mark.parametrize("stmts, how, measure", [pytest.param(s, h, m, id=i) for i, s, h, m in COMPARISONS])
def test_comparison(stmts, how, measure):
    code = (
        "import pandas as pd\nimport statsmodels.formula.api as smf\n\n"
        'crossings = pd.read_csv("crossings.csv")\n'
        'a = smf.ols("riders ~ fare", data=crossings).fit()\n'
        'b = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()\n' + stmts + "\n"
    )
    facts = _facts(code)
    if how is None:
        assert facts.comparisons == ()
        return
    a, b = _by_formula(facts, "riders ~ fare"), _by_formula(facts, "riders ~ fare + fuel_price")
    got = [(c.how, c.measures) for c in facts.comparisons]
    assert got == [(how, tuple(sorted({(a.id, measure), (b.id, measure)})))]
    first_stmt_line = code.count("\n") - stmts.count("\n")
    keyword = next(w for w in ("max(", "min(", "sorted(", " - ", " / ", " < ", " > ", ">=") if w in stmts)
    assert facts.comparisons[0].loc.span.line == first_stmt_line + stmts[: stmts.index(keyword)].count("\n")
