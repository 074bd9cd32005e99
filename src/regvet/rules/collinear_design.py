"""collinear-design: collinearity between terms (generalized VIF) or a BKW dependence among two or more slopes."""

from __future__ import annotations

from collections.abc import Iterator
from typing import TYPE_CHECKING

from regvet.model.facts import Fit
from regvet.model.finding import Finding, Severity
from regvet.rules.base import Rule, RuleInput, once_per_root, opening
from regvet.rules.collinearity import CONDITION, PROPORTION, SCALED_GVIF, VIF, judged_dimension, old_index, worst_term
from regvet.rules.evidence import num, runs

if TYPE_CHECKING:
    from regvet.model.stats_schema import FitStatistics

__all__ = ["CONDITION", "PROPORTION", "RULE", "SCALED_GVIF", "VIF", "check"]


def check(inp: RuleInput) -> Iterator[Finding]:
    return once_per_root(inp, _judge)


def _names(names: list[str]) -> str:
    return ", ".join(f"`{n}`" for n in names)


def _dependence(s: FitStatistics) -> str | None:
    """A condition index above 30 that carries more than half the variance of two or more slopes
    that are not all in one term (a predictor with its own square, the dummies of one factor)."""
    ci = old_index(s)
    if ci is not None:  # a run from before the proportions were recorded: the index alone
        return f"a scaled condition index of {num(ci)}, above {CONDITION}"
    dim = judged_dimension(s)
    if dim is None:
        return None
    props = ", ".join(num(dim.proportions[n]) for n in dim.slopes)
    return (
        f"a scaled condition index of {num(dim.index)}, above {CONDITION}, carrying more than half the variance "
        f"of {_names(list(dim.slopes))} with Belsley-Kuh-Welsch proportions {props}"
    )


def _inflation(s: FitStatistics) -> str | None:
    """The term with the largest generalized VIF above the threshold (a plain VIF for one column)."""
    gvif = s.get("gvif")
    if gvif is not None and gvif.get("terms") is not None:
        worst = worst_term(s)
        if worst is None or not (worst.get("scaled") or 0.0) > SCALED_GVIF:
            return None
        if worst.get("df") == 1:
            return f"a VIF of {num(worst.get('gvif'))} for `{worst.get('term')}`, above {VIF}"
        return (
            f"a generalized VIF of {num(worst.get('gvif'))} for the term `{worst.get('term')}` of {worst.get('df')} "
            f"columns, {_names(worst.get('columns') or [])}, that is `GVIF^(1/(2·df))` = {num(worst.get('scaled'))}, "
            f"above √{VIF} = {num(SCALED_GVIF)}"
        )
    vifs = s.get("vif")  # a run from before generalized VIFs were recorded
    vif = vifs.get("max") if vifs is not None else None
    if vifs is not None and vif is not None and vif > VIF:
        return f"a VIF of {num(vif)} for `{vifs.get('variable')}`, above {VIF}"
    return None


def _judge(inp: RuleInput, fit: Fit) -> Finding | None:
    if not inp.uses(fit.id, ("estimate", "inference", "robust")) and not inp.escapes(fit.id):
        return None
    for s in runs(inp, fit.id):
        parts = [part for part in (_dependence(s), _inflation(s)) if part is not None]
        if not parts:
            continue
        return RULE.fit_finding(
            fit,
            f"{opening(fit)} has " + ", and ".join(parts) + ": some regressors are close to linear "
            "combinations of others, so their separate coefficients are poorly determined, with large standard "
            "errors and signs that flip with small changes in the data. Drop or combine redundant regressors, "
            "or interpret only the combinations the data can tell apart.",
        )
    return None


RULE = Rule(
    id="collinear-design",
    severity=Severity.WARNING,
    summary=(
        "The design is nearly collinear between terms: a generalized VIF above the usual threshold, or a "
        "condition index > 30 carrying most of the variance of two or more slopes."
    ),
    rationale=(
        "Collinearity is judged between the model's terms, never inside one: a predictor with its own "
        "powers (scaled or centred too, `I(x**2 / 100)`), any other function of it alone (`np.log(x)`, a "
        "function of the analyst's own), the interactions that contain it, and the dummies of one categorical "
        "form one term, "
        "and predictors joined by an interaction are one term (patsy's terms for a formula; for arrays, names "
        "such as `x**2`, `I(x**2)` or `x:z`): the near-dependence of x, z and x:z is built in by the "
        "interaction (centre x and z to see it go), not a property of the data. Each term gets the "
        "generalized VIF of Fox and Monette (1992); GVIF^(1/(2·df)) is compared with the square root of the "
        "usual VIF threshold of 10 (common practice; some use 5), so a one-column term is judged by its "
        "plain VIF.\n\n"
        "The condition index is computed as Belsley, Kuh and Welsch define it: from the singular values of "
        "the design with each column, the constant included, scaled to unit length (not statsmodels' raw "
        "`condition_number`, which depends on the units). Following their rule, an index above 30 counts "
        "only when its direction carries more than half (variance-decomposition proportion > 0.5) of the "
        "variance of at least two coefficients other than the intercept, not all in one term; the message "
        "names them. An index whose variance sits on the constant (regressors far from zero) is not "
        "flagged.\n\n"
        "Runtime mode only."
    ),
    bad="""\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

rng = np.random.default_rng(16)
fuel_price = rng.uniform(1.0, 2.0, 150)
crossings = pd.DataFrame({"fuel_price": fuel_price, "fuel_surcharge": 0.4 * fuel_price + rng.normal(0, 0.004, 150)})
crossings["riders"] = 300 - 20 * crossings["fuel_price"] + rng.normal(0, 5, 150)
res = smf.ols("riders ~ fuel_price + fuel_surcharge", data=crossings).fit(cov_type="HC3")  # expect: collinear-design
print(res.params)
""",
    good="""\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

rng = np.random.default_rng(16)
fuel_price = rng.uniform(1.0, 2.0, 150)
crossings = pd.DataFrame({"fuel_price": fuel_price, "wind_speed": rng.uniform(0, 30, 150)})
crossings["riders"] = 300 - 20 * crossings["fuel_price"] + rng.normal(0, 5, 150)
res = smf.ols("riders ~ fuel_price + wind_speed", data=crossings).fit(cov_type="HC3")
print(res.params)
""",
    check=check,
    references=(
        "Belsley, D. A., Kuh, E. and Welsch, R. E. (1980). Regression Diagnostics. Wiley.",
        "Fox, J. and Monette, G. (1992). Generalized collinearity diagnostics. JASA 87, 178-183.",
        "VIF > 10: common practice (e.g. Kutner et al., Applied Linear Statistical Models); see O'Brien, R. M. "
        "(2007), Quality & Quantity 41, 673-690, for a critique.",
    ),
    needs_run=True,
    rejects="collinearity",
)
