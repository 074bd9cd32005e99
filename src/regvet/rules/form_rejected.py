"""form-rejected: RESET rejects the functional form."""

from __future__ import annotations

from collections.abc import Iterator

from regvet.model.facts import Fit
from regvet.model.finding import Finding, Severity
from regvet.rules.base import Rule, RuleInput, once_per_root, opening
from regvet.rules.evidence import in_runs, judged_reset, num, p, runs


def check(inp: RuleInput) -> Iterator[Finding]:
    return once_per_root(inp, _judge)


def _judge(inp: RuleInput, fit: Fit) -> Finding | None:
    alpha = inp.settings.alpha
    uses = inp.uses(fit.id, ("estimate", "inference", "robust"))
    stats = runs(inp, fit.id)
    if (not uses and not inp.escapes(fit.id)) or not stats:  # used, or passed to code regvet cannot read
        return None
    rejecting = []
    for s in stats:
        judged = judged_reset(s)
        if judged is not None and (pvalue := judged[1].get("pvalue")) is not None and pvalue < alpha:
            rejecting.append((s, *judged))
    if not rejecting:
        return None
    s, label, r = rejecting[0]
    reset = s.get("reset")
    name = f"Ramsey's RESET {label}" if label else "Ramsey's RESET"
    test = f"{name}, F({r.get('df_num')}, {r.get('df_denom')}) = {num(r.get('f'))}, {p(r.get('pvalue'))}"
    if label and reset is not None:
        test += f"; classical F = {num(reset.get('f'))}, {p(reset.get('pvalue'))}"
    runs_note = in_runs(len(rejecting), len(stats))
    if reset is not None and reset.get("dummies_only"):
        return RULE.fit_finding(
            fit,
            f"{opening(fit)} fails {test}{runs_note}: its regressors are all dummies, so what the test finds is "
            "categories whose effects are not additive, and the main effects alone misdescribe the cells. "
            "Add the interactions of the categories the theory suggests, and test again.",
            uses[:1],
        )
    return RULE.fit_finding(
        fit,
        f"{opening(fit)} fails {test}{runs_note}: powers of its fitted values still explain the outcome, so the "
        "linear form is wrong and every coefficient is suspect. Try logs, squares or interactions the theory "
        "suggests, and test again.",
        uses[:1],
    )


RULE = Rule(
    id="form-rejected",
    severity=Severity.WARNING,
    summary="Ramsey's RESET rejects the fit's functional form.",
    rationale=(
        "RESET adds the squared and cubed fitted values to the regression; if they matter (F test at "
        "`alpha`), the conditional mean is not linear in the regressors as written: a transformation, a "
        "power or an interaction is missing, and the estimates are biased.\n\n"
        "The test matches the fit: for a fit with robust covariance of type HC0 to HC3, RESET is the Wald test "
        "of the added powers with that same covariance, and the classical F is shown beside it. Under "
        "heteroskedasticity the classical F rejects a correct model far too often: about 32 % instead of 5 % "
        "in regvet's own simulation of a correct quadratic, against about 9 % for the HC3 form. When every "
        "regressor is a dummy, the only alternative RESET can detect is omitted interactions of the "
        "categories, and the message says so. When the powers add nothing to the design, as with fitted "
        "values that take two values or a saturated design of dummies, RESET is not identified and no "
        "p-value is reported.\n\n"
        "Runtime mode only. Satisfied when RESET does not reject (a specification that passes is not thereby "
        "right; it is just not caught by this test)."
    ),
    bad="""\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

rng = np.random.default_rng(12)
fare = rng.uniform(2.0, 9.0, 300)
crossings = pd.DataFrame({"fare": fare, "riders": np.exp(6.5 - 0.35 * fare + rng.normal(0, 0.05, 300))})
res = smf.ols("riders ~ fare", data=crossings).fit(cov_type="HC3")  # expect: form-rejected
print(res.params)
""",
    good="""\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

rng = np.random.default_rng(12)
fare = rng.uniform(2.0, 9.0, 300)
crossings = pd.DataFrame({"fare": fare, "riders": np.exp(6.5 - 0.35 * fare + rng.normal(0, 0.05, 300))})
res = smf.ols("np.log(riders) ~ fare", data=crossings).fit(cov_type="HC3")
print(res.params)
""",
    check=check,
    references=(
        "Ramsey, J. B. (1969). JRSS B 31(2), 350-371.",
        "Long, J. S. and Ervin, L. H. (2000). The American Statistician 54(3), 217-224 (HC3 in small samples).",
    ),
    needs_run=True,
    rejects="form",
)
