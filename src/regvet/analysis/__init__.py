"""Reading analysis code: the catalogue of statsmodels names, formulas, and the one-pass fact collector."""
