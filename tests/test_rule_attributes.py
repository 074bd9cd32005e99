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
