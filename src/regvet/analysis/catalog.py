"""Everything regvet knows about statsmodels (and friends) by qualified name, as data.

Rules never mention statsmodels functions: they ask for *families* of checks
(see :data:`regvet.model.settings.FAMILIES`). This module maps every public path
to a callable onto what it is. ``tests/test_catalog.py`` imports each path from
the installed statsmodels/scipy, so an entry that does not exist fails a test.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

# --- name normalisation ------------------------------------------------------------------
#: Public re-exports of one namespace under another. A qualified name starting with a key
#: is rewritten to start with the value before any lookup (longest key first).
NAMESPACE_ALIASES: dict[str, str] = {
    "statsmodels.api.stats": "statsmodels.stats.api",
    "statsmodels.api.formula": "statsmodels.formula.api",
    "statsmodels.api.regression.linear_model": "statsmodels.regression.linear_model",
    "statsmodels.api.regression": "statsmodels.regression",
    "statsmodels.api.iolib": "statsmodels.iolib",
    "statsmodels.api.tools": "statsmodels.tools",
    "statsmodels.api.tsa": "statsmodels.tsa.api",
    "statsmodels.stats.api.diagnostic": "statsmodels.stats.diagnostic",
    "statsmodels.stats.api.stattools": "statsmodels.stats.stattools",
}
_ALIAS_KEYS = sorted(NAMESPACE_ALIASES, key=len, reverse=True)


@lru_cache(maxsize=8192)
def canonical(qualname: str) -> str:
    """Rewrite re-exported paths to one spelling, e.g. ``statsmodels.api.stats.X`` to ``statsmodels.stats.api.X``."""
    for key in _ALIAS_KEYS:
        if qualname == key or qualname.startswith(key + "."):
            return NAMESPACE_ALIASES[key] + qualname[len(key) :]
    return qualname


# --- fit constructors --------------------------------------------------------------------
@dataclass(frozen=True)
class Constructor:
    estimator: str  # "OLS" or "WLS"
    api: str  # "formula" (formula string + data) or "array" (endog, exog)


CONSTRUCTORS: dict[str, Constructor] = {
    "statsmodels.formula.api.ols": Constructor("OLS", "formula"),
    "statsmodels.formula.api.wls": Constructor("WLS", "formula"),
    "statsmodels.api.OLS": Constructor("OLS", "array"),
    "statsmodels.api.WLS": Constructor("WLS", "array"),
    "statsmodels.regression.linear_model.OLS": Constructor("OLS", "array"),
    "statsmodels.regression.linear_model.WLS": Constructor("WLS", "array"),
    "statsmodels.api.OLS.from_formula": Constructor("OLS", "formula"),
    "statsmodels.api.WLS.from_formula": Constructor("WLS", "formula"),
    "statsmodels.regression.linear_model.OLS.from_formula": Constructor("OLS", "formula"),
    "statsmodels.regression.linear_model.WLS.from_formula": Constructor("WLS", "formula"),
}

# --- diagnostics -------------------------------------------------------------------------
_DIAG = "statsmodels.stats.diagnostic"
_API = "statsmodels.stats.api"
_TOOLS = "statsmodels.stats.stattools"
_OI = "statsmodels.stats.outliers_influence"
_SCIPY = "scipy.stats"


@dataclass(frozen=True)
class Diagnostic:
    family: str
    modules: tuple[str, ...]


_DIAGNOSTICS_BY_NAME: dict[str, Diagnostic] = {
    # functional form
    "linear_reset": Diagnostic("form", (_DIAG, _API)),
    "linear_harvey_collier": Diagnostic("form", (_DIAG, _API)),
    "linear_rainbow": Diagnostic("form", (_DIAG, _API)),
    "linear_lm": Diagnostic("form", (_DIAG, _API)),
    # heteroskedasticity
    "het_breuschpagan": Diagnostic("variance", (_DIAG, _API)),
    "het_white": Diagnostic("variance", (_DIAG, _API)),
    "het_goldfeldquandt": Diagnostic("variance", (_DIAG, _API)),
    "spec_white": Diagnostic("variance", (_DIAG, _API)),
    # normality
    "jarque_bera": Diagnostic("normality", (_TOOLS, _API, _SCIPY)),
    "omni_normtest": Diagnostic("normality", (_TOOLS, _API)),
    "normal_ad": Diagnostic("normality", (_DIAG, _API)),
    "lilliefors": Diagnostic("normality", (_DIAG, _API)),
    "kstest_normal": Diagnostic("normality", (_DIAG,)),
    "shapiro": Diagnostic("normality", (_SCIPY,)),
    "normaltest": Diagnostic("normality", (_SCIPY,)),
    # serial correlation
    "durbin_watson": Diagnostic("serial", (_TOOLS, _API)),
    "acorr_breusch_godfrey": Diagnostic("serial", (_DIAG, _API)),
    "acorr_ljungbox": Diagnostic("serial", (_DIAG, _API)),
    "acorr_lm": Diagnostic("serial", (_DIAG, _API)),
    # structural breaks
    "breaks_cusumolsresid": Diagnostic("breaks", (_DIAG, _API)),
    "breaks_hansen": Diagnostic("breaks", (_DIAG, _API)),
    "recursive_olsresiduals": Diagnostic("breaks", (_DIAG, _API)),
    # collinearity
    "variance_inflation_factor": Diagnostic("collinearity", (_OI,)),
}

#: Qualified name -> (family, short function name), one entry per public path.
DIAGNOSTICS: dict[str, tuple[str, str]] = {
    f"{module}.{name}": (d.family, name) for name, d in _DIAGNOSTICS_BY_NAME.items() for module in d.modules
}

#: Tables of several fits with their inference (each fit argument counts as inference used).
SUMMARY_TABLES: frozenset[str] = frozenset(
    {"statsmodels.iolib.summary2.summary_col", "statsmodels.iolib.summary2.summary_params"}
)
#: ``patsy.dmatrices(formula, data)``: the (y, X) design of a formula, read like the formula (``built``).
DESIGN_MATRICES: frozenset[str] = frozenset({"patsy.dmatrices", "patsy.highlevel.dmatrices"})
#: ``anova_lm(f1, f2, ...)``: inference on each fit, and an F test between nested fits.
ANOVA: frozenset[str] = frozenset({"statsmodels.stats.anova.anova_lm", "statsmodels.stats.api.anova_lm"})
#: Return their first argument's data unchanged apart from a constant column.
ADD_CONSTANT: frozenset[str] = frozenset(
    {"statsmodels.api.add_constant", "statsmodels.tools.add_constant", "statsmodels.tools.tools.add_constant"}
)

# --- members of a results object -----------------------------------------------------------
#: Reading these uses the fit's standard errors (inference). Under the default covariance they
#: assume homoskedastic errors.
INFERENCE_MEMBERS: frozenset[str] = frozenset(
    {
        "summary",
        "summary2",
        "pvalues",
        "bse",
        "tvalues",
        "conf_int",
        "t_test",
        "f_test",
        "wald_test",
        "wald_test_terms",
        "t_test_pairwise",
        "cov_params",
        "get_prediction",
        "fvalue",
        "f_pvalue",
        "compare_f_test",
        "compare_lr_test",
        "compare_lm_test",
    }
)
#: Reading these uses the estimates but not their standard errors.
ESTIMATE_MEMBERS: frozenset[str] = frozenset({"params", "predict"})
#: Heteroskedasticity-consistent standard errors read directly: estimates used, robust inference.
ROBUST_MEMBERS: frozenset[str] = frozenset(
    {"HC0_se", "HC1_se", "HC2_se", "HC3_se", "cov_HC0", "cov_HC1", "cov_HC2", "cov_HC3"}
)
#: Pieces of a fit: diagnostics are attributed to a fit through them.
PART_MEMBERS: dict[str, str] = {
    "resid": "resid",
    "wresid": "resid",
    "resid_pearson": "resid",
    "fittedvalues": "fitted",
    "model": "model",
}
MODEL_PART_MEMBERS: dict[str, str] = {
    "exog": "exog",
    "wexog": "exog",
    "exog_names": "exog",
    "endog": "endog",
    "wendog": "endog",
    "endog_names": "endog",
    "data": "model",
}
DATA_PART_MEMBERS: dict[str, str] = {"orig_exog": "exog", "exog": "exog", "orig_endog": "endog", "endog": "endog"}
#: Fit measures whose comparison across fits the comparison rules judge.
COMPARED_MEASURES: frozenset[str] = frozenset({"rsquared", "rsquared_adj", "aic", "bic", "llf"})
#: Measures combined in hand-made F statistics (a Chow test adds subsample SSRs).
SSR_MEASURES: frozenset[str] = frozenset({"ssr"})
#: Reading these is a collinearity check.
COLLINEARITY_MEMBERS: frozenset[str] = frozenset({"condition_number", "eigenvals"})

# --- covariance types ----------------------------------------------------------------------
NONROBUST_COV: frozenset[str] = frozenset({"nonrobust", "fixed scale"})
HAC_COV: frozenset[str] = frozenset({"hac", "hac-panel", "hac-groupsum", "nw-panel", "nw-groupsum"})
ROBUST_COV: frozenset[str] = frozenset({"hc0", "hc1", "hc2", "hc3", "cluster"}) | HAC_COV

# --- time-ordered data ---------------------------------------------------------------------
#: pandas functions whose result carries a time order.
TIME_FUNCTIONS: frozenset[str] = frozenset(
    {
        "pandas.to_datetime",
        "pandas.date_range",
        "pandas.period_range",
        "pandas.DatetimeIndex",
        "pandas.PeriodIndex",
        "pandas.bdate_range",
        "pandas.timedelta_range",
    }
)
#: Methods on data whose result is time-ordered (lags and differences).
TIME_METHODS: frozenset[str] = frozenset(
    {"shift", "diff", "pct_change", "asfreq", "resample", "to_period", "tshift", "lag"}
)
#: ``read_*`` keyword arguments that give the frame a date index or date columns.
TIME_READ_KEYWORDS: frozenset[str] = frozenset({"parse_dates", "date_format", "date_parser"})

#: Builtins that read their argument without doing anything regvet should call an escape.
HARMLESS_BUILTINS: frozenset[str] = frozenset(
    {
        "print",
        "len",
        "repr",
        "str",
        "int",
        "float",
        "bool",
        "isinstance",
        "issubclass",
        "type",
        "id",
        "hash",
        "hasattr",
        "vars",
        "dir",
        "round",
        "abs",
        "format",
        "any",
        "all",
        "sum",
        "display",
        "callable",
        "setattr",
        "delattr",
        "help",
        "super",
        "object",
        "range",
        "ascii",
    }
)


def is_statsmodels(qualname: str) -> bool:
    return qualname == "statsmodels" or qualname.startswith("statsmodels.")
