"""heteroskedastic-plain-se: a heteroskedasticity test rejects, and inference still uses the usual SEs."""

from __future__ import annotations

from collections.abc import Iterator

from regvet.model.finding import Finding, Severity
from regvet.model.stats_schema import FitStatistics
from regvet.rules.base import Rule, RuleInput, describe_fit
from regvet.rules.evidence import coefficient_clause, in_runs, num, p, runs


def check(inp: RuleInput) -> Iterator[Finding]:
    alpha = inp.settings.alpha
    for fit in inp.judged_fits():
        if fit.cov_type != "nonrobust":
            continue
        uses = inp.uses(fit.id, ("inference",))
        stats = runs(inp, fit.id)
        if not uses or not stats:
            continue
        rejecting = [(s, test) for s in stats if (test := _rejection(s, alpha)) is not None]
        if not rejecting:
            continue
        s, test = rejecting[0]
        yield RULE.fit_finding(
            fit,
            f"{test}{in_runs(len(rejecting), len(stats))}: the error variance of {describe_fit(fit)} is not "
            f"constant, so its usual t tests (`{uses[0].member}`) are not valid; {coefficient_clause(s)}. "
            'Report robust standard errors (`.fit(cov_type="HC3")`).',
            uses,
        )


def _rejection(s: FitStatistics, alpha: float) -> str | None:
    """The heteroskedasticity test that rejects in one run (Breusch-Pagan first, then White), or None."""
    bp = s.get("breusch_pagan")
    if bp is not None and (pvalue := bp.get("lm_pvalue")) is not None and pvalue < alpha:
        return f"Breusch-Pagan LM = {num(bp.get('lm'))}, {p(pvalue)}"
    white = s.get("white")
    if white is not None and (pvalue := white.get("lm_pvalue")) is not None and pvalue < alpha:
        return f"White ({white.get('form')}) LM = {num(white.get('lm'))}, {p(pvalue)}"
    return None


RULE = Rule(
    id="heteroskedastic-plain-se",
    severity=Severity.ERROR,
    summary="A heteroskedasticity test rejects while the fit's inference uses the usual (non-robust) covariance.",
    rationale=(
        "When Breusch-Pagan (Koenker's studentized form) or White's test rejects constant error variance at "
        "`alpha`, the usual OLS standard errors are inconsistent, and the t tests, p-values and intervals built "
        "on them can be far off. The finding names the coefficients whose 5 % significance changes under "
        "robust standard errors (HC3 by default; `robust_se` in the config).\n\n"
        "Runtime mode only (`regvet check --run`): the fit is run and the tests computed on its residuals. "
        "Satisfied by inference under a robust covariance."
    ),
    bad="""\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

rng = np.random.default_rng(11)
fare = rng.uniform(2.0, 9.0, 200)
crossings = pd.DataFrame({"fare": fare, "riders": 400 - 12 * fare + rng.normal(0, 1, 200) * fare**2})
res = smf.ols("riders ~ fare", data=crossings).fit()  # expect: heteroskedastic-plain-se
print(res.summary())
""",
    good="""\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

rng = np.random.default_rng(11)
fare = rng.uniform(2.0, 9.0, 200)
crossings = pd.DataFrame({"fare": fare, "riders": 400 - 12 * fare + rng.normal(0, 1, 200) * fare**2})
res = smf.ols("riders ~ fare", data=crossings).fit(cov_type="HC3")
print(res.summary())
""",
    check=check,
    references=(
        "Koenker, R. (1981). A note on studentizing a test for heteroscedasticity. J. Econometrics 17(1), 107-112.",
        "White, H. (1980). Econometrica 48(4), 817-838.",
        "Long, J. S. and Ervin, L. H. (2000). The American Statistician 54(3), 217-224 (HC3 in small samples).",
    ),
    needs_run=True,
    rejects="variance",
)
