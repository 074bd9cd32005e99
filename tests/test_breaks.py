"""no-break-test as analysts write breaks and panels: interactions, fixed effects, seasonals, built formulas.

Table-driven like ``test_flow.py``: each row is a small invented harbour-freight script whose
expected ``no-break-test`` findings are marked with trailing ``# expect: RULE`` comments (a row
without markers asserts the rule stays silent). Every row is also run as a two-cell notebook
(the set-up in the first cell, the row in the second), so cells change nothing.
"""

from __future__ import annotations

import json
import textwrap

import pytest

from conftest import expected_markers, found
from regvet.config import ConfigError, settings_from_table
from regvet.engine import analyze
from regvet.model.settings import Settings
from regvet.status import fit_status

BREAK = "no-break-test"

_HEAD = """\
import pandas as pd
import statsmodels.api as sm
import statsmodels.formula.api as smf

freight = pd.read_csv("freight.csv")
"""


def row(row_id: str, code: str, settings: Settings | None = None, wording: str | None = None):
    return pytest.param(textwrap.dedent(code).strip("\n") + "\n", settings, wording, id=row_id)


_FE = Settings(fixed_effects=("harbour", "year"))
_POST = Settings(break_candidates=("post_dredging",))

#: (code after _HEAD, settings, a phrase the one finding's message must hold)
ROWS = [
    # --- the unrestricted model: the group (or candidate) already interacted with the regressors
    row(
        "shift-only-flagged",
        """
        res = smf.ols("tons ~ cranes + rain + C(berth)", data=freight).fit()  # expect: no-break-test
        print(res.params)
    """,
        wording="`C(berth)` shift only the intercept",
    ),
    row(
        "star-over-every-regressor",
        """
        res = smf.ols("tons ~ C(berth) * (cranes + rain)", data=freight).fit()
        print(res.params)
    """,
    ),
    row(
        "colon-only",
        """
        res = smf.ols("tons ~ cranes + C(berth):cranes", data=freight).fit()
        print(res.params)
    """,
    ),
    row(
        "every-slope-interacted-by-hand",
        """
        res = smf.ols("tons ~ C(berth) + cranes + rain + C(berth):cranes + C(berth):rain", data=freight).fit()
        print(res.params)
    """,
    ),
    row(
        "candidate-used-flagged",
        """
        res = smf.ols("tons ~ cranes + rain + post_dredging", data=freight).fit()  # expect: no-break-test
        print(res.params)
    """,
        _POST,
        "configured break candidate `post_dredging`",
    ),
    row(
        "candidate-interacted-star",
        """
        res = smf.ols("tons ~ post_dredging * (cranes + rain)", data=freight).fit()
        print(res.params)
    """,
        _POST,
    ),
    row(
        "candidate-interacted-colon-categorical",
        """
        res = smf.ols("tons ~ cranes + rain + C(post_dredging) + C(post_dredging):cranes + C(post_dredging):rain",
                      data=freight).fit()
        print(res.params)
    """,
        _POST,
    ),
    row(
        "candidate-query-entry-interacted",
        """
        res = smf.ols("tons ~ post_dredging * cranes", data=freight).fit()
        print(res.params)
    """,
        Settings(break_candidates=("post_dredging == 1",)),
    ),
    # --- fixed effects are not a break question
    row(
        "two-way-fixed-effects",
        """
        res = smf.ols("tons ~ cranes + rain + C(harbour) + C(year)", data=freight).fit()
        print(res.summary())
    """,
    ),
    row(
        "three-categoricals",
        """
        res = smf.ols("tons ~ cranes + C(harbour) + C(year) + C(berth)", data=freight).fit()
        print(res.params)
    """,
    ),
    row(
        "unit-fixed-effect-configured",
        """
        res = smf.ols("tons ~ cranes + rain + C(harbour)", data=freight).fit()
        print(res.params)
    """,
        _FE,
    ),
    row(
        "unit-dummies-unconfigured-flagged",
        """
        res = smf.ols("tons ~ cranes + rain + C(harbour)", data=freight).fit()  # expect: no-break-test
        print(res.params)
    """,
        wording="`C(harbour)`",
    ),
    row(
        "fixed-effects-config-leaves-other-groups",
        """
        res = smf.ols("tons ~ cranes + rain + C(berth)", data=freight).fit()  # expect: no-break-test
        print(res.params)
    """,
        _FE,
        "`C(berth)`",
    ),
    row(
        "fixed-effects-with-candidate-still-flagged",
        """
        res = smf.ols("tons ~ cranes + post_dredging + C(harbour) + C(year)", data=freight).fit()  # expect: no-break-test
        print(res.params)
    """,
        _POST,
        "`post_dredging`",
    ),
    row(
        "candidate-categorical-is-no-fixed-effect",
        """
        res = smf.ols("tons ~ cranes + C(harbour) + C(post_dredging)", data=freight).fit()  # expect: no-break-test
        print(res.params)
    """,
        _POST,
    ),
    row(
        "one-way-anova-has-no-slope",
        """
        res = smf.ols("tons ~ C(berth)", data=freight).fit()
        print(res.summary())
    """,
    ),
    row(
        "factorial-cell-means-have-no-slope",
        """
        res = smf.ols("tons ~ C(berth) + C(berth):C(crew)", data=freight).fit()
        print(res.summary())
    """,
    ),
    row(
        "ancova-has-a-slope",
        """
        res = smf.ols("tons ~ C(berth) + cranes", data=freight).fit()  # expect: no-break-test
        print(res.summary())
    """,
        wording="`C(berth)`",
    ),
    # --- calendar seasonals: still asked, about seasonal slopes
    row(
        "month-seasonal",
        """
        res = smf.ols("tons ~ cranes + rain + C(month)", data=freight).fit()  # expect: no-break-test
        print(res.params)
    """,
        wording="seasonal dummies `C(month)`",
    ),
    row(
        "quarter-seasonal",
        """
        res = smf.ols("tons ~ cranes + C(quarter)", data=freight).fit()  # expect: no-break-test
        print(res.params)
    """,
        wording="the same in every quarter",
    ),
    row(
        "season-seasonal",
        """
        res = smf.ols("tons ~ cranes + C(season)", data=freight).fit()  # expect: no-break-test
        print(res.params)
    """,
        wording="seasonal dummies `C(season)`",
    ),
    row(
        "seasonal-with-unit-is-fixed-effects",
        """
        res = smf.ols("tons ~ cranes + C(harbour) + C(month)", data=freight).fit()
        print(res.params)
    """,
    ),
    row(
        "season-interacted",
        """
        res = smf.ols("tons ~ C(quarter) * cranes", data=freight).fit()
        print(res.params)
    """,
    ),
    row(
        "f-string-in-a-loop-over-groups",
        """
        for group in ["berth", "crew"]:
            res = smf.ols(f"tons ~ cranes + C({group})", data=freight).fit()  # expect: no-break-test
            print(res.params)
    """,
        wording="both fits from this line",
    ),
    row(
        "f-string-in-a-loop-over-fixed-effects",
        """
        for unit in ["harbour", "berth"]:
            res = smf.ols(f"tons ~ cranes + C({unit}) + C(year)", data=freight).fit()
            print(res.params)
    """,
    ),
    # --- however the result is used
    row(
        "only-in-a-summary-table",
        """
        from statsmodels.iolib.summary2 import summary_col

        res = smf.ols("tons ~ cranes + C(berth)", data=freight).fit()  # expect: no-break-test
        print(summary_col([res]))
    """,
    ),
    row(
        "only-handed-to-a-table-package",
        """
        from stargazer.stargazer import Stargazer

        res = smf.ols("tons ~ cranes + C(berth)", data=freight).fit()  # expect: no-break-test
        print(Stargazer([res]).render_html())
    """,
        wording="`Stargazer`",
    ),
    row(
        "only-predictions",
        """
        res = smf.ols("tons ~ cranes + C(berth)", data=freight).fit()  # expect: no-break-test
        freight["expected"] = res.predict(freight)
    """,
    ),
    row(
        "never-used",
        """
        res = smf.ols("tons ~ cranes + C(berth)", data=freight).fit()
    """,
    ),
    row(
        "tested-by-anova",
        """
        from statsmodels.stats.anova import anova_lm

        res = smf.ols("tons ~ cranes + C(berth)", data=freight).fit()
        full = smf.ols("tons ~ cranes * C(berth)", data=freight).fit()
        print(anova_lm(res, full), res.params)
    """,
    ),
]


def _notebook(head: str, body: str) -> str:
    cells = [head, body]
    return json.dumps(
        {
            "cells": [
                {
                    "cell_type": "code",
                    "metadata": {},
                    "execution_count": None,
                    "outputs": [],
                    "source": c.splitlines(keepends=True),
                }
                for c in cells
            ],
            "metadata": {"language_info": {"name": "python"}},
            "nbformat": 4,
            "nbformat_minor": 5,
        }
    )


def _messages(report) -> list[str]:
    return [f.message for f in report.findings if f.rule == BREAK]


@pytest.mark.parametrize("code, settings, wording", ROWS)
def test_break_rule_in_a_script(code, settings, wording):
    source = _HEAD + code
    report = analyze(source, "freight.py", settings or Settings(), strict=True)
    assert report.facts is not None and report.facts.fits, "no fit was analysed"
    assert found(report, BREAK) == expected_markers(source, BREAK)
    if wording is not None:
        (message,) = _messages(report)
        assert wording in message
    for f in report.findings:
        if f.rule == BREAK:
            assert f.severity.label == "info"


@pytest.mark.parametrize("code, settings, wording", ROWS)
def test_break_rule_in_a_notebook(code, settings, wording):
    report = analyze(_notebook(_HEAD, code), "freight.ipynb", settings or Settings(), strict=True)
    # in a notebook the lines are the second cell's own
    assert [line for line, _ in found(report, BREAK)] == [line for line, _ in expected_markers(code, BREAK)]
    if wording is not None:
        (message,) = _messages(report)
        assert wording in message


def test_hover_says_fixed_effects_need_no_break_test():
    source = _HEAD + 'res = smf.ols("tons ~ cranes + C(harbour) + C(year)", data=freight).fit()\nprint(res.params)\n'
    report = analyze(source, "freight.py", Settings(), strict=True)
    (fit,) = report.facts.fits
    breaks = next(s for s in fit_status(report, fit).families if s.family == "breaks")
    assert (breaks.state, breaks.detail) == ("not needed", "fixed effects, not a break question")


# --- the fixed_effects key ------------------------------------------------------------------
@pytest.mark.parametrize(
    "table, fragment",
    [
        ({"fixed_effects": "harbour"}, "expected a list of column names"),
        ({"fixed_effects": ["harbour", 3]}, "expected a list of column names"),
        ({"fixed_effects": ["harbour == 1"]}, "is not a column name"),
        ({"fixed_effects": [""]}, "is not a column name"),
        ({"fixed_effects": ["year", "year"]}, "`year` is listed twice"),
        ({"fixed_effects": ["harbour"], "break_candidates": ["harbour"]}, "both a fixed effect and a break candidate"),
    ],
)
def test_fixed_effects_key_is_validated(table, fragment):
    with pytest.raises(ConfigError) as err:
        settings_from_table(table, "regvet.toml")
    assert fragment in str(err.value) and "regvet.toml" in str(err.value)


def test_fixed_effects_key_reaches_the_rule(tmp_path, run_cli):
    script = tmp_path / "panel.py"
    script.write_text(_HEAD + 'res = smf.ols("tons ~ cranes + C(harbour)", data=freight).fit()\nprint(res.params)\n')
    code, out, _ = run_cli("check", "--only", BREAK, str(script))
    assert BREAK in out
    (tmp_path / "regvet.toml").write_text('fixed_effects = ["harbour", "year"]\n')
    code, out, _ = run_cli("check", "--only", BREAK, str(script))
    assert code == 0 and BREAK not in out, out


# --- formulas built from literal pieces, and patsy designs ----------------------------------------
_BUILT_HEAD = _HEAD + "import patsy\n"


def built(row_id: str, code: str, formula: str | None, base: str | None, groups: set[str], fires: bool):
    return pytest.param(textwrap.dedent(code).strip("\n") + "\n", formula, base, frozenset(groups), fires, id=row_id)


#: (code after _BUILT_HEAD, the formula read (None: not read), the outcome's base, shift groups, rule fires)
BUILT = [
    built(
        "concatenation",
        """
        res = smf.ols("tons ~ cranes + " + "C(berth)", data=freight).fit()
        print(res.params)
    """,
        "tons ~ cranes + C(berth)",
        "tons",
        {"berth"},
        True,
    ),
    built(
        "concatenation-of-names",
        """
        outcome = "tons"
        rhs = "cranes + rain + C(berth)"
        formula = outcome + " ~ " + rhs
        res = smf.ols(formula, data=freight).fit()
        print(res.params)
    """,
        "tons ~ cranes + rain + C(berth)",
        "tons",
        {"berth"},
        True,
    ),
    built(
        "augmented-assignment",
        """
        formula = "tons ~ cranes"
        formula += " + C(berth)"
        res = smf.ols(formula, data=freight).fit()
        print(res.params)
    """,
        "tons ~ cranes + C(berth)",
        "tons",
        {"berth"},
        True,
    ),
    built(
        "join-of-a-list-name",
        """
        regressors = ["cranes", "rain", "C(berth)"]
        res = smf.ols("tons ~ " + " + ".join(regressors), data=freight).fit()
        print(res.params)
    """,
        "tons ~ cranes + rain + C(berth)",
        "tons",
        {"berth"},
        True,
    ),
    built(
        "join-inside-interaction",
        """
        slopes = ("cranes", "rain")
        res = smf.ols("tons ~ C(berth) * (" + " + ".join(slopes) + ")", data=freight).fit()
        print(res.params)
    """,
        "tons ~ C(berth) * (cranes + rain)",
        "tons",
        set(),
        False,
    ),
    built(
        "format-positional",
        """
        res = smf.ols("{} ~ {} + C(berth)".format("tons", "cranes"), data=freight).fit()
        print(res.params)
    """,
        "tons ~ cranes + C(berth)",
        "tons",
        {"berth"},
        True,
    ),
    built(
        "format-numbered-and-keywords",
        """
        group = "berth"
        res = smf.ols("{0} ~ {x} + C({g})".format("tons", x="cranes", g=group), data=freight).fit()
        print(res.params)
    """,
        "tons ~ cranes + C(berth)",
        "tons",
        {"berth"},
        True,
    ),
    built(
        "f-string-of-names",
        """
        y, x, g = "tons", "cranes + rain", "berth"
        res = smf.ols(f"{y} ~ {x} + C({g})", data=freight).fit()
        print(res.params)
    """,
        "tons ~ cranes + rain + C(berth)",
        "tons",
        {"berth"},
        True,
    ),
    built(
        "f-string-with-a-number",
        """
        power = 2
        res = smf.ols(f"tons ~ cranes + I(cranes**{power}) + C(berth)", data=freight).fit()
        print(res.params)
    """,
        "tons ~ cranes + I(cranes**2) + C(berth)",
        "tons",
        {"berth"},
        True,
    ),
    built(
        "percent-format",
        """
        res = smf.ols("%s ~ cranes + C(%s)" % ("tons", "berth"), data=freight).fit()
        print(res.params)
    """,
        "tons ~ cranes + C(berth)",
        "tons",
        {"berth"},
        True,
    ),
    built(
        "built-two-way-fixed-effects",
        """
        effects = ["C(harbour)", "C(year)"]
        res = smf.ols("tons ~ cranes + " + " + ".join(effects), data=freight).fit()
        print(res.params)
    """,
        "tons ~ cranes + C(harbour) + C(year)",
        "tons",
        {"harbour", "year"},
        False,
    ),
    built(
        "dmatrices",
        """
        y, X = patsy.dmatrices("tons ~ cranes + C(berth)", freight)
        res = sm.OLS(y, X).fit()
        print(res.params)
    """,
        "tons ~ cranes + C(berth)",
        "tons",
        {"berth"},
        True,
    ),
    built(
        "dmatrices-dataframe-from-import",
        """
        from patsy import dmatrices

        y, X = dmatrices("tons ~ cranes + rain + C(berth)", data=freight, return_type="dataframe")
        res = sm.OLS(y, X).fit()
        print(res.summary())
    """,
        "tons ~ cranes + rain + C(berth)",
        "tons",
        {"berth"},
        True,
    ),
    built(
        "dmatrices-of-a-built-formula",
        """
        outcome = "tons"
        y, X = patsy.dmatrices(f"{outcome} ~ cranes + C(berth)", freight, return_type="dataframe")
        res = sm.OLS(y, X).fit()
        print(res.params)
    """,
        "tons ~ cranes + C(berth)",
        "tons",
        {"berth"},
        True,
    ),
    built(
        "dmatrices-fixed-effects",
        """
        y, X = patsy.dmatrices("tons ~ cranes + C(harbour) + C(year)", freight)
        res = sm.OLS(y, X).fit()
        print(res.params)
    """,
        "tons ~ cranes + C(harbour) + C(year)",
        "tons",
        {"harbour", "year"},
        False,
    ),
    built(
        "dmatrices-by-position",
        """
        design = patsy.dmatrices("tons ~ rain + C(month)", freight)
        res = sm.OLS(design[0], design[1]).fit()
        print(res.params)
    """,
        "tons ~ rain + C(month)",
        "tons",
        {"month"},
        True,
    ),
    # --- not every piece a literal: not read as a formula (the fixed start still names the outcome)
    built(
        "piece-from-input",
        """
        extra = input()
        res = smf.ols("tons ~ cranes + " + extra, data=freight).fit()
        print(res.params)
    """,
        None,
        "tons",
        set(),
        False,
    ),
    built(
        "join-of-data-columns",
        """
        res = smf.ols("tons ~ " + " + ".join(freight.columns[1:]), data=freight).fit()
        print(res.params)
    """,
        None,
        "tons",
        set(),
        False,
    ),
    built(
        "format-with-a-spec",
        """
        res = smf.ols("tons ~ cranes + C(berth) + {:>8}".format("rain"), data=freight).fit()
        print(res.params)
    """,
        None,
        "tons",
        set(),
        False,
    ),
    built(
        "f-string-of-a-call",
        """
        res = smf.ols(f"tons ~ {input()} + C(berth)", data=freight).fit()
        print(res.params)
    """,
        None,
        "tons",
        set(),
        False,
    ),
    built(
        "dmatrices-of-an-unknown-formula",
        """
        y, X = patsy.dmatrices(input(), freight)
        res = sm.OLS(y, X).fit()
        print(res.params)
    """,
        None,
        None,
        set(),
        False,
    ),
    built(
        "ols-on-another-design",
        """
        y, X = patsy.dmatrices("tons ~ cranes + C(berth)", freight)
        _, Z = patsy.dmatrices("crew ~ rain", freight)
        res = sm.OLS(y, Z).fit()
        print(res.params)
    """,
        None,
        None,
        set(),
        False,
    ),
]


def _one_fit(report):
    fits = [f for f in report.facts.fits if f.site.path is None and not f.auxiliary]
    assert len(fits) == 1, fits
    return fits[0]


def _check_built(report, formula, base, groups, fires):
    fit = _one_fit(report)
    assert fit.formula == formula
    assert (fit.outcome.base if fit.outcome else None) == base
    assert fit.shift_groups == groups
    assert bool(_messages(report)) == fires


@pytest.mark.parametrize("code, formula, base, groups, fires", BUILT)
def test_built_formula_in_a_script(code, formula, base, groups, fires):
    _check_built(analyze(_BUILT_HEAD + code, "freight.py", Settings(), strict=True), formula, base, groups, fires)


@pytest.mark.parametrize("code, formula, base, groups, fires", BUILT)
def test_built_formula_in_a_notebook(code, formula, base, groups, fires):
    report = analyze(_notebook(_BUILT_HEAD, code), "freight.ipynb", Settings(), strict=True)
    _check_built(report, formula, base, groups, fires)


def test_built_formula_across_notebook_cells():
    nb = _notebook(
        _BUILT_HEAD + 'outcome = "tons"\nslopes = ["cranes", "rain"]\n',
        'res = smf.ols(f"{outcome} ~ " + " + ".join(slopes) + " + C(berth)", data=freight).fit()\n'
        "print(res.params)\n",
    )
    report = analyze(nb, "freight.ipynb", Settings(), strict=True)
    assert _one_fit(report).formula == "tons ~ cranes + rain + C(berth)"
    assert found(report, BREAK) == [(1, BREAK)]
