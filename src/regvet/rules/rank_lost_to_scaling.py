"""rank-lost-to-scaling: statsmodels dropped a direction that the rescaled design has."""

from __future__ import annotations

from collections.abc import Iterator

from regvet.model.facts import Fit
from regvet.model.finding import Finding, Severity
from regvet.rules.base import Rule, RuleInput, once_per_root, opening
from regvet.rules.evidence import num, runs


def check(inp: RuleInput) -> Iterator[Finding]:
    return once_per_root(inp, _judge)


def _judge(inp: RuleInput, fit: Fit) -> Finding | None:
    for s in runs(inp, fit.id):
        refit = s.get("scaled_refit")
        if refit is None:
            continue
        k = s.get("k")
        return RULE.fit_finding(
            fit,
            f"{opening(fit)} has rank {refit.get('statsmodels_rank')} of {k} columns in statsmodels but rank "
            f"{refit.get('rank')} once its columns are centred and scaled, condition number "
            f"{num(refit.get('condition'))}: statsmodels dropped a real direction as rounding noise, so the "
            "coefficients, standard errors and residuals are not those of least squares. Centre or rescale the "
            "regressors, such as `year - 2000` for `year` in a polynomial; the statistics shown come from a correct fit in "
            "the scaled basis.",
        )
    return None


RULE = Rule(
    id="rank-lost-to-scaling",
    severity=Severity.ERROR,
    summary="statsmodels dropped a direction of the design that its rescaled columns have: the fit is truncated.",
    rationale=(
        "statsmodels decides the rank of the design on its raw columns (singular values below about 1e-15 "
        "of the largest count as zero, and the pseudo-inverse drops them). When the columns are on very "
        "different scales (1e-8 beside 1e8), or are powers of a variable far from zero (a cubic in calendar "
        "years, a high-degree polynomial in raw x), a direction the data has looks like rounding noise on "
        "that scale: statsmodels warns that the design is rank-deficient and reports a truncated fit. Its "
        "coefficients, standard errors and residuals are then not those of the least-squares fit, and "
        "every test computed from its residuals is off too. The runtime probe determines the rank itself "
        "on the design with its columns centred and scaled to unit length; when that rank is higher, it "
        "computes the statistics from the correct least-squares fit there and this rule reports the fit. "
        "A design that is exactly rank-deficient (x3 = x1 + x2) has the same rank on both scales and is "
        "not reported. Centring and rescaling the regressors (same column space, so the same fit) avoids "
        "the problem.\n\n"
        "Runtime mode only."
    ),
    bad="""\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

rng = np.random.default_rng(19)
year = np.arange(1986, 2026)
harbour = pd.DataFrame({"year": year})
harbour["tonnage"] = 50 + 0.8 * (year - 2005) - 0.02 * (year - 2005) ** 2 + rng.normal(0, 2, year.size)
res = smf.ols("tonnage ~ year + I(year**2) + I(year**3)", data=harbour).fit(cov_type="HC3")  # expect: rank-lost-to-scaling
print(res.params)
""",
    good="""\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

rng = np.random.default_rng(19)
year = np.arange(1986, 2026)
harbour = pd.DataFrame({"year": year})
harbour["tonnage"] = 50 + 0.8 * (year - 2005) - 0.02 * (year - 2005) ** 2 + rng.normal(0, 2, year.size)
res = smf.ols("tonnage ~ I(year - 2005) + I((year - 2005)**2) + I((year - 2005)**3)", data=harbour).fit(cov_type="HC3")
print(res.params)
""",
    check=check,
    references=(
        "Rank rule: numpy.linalg.matrix_rank and statsmodels' pinv (rcond 1e-15), as documented by numpy "
        "and statsmodels.",
        "Golub, G. H. and Van Loan, C. F. (2013). Matrix Computations, 4th ed., section 5.5 (rank-deficient least "
        "squares, column scaling).",
    ),
    needs_run=True,
)
