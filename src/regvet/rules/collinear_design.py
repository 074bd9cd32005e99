"""collinear-design: a near-singular design (scaled condition index > 30 or a VIF > 10)."""

from __future__ import annotations

from collections.abc import Iterator

from regvet.model.facts import Fit
from regvet.model.finding import Finding, Severity
from regvet.rules.base import Rule, RuleInput, describe_fit, once_per_root
from regvet.rules.evidence import num, runs

CONDITION = 30  # Belsley, Kuh and Welsch (1980)
VIF = 10  # common practice


def check(inp: RuleInput) -> Iterator[Finding]:
    return once_per_root(inp, _judge)


def _judge(inp: RuleInput, fit: Fit) -> Finding | None:
    if not inp.uses(fit.id, ("estimate", "inference", "robust")):
        return None
    for s in runs(inp, fit.id):
        index, vifs = s.get("condition_index"), s.get("vif")
        ci = index.get("value") if index is not None else None
        vif = vifs.get("max") if vifs is not None else None
        var = vifs.get("variable") if vifs is not None else None
        parts = []
        if ci is not None and ci > CONDITION:
            parts.append(f"the scaled condition index is {num(ci)} (above {CONDITION})")
        if vif is not None and vif > VIF:
            parts.append(f"`{var}` has a VIF of {num(vif)} (above {VIF})")
        if not parts:
            continue
        return RULE.fit_finding(
            fit,
            f"In {describe_fit(fit)}, " + " and ".join(parts) + ": some regressors are close to linear "
            "combinations of others, so their separate coefficients are poorly determined (large standard "
            "errors, signs that flip with small changes in the data). Drop or combine redundant regressors, "
            "or interpret only the combinations the data can tell apart.",
        )
    return None


RULE = Rule(
    id="collinear-design",
    severity=Severity.WARNING,
    summary="The design is nearly collinear: scaled condition index > 30 or a VIF > 10.",
    rationale=(
        "The condition index is computed as Belsley, Kuh and Welsch define it: on the design with each "
        "column, the constant included, scaled to unit length (not statsmodels' raw `condition_number`, "
        "which depends on the units). An index above 30 signals a moderate to strong near-dependence. A "
        "variance inflation factor above 10 is a common rule of thumb (some use 5).\n\n"
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
        "VIF > 10: common practice (e.g. Kutner et al., Applied Linear Statistical Models); see O'Brien, R. M. "
        "(2007), Quality & Quantity 41, 673-690, for a critique.",
    ),
    needs_run=True,
    rejects="collinearity",
)
