"""What rules declare about themselves for other parts (family, comparisons, quick fixes, waivers) is consistent."""

from __future__ import annotations

from regvet.model.settings import FAMILIES
from regvet.rules import ALL_RULES, rules_for_family
from regvet.status import FAMILY_LABELS


def test_every_declared_family_is_a_check_family_the_hover_shows():
    for rule in ALL_RULES:
        if rule.family is not None:
            assert rule.family in FAMILIES, rule.id
            assert rule.family in FAMILY_LABELS.values(), rule.id
            assert rule in rules_for_family(rule.family)


def test_rules_the_engine_owns_offer_no_quick_fix():
    for rule in ALL_RULES:
        if not rule.waivable:
            assert not rule.quick_fixes, rule.id
        if rule.blocks_run:
            assert not rule.needs_run, rule.id  # a run never happens for such a file


def test_rules_that_report_a_rejected_test_name_a_check_family_and_need_a_run():
    rejecting = {r.rejects for r in ALL_RULES if r.rejects is not None}
    assert rejecting <= set(FAMILIES)
    assert rejecting == set(FAMILIES)  # the audit report can show every family as rejected
    for rule in ALL_RULES:
        if rule.rejects is not None:
            assert rule.needs_run and rule.family is None, rule.id
