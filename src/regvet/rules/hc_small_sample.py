"""hc-small-sample: HC0 or HC1 standard errors in a small sample."""

from __future__ import annotations

from collections.abc import Iterator

from regvet.model.finding import Finding, Severity
from regvet.rules.base import Rule, RuleInput, opening
from regvet.rules.evidence import runs

SMALL_N = 250  # Long and Ervin (2000)


def check(inp: RuleInput) -> Iterator[Finding]:
    for fit in inp.judged_fits():
        for s in runs(inp, fit.id):
            cov = str(s.get("cov_type") or "").upper()
            n = s.get("nobs")
            if cov in ("HC0", "HC1") and n is not None and n < SMALL_N:
                yield RULE.fit_finding(
                    fit,
                    f"{opening(fit)} uses {cov} standard errors with only n = {n:g}, so they are likely too small: "
                    "below about 250 observations HC0 and HC1 understate the sampling variance. "
                    'Use HC3, as Long and Ervin 2000 recommend: `.fit(cov_type="HC3")`.',
                )
                break


RULE = Rule(
    id="hc-small-sample",
    severity=Severity.INFO,
    summary="HC0 or HC1 robust standard errors with fewer than 250 observations.",
    rationale=(
        "White's HC0 estimator, and HC1 (HC0 scaled by n/(n − k)), are biased downwards in small samples, "
        "because high-leverage observations have small residuals. In Long and Ervin's simulations HC3 "
        "performed best, and they recommend it, especially when n < 250.\n\n"
        "Runtime mode only (the sample size is known once the fit has run)."
    ),
    bad="""\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

rng = np.random.default_rng(14)
fare = rng.uniform(2.0, 9.0, 80)
crossings = pd.DataFrame({"fare": fare, "riders": 300 - 10 * fare + rng.normal(0, 5, 80)})
res = smf.ols("riders ~ fare", data=crossings).fit(cov_type="HC1")  # expect: hc-small-sample
print(res.summary())
""",
    good="""\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

rng = np.random.default_rng(14)
fare = rng.uniform(2.0, 9.0, 80)
crossings = pd.DataFrame({"fare": fare, "riders": 300 - 10 * fare + rng.normal(0, 5, 80)})
res = smf.ols("riders ~ fare", data=crossings).fit(cov_type="HC3")
print(res.summary())
""",
    check=check,
    references=(
        "Long, J. S. and Ervin, L. H. (2000). The American Statistician 54(3), 217-224.",
        "MacKinnon, J. G. and White, H. (1985). J. Econometrics 29(3), 305-325.",
    ),
    needs_run=True,
)
