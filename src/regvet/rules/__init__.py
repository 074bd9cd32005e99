"""The rule catalogue: listed explicitly, in the order ``regvet rules`` prints them."""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING

from regvet.rules.base import QuickFix, Rule, RuleInput

#: The rule modules, in the order ``regvet rules`` prints their rules. They are imported on the
#: first use of ``ALL_RULES`` or ``RULES_BY_ID`` (PEP 562): reading a cached report needs
#: ``RuleInput`` alone, and importing every rule costs start-up time.
RULE_MODULES = (
    "no_form_test",
    "no_variance_test",
    "compare_across_outcomes",
    "r2_unadjusted_compare",
    "mismatched_diagnostic",
    "no_serial_test",
    "no_break_test",
    "waiver_without_reason",
    "waiver_unknown_rule",
    "parse_error",
    "incomplete_analysis",
    # from a run's statistics (regvet check --run)
    "rank_lost_to_scaling",
    "heteroskedastic_plain_se",
    "form_rejected",
    "nonnormal_small_sample",
    "hc_small_sample",
    "compare_across_samples",
    "collinear_design",
    "serial_correlation_plain_se",
    "break_rejected",
    "run_failed",
)

if TYPE_CHECKING:
    ALL_RULES: tuple[Rule, ...]
    RULES_BY_ID: dict[str, Rule]


def __getattr__(name: str) -> object:
    if name not in ("ALL_RULES", "RULES_BY_ID"):
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    if name not in globals():
        rules = tuple(importlib.import_module(f"{__name__}.{module}").RULE for module in RULE_MODULES)
        globals().update(ALL_RULES=rules, RULES_BY_ID={r.id: r for r in rules})
    return globals()[name]


def rules_for_family(family: str) -> tuple[Rule, ...]:
    """The rules that report a missing check of ``family`` (a key of ``model.settings.FAMILIES``)."""
    every: tuple[Rule, ...] = __getattr__("ALL_RULES")  # type: ignore[assignment]
    return tuple(r for r in every if r.family == family)


__all__ = ["ALL_RULES", "RULES_BY_ID", "QuickFix", "Rule", "RuleInput", "rules_for_family"]
