"""waiver-without-reason: a waiver comment that gives no reason (or names no known rule)."""

from __future__ import annotations

from collections.abc import Iterator

from regvet.model.finding import Finding, Severity
from regvet.rules.base import Rule, RuleInput


def check(inp: RuleInput) -> Iterator[Finding]:
    for w in inp.waivers:
        form = "waive-file" if w.file_wide else "waive"
        if w.malformed:
            yield RULE.finding(
                w.span,
                f"This waiver {w.malformed}; write `# regvet: {form} RULE -- reason`. It has no effect.",
            )
            continue
        unknown = [r for r in w.rules if r not in inp.known_rules]
        if unknown:
            yield RULE.finding(
                w.span,
                f"This waiver names {', '.join(f'`{u}`' for u in unknown)}, which is not a regvet rule "
                "(`regvet rules` lists them); it waives nothing for that name.",
            )
        if w.reason is None:
            yield RULE.finding(
                w.span,
                f"This waiver gives no reason, so it does not take effect. Say why the check does not apply: "
                f"`# regvet: {form} {', '.join(w.rules)} -- reason`.",
            )


RULE = Rule(
    id="waiver-without-reason",
    severity=Severity.WARNING,
    summary="A waiver comment has no reason (the waiver then does not take effect).",
    rationale=(
        "A waiver records a judgement: this check does not apply here, and why. Without the why, a reviewer "
        "cannot tell a considered decision from a silenced warning, so regvet ignores waivers without a "
        "reason. Also fires when a waiver names no rule or an unknown rule id.\n\n"
        "Syntax: `# regvet: waive RULE[, RULE] -- reason` at the end of the finding's first line or alone on "
        "the line above it; `# regvet: waive-file RULE -- reason` anywhere for the whole file. Waived "
        "findings stay in JSON and SARIF output, marked as suppressed with the reason."
    ),
    bad='''\
import pandas as pd
import statsmodels.formula.api as smf

crossings = pd.read_csv("crossings.csv")
res = smf.ols("riders ~ fare", data=crossings).fit()  # regvet: waive no-form-test  # expect: waiver-without-reason
print(res.params)
''',
    good='''\
import pandas as pd
import statsmodels.formula.api as smf

crossings = pd.read_csv("crossings.csv")
res = smf.ols("riders ~ fare", data=crossings).fit()  # regvet: waive no-form-test -- fare enters linearly by design
print(res.params)
''',
    check=check,
    waivable=False,
)
