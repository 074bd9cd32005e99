import statsmodels.formula.api as smf
res = smf.ols("riders ~ a * b * c * d * e * f * g * h * i * j * k * l * m * n * o * p * q * r * s * t", data=crossings).fit()
print(res.params)
