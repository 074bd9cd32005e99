"""The shape of a run's statistics: typed descriptions of the JSON the probe writes.

The probe (``regvet/runtime/probe/regvet_stats.py``, ``fit_statistics``) runs in the user's
interpreter and never imports regvet, so it cannot use these types; it returns plain dicts.
These ``TypedDict``s say which keys those dicts have and what their values are, so the rules,
the hover status and the outputs read them with ``.get("key")`` on a declared key instead of
string paths. ``tests/test_stats_schema.py`` runs the probe on real statsmodels fits and checks
both ways that the probe and this schema agree: every key the probe emits is declared here, and
every key declared here is produced by some fit.

Values are JSON values: a statistic that could not be computed is None (and the probe says why
under ``errors``); no NaN or infinities.
"""

from __future__ import annotations

from typing import Any, TypedDict


class Rows(TypedDict):
    """Which observations a fit used."""

    count: int
    #: SHA-1 hex digest of the fit's row labels: two fits on the same rows get the same digest.
    fingerprint: str


class AuxiliaryTest(TypedDict):
    """An LM test from an auxiliary regression, with its F form (Breusch-Pagan, White)."""

    form: str
    lm: float | None
    lm_pvalue: float | None
    f: float | None
    f_pvalue: float | None
    df: int


class WhiteTest(AuxiliaryTest):
    #: Columns of the auxiliary regression ("full" form) or 3 (the special form on ŷ, ŷ²).
    columns: int


class ResetTest(TypedDict):
    """Ramsey's RESET with the squared and cubed fitted values, F form."""

    form: str
    f: float | None
    pvalue: float | None
    df_num: int
    df_denom: int | float | None


class JarqueBera(TypedDict):
    statistic: float | None
    pvalue: float | None
    skew: float | None
    kurtosis: float | None  # not excess kurtosis
    form: str


class ConditionIndex(TypedDict):
    """Belsley-Kuh-Welsch condition index (unit-length columns, the constant included)."""

    value: float | None
    form: str


class Vif(TypedDict):
    """Centred variance inflation factors of the non-constant regressors."""

    max: float | None
    variable: str | None
    values: dict[str, float | None]


class BreuschGodfrey(TypedDict):
    lm: float | None
    lm_pvalue: float | None
    f: float | None
    f_pvalue: float | None
    lags: int
    form: str


class WithinUnitSerial(TypedDict):
    """First-order serial correlation within the units of a stacked panel (``unit_column``)."""

    rho: float | None
    se: float | None
    t: float | None
    pvalue: float | None
    df: int
    units: int
    pairs: int
    units_from: str
    form: str


class GroupSize(TypedDict):
    label: str
    nobs: int


class ChowTest(TypedDict):
    """The Chow test at one configured break candidate (values None when it cannot be computed)."""

    candidate: str
    groups: int | None
    group_sizes: list[GroupSize] | None
    f: float | None
    pvalue: float | None
    df_num: int | None
    df_denom: int | None


class Coefficient(TypedDict):
    """One parameter with the usual and the heteroskedasticity-robust standard errors."""

    name: str
    estimate: float | None
    se: float | None
    t: float | None
    p: float | None
    se_robust: float | None
    t_robust: float | None
    p_robust: float | None
    robust_type: str  # "HC0" .. "HC3"
    #: Whether 5 % significance differs between the usual and the robust p-value.
    significance_changes: bool | None


class CrossValidation(TypedDict):
    folds: int
    seed: int
    rmse: float | None
    mae: float | None


class ScaledRefit(TypedDict):
    """statsmodels lost rank on the raw columns: the statistics come from the probe's fit in the scaled basis."""

    statsmodels_rank: int
    rank: int  # of the centred, unit-scaled design
    condition: float | None  # its condition number
    ssr: float | None  # of the probe's least-squares fit
    statsmodels_ssr: float | None  # of the fit statsmodels reported
    note: str


class _FitStatisticsAlways(TypedDict):
    """The keys ``fit_statistics`` always writes."""

    estimator: str  # "OLS" | "WLS"
    nobs: int
    k: int  # parameters, the constant included
    n_regressors: int  # without an explicit constant column
    df_resid: int | float | None
    rsquared: float | None
    rsquared_adj: float | None
    aic: float | None
    bic: float | None
    llf: float | None
    ssr: float | None
    resid_sd: float | None
    cov_type: str | None
    use_t: bool | None
    has_constant: bool
    param_names: list[str]
    endog_name: str | None
    rows: Rows | None
    #: corr(exp(endog), exp(fitted))² for an outcome named like a log transform, else None.
    log_level_r2: float | None
    #: For WLS, a note that every statistic uses the whitened model; None for OLS.
    weights: str | None
    #: For WLS, the rows with weight zero, left out of nobs and of every statistic; None for OLS.
    zero_weight_rows: int | None
    #: Set when the probe refitted in the scaled basis because statsmodels dropped a direction.
    scaled_refit: ScaledRefit | None
    breusch_pagan: AuxiliaryTest | None
    white: WhiteTest | None
    reset: ResetTest | None
    jarque_bera: JarqueBera | None
    condition_index: ConditionIndex | None
    vif: Vif | None
    #: Why the data is time-ordered, or None (then the two serial statistics are None too).
    time_ordered: str | None
    durbin_watson: float | None
    breusch_godfrey: BreuschGodfrey | None
    #: For a stacked panel whose units are known (``unit_column``, or a (unit, time) index): the
    #: serial test within units; None otherwise (then, for a panel, the two above say why not).
    serial_within_units: WithinUnitSerial | None
    chow: list[ChowTest]
    coefficient_tests: str
    coefficients: list[Coefficient] | None
    #: Why each statistic that is None could not be computed (``"chow:<candidate>"`` for Chow).
    errors: dict[str, str]


class FitStatistics(_FitStatisticsAlways, total=False):
    """Everything ``fit_statistics`` returns for one OLS or WLS fit."""

    #: Only for fits whose measures are compared (the probe cross-validates those).
    cv: CrossValidation | None


class TimePoints(TypedDict):
    """Residuals in time order, at evenly spaced ranks of that order."""

    order_by: str  # "the row index" or the time column
    position: list[int]  # 1-based rank in time order
    resid: list[float]
    first: str  # the first and last time values, as text
    last: str


class PlotPoints(TypedDict):
    """The points of the report's residual plots of one fit (``regvet_points.residual_points``)."""

    nobs: int
    drawn: int  # points in the scatter plots (all rows, or a seeded random subset)
    seed: int
    fitted: list[float]
    resid: list[float]
    sqrt_abs_studentized: list[float]  # scale-location
    qq_theoretical: list[float]  # normal quantiles at the plotting positions
    qq_sample: list[float]  # sorted internally studentized residuals at the same ranks
    time: TimePoints | None


class FitRecord(TypedDict, total=False):
    """One fit as the probe recorded it during a run (a line of its output)."""

    type: str  # "fit"
    seq: int
    #: [file, line, col, end_line, end_col] of each frame in the user's code, innermost first.
    frames: list[list[Any]]
    estimator: str
    formula: str | None
    cov_type: str | None
    #: ``seq`` of the fit this one was derived from (``get_robustcov_results``), or None.
    derived_from: int | None
    occurrence: int
    stats: FitStatistics | None
    #: Why ``stats`` is None: too many runs of the same call, or the statistics failed.
    note: str
    stats_error: str
    stats_seconds: float
    #: Only when the run was asked for plot points (``regvet report --run``).
    points: PlotPoints | None
    points_error: str


# --- what the engine attaches to a finding (``Finding.stats``) -----------------------------------
class FitEvidence(TypedDict):
    fit: str
    runs: int
    statistics: FitStatistics  # of the first run
    summary: str


class ComparisonRow(TypedDict):
    fit: str
    outcome: str | None
    nobs: int | None
    rsquared: float | None
    rsquared_adj: float | None
    aic: float | None
    bic: float | None
    cv_rmse: float | None
    cv_mae: float | None
    cv_folds: int | None
    log_level_r2: float | None


class NestedFTest(TypedDict):
    """F test of the extra regressors of one compared fit over another fitted on the same rows."""

    f: float
    df_num: int
    df_denom: int | float
    pvalue: float | None
    restricted: list[str]
    extra: list[str]


class _ComparisonAlways(TypedDict):
    fits: list[ComparisonRow]


class ComparisonTable(_ComparisonAlways, total=False):
    nested_f_tests: list[NestedFTest]


class _FindingStatsAlways(TypedDict):
    summary: str
    fits: list[FitEvidence]


class FindingStats(_FindingStatsAlways, total=False):
    """The statistics attached to a finding about fits that ran."""

    #: Only on findings of rules that compare fits.
    comparison: ComparisonTable
