"""form-rejected: RESET rejects the functional form."""

from __future__ import annotations

from collections.abc import Iterator

from regvet.model.facts import Fit
from regvet.model.finding import Finding, Severity
from regvet.rules.base import Rule, RuleInput, describe_fit, once_per_root
from regvet.rules.evidence import in_runs, num, p, runs


def check(inp: RuleInput) -> Iterator[Finding]:
    return once_per_root(inp, _judge)


def _judge(inp: RuleInput, fit: Fit) -> Finding | None:
    alpha = inp.settings.alpha
    uses = inp.uses(fit.id, ("estimate", "inference", "robust"))
    stats = runs(inp, fit.id)
    if not uses or not stats:
        return None
    resets = [reset for s in stats if (reset := s.get("reset")) is not None]
    rejecting = [r for r in resets if (pvalue := r.get("pvalue")) is not None and pvalue < alpha]
    if not rejecting:
        return None
    r = rejecting[0]
    return RULE.fit_finding(
        fit,
        f"RESET F({r.get('df_num')}, {r.get('df_denom')}) = {num(r.get('f'))}, {p(r.get('pvalue'))}"
        f"{in_runs(len(rejecting), len(stats))}: powers of the fitted values of {describe_fit(fit)} still "
        "explain the outcome, so the linear form is wrong and every coefficient is suspect. Try logs, "
        "squares or interactions the theory suggests, and test again.",
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
    references=("Ramsey, J. B. (1969). JRSS B 31(2), 350-371.",),
    needs_run=True,
    rejects="form",
)
