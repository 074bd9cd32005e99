"""no-form-test: estimates used without a functional-form test."""

from __future__ import annotations

from collections.abc import Iterator

from regvet.model.facts import Fit
from regvet.model.finding import Finding, Severity
from regvet.rules.base import QuickFix, Rule, RuleInput, code_name, missing_check, once_per_root, opening


def check(inp: RuleInput) -> Iterator[Finding]:
    return once_per_root(inp, _judge)


def _judge(inp: RuleInput, fit: Fit) -> Finding | None:
    members = inp.facts.same_residuals(fit.id)
    uses = [u for m in sorted(members) for u in inp.uses(m, ("estimate", "inference", "robust"))]
    escapes = [e for m in sorted(members) for e in inp.escapes(m)]
    if not uses and not escapes:
        return None
    if inp.checks(fit.id, "form"):
        return None
    root = inp.facts.fit(inp.facts.root(fit.id))
    target = root if root.site.path is None else fit
    used = f" (`{uses[0].member}`, {inp.where(uses[0].loc)})" if uses else ""
    return missing_check(
        RULE,
        target,
        f"{opening(target)} has its estimates used{used} but no functional-form test, so its coefficients "
        "assume the outcome is linear in these regressors. "
        f"Run `{inp.call('linear_reset')}({code_name(target)}, power=3, use_f=True)` and revisit the "
        "specification if RESET rejects.",
        uses,
        escapes,
    )


RULE = Rule(
    id="no-form-test",
    severity=Severity.WARNING,
    summary="An OLS fit's estimates are used, but no functional-form test was applied to it.",
    rationale=(
        "OLS estimates are only meaningful if the conditional mean is correctly specified: the outcome is "
        "linear in the regressors as written, with no omitted powers, interactions or transformations. "
        "A misspecified form biases every coefficient, and no standard-error correction repairs that.\n\n"
        "Satisfied by: `linear_reset` (Ramsey's RESET; powers 2 and 3 of the fitted values are the usual "
        "choice), `linear_harvey_collier`, `linear_rainbow`, `linear_lm`, or a hand-made RESET (an auxiliary "
        "regression that adds powers of the fit's fitted values), applied to the same fit. "
        "A function regvet cannot read that runs the test can be declared under `diagnostic_helpers`."
    ),
    bad="""\
import pandas as pd
import statsmodels.formula.api as smf

crossings = pd.read_csv("crossings.csv")
res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()  # expect: no-form-test
print(res.params)
""",
    good="""\
import pandas as pd
import statsmodels.formula.api as smf
from statsmodels.stats.diagnostic import linear_reset

crossings = pd.read_csv("crossings.csv")
res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
print(linear_reset(res, power=3, use_f=True))
print(res.params)
""",
    check=check,
    references=(
        "Ramsey, J. B. (1969). Tests for specification errors in classical linear least-squares regression "
        "analysis. JRSS B 31(2), 350-371.",
        "statsmodels: statsmodels.stats.diagnostic.linear_reset (returns a Wald chi-square unless use_f=True).",
    ),
    family="form",
    quick_fixes=(QuickFix.INSERT_RESET,),
)
