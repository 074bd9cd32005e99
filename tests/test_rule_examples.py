"""Every rule's bad example gives exactly its marked findings; its good example gives none of them.

Rules that judge a run's statistics run their examples for real in ``test_runtime_rules.py``.
"""

from __future__ import annotations

import pytest

from conftest import expected_markers, found
from regvet.cli import explain
from regvet.engine import analyze
from regvet.rules import ALL_RULES, RULES_BY_ID

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
    assert rule.bad.splitlines()[0] in text and rule.good.splitlines()[-1] in text
    assert "does not make a model right" in text
    for ref in rule.references:
        assert ref in text


def test_runtime_rules_give_nothing_without_a_run():
    for rule in ALL_RULES:
        if rule.needs_run:
            assert found(analyze(rule.bad, "x.py", strict=True), rule.id) == []
