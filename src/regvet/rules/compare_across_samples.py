"""compare-across-samples: compared fits used different observations."""

from __future__ import annotations

from collections.abc import Iterator

from regvet.model.finding import Finding, Severity
from regvet.rules.base import Rule, RuleInput, describe_fit, listed, related
from regvet.rules.evidence import fingerprint, runs


def check(inp: RuleInput) -> Iterator[Finding]:
    for comp in inp.facts.comparisons:
        if comp.loc.path is not None:
            continue
        fits = [inp.facts.fit(r) for r in sorted({inp.facts.root(fid) for fid, _ in comp.measures})]
        seen: dict[str, tuple] = {}
        for fit in fits:
            stats = runs(inp, fit.id)
            if len(stats) == 1:  # a fit run several times has no single sample
                seen[fit.result_name or str(fit.id)] = (fit, fingerprint(stats[0]), stats[0].get("nobs"))
        if len({v[1] for v in seen.values()}) < 2:
            continue
        sizes = listed([f"{describe_fit(f)} on {n}" for f, _, n in seen.values()], limit=4)
        yield RULE.finding(
            comp.loc.span,
            f"This comparison is between fits estimated on different observations, {sizes} rows, so their fit "
            "measures do not compare like with like. Fit every model on the same rows: drop missing values once, "
            "for all the variables involved.",
            [related(f.site, f"{describe_fit(f)} used {n} observations") for f, _, n in seen.values()],
            fits=tuple(f.id for f, _, _ in seen.values()),
        )


RULE = Rule(
    id="compare-across-samples",
    severity=Severity.ERROR,
    summary="Compared fits used different observations (e.g. missing values dropped differently).",
    rationale=(
        "statsmodels drops rows with missing values in the variables of each model separately. Two models "
        "with different regressors can therefore be fitted on different samples, and their R², AIC, BIC, "
        "log-likelihoods and F tests no longer compare like with like.\n\n"
        "Runtime mode only: the rows each fit used are recorded when it runs."
    ),
    bad="""\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

rng = np.random.default_rng(15)
n = 120
crossings = pd.DataFrame({"fare": rng.uniform(2, 9, n), "wind_speed": rng.uniform(0, 30, n)})
crossings["riders"] = 300 - 10 * crossings["fare"] - 2 * crossings["wind_speed"] + rng.normal(0, 5, n)
crossings.loc[::7, "wind_speed"] = np.nan
small = smf.ols("riders ~ fare", data=crossings).fit()
large = smf.ols("riders ~ fare + wind_speed", data=crossings).fit()
better = large.aic < small.aic  # expect: compare-across-samples
""",
    good="""\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

rng = np.random.default_rng(15)
n = 120
crossings = pd.DataFrame({"fare": rng.uniform(2, 9, n), "wind_speed": rng.uniform(0, 30, n)})
crossings["riders"] = 300 - 10 * crossings["fare"] - 2 * crossings["wind_speed"] + rng.normal(0, 5, n)
crossings.loc[::7, "wind_speed"] = np.nan
complete = crossings.dropna(subset=["riders", "fare", "wind_speed"])
small = smf.ols("riders ~ fare", data=complete).fit()
large = smf.ols("riders ~ fare + wind_speed", data=complete).fit()
better = large.aic < small.aic
""",
    check=check,
    needs_run=True,
    compares_fits=True,
)
