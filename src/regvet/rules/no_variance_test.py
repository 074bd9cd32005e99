"""no-variance-test: non-robust inference without a heteroskedasticity test."""

from __future__ import annotations

from collections.abc import Iterator

from regvet.model.finding import Finding, Severity
from regvet.rules.base import QuickFix, Rule, RuleInput, code_name, missing_check, opening


def check(inp: RuleInput) -> Iterator[Finding]:
    for fit in inp.judged_fits():
        if fit.cov_type != "nonrobust":
            continue  # robust, or not a literal regvet can read
        uses = inp.uses(fit.id, ("inference",))
        escapes = inp.escapes(fit.id)
        if not uses and not escapes:
            continue
        if inp.checks(fit.id, "variance"):
            continue
        used = f" (`{uses[0].member}`, {inp.where(uses[0].loc)})" if uses else ""
        name = code_name(fit)
        yield missing_check(
            RULE,
            fit,
            f"{opening(fit)} reports inference{used} with the default covariance and no heteroskedasticity "
            "test, so its standard errors assume a constant error variance. "
            f"Test it with `{inp.call('het_breuschpagan')}({name}.resid, {name}.model.exog)` or refit with "
            '`.fit(cov_type="HC3")`.',
            uses,
            escapes,
        )


RULE = Rule(
    id="no-variance-test",
    severity=Severity.WARNING,
    summary="A fit's inference is used with the default covariance and no heteroskedasticity test.",
    rationale=(
        "The default OLS standard errors, t statistics, p-values and confidence intervals assume the error "
        "variance is the same for every observation. Under heteroskedasticity the estimates stay unbiased "
        "but those standard errors are wrong, usually too small.\n\n"
        "Satisfied by: a heteroskedasticity test on the same fit (`het_breuschpagan`, `het_white`, "
        "`het_goldfeldquandt`, or an auxiliary regression of its squared residuals), or by inference under a "
        'robust covariance (`.fit(cov_type="HC3")`, `get_robustcov_results`, reading `HC3_se`). '
        "In small samples HC3 is the better choice (Long and Ervin 2000)."
    ),
    bad="""\
import pandas as pd
import statsmodels.api as sm

crossings = pd.read_csv("crossings.csv")
X = sm.add_constant(crossings[["fare", "fuel_price"]])
res = sm.OLS(crossings["riders"], X).fit()  # expect: no-variance-test
print(res.summary())
""",
    good="""\
import pandas as pd
import statsmodels.api as sm
from statsmodels.stats.diagnostic import het_breuschpagan

crossings = pd.read_csv("crossings.csv")
X = sm.add_constant(crossings[["fare", "fuel_price"]])
res = sm.OLS(crossings["riders"], X).fit()
print(het_breuschpagan(res.resid, res.model.exog))
robust = sm.OLS(crossings["riders"], X).fit(cov_type="HC3")
print(res.summary(), robust.summary())
""",
    check=check,
    references=(
        "Breusch, T. S. and Pagan, A. R. (1979). Econometrica 47(5), 1287-1294; Koenker, R. (1981), "
        "J. Econometrics 17(1), 107-112 (the studentized form statsmodels uses by default).",
        "White, H. (1980). A heteroskedasticity-consistent covariance matrix estimator and a direct test for "
        "heteroskedasticity. Econometrica 48(4), 817-838.",
        "Long, J. S. and Ervin, L. H. (2000). Using heteroscedasticity consistent standard errors in the linear "
        "regression model. The American Statistician 54(3), 217-224.",
    ),
    family="variance",
    quick_fixes=(QuickFix.ROBUST_COVARIANCE, QuickFix.INSERT_BREUSCH_PAGAN),
)
