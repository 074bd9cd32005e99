"""Generated analysis scripts of a given length (an invented ferry-ridership study), for the benchmarks."""

from __future__ import annotations

HEAD = """\
import numpy as np
import pandas as pd
import statsmodels.api as sm
import statsmodels.formula.api as smf
from statsmodels.stats.diagnostic import acorr_breusch_godfrey, het_breuschpagan, linear_reset

crossings = pd.read_csv("crossings.csv", parse_dates=["week"])
"""


def block(i: int) -> str:
    """About 30 lines of a route study. Every fifth block leaves one fit unchecked (two findings)."""
    unchecked = i % 5 == 4
    checks = (
        ""
        if unchecked
        else f"""print(linear_reset(log_{i}, power=3, use_f=True))
print(het_breuschpagan(log_{i}.resid, log_{i}.model.exog))
"""
    )
    return f"""
# --- block {i}: route r{i % 7} ---
sub_{i} = crossings[crossings["route"] == "r{i % 7}"]
res_{i} = smf.ols("riders ~ fare + fuel_price + wind_speed", data=sub_{i}).fit()
reset_{i} = linear_reset(res_{i}, power=3, use_f=True)
bp_{i} = het_breuschpagan(res_{i}.resid, res_{i}.model.exog)
if bp_{i}[1] < 0.05:
    res_{i} = smf.ols("riders ~ fare + fuel_price + wind_speed", data=sub_{i}).fit(cov_type="HC3")
    print(linear_reset(res_{i}, power=3, use_f=True))
X_{i} = sm.add_constant(sub_{i}[["fare", "fuel_price"]])
alt_{i} = sm.OLS(sub_{i}["riders"], X_{i}).fit(cov_type="HC3")
print(linear_reset(alt_{i}, power=3, use_f=True))
models_{i} = {{"main": res_{i}, "alt": alt_{i}}}
for name, m in models_{i}.items():
    print(name, m.params["fare"], m.bse["fare"])
    print(acorr_breusch_godfrey(m, nlags=4))
best_{i} = min(models_{i}.values(), key=lambda r: r.bic)


def helper_{i}(df):
    return smf.ols("np.log(riders) ~ fare + fuel_price", data=df).fit()


log_{i} = helper_{i}(sub_{i})
{checks}print(acorr_breusch_godfrey(log_{i}, nlags=4))
print(log_{i}.summary())
"""


def script(lines: int) -> str:
    """A script of at least ``lines`` lines, with fits, checks, loops, helpers and comparisons."""
    text = HEAD
    i = 0
    while text.count("\n") < lines:
        text += block(i)
        i += 1
    return text
