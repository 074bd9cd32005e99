"""break-rejected: a Chow test at a configured break candidate rejects."""

from __future__ import annotations

from collections.abc import Iterator

from regvet.model.facts import Fit
from regvet.model.finding import Finding, Severity
from regvet.rules.base import Rule, RuleInput, once_per_root, opening
from regvet.rules.evidence import num, p, runs


def check(inp: RuleInput) -> Iterator[Finding]:
    return once_per_root(inp, _judge)


def _judge(inp: RuleInput, fit: Fit) -> Finding | None:
    alpha = inp.settings.alpha
    if not inp.uses(fit.id, ("estimate", "inference", "robust")) and not inp.escapes(fit.id):
        return None
    for s in runs(inp, fit.id):
        rejected = [c for c in s.get("chow") or [] if (pv := c.get("pvalue")) is not None and pv < alpha]
        if not rejected:
            continue
        c = rejected[0]
        return RULE.fit_finding(
            fit,
            f"{opening(fit)} has coefficients that differ across the break at `{c.get('candidate')}` by the Chow test over "
            f"{c.get('groups')} groups, F({c.get('df_num')}, {c.get('df_denom')}) = {num(c.get('f'))}, "
            f"{p(c.get('pvalue'))}, so one pooled set describes neither side. Fit the groups separately, or "
            "interact the regressors with the group and test the interactions with robust standard errors, "
            "since this test assumes equal error variances.",
        )
    return None


RULE = Rule(
    id="break-rejected",
    severity=Severity.WARNING,
    summary="A Chow test at a configured break candidate rejects equal coefficients.",
    rationale=(
        "For each entry of the config's `break_candidates` (a column, whose values split the sample, or a "
        "pandas query expression, which splits it into the rows where it holds and the rest), the fit is "
        "re-estimated on each part and the Chow F statistic compares the pooled SSR with the sum of the "
        "parts' SSRs. A rejection means the relationship changed across the break.\n\n"
        "The degrees of freedom come from the ranks each group's regression identifies (a regressor constant "
        "within a group, or a group with fewer rows than parameters, identifies fewer). There is no test at a "
        "candidate with which the model already interacts every regressor, since that model is already the "
        "unrestricted one, and none for a candidate the fit's data does not have (a column of another data "
        "frame): such a candidate is for other fits.\n\n"
        "Runtime mode only. The Chow test assumes equal error variances across groups; under "
        "heteroskedasticity prefer a robust Wald test of the interactions."
    ),
    bad="""\
# regvet config for this example: break_candidates = ["post_timetable"]
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

rng = np.random.default_rng(18)
n = 200
crossings = pd.DataFrame({"fare": rng.uniform(2, 9, n), "post_timetable": np.repeat([0, 1], n // 2)})
slope = np.where(crossings["post_timetable"] == 1, -25.0, -10.0)
crossings["riders"] = 400 + slope * crossings["fare"] + rng.normal(0, 5, n)
res = smf.ols("riders ~ fare", data=crossings).fit(cov_type="HC3")  # expect: break-rejected
print(res.params)
""",
    good="""\
# regvet config for this example: break_candidates = ["post_timetable"]
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

rng = np.random.default_rng(18)
n = 200
crossings = pd.DataFrame({"fare": rng.uniform(2, 9, n), "post_timetable": np.repeat([0, 1], n // 2)})
crossings["riders"] = 400 - 10 * crossings["fare"] + rng.normal(0, 5, n)
res = smf.ols("riders ~ fare", data=crossings).fit(cov_type="HC3")
print(res.params)
""",
    check=check,
    references=("Chow, G. C. (1960). Econometrica 28(3), 591-605.",),
    needs_run=True,
    rejects="breaks",
)
