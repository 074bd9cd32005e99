"""no-serial-test: inference on time-ordered data without a serial-correlation test or HAC covariance."""

from __future__ import annotations

from collections.abc import Iterator

from regvet.analysis.catalog import HAC_COV
from regvet.model.finding import Finding, Severity
from regvet.rules.base import Rule, RuleInput, describe_fit, missing_check


def check(inp: RuleInput) -> Iterator[Finding]:
    for fit in inp.judged_fits():
        reason = fit.time_reason or ("`statsmodels.tsa` is in use in this file" if inp.facts.tsa_in_use else None)
        if reason is None or fit.cov_type is None or fit.cov_type in HAC_COV:
            continue
        uses = inp.uses(fit.id, ("inference", "robust"))
        escapes = inp.escapes(fit.id)
        if not uses and not escapes:
            continue
        if inp.checks(fit.id, "serial"):
            continue
        yield missing_check(
            RULE,
            fit,
            f"{describe_fit(fit)} is fitted on time-ordered data ({reason}) and its inference is used, but "
            "neither a serial-correlation test nor HAC covariance was applied. Its standard errors assume "
            "uncorrelated errors; run `acorr_breusch_godfrey(res, nlags=...)` or fit with "
            '`cov_type="HAC", cov_kwds={"maxlags": ...}`.',
            uses,
            escapes,
        )


RULE = Rule(
    id="no-serial-test",
    severity=Severity.WARNING,
    summary="A fit on time-ordered data uses inference with neither a serial-correlation test nor HAC covariance.",
    rationale=(
        "With observations ordered in time, errors are often correlated with their own past. OLS standard "
        "errors (robust HC ones included) assume they are not, and are then usually too small; with a lagged "
        "dependent variable the estimates themselves become inconsistent.\n\n"
        "Data counts as time-ordered when it was read with `parse_dates` or given a date index, when lags or "
        "differences (`shift`, `diff`, `lag...` columns) appear in its data or formula, or when "
        "`statsmodels.tsa` is in use in the file.\n\n"
        "Satisfied by: `acorr_breusch_godfrey`, `durbin_watson`, `acorr_ljungbox` or `acorr_lm` on the fit, "
        'or inference under HAC (Newey-West) covariance (`cov_type="HAC"`).'
    ),
    bad='''\
import pandas as pd
import statsmodels.formula.api as smf

weekly = pd.read_csv("weekly.csv", parse_dates=["week"], index_col="week")
res = smf.ols("riders ~ fare + fuel_price", data=weekly).fit()  # expect: no-serial-test
print(res.summary())
''',
    good='''\
import pandas as pd
import statsmodels.formula.api as smf
from statsmodels.stats.diagnostic import acorr_breusch_godfrey

weekly = pd.read_csv("weekly.csv", parse_dates=["week"], index_col="week")
res = smf.ols("riders ~ fare + fuel_price", data=weekly).fit()
print(acorr_breusch_godfrey(res, nlags=4))
hac = smf.ols("riders ~ fare + fuel_price", data=weekly).fit(cov_type="HAC", cov_kwds={"maxlags": 4})
print(res.summary(), hac.summary())
''',
    check=check,
    references=(
        "Breusch, T. S. (1978). Australian Economic Papers 17, 334-355; Godfrey, L. G. (1978). "
        "Econometrica 46(6), 1293-1301.",
        "Newey, W. K. and West, K. D. (1987). Econometrica 55(3), 703-708.",
        "Durbin, J. and Watson, G. S. (1950, 1951). Biometrika 37, 409-428; 38, 159-178.",
    ),
    family="serial",
)
