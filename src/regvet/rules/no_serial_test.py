"""no-serial-test: inference on time-ordered data without a serial-correlation test or HAC covariance."""

from __future__ import annotations

from collections.abc import Iterator

from regvet.analysis.catalog import HAC_COV
from regvet.model.facts import Fit, Loc
from regvet.model.finding import Finding, Severity
from regvet.rules.base import Rule, RuleInput, code_name, missing_check, opening, related
from regvet.rules.evidence import runs


def time_evidence(inp: RuleInput, fit: Fit) -> tuple[str, Loc | None] | None:
    """Why ``fit`` is on time-ordered data and where that shows, from its own data's flow or the
    configured ``time_column`` (None: no evidence)."""
    if fit.time_reason is not None:
        return fit.time_reason, fit.time_where
    column = inp.settings.time_column
    if column and column in fit.columns:
        return f"the configured `time_column` {column!r} is one of its columns", None
    for stats in runs(inp, fit.id):  # runtime mode: what the run saw of the fit's rows
        shown = stats.get("time_ordered")
        if shown:
            return f"the run shows it: {shown}", None
    return None


def check(inp: RuleInput) -> Iterator[Finding]:
    for fit in inp.judged_fits():
        evidence = time_evidence(inp, fit)
        if evidence is None or fit.cov_type is None or fit.cov_type in HAC_COV:
            continue
        uses = inp.uses(fit.id, ("inference", "robust"))
        escapes = inp.escapes(fit.id)
        if not uses and not escapes:
            continue
        if inp.checks(fit.id, "serial"):
            continue
        reason, where = evidence
        place = f", {inp.where(where)}" if where is not None else ""
        found = missing_check(
            RULE,
            fit,
            f"{opening(fit)} reports inference on time-ordered data, since {reason}{place}, with neither a "
            "serial-correlation test nor HAC covariance, so its standard errors assume errors uncorrelated over time. "
            f"Run `{inp.call('acorr_breusch_godfrey')}({code_name(fit)}, nlags=...)` or "
            'refit with `cov_type="HAC", cov_kwds={"maxlags": ...}`.',
            uses,
            escapes,
        )
        if where is not None:
            found = found.with_(related=(*found.related, related(where, "the data's time order comes from here")))
        yield found


RULE = Rule(
    id="no-serial-test",
    severity=Severity.WARNING,
    summary="A fit on time-ordered data uses inference with neither a serial-correlation test nor HAC covariance.",
    rationale=(
        "With observations ordered in time, errors are often correlated with their own past. OLS standard "
        "errors (robust HC ones included) assume they are not, and are then usually too small; with a lagged "
        "dependent variable the estimates themselves become inconsistent.\n\n"
        "The data counts as time-ordered when the fit's own data carries time order, followed through "
        "assignments, copies, selections and helper functions: a date or period index (`set_index` of "
        "dates or of a date column, `index_col` parsed as dates or named like a date, `index=` of "
        "`pd.date_range`, `df.index = ...`), lags, leads or differences of its data (`shift`, `diff`, "
        "`pct_change`, `lag...` columns in the formula, `statsmodels.tsa`'s `lagmat`/`add_trend`), "
        "`asfreq`/`resample`, rows sorted by a date column, or a configured `time_column` that is one of "
        "its columns; in runtime mode also when the run shows that the fit's rows have a date or period "
        "index the code did not show. Dates used in arithmetic or kept as an ordinary column, and `statsmodels.tsa` used "
        "elsewhere in the file, are not evidence.\n\n"
        "Satisfied by: `acorr_breusch_godfrey`, `durbin_watson`, `acorr_ljungbox` or `acorr_lm` on the fit, "
        'or inference under HAC (Newey-West) covariance (`cov_type="HAC"`).'
    ),
    bad="""\
import pandas as pd
import statsmodels.formula.api as smf

weekly = pd.read_csv("weekly.csv", parse_dates=["week"], index_col="week")
res = smf.ols("riders ~ fare + fuel_price", data=weekly).fit()  # expect: no-serial-test
print(res.summary())
""",
    good="""\
import pandas as pd
import statsmodels.formula.api as smf
from statsmodels.stats.diagnostic import acorr_breusch_godfrey

weekly = pd.read_csv("weekly.csv", parse_dates=["week"], index_col="week")
res = smf.ols("riders ~ fare + fuel_price", data=weekly).fit()
print(acorr_breusch_godfrey(res, nlags=4))
hac = smf.ols("riders ~ fare + fuel_price", data=weekly).fit(cov_type="HAC", cov_kwds={"maxlags": 4})
print(res.summary(), hac.summary())
""",
    check=check,
    references=(
        "Breusch, T. S. (1978). Australian Economic Papers 17, 334-355; Godfrey, L. G. (1978). "
        "Econometrica 46(6), 1293-1301.",
        "Newey, W. K. and West, K. D. (1987). Econometrica 55(3), 703-708.",
        "Durbin, J. and Watson, G. S. (1950, 1951). Biometrika 37, 409-428; 38, 159-178.",
    ),
    family="serial",
)
