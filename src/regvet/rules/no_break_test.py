"""no-break-test: a categorical intercept shift (or a configured break candidate) without a break test."""

from __future__ import annotations

import re
from collections.abc import Iterator
from functools import lru_cache

from regvet.model.facts import Fit
from regvet.model.finding import Finding, Severity
from regvet.rules.base import Rule, RuleInput, code_name, missing_check, once_per_root, opening

_IDENT = re.compile(r"[A-Za-z_]\w*")
_QUERY_WORDS = frozenset({"and", "or", "not", "in", "True", "False", "None", "is"})


@lru_cache(maxsize=64)
def _candidate_columns(candidates: tuple[str, ...]) -> dict[str, str]:
    """Column name -> the candidate entry naming it (cached: asked once per fit; do not modify)."""
    out: dict[str, str] = {}
    for entry in candidates:
        stripped = re.sub(r"(['\"]).*?\1", "", entry)
        for name in _IDENT.findall(stripped):
            if name not in _QUERY_WORDS and not name[0].isdigit():
                out.setdefault(name, entry)
    return out


def _group_tested(inp: RuleInput, fit: Fit, groups: set[str]) -> bool:
    for gt in inp.facts.group_tests:
        if not (gt.groups & groups):
            continue
        for other in gt.fits:
            o = inp.facts.fit(other)
            if other in inp.facts.same_residuals(fit.id):
                return True
            if fit.outcome is not None and o.outcome is not None and o.outcome.key == fit.outcome.key:
                return True
    return False


def check(inp: RuleInput) -> Iterator[Finding]:
    return once_per_root(inp, _judge)


#: Calendar seasonals: a `C(month)` shift is a seasonal intercept, not a unit or a period (common practice).
_SEASONAL = re.compile(
    r"(?:^|_)(?:month|months|quarter|quarters|qtr|season|seasons|weekday|dayofweek|dow)(?:_|$)", re.IGNORECASE
)


def seasonal(group: str) -> bool:
    """Is ``C(group)`` a calendar seasonal (``month``, ``quarter``, ``season``, ``df.index.month``)?"""
    return bool(_SEASONAL.search(group.rsplit(".", 1)[-1]))


#: Names of a period (a time effect) and of a unit identifier (a unit effect), common practice.
_PERIOD = re.compile(
    r"(?:^|_)(?:year|years|yr|date|day|week|month|quarter|qtr|period|time|wave|t)(?:_|$)", re.IGNORECASE
)
_UNIT_ID = re.compile(r"^(?:id|pid|uid|.+_id|id_.+)$", re.IGNORECASE)


def _name(group: str) -> str:
    return group.rsplit(".", 1)[-1]


def fixed_effects(fit: Fit, fixed: tuple[str, ...], candidates: tuple[str, ...]) -> bool:
    """Is the fit a fixed-effects design? Unit and period effects (two categorical terms or more, one of
    them a period such as ``C(year)`` or a unit identifier such as ``C(firm_id)``), a single unit
    identifier (``C(id)``), or a categorical named in the config's ``fixed_effects``. Then its ``C(...)``
    shifts ask no break question. A configured break candidate is never counted as a fixed effect;
    two ordinary categoricals (``C(gender) + C(occupation)``) are not fixed effects."""
    terms = fit.categorical_terms - set(_candidate_columns(candidates))
    if terms & set(fixed):
        return True
    periods = {g for g in terms if _PERIOD.search(_name(g))}
    units = {g for g in terms if _UNIT_ID.match(_name(g))}
    if units:
        return True
    return len(terms) >= 2 and bool(periods)


def no_slopes(fit: Fit) -> bool:
    """Is every regressor a categorical's dummy (``y ~ C(g)``, ``y ~ C(a) + C(b)``)? Then there is no
    slope whose equality across groups a break test could question."""
    return bool(fit.regressors) and all("C(" in term or term in fit.categorical_terms for term in fit.regressors or ())


def break_question(fit: Fit, candidates: tuple[str, ...], fixed: tuple[str, ...]) -> bool:
    """Does the fit's specification ask for a break test at all (intercept-only groups that are not fixed
    effects, or a configured break candidate it uses without interacting it)?"""
    if no_slopes(fit):
        return False
    if fit.shift_groups and not fixed_effects(fit, fixed, candidates):
        return True
    return any(_candidate_open(fit, c) for c in _candidate_columns(candidates))


def _candidate_open(fit: Fit, column: str) -> bool:
    """The fit uses the candidate column and does not already interact it with the regressors."""
    return column in fit.columns and column not in fit.interacted_columns


def _judge(inp: RuleInput, fit: Fit) -> Finding | None:
    members = inp.facts.same_residuals(fit.id)
    uses = [u for m in sorted(members) for u in inp.uses(m, ("estimate", "inference", "robust"))]
    escapes = [e for m in sorted(members) for e in inp.escapes(m)]
    if not uses and not escapes:
        return None
    if inp.checks(fit.id, "breaks") or no_slopes(fit):
        return None
    # Every intercept-only group that is not a fixed effect, and every configured candidate the fit
    # uses without interacting it, needs its own test.
    candidates = _candidate_columns(inp.settings.break_candidates)
    fixed = fixed_effects(fit, inp.settings.fixed_effects, inp.settings.break_candidates)
    groups = set() if fixed else set(fit.shift_groups)
    shift = {g for g in groups if not _group_tested(inp, fit, {g})}
    named = {c: e for c, e in candidates.items() if _candidate_open(fit, c) and not _group_tested(inp, fit, {c})}
    if not shift and not named:
        return None
    plain = sorted(g for g in shift if not seasonal(g))
    name = code_name(fit)
    if plain:
        g = plain[0]
        why = (
            f"lets `C({g})` shift only the intercept, with no structural-break test, so its slopes are assumed "
            f"equal across the groups of `{g}`"
        )
        what = "Test whether they differ"
    elif shift:
        g = sorted(shift)[0]
        why = (
            f"lets its seasonal dummies `C({g})` shift only the intercept, with no structural-break test, so its "
            f"slopes are assumed the same in every {g.rsplit('.', 1)[-1]}"
        )
        what = "If they may vary, test it"
    else:
        g, entry = min(named.items(), key=lambda kv: kv[1])
        why = (
            f"uses the configured break candidate `{entry}` without interacting it with the regressors and with no "
            "structural-break test, so its slopes are assumed the same on both sides"
        )
        what = "Test whether they differ"
    return missing_check(
        RULE,
        fit,
        f"{opening(fit)} {why}. {what} with a Chow test, or `anova_lm({name}, interacted)` against a model whose "
        f"slopes are interacted with `{g}`.",
        uses[:1],
        escapes,
    )


RULE = Rule(
    id="no-break-test",
    severity=Severity.INFO,
    summary="A formula shifts only the intercept by a categorical term (or uses a configured break candidate) "
    "and no break test was applied.",
    rationale=(
        "A `C(group)` term without interactions lets each group have its own intercept but forces the same "
        "slopes on all of them: the assumption of parameter constancy across groups (or before and after an "
        "event). If the slopes differ, the pooled coefficients describe no group well.\n\n"
        "Also fires for fits on data that use a column named in the config's `break_candidates`, unless the "
        "formula already interacts it with the regressors (`post * (fare + fuel_price)`): that model is the "
        "unrestricted one.\n\n"
        "Fixed effects are not a break question: unit and period effects (two categorical terms or more, one "
        "of them a period such as `C(year)`: `C(harbour) + C(year)`), a unit identifier (`C(ship_id)`), or a "
        "categorical named in the config's `fixed_effects`, are not flagged (period and identifier names: "
        "common practice); nor is a model of categorical terms only, which has no slope to compare. A column "
        'made categorical (`pd.Categorical`, `.astype("category")`) and named bare in the formula counts as '
        "`C(column)`. Calendar seasonals (`C(month)`, `C(quarter)`, `C(season)`) alone still are, worded as a "
        "question about seasonal slopes. A formula built from literal pieces (concatenation, `.format`, "
        'f-strings, `" + ".join(...)`) or a design from `patsy.dmatrices` is read like a literal one.\n\n'
        "Satisfied by: a Chow test (subsample fits combined in an F statistic from their SSRs), an F test of "
        "the interactions with the group (`anova_lm`, `compare_f_test`, or `f_test` on the interacted model), "
        "or `breaks_cusumolsresid` / `breaks_hansen` / `recursive_olsresiduals` on the fit. "
        "The Chow test assumes equal error variances across the groups; under heteroskedasticity use a "
        "robust Wald test of the interactions."
    ),
    bad="""\
import pandas as pd
import statsmodels.formula.api as smf

crossings = pd.read_csv("crossings.csv")
res = smf.ols("riders ~ fare + fuel_price + C(season)", data=crossings).fit()  # expect: no-break-test
print(res.params)
""",
    good="""\
import pandas as pd
import statsmodels.formula.api as smf
from statsmodels.stats.anova import anova_lm

crossings = pd.read_csv("crossings.csv")
res = smf.ols("riders ~ fare + fuel_price + C(season)", data=crossings).fit()
full = smf.ols("riders ~ (fare + fuel_price) * C(season)", data=crossings).fit()
print(anova_lm(res, full))
print(res.params)
""",
    check=check,
    references=(
        "Chow, G. C. (1960). Tests of equality between sets of coefficients in two linear regressions. "
        "Econometrica 28(3), 591-605.",
        "Brown, R. L., Durbin, J. and Evans, J. M. (1975). Techniques for testing the constancy of regression "
        "relationships over time. JRSS B 37(2), 149-192.",
    ),
    family="breaks",
)
