# -*- coding: undefined -*-
import statsmodels.formula.api as smf
res = smf.ols('riders ~ fare', data=crossings).fit()
