"""compare-across-outcomes: fit measures compared between fits of different dependent variables."""

from __future__ import annotations

from collections.abc import Iterator

from regvet.model.finding import Finding, Severity
from regvet.model.runtime import Pairing
from regvet.rules.base import Rule, RuleInput, describe_fit, related
from regvet.rules.evidence import level_rmse, level_scale, num


def check(inp: RuleInput) -> Iterator[Finding]:
    for comp in inp.facts.comparisons:
        if comp.loc.path is not None:
            continue
        by_root: dict[int, str] = {}
        for fid, measure in comp.measures:
            by_root.setdefault(inp.facts.root(fid), measure)
        fits = [inp.facts.fit(r) for r in sorted(by_root)]
        known = [f for f in fits if f.outcome is not None and not f.auxiliary]
        outcomes = sorted({f.outcome.key for f in known})  # type: ignore[union-attr]
        if len(outcomes) < 2:
            continue
        measures = sorted({m for _, m in comp.measures})
        pairings = level_scale(inp, [f.id for f in known])
        if pairings:
            yield RULE.finding(
                comp.loc.span,
                _level_message(inp, measures, pairings[0]),
                [related(f.site, f"{describe_fit(f)} explains `{f.outcome.key}`") for f in known[:6]],  # type: ignore[union-attr]
                fits=tuple(f.id for f in known),
            )
            continue
        listed = ", ".join(f"`{o}`" for o in outcomes[:4])
        bases = {f.outcome.base for f in known}  # type: ignore[union-attr]
        todo = (
            "Compare models of one outcome, or for a log against a level model compare the level R² with the "
            "squared correlation of the outcome with the log model's exponentiated predictions."
            if len(bases) == 1
            else "Compare models of one outcome."
        )
        yield RULE.finding(
            comp.loc.span,
            f"This compares {', '.join(f'`{m}`' for m in measures)} between fits of different outcomes, "
            f"{listed}, but such measures are on each outcome's own scale, so the comparison ranks nothing. " + todo,
            [related(f.site, f"{describe_fit(f)} explains `{f.outcome.key}`") for f in known[:6]],  # type: ignore[union-attr]
            fits=tuple(f.id for f in known),
        )


def _level_message(inp: RuleInput, measures: list[str], pairing: Pairing) -> str:
    """The finding's text when the run showed one outcome to be a transform of the other: the
    comparable numbers themselves, on the level scale."""
    record = pairing.record
    t_fit, level_fit = inp.facts.fit(pairing.transformed), inp.facts.fit(pairing.level)
    t_out = t_fit.outcome.key if t_fit.outcome else "?"
    level_out = level_fit.outcome.key if level_fit.outcome else "?"
    how = record.get("transform") or "a transform"
    kind = f"{how} model"
    compared = ", ".join(f"`{m}`" for m in measures)
    numbers = f"level scale: {kind} {num(record.get('level_r2'))} vs level model {num(record.get('level_model_r2'))}"
    visible = t_fit.outcome is not None and t_fit.outcome.base == level_out  # `np.log(riders)` says so itself
    shown = "" if visible else f", which this run shows is {how} of `{level_out}`,"
    wrong = (
        f"This compares {compared} of a model of `{t_out}`{shown} with a "
        f"model of `{level_out}`; such measures are on each outcome's own scale, so they cannot rank the two "
        f"({numbers})."
    )
    cv = record.get("cv")
    rmse_t, rmse_level = level_rmse(inp, pairing)
    errors = ""
    if cv is not None and rmse_t is not None and rmse_level is not None:
        errors = (
            f", or by their {cv['folds']}-fold CV RMSE on the level scale with Duan's smearing "
            f"({kind} {num(rmse_t)} vs level model {num(rmse_level)})"
        )
    todo = f"Rank them by these squared correlations of `{level_out}` with each model's predictions of it{errors}."
    return f"{wrong} {todo}"


RULE = Rule(
    id="compare-across-outcomes",
    severity=Severity.ERROR,
    summary="Fit measures of fits with different dependent variables are compared.",
    rationale=(
        "R² is the share of the variance of *this* outcome that the model explains, and AIC, BIC and the "
        "log-likelihood are computed on *this* outcome's scale. A model of `log(riders)` and a model of "
        "`riders` answer different questions, and their measures cannot rank them.\n\n"
        "Fires on comparison operators, `max`/`min`/`sorted` keyed on a measure, and differences or ratios of "
        "measures (`rsquared`, `rsquared_adj`, `aic`, `bic`, `llf`) between fits whose dependent variables "
        "differ. To choose between a log and a level model, compare the level model's R² with the squared "
        "correlation between the level outcome and the exponentiated fitted values of the log model, or "
        "compare out-of-sample prediction errors on the same scale.\n\n"
        "After a run, an outcome that is numerically the log (log10, log2, log1p or sqrt) of the other "
        "compared outcome, even one held as its own column, is recognised on the rows both fits used, and "
        "the message shows these level-scale numbers, the log model's cross-validation errors retransformed "
        "with Duan's smearing estimate."
    ),
    bad="""\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

crossings = pd.read_csv("crossings.csv")
level = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
logged = smf.ols("np.log(riders) ~ fare + fuel_price", data=crossings).fit()
best = level if level.rsquared > logged.rsquared else logged  # expect: compare-across-outcomes
""",
    good="""\
import pandas as pd
import statsmodels.formula.api as smf

crossings = pd.read_csv("crossings.csv")
small = smf.ols("riders ~ fare", data=crossings).fit()
large = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
best = small if small.aic < large.aic else large
""",
    check=check,
    references=(
        "Wooldridge, J. M. Introductory Econometrics, Sec. 6.4 (predicting y when log(y) is the dependent "
        "variable) (from memory).",
        "Duan, N. (1983). Smearing estimate: a nonparametric retransformation method. JASA 78, 605-610 "
        "(from memory).",
    ),
    compares_fits=True,
)
