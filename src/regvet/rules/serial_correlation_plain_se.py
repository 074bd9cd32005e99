"""serial-correlation-plain-se: Breusch-Godfrey rejects on time-ordered data without HAC covariance."""

from __future__ import annotations

from collections.abc import Iterator

from regvet.analysis.catalog import HAC_COV
from regvet.model.finding import Finding, Severity
from regvet.rules.base import Rule, RuleInput, opening
from regvet.rules.evidence import num, p, runs


def check(inp: RuleInput) -> Iterator[Finding]:
    alpha = inp.settings.alpha
    for fit in inp.judged_fits():
        if fit.cov_type in HAC_COV:
            continue
        uses = inp.uses(fit.id, ("inference", "robust"))
        if not uses and not inp.escapes(fit.id):  # used, or passed to code regvet cannot read
            continue
        for s in runs(inp, fit.id):
            within = s.get("serial_within_units")
            within_p = within.get("pvalue") if within is not None else None
            if within is not None and within_p is not None and within_p < alpha:
                if str(s.get("cov_type", "")).lower() in (*HAC_COV, "cluster"):
                    continue  # clustered by unit (or HAC): the covariance allows for it
                yield RULE.fit_finding(
                    fit,
                    f"{opening(fit)} has errors correlated over time within units, rho = {num(within.get('rho'))} on "
                    f"the unit's previous residual with cluster-robust t = {num(within.get('t'))}, {p(within_p)}, "
                    f"over {within.get('units')} units from {within.get('units_from')}, so its standard errors, "
                    "which assume uncorrelated errors, are not valid. "
                    'Use standard errors clustered by unit, `cov_type="cluster"`, or model the dynamics.',
                    uses[:1],
                )
                break
            bg = s.get("breusch_godfrey")
            pvalue = bg.get("lm_pvalue") if bg is not None else None
            if str(s.get("cov_type", "")).lower() in HAC_COV or bg is None or pvalue is None or pvalue >= alpha:
                continue
            dw = s.get("durbin_watson")
            dw_text = f", Durbin-Watson {num(dw)}" if dw is not None else ""
            lags = bg.get("lags")
            yield RULE.fit_finding(
                fit,
                f"{opening(fit)} has errors correlated over time, Breusch-Godfrey LM = {num(bg.get('lm'))} with "
                f"{lags} lag{'' if lags == 1 else 's'}, {p(pvalue)}{dw_text}, so its standard errors, robust HC "
                "ones too, are not valid: they assume uncorrelated errors. "
                'Use HAC covariance, `cov_type="HAC", cov_kwds={"maxlags": ...}`, or model the dynamics.',
                uses[:1],
            )
            break


RULE = Rule(
    id="serial-correlation-plain-se",
    severity=Severity.ERROR,
    summary="Breusch-Godfrey rejects no serial correlation on time-ordered data, and the covariance is not HAC.",
    rationale=(
        "With errors correlated over time, OLS standard errors (including heteroskedasticity-robust ones) "
        "are inconsistent, usually too small. Breusch-Godfrey regresses the residuals on the regressors and "
        "their own lags (zero-padded, all observations: statsmodels' convention); lags default by the data's "
        "frequency (4 quarterly, 12 monthly, 1 otherwise; common practice) or `serial_lags`.\n\n"
        "For a stacked panel (time values repeat: several units per period) Breusch-Godfrey over the "
        "stacked rows would mix units and is not run; with `unit_column` (or a (unit, time) index) the "
        "residual is regressed on its own unit's previous residual, cluster-robust by unit.\n\n"
        "Runtime mode only, for data with a date or period index or a configured `time_column`."
    ),
    bad="""\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

rng = np.random.default_rng(17)
weeks = pd.date_range("2023-01-02", periods=156, freq="W-MON")
u = np.zeros(156)
for t in range(1, 156):
    u[t] = 0.8 * u[t - 1] + rng.normal(0, 5)
weekly = pd.DataFrame({"fare": rng.uniform(2, 9, 156)}, index=weeks)
weekly["riders"] = 300 - 10 * weekly["fare"] + u
res = smf.ols("riders ~ fare", data=weekly).fit()  # expect: serial-correlation-plain-se
print(res.summary())
""",
    good="""\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

rng = np.random.default_rng(17)
weeks = pd.date_range("2023-01-02", periods=156, freq="W-MON")
u = np.zeros(156)
for t in range(1, 156):
    u[t] = 0.8 * u[t - 1] + rng.normal(0, 5)
weekly = pd.DataFrame({"fare": rng.uniform(2, 9, 156)}, index=weeks)
weekly["riders"] = 300 - 10 * weekly["fare"] + u
res = smf.ols("riders ~ fare", data=weekly).fit(cov_type="HAC", cov_kwds={"maxlags": 4})
print(res.summary())
""",
    check=check,
    references=(
        "Breusch, T. S. (1978). Australian Economic Papers 17, 334-355; Godfrey, L. G. (1978). Econometrica 46(6), "
        "1293-1301.",
        "Newey, W. K. and West, K. D. (1987). Econometrica 55(3), 703-708.",
    ),
    needs_run=True,
    rejects="serial",
)
