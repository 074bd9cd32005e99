import statsmodels.formula.api as smf
res = smf.ols("riders ~ (a + b + c + d + e + f + g + h + i + j + k + l)**50", data=crossings).fit()
print(res.params)
