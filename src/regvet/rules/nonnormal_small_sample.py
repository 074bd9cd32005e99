"""nonnormal-small-sample: few residual degrees of freedom, non-normal errors, exact t inference."""

from __future__ import annotations

from collections.abc import Iterator

from regvet.model.finding import Finding, Severity
from regvet.rules.base import Rule, RuleInput, opening
from regvet.rules.evidence import num, p, runs

SMALL_DF = 30  # common practice; no published threshold


def check(inp: RuleInput) -> Iterator[Finding]:
    alpha = inp.settings.alpha
    for fit in inp.judged_fits():
        uses = inp.uses(fit.id, ("inference",))
        if not uses:
            continue
        for s in runs(inp, fit.id):
            jb = s.get("jarque_bera")
            df = s.get("df_resid")
            pvalue = jb.get("pvalue") if jb is not None else None
            if jb is None or df is None or df >= SMALL_DF or not s.get("use_t") or pvalue is None or pvalue >= alpha:
                continue
            yield RULE.fit_finding(
                fit,
                f"{opening(fit)} has non-normal errors, Jarque-Bera = {num(jb.get('statistic'))}, {p(pvalue)}, "
                f"skewness {num(jb.get('skew'))}, kurtosis {num(jb.get('kurtosis'))}, and only {df:g} residual "
                "degrees of freedom, so its exact t and F p-values, which assume normal errors, are unreliable. "
                "Treat them as rough, or use a bootstrap.",
                uses[:1],
            )
            break


RULE = Rule(
    id="nonnormal-small-sample",
    severity=Severity.WARNING,
    summary="n − k < 30 and Jarque-Bera rejects normality while exact t inference is reported.",
    rationale=(
        "The t and F distributions of OLS test statistics are exact only under normal errors. In large "
        "samples that hardly matters (asymptotic normality), but with fewer than about 30 residual degrees "
        "of freedom (common practice, not a published threshold) non-normal errors make the reported "
        "p-values unreliable. Jarque-Bera is itself an asymptotic test with poor size in small samples, so "
        "a rejection here is a reason for caution, not a verdict.\n\n"
        "Runtime mode only."
    ),
    bad="""\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

rng = np.random.default_rng(13)
fare = rng.uniform(2.0, 9.0, 24)
crossings = pd.DataFrame({"fare": fare, "riders": 300 - 10 * fare + rng.exponential(40, 24) ** 1.5})
res = smf.ols("riders ~ fare", data=crossings).fit()  # expect: nonnormal-small-sample
print(res.summary())
""",
    good="""\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

rng = np.random.default_rng(13)
fare = rng.uniform(2.0, 9.0, 24)
crossings = pd.DataFrame({"fare": fare, "riders": 300 - 10 * fare + rng.normal(0, 5, 24)})
res = smf.ols("riders ~ fare", data=crossings).fit()
print(res.summary())
""",
    check=check,
    references=(
        "Jarque, C. M. and Bera, A. K. (1987). International Statistical Review 55(2), 163-172.",
        "The 30 degrees of freedom threshold is common practice.",
    ),
    needs_run=True,
    rejects="normality",
)
