"""The fix planner shared by the quick fixes and ``regvet mend``, and the import-alias reader it uses."""

from __future__ import annotations

import ast

import pytest

from regvet.edits.plan import (
    CODE_KINDS,
    INSERT_BREUSCH_PAGAN,
    INSERT_RESET,
    REWRITE_WAIVER,
    ROBUST_COVARIANCE,
    WAIVER,
    plan,
)
from regvet.engine import analyze
from regvet.rules import ALL_RULES, QuickFix
from regvet.sources.imports import spelling

MODULES = ("statsmodels.stats.diagnostic", "statsmodels.stats.api")


@pytest.mark.parametrize(
    "imports,expected",
    [
        ("from statsmodels.stats.diagnostic import linear_reset as lr", "lr"),
        ("from statsmodels.stats.diagnostic import het_white, linear_reset", "linear_reset"),
        ("import statsmodels.stats.api as sms", "sms.linear_reset"),
        ("from statsmodels.stats import diagnostic as dg", "dg.linear_reset"),
        ("from statsmodels.stats import diagnostic", "diagnostic.linear_reset"),
        ("import statsmodels.stats.diagnostic", "statsmodels.stats.diagnostic.linear_reset"),
        ("from statsmodels.stats.api import linear_reset", "linear_reset"),
        # the direct import wins over a module alias, whatever the order
        ("import statsmodels.stats.api as sms\nfrom statsmodels.stats.diagnostic import linear_reset as lr", "lr"),
        ("try:\n    from statsmodels.stats.diagnostic import linear_reset as lr\nexcept ImportError:\n    pass", "lr"),
        ("import statsmodels.api as sm", None),
        ("from statsmodels.stats.diagnostic import het_white", None),
        ("def f():\n    from statsmodels.stats.diagnostic import linear_reset as lr", None),  # not module-level
    ],
)
def test_spelling_reads_the_files_own_imports(imports, expected):
    assert spelling(imports + "\nx = 1\n", "linear_reset", MODULES) == expected


def test_spelling_counts_only_imports_before_the_line_and_survives_broken_code():
    text = "x = 1\nfrom statsmodels.stats.diagnostic import linear_reset as lr\n"
    assert spelling(text, "linear_reset", MODULES, before_line=2) is None
    assert spelling(text, "linear_reset", MODULES, before_line=3) == "lr"
    assert spelling("def (:\n", "linear_reset", MODULES) is None


SCRIPT = """\
import pandas as pd
import statsmodels.formula.api as smf
{imports}
crossings = pd.read_csv("crossings.csv")
m1 = smf.ols("riders ~ fare", data=crossings).fit()
print(m1.summary())
"""


def _finding(text: str, rule: str):
    return next(f for f in analyze(text, "ferry.py").findings if f.rule == rule)


@pytest.mark.parametrize(
    "imports,call,added",
    [
        ("from statsmodels.stats.diagnostic import linear_reset as lr\n", "lr(m1, power=3, use_f=True)", False),
        ("import statsmodels.stats.api as sms\n", "sms.linear_reset(m1, power=3, use_f=True)", False),
        ("", "linear_reset(m1, power=3, use_f=True)", True),
    ],
)
def test_inserted_reset_uses_the_fits_name_and_the_files_alias(imports, call, added):
    text = SCRIPT.format(imports=imports)
    f = _finding(text, "no-form-test")
    [edit] = [e for e in plan(text, f.rule, [INSERT_RESET], f.fix) if e.kind == INSERT_RESET]
    ast.parse(edit.text)
    assert f'print("RESET:", {call})' in edit.text
    assert ("from statsmodels.stats.diagnostic import linear_reset\n" in edit.text) is added
    assert not [g for g in analyze(edit.text, "ferry.py").findings if g.rule == "no-form-test"]


def test_breusch_pagan_insertion_uses_the_module_alias():
    text = SCRIPT.format(imports="import statsmodels.stats.api as sms\n")
    f = _finding(text, "no-variance-test")
    kinds = [k.value for k in next(r for r in ALL_RULES if r.id == f.rule).quick_fixes]
    edits = plan(text, f.rule, kinds, f.fix, waiver_line=f.span.line)
    assert [e.kind for e in edits] == [ROBUST_COVARIANCE, INSERT_BREUSCH_PAGAN, WAIVER]
    assert "sms.het_breuschpagan(m1.resid, m1.model.exog)" in edits[1].text
    assert 'cov_type="HC3"' in edits[0].text and edits[0].preferred and not edits[1].preferred


def test_every_quick_fix_a_rule_declares_has_a_plan():
    assert {k.value for k in QuickFix} == set(CODE_KINDS)
    for rule in ALL_RULES:
        assert all(k.value in CODE_KINDS for k in rule.quick_fixes), rule.id


def test_malformed_fix_data_plans_nothing_and_never_raises():
    text = SCRIPT.format(imports="")
    for fix in (None, {}, {"fit_call": "x", "statement": [1, 2], "result": 3}, {"fit_call": [99, 0, 99, 4]}):
        assert plan(text, "no-variance-test", list(CODE_KINDS), fix) == []


WAIVED = """\
import pandas as pd
import statsmodels.formula.api as smf

crossings = pd.read_csv("crossings.csv")
m1 = smf.ols("riders ~ fare", data=crossings).fit()  {comment}
print(m1.params)
"""


@pytest.mark.parametrize(
    "comment,rule,written",
    [
        (
            "# regvet: waive no-form-test -- fares are set by contract",
            "waiver-without-reason",
            "# regvet: waive no-form-test because fares are set by contract",
        ),
        (
            "# regvet: waive-file no-form-test: fares are set by contract",
            "waiver-without-reason",
            "# regvet: waive-file no-form-test because fares are set by contract",
        ),
        (
            "# regvet: waive no-form-test fares are set by contract",
            "waiver-without-reason",
            "# regvet: waive no-form-test because fares are set by contract",
        ),
        (
            "# regvet: waive No_Form_Test because fares are set by contract",
            "waiver-unknown-rule",
            "# regvet: waive no-form-test because fares are set by contract",
        ),
    ],
)
def test_a_waiver_finding_plans_the_waiver_rewritten_and_the_rewrite_takes_effect(comment, rule, written):
    text = WAIVED.format(comment=comment)
    f = _finding(text, rule)
    edits = plan(text, f.rule, [], f.fix)  # the editor's call for a rule that is not waivable
    assert [e.kind for e in edits] == [REWRITE_WAIVER] and edits[0].preferred
    assert edits[0].text == text.replace(comment, written)
    after = analyze(edits[0].text, "model.py", strict=True).findings
    assert [(g.rule, g.waived) for g in after] == [("no-form-test", True)]


@pytest.mark.parametrize(
    "comment,rule",
    [
        ("# regvet: waive no-form-test", "waiver-without-reason"),  # no reason to carry over: nothing is invented
        ("# regvet: waive ferry-schedule because fares are set by contract", "waiver-unknown-rule"),  # nothing close
        ("# regvet: waive no-frm-test", "waiver-unknown-rule"),  # no reason: the rewrite would not take effect
    ],
)
def test_no_rewrite_is_planned_when_it_would_have_to_guess(comment, rule):
    text = WAIVED.format(comment=comment)
    f = _finding(text, rule)
    assert plan(text, f.rule, [], f.fix) == []
