"""r2-unadjusted-compare: plain R² compared between fits with different numbers of regressors."""

from __future__ import annotations

from collections.abc import Iterator

from regvet.model.finding import Finding, Severity
from regvet.rules.base import Rule, RuleInput, describe_fit, related


def _and(numbers: list) -> str:
    words = [str(n) for n in numbers]
    return words[0] if len(words) == 1 else ", ".join(words[:-1]) + " and " + words[-1]


def check(inp: RuleInput) -> Iterator[Finding]:
    for comp in inp.facts.comparisons:
        if comp.loc.path is not None:
            continue
        r2_fits = sorted({inp.facts.root(fid) for fid, m in comp.measures if m == "rsquared"})
        groups: dict[str, list] = {}
        for fid in r2_fits:
            fit = inp.facts.fit(fid)
            if fit.outcome is None or fit.n_regressors is None or fit.auxiliary:
                continue
            groups.setdefault(fit.outcome.key, []).append(fit)
        for outcome, fits in sorted(groups.items()):
            sizes = sorted({f.n_regressors for f in fits})
            if len(sizes) < 2:
                continue
            yield RULE.finding(
                comp.loc.span,
                f"This compares plain R² between fits of `{outcome}` with {_and(sizes)} regressors, but R² "
                "never falls when a regressor is added, so it favours the larger model whatever the regressors "
                "are worth. Compare `rsquared_adj`, AIC or BIC, or test the extra terms with `anova_lm(small, large)`.",
                [related(f.site, f"{describe_fit(f)} has {f.n_regressors} regressors") for f in fits[:6]],
                fits=tuple(f.id for f in fits),
            )


RULE = Rule(
    id="r2-unadjusted-compare",
    severity=Severity.WARNING,
    summary="Plain R² is compared between fits of the same outcome with different numbers of regressors.",
    rationale=(
        "Adding a regressor can only raise R² (or leave it unchanged), even a regressor of pure noise. "
        "Ranking nested or differently sized models by plain R² therefore always picks the biggest. "
        "Adjusted R², AIC and BIC charge for each parameter; an F test asks whether the extra terms matter.\n\n"
        "Regressors are counted as formula terms (a `C(...)` term counts once) or columns of a literal "
        "column list."
    ),
    bad="""\
import pandas as pd
import statsmodels.formula.api as smf

crossings = pd.read_csv("crossings.csv")
small = smf.ols("riders ~ fare", data=crossings).fit()
large = smf.ols("riders ~ fare + fuel_price + wind_speed", data=crossings).fit()
if large.rsquared > small.rsquared:  # expect: r2-unadjusted-compare
    print("larger model wins")
""",
    good="""\
import pandas as pd
import statsmodels.formula.api as smf

crossings = pd.read_csv("crossings.csv")
small = smf.ols("riders ~ fare", data=crossings).fit()
large = smf.ols("riders ~ fare + fuel_price + wind_speed", data=crossings).fit()
if large.rsquared_adj > small.rsquared_adj:
    print("larger model wins")
""",
    check=check,
    references=("Theil, H. (1961). Economic Forecasts and Policy (adjusted R²) (from memory).",),
    compares_fits=True,
)
