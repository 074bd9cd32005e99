"""waiver-without-reason: a waiver comment that gives no reason, or that regvet cannot read."""

from __future__ import annotations

from collections.abc import Iterator

from regvet.model.finding import Finding, Severity
from regvet.rules.base import Rule, RuleInput
from regvet.sources.waivers import directive


def check(inp: RuleInput) -> Iterator[Finding]:
    for w in inp.waivers:
        if w.malformed:
            fix = None
            if w.intended and w.expected:  # the reason is there, in another form: the editor can rewrite it
                s = w.span
                fix = {"waiver": [s.line, s.col, s.end_line, s.end_col], "rewrite_waiver": w.expected}
            yield RULE.finding(
                w.span,
                f"This waiver {w.malformed}, so it takes no effect. Write it as `{w.expected}`.",
                fix=fix,
            )
        elif w.reason is None:
            yield RULE.finding(
                w.span,
                "This waiver gives no reason, so it takes no effect. Say why the check does not apply, as in "
                f"`{directive(w.file_wide, w.rules, 'REASON')}`.",
            )


RULE = Rule(
    id="waiver-without-reason",
    severity=Severity.WARNING,
    summary="A waiver comment gives no reason, or not in the form regvet reads, so it takes no effect.",
    rationale=(
        "A waiver records a judgement: this check does not apply here, and why. Without the why, a reviewer "
        "cannot tell a considered decision from a silenced warning, so regvet ignores waivers without a "
        "reason. Also fires when a waiver names no rule, or separates its reason with something other than "
        "the word `because` (` -- `, a colon); the message shows the waiver in the expected form.\n\n"
        "Syntax: `# regvet: waive RULE[, RULE] because REASON` at the end of the finding's first line or alone "
        "on the line above it; `# regvet: waive-file RULE[, RULE] because REASON` anywhere for the whole file. "
        "Waived findings stay in JSON and SARIF output, marked as suppressed with the reason. A waiver that "
        "names a rule regvet does not have is `waiver-unknown-rule`."
    ),
    bad="""\
import pandas as pd
import statsmodels.formula.api as smf

crossings = pd.read_csv("crossings.csv")
res = smf.ols("riders ~ fare", data=crossings).fit()  # regvet: waive no-form-test  # expect: waiver-without-reason
print(res.params)
""",
    good="""\
import pandas as pd
import statsmodels.formula.api as smf

crossings = pd.read_csv("crossings.csv")
res = smf.ols("riders ~ fare", data=crossings).fit()  # regvet: waive no-form-test because fare enters linearly by design
print(res.params)
""",
    check=check,
    waivable=False,
)
