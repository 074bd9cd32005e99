"""Every rule's bad example gives exactly its marked findings; its good example gives none of them.

Rules that judge a run's statistics run their examples for real in ``test_runtime_rules.py``.
"""

from __future__ import annotations

import pytest

from conftest import expected_markers, found
from regvet.engine import analyze
from regvet.rules import ALL_RULES, RULES_BY_ID
from regvet.rules.texts import CAUTION, explain, shown_example

STATIC = [r for r in ALL_RULES if not r.needs_run]


@pytest.mark.parametrize("rule", STATIC, ids=lambda r: r.id)
def test_bad_example_is_flagged_where_marked(rule):
    expected = expected_markers(rule.bad, rule.id)
    assert expected, f"{rule.id}: the bad example marks no finding"
    report = analyze(rule.bad, f"{rule.id}_bad.py", strict=True)
    assert found(report, rule.id) == expected


@pytest.mark.parametrize("rule", STATIC, ids=lambda r: r.id)
def test_good_example_passes(rule):
    report = analyze(rule.good, f"{rule.id}_good.py", strict=True)
    assert found(report, rule.id) == []
    assert expected_markers(rule.good) == []


def test_rule_ids_are_unique_and_kebab_case():
    ids = [r.id for r in ALL_RULES]
    assert len(ids) == len(set(ids)) == len(RULES_BY_ID)
    for rid in ids:
        assert rid == rid.lower() and " " not in rid and "_" not in rid


@pytest.mark.parametrize("rule", ALL_RULES, ids=lambda r: r.id)
def test_explain_prints_the_catalogue_text(rule):
    text = explain(rule.id)
    assert rule.summary in text and rule.rationale in text
    for example in (rule.bad, rule.good):
        settings, code = shown_example(example)
        assert _indented(code) in text  # every line of the example, without the test suite's markers
        for setting in settings:
            assert f"`{setting}`" in text
    assert "# expect" not in text and "config for this example" not in text
    assert text.count("does not make a model right") == 1 and text.endswith(CAUTION + "\n")
    waiver = f"`# regvet: waive {rule.id} because REASON`"
    assert (waiver in text) == rule.waivable
    for ref in rule.references:
        assert ref in text


def test_runtime_rules_give_nothing_without_a_run():
    for rule in ALL_RULES:
        if rule.needs_run:
            assert found(analyze(rule.bad, "x.py", strict=True), rule.id) == []


def _indented(code: str) -> str:
    return "\n".join(("    " + line) if line else "" for line in code.split("\n"))


def test_shown_example_takes_off_markers_and_keeps_the_code():
    settings, code = shown_example(
        '# regvet config for this example: break_candidates = ["post_timetable"]\n'
        "res = m.fit()  # expect: no-form-test, no-variance-test\n"
        "x = 1  # regvet: waive no-form-test  # expect: waiver-without-reason\n"
        "y = '# expect: in a string'  # a comment kept\n"
    )
    assert settings == ['break_candidates = ["post_timetable"]']
    assert code == "res = m.fit()\nx = 1  # regvet: waive no-form-test\ny = '# expect: in a string'  # a comment kept"
