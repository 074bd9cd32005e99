"""The rule catalogue: listed explicitly, in the order ``regvet rules`` prints them."""

from __future__ import annotations

from regvet.rules import (
    break_rejected,
    collinear_design,
    compare_across_outcomes,
    compare_across_samples,
    form_rejected,
    hc_small_sample,
    heteroskedastic_plain_se,
    incomplete_analysis,
    mismatched_diagnostic,
    no_break_test,
    no_form_test,
    no_serial_test,
    no_variance_test,
    nonnormal_small_sample,
    parse_error,
    r2_unadjusted_compare,
    rank_lost_to_scaling,
    run_failed,
    serial_correlation_plain_se,
    waiver_unknown_rule,
    waiver_without_reason,
)
from regvet.rules.base import QuickFix, Rule, RuleInput

ALL_RULES: tuple[Rule, ...] = (
    no_form_test.RULE,
    no_variance_test.RULE,
    compare_across_outcomes.RULE,
    r2_unadjusted_compare.RULE,
    mismatched_diagnostic.RULE,
    no_serial_test.RULE,
    no_break_test.RULE,
    waiver_without_reason.RULE,
    waiver_unknown_rule.RULE,
    parse_error.RULE,
    incomplete_analysis.RULE,
    # from a run's statistics (regvet check --run)
    rank_lost_to_scaling.RULE,
    heteroskedastic_plain_se.RULE,
    form_rejected.RULE,
    nonnormal_small_sample.RULE,
    hc_small_sample.RULE,
    compare_across_samples.RULE,
    collinear_design.RULE,
    serial_correlation_plain_se.RULE,
    break_rejected.RULE,
    run_failed.RULE,
)
RULES_BY_ID: dict[str, Rule] = {r.id: r for r in ALL_RULES}


def rules_for_family(family: str) -> tuple[Rule, ...]:
    """The rules that report a missing check of ``family`` (a key of ``model.settings.FAMILIES``)."""
    return tuple(r for r in ALL_RULES if r.family == family)


__all__ = ["ALL_RULES", "RULES_BY_ID", "QuickFix", "Rule", "RuleInput", "rules_for_family"]
