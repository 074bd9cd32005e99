"""Is a model an auxiliary regression of another fit, and for which check family? (pure functions)

A specification test done by hand is a regression built from another fit's pieces:
regressing squared residuals on the regressors is a heteroskedasticity test (Breusch-Pagan,
White), adding powers of the fitted values is a RESET-style functional-form test, regressing
residuals on their own lag is a serial-correlation test (Breusch-Godfrey). The collector asks
these functions which fits a new model is auxiliary to, and credits each fit with a check of the
family found (``CHECK_LABELS``); any other model built from a fit's pieces is auxiliary too
(``OTHER``: it is no fit to judge) but checks nothing.

The inputs are tags (:mod:`regvet.analysis.tags`): PART tags of the fits the data came from,
found in the model's arrays or in the columns a formula reads.
"""

from __future__ import annotations

import re
from collections.abc import Collection, Iterable, Mapping

from regvet.analysis import tags
from regvet.analysis.formula import Formula
from regvet.analysis.tags import Tag

#: Check families an auxiliary regression can stand for, and the catch-all.
FORM = "form"
VARIANCE = "variance"
SERIAL = "serial"
OTHER = "other"

#: How a check made by hand is named in the facts (``Check.function``).
CHECK_LABELS = {
    FORM: "auxiliary regression on powers of fitted values",
    VARIANCE: "auxiliary regression of squared residuals",
    SERIAL: "auxiliary regression of residuals on their lag",
}

#: Families by fit: ``{family: {fit id, ...}}``, in the order they were found.
Auxiliary = dict[str, set[int]]


def classify_formula(formula: Formula, text: str, column_sources: Mapping[str, Iterable[Tag]]) -> Auxiliary:
    """A formula model: ``column_sources`` says which tags each column of its data holds.

    * a column of residuals on the left, squared in the formula (or already squared): VARIANCE;
    * a column of fitted values on the right, raised to a power (or already raised): FORM;
    * a column of residuals on the right, when the left side holds residuals of the same fit: SERIAL;
    * any other column holding a piece of a fit: OTHER.
    """
    aux: Auxiliary = {}
    lhs_text = text.split("~", 1)[0] if text else ""
    for var in formula.variables:
        for part in column_sources.get(var, ()):
            if tags.kind(part) != tags.PART:
                continue
            fid, name = tags.fit_id(part), tags.part_name(part)
            on_left = _mentions(lhs_text, var)
            squared = _squared_in(text, var)
            if (
                not on_left
                and name == tags.RESID
                and any(
                    tags.kind(other) == tags.PART and tags.part_name(other) == tags.RESID and tags.fit_id(other) == fid
                    for left_var in formula.variables
                    if _mentions(lhs_text, left_var)
                    for other in column_sources.get(left_var, ())
                )
            ):
                aux.setdefault(SERIAL, set()).add(fid)
            elif on_left and (name == tags.RESID_SQUARED or (name == tags.RESID and squared)):
                aux.setdefault(VARIANCE, set()).add(fid)
            elif not on_left and (name == tags.FITTED_POWER or (name == tags.FITTED and squared)):
                aux.setdefault(FORM, set()).add(fid)
            else:
                aux.setdefault(OTHER, set()).add(fid)
    return aux


def classify_arrays(outcome_tags: Collection[Tag], regressor_tags: Collection[Tag]) -> Auxiliary:
    """An array model (``OLS(y, X)``): the tags of ``y`` and of ``X`` (elements included).

    * squared residuals as ``y``: VARIANCE;
    * powers of fitted values in ``X``: FORM;
    * residuals in ``X`` of the fit whose residuals are ``y``: SERIAL (residuals on their own lags);
    * any other piece of a fit in ``y`` or ``X``: OTHER.
    """
    aux: Auxiliary = {}
    outcome_resid = {tags.fit_id(t) for t in tags.select(outcome_tags, tags.PART) if tags.part_name(t) == tags.RESID}
    for tag in outcome_tags:
        if tags.kind(tag) == tags.PART:
            family = VARIANCE if tags.part_name(tag) == tags.RESID_SQUARED else OTHER
            aux.setdefault(family, set()).add(tags.fit_id(tag))
    for tag in regressor_tags:
        if tags.kind(tag) == tags.PART:
            name = tags.part_name(tag)
            if name == tags.RESID and tags.fit_id(tag) in outcome_resid:
                family = SERIAL  # residuals regressed on their own lags
            else:
                family = FORM if name == tags.FITTED_POWER else OTHER
            aux.setdefault(family, set()).add(tags.fit_id(tag))
    return aux


def _mentions(text: str, var: str) -> bool:
    """Does ``text`` read the variable ``var`` (not as part of a longer name or an attribute)?"""
    return re.search(rf"(?<![\w.]){re.escape(var)}(?!\w)", text) is not None


def _squared_in(text: str, var: str) -> bool:
    """Is ``var`` raised to a power of 2 to 9 in the formula (``x**2``, ``np.power(x, 3)``, ``np.square(x)``)?"""
    v = re.escape(var)
    return bool(re.search(rf"(?<![\w.]){v}\s*\*\*\s*[2-9]|power\(\s*{v}\s*,\s*[2-9]|square\(\s*{v}\s*\)", text))
