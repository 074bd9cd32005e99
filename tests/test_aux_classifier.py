"""The auxiliary-regression classifier, one row per case: which fits a model is auxiliary to, and for what.

A model built from another fit's pieces is a check done by hand when its shape is a known test's
auxiliary regression: squared residuals on the regressors (variance: Breusch-Pagan/White), powers
of the fitted values added (functional form: RESET), residuals on their own lag (serial
correlation: Breusch-Godfrey). Any other use of a fit's pieces makes the model auxiliary
("other") without checking anything. The classifier is pure: rows give tags, never code.
"""

from __future__ import annotations

import pytest

from regvet.analysis import tags
from regvet.analysis.auxiliary import CHECK_LABELS, FORM, OTHER, SERIAL, VARIANCE, classify_arrays, classify_formula
from regvet.analysis.formula import parse_formula
from regvet.model.facts import Outcome

RESID, RESIDSQ, FITTED, FITTEDPOW = tags.RESID, tags.RESID_SQUARED, tags.FITTED, tags.FITTED_POWER


def _part(fid: int, name: str) -> tags.Tag:
    return tags.result_part(fid, name)


# (id, formula, {column: [(fit id, part), ...]}, expected {family: {fit ids}})
FORMULA_ROWS = [
    # variance: squared residuals on the left
    ("variance-squared-column", "e2 ~ fare + wind", {"e2": [(1, RESIDSQ)]}, {VARIANCE: {1}}),
    ("variance-squared-in-formula", "I(e**2) ~ fare + wind", {"e": [(1, RESID)]}, {VARIANCE: {1}}),
    ("variance-np-square", "np.square(e) ~ fare", {"e": [(1, RESID)]}, {VARIANCE: {1}}),
    ("variance-np-power", "np.power(e, 2) ~ fare", {"e": [(1, RESID)]}, {VARIANCE: {1}}),
    ("not-variance-plain-residuals", "e ~ fare + wind", {"e": [(1, RESID)]}, {OTHER: {1}}),
    ("not-variance-squared-on-right", "fare ~ e2", {"e2": [(1, RESIDSQ)]}, {OTHER: {1}}),
    ("not-variance-power-one", "I(e**1) ~ fare", {"e": [(1, RESID)]}, {OTHER: {1}}),
    # form: powers of fitted values on the right
    ("form-power-columns", "riders ~ fare + f2 + f3", {"f2": [(1, FITTEDPOW)], "f3": [(1, FITTEDPOW)]}, {FORM: {1}}),
    ("form-squared-in-formula", "riders ~ fare + I(f**2)", {"f": [(1, FITTED)]}, {FORM: {1}}),
    ("form-np-power", "riders ~ fare + np.power(f, 3)", {"f": [(1, FITTED)]}, {FORM: {1}}),
    ("not-form-plain-fitted", "riders ~ fare + f", {"f": [(1, FITTED)]}, {OTHER: {1}}),
    ("not-form-power-on-left", "f2 ~ fare", {"f2": [(1, FITTEDPOW)]}, {OTHER: {1}}),
    ("not-form-name-inside-longer-name", "riders ~ fare + I(ff**2) + f", {"f": [(1, FITTED)]}, {OTHER: {1}}),
    # serial: residuals on their own lag (the left side's residuals are merely auxiliary)
    ("serial-own-lag", "e ~ e_lag", {"e": [(1, RESID)], "e_lag": [(1, RESID)]}, {SERIAL: {1}, OTHER: {1}}),
    (
        "serial-with-regressors",
        "e ~ e_lag + fare",
        {"e": [(3, RESID)], "e_lag": [(3, RESID)]},
        {SERIAL: {3}, OTHER: {3}},
    ),
    ("not-serial-other-fits-residuals", "e ~ e_lag", {"e": [(1, RESID)], "e_lag": [(2, RESID)]}, {OTHER: {1, 2}}),
    ("not-serial-left-is-data", "riders ~ e_lag", {"e_lag": [(1, RESID)]}, {OTHER: {1}}),
    # nothing from a fit in the columns the formula reads
    ("plain-model", "riders ~ fare + wind", {}, {}),
    ("column-not-in-formula", "riders ~ fare", {"e": [(1, RESID)]}, {}),
]


@pytest.mark.parametrize(
    "formula_text, columns, expected", [r[1:] for r in FORMULA_ROWS], ids=[r[0] for r in FORMULA_ROWS]
)
def test_formula_models(formula_text, columns, expected):
    formula = parse_formula(formula_text)
    assert formula is not None
    sources = {col: {_part(fid, name) for fid, name in parts} for col, parts in columns.items()}
    assert classify_formula(formula, formula_text, sources) == expected


def test_formula_columns_holding_whole_results_are_not_pieces():
    formula = parse_formula("riders ~ r")
    assert formula is not None
    assert classify_formula(formula, "riders ~ r", {"r": {tags.fit(1)}}) == {}


_DATA_Y = [tags.outcome(Outcome("riders", None, "riders"))]
_DATA_X = [tags.columns(("fare", "wind"))]

# (id, tags of y, tags of X, expected)
ARRAY_ROWS = [
    ("variance-squared-residuals", [_part(1, RESIDSQ)], _DATA_X, {VARIANCE: {1}}),
    ("not-variance-plain-residuals", [_part(1, RESID)], _DATA_X, {OTHER: {1}}),
    ("not-variance-fitted", [_part(1, FITTED)], _DATA_X, {OTHER: {1}}),
    ("not-variance-squared-residuals-in-x", _DATA_Y, [_part(1, RESIDSQ)], {OTHER: {1}}),
    ("form-fitted-powers", _DATA_Y, [_part(1, FITTEDPOW), *_DATA_X], {FORM: {1}}),
    ("not-form-plain-fitted", _DATA_Y, [_part(1, FITTED)], {OTHER: {1}}),
    ("not-form-powers-as-y", [_part(1, FITTEDPOW)], _DATA_X, {OTHER: {1}}),
    ("serial-own-lag", [_part(1, RESID)], [_part(1, RESID)], {SERIAL: {1}, OTHER: {1}}),
    ("not-serial-other-fits-residuals", [_part(1, RESID)], [_part(2, RESID)], {OTHER: {1, 2}}),
    ("not-serial-y-is-data", _DATA_Y, [_part(1, RESID)], {OTHER: {1}}),
    ("plain-model", _DATA_Y, _DATA_X, {}),
    ("whole-results-are-not-pieces", _DATA_Y, [tags.fit(1)], {}),
]


@pytest.mark.parametrize("y, x, expected", [r[1:] for r in ARRAY_ROWS], ids=[r[0] for r in ARRAY_ROWS])
def test_array_models(y, x, expected):
    assert classify_arrays(frozenset(y), frozenset(x)) == expected


def test_every_check_family_has_a_label_and_other_has_none():
    assert set(CHECK_LABELS) == {FORM, VARIANCE, SERIAL}
    assert OTHER not in CHECK_LABELS
