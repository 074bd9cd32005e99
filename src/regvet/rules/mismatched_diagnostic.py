"""mismatched-diagnostic: a diagnostic fed inputs from two different fits."""

from __future__ import annotations

from collections.abc import Iterator

from regvet.model.finding import Finding, Severity
from regvet.rules.base import Rule, RuleInput, code_name, describe_fit, listed, related


def check(inp: RuleInput) -> Iterator[Finding]:
    for mm in inp.facts.mismatches:
        if mm.loc.path is not None:
            continue
        roots = sorted({inp.facts.root(f) for f in mm.fits})
        fits = [inp.facts.fit(r) for r in roots]
        names = listed([describe_fit(f) for f in fits], limit=3)
        one = code_name(inp.facts.fit(inp.facts.root(mm.fits[0])))
        yield RULE.finding(
            mm.loc.span,
            f"This `{mm.function}` call takes its inputs from different fits, {names}, so it tests neither model "
            f"and neither counts as checked. Pass the residuals and the design of one fit, such as "
            f"`{one}.resid, {one}.model.exog`.",
            [related(f.site, f"{describe_fit(f)} is fitted here") for f in fits[:4]],
            fits=tuple(f.id for f in fits),
        )


RULE = Rule(
    id="mismatched-diagnostic",
    severity=Severity.ERROR,
    summary="A diagnostic mixes inputs from two different fits.",
    rationale=(
        "Diagnostics such as `het_breuschpagan(resid, exog)` or `het_white(resid, exog)` test one model: "
        "its residuals against its own regressors. Residuals of one fit with the design of another (a common "
        "copy-and-paste slip in long scripts) produce a number that tests nothing, and the model that was "
        "meant to be checked stays unchecked. The finding is on the diagnostic call."
    ),
    bad="""\
import pandas as pd
import statsmodels.api as sm
from statsmodels.stats.diagnostic import het_breuschpagan

crossings = pd.read_csv("crossings.csv")
X1 = sm.add_constant(crossings[["fare"]])
X2 = sm.add_constant(crossings[["fare", "fuel_price"]])
res1 = sm.OLS(crossings["riders"], X1).fit()
res2 = sm.OLS(crossings["riders"], X2).fit()
print(het_breuschpagan(res2.resid, res1.model.exog))  # expect: mismatched-diagnostic
""",
    good="""\
import pandas as pd
import statsmodels.api as sm
from statsmodels.stats.diagnostic import het_breuschpagan

crossings = pd.read_csv("crossings.csv")
X2 = sm.add_constant(crossings[["fare", "fuel_price"]])
res2 = sm.OLS(crossings["riders"], X2).fit()
print(het_breuschpagan(res2.resid, res2.model.exog))
""",
    check=check,
)
