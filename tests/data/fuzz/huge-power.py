import statsmodels.formula.api as smf
res = smf.ols("riders ~ (fare + fuel)**1000000000", data=crossings).fit()
print(res.params)
