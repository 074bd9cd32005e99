"""heteroskedastic-plain-se: a heteroskedasticity test rejects, and inference still uses the usual SEs."""

from __future__ import annotations

from collections.abc import Iterator
from typing import TYPE_CHECKING

from regvet.model.finding import Finding, Severity
from regvet.rules.base import Rule, RuleInput, opening
from regvet.rules.evidence import changed_coefficients, coefficient_clause, in_runs, num, p, runs

if TYPE_CHECKING:
    from regvet.model.stats_schema import FitStatistics


def check(inp: RuleInput) -> Iterator[Finding]:
    alpha = inp.settings.alpha
    for fit in inp.judged_fits():
        if fit.cov_type != "nonrobust":
            continue
        uses = inp.uses(fit.id, ("inference",))
        stats = runs(inp, fit.id)
        if (not uses and not inp.escapes(fit.id)) or not stats:  # used, or passed to code regvet cannot read
            continue
        tests = f"its usual t tests in `{uses[0].member}`" if uses else "its usual t tests"
        judged = [(s, verdict) for s in stats if (verdict := _verdict(s, alpha)) is not None]
        if not judged:
            continue
        # The run where both tests reject decides when there is one; else the first run where one does.
        s, (text, both) = next(((s, v) for s, v in judged if v[1]), judged[0])
        where = in_runs(len(judged), len(stats))
        if both:
            message = (
                f"{opening(fit)} fails {text}{where}, so its error variance is not constant and {tests} "
                f"are not valid; {coefficient_clause(s)}. "
                'Report robust standard errors: `.fit(cov_type="HC3")`.'
            )
        else:
            changes = (
                coefficient_clause(s)
                if changed_coefficients(s)
                else "no coefficient changes significance at 5 % under robust standard errors"
            )
            message = (
                f"{opening(fit)} may have an error variance that is not constant: {text}{where}, so {tests} "
                f"may not be valid; {changes}. "
                'Report robust standard errors, `.fit(cov_type="HC3")`: they are valid whether it is or not.'
            )
        finding = RULE.fit_finding(fit, message, uses)
        yield finding if both else finding.with_(severity=Severity.WARNING)


def _verdict(s: FitStatistics, alpha: float) -> tuple[str, bool] | None:
    """(what the tests of one run say, whether it is decisive) when either test rejects, else None.

    Breusch-Pagan in Koenker's form is the primary test; White's test is shown beside it. Decisive:
    Breusch-Pagan rejects and White's test rejects too, or could not be computed."""
    bp, white = s.get("breusch_pagan"), s.get("white")
    bp_p = bp.get("lm_pvalue") if bp is not None else None
    white_p = white.get("lm_pvalue") if white is not None else None
    bp_rejects = bp_p is not None and bp_p < alpha
    white_rejects = white_p is not None and white_p < alpha
    if not (bp_rejects or white_rejects):
        return None
    bp_name = "Breusch-Pagan in Koenker's form"
    white_name = "White's test" if white is None or white.get("form") == "full" else "White's special test"
    bp_stat = f"LM = {num(bp.get('lm') if bp else None)}, {p(bp_p)}"
    white_stat = f"LM = {num(white.get('lm') if white else None)}, {p(white_p)}"
    if bp_rejects and white_rejects:
        return f"{bp_name}, {bp_stat}, and {white_name}, {white_stat}", True
    if bp_rejects and white_p is None:
        return f"{bp_name}, {bp_stat}", True
    if bp_rejects:
        return f"only {bp_name} rejects, {bp_stat}; {white_name} does not, {white_stat}", False
    if bp_p is None:
        return f"only {white_name} rejects, {white_stat}; {bp_name} could not be computed", False
    return f"only {white_name} rejects, {white_stat}; {bp_name} does not, {bp_stat}", False


RULE = Rule(
    id="heteroskedastic-plain-se",
    severity=Severity.ERROR,
    summary="Breusch-Pagan rejects constant variance (White's test beside it) while the fit's inference uses the usual covariance.",
    rationale=(
        "When the error variance is not constant, the usual OLS standard errors are inconsistent, and the t "
        "tests, p-values and intervals built on them can be far off. One test decides: Breusch-Pagan in "
        "Koenker's studentized form, at `alpha`; White's test is shown beside it. When both reject the finding "
        "is an error; when only one of the two rejects, the message says which and the finding is a warning. "
        "Breusch-Pagan is the primary test because it has few degrees of freedom and keeps its power in "
        "small samples, while White's test, with every square and cross-product, spends many. The finding "
        "names the coefficients whose 5 % significance changes under robust standard errors (HC3 by default; "
        "`robust_se` in the config).\n\n"
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
