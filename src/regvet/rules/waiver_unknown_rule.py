"""waiver-unknown-rule: a waiver comment that names a rule regvet does not have."""

from __future__ import annotations

from collections.abc import Collection, Iterator

from regvet.model.finding import Finding, Severity
from regvet.rules.base import Rule, RuleInput
from regvet.sources.waivers import directive


def nearest(name: str, known: Collection[str]) -> str | None:
    """The known rule id closest to ``name`` (any letter case, ``_`` for ``-``), or None when none is close."""
    import difflib

    plain = name.strip(":;.`'\"").lower().replace("_", "-")
    if plain in known:
        return plain
    close = difflib.get_close_matches(plain, sorted(known), n=1, cutoff=0.6)
    return close[0] if close else None


def check(inp: RuleInput) -> Iterator[Finding]:
    for w in inp.waivers:
        unknown = [r for r in w.rules if r not in inp.known_rules]
        if not unknown:
            continue
        guesses = [(name, nearest(name, inp.known_rules)) for name in unknown]
        names = " and ".join(f"`{name}`" for name in unknown)
        if len(unknown) == 1:
            text = f"This waiver names {names}, which is not a regvet rule, so it waives nothing for that name."
        else:
            text = f"This waiver names {names}, which are not regvet rules, so it waives nothing for them."
        meant = [(n, g) for n, g in guesses if g]
        if len(unknown) == 1 and meant:
            text += f" Did you mean `{meant[0][1]}`?"
        elif meant:
            text += " Did you mean " + ", ".join(f"`{g}` for `{n}`" for n, g in meant) + "?"
        else:
            text += " `regvet rules` lists the rules."
        fix = None
        if w.reason is not None and not w.malformed and all(g for _, g in guesses):
            # every misspelt name has a near rule: the editor can offer the corrected waiver
            named = dict(guesses)
            rules = list(dict.fromkeys(named.get(r) or r for r in w.rules))
            s = w.span
            fix = {
                "waiver": [s.line, s.col, s.end_line, s.end_col],
                "rewrite_waiver": directive(w.file_wide, rules, w.reason),
                "title": "Correct the waiver: " + ", ".join(f"`{n}` to `{g}`" for n, g in guesses),
            }
        yield RULE.finding(w.span, text, fix=fix)


RULE = Rule(
    id="waiver-unknown-rule",
    severity=Severity.WARNING,
    summary="A waiver comment names a rule regvet does not have, so it waives nothing for that name.",
    rationale=(
        "A waiver is read by the rule ids it names. A misspelt id (a typo, other letter case, `_` for `-`) "
        "matches no finding, so the finding it was meant to waive is still reported and the waiver only looks "
        "like a decision. The message suggests the nearest rule id; `regvet rules` lists them all. The other "
        "rules the waiver names still take effect when it gives a reason."
    ),
    bad="""\
import pandas as pd
import statsmodels.formula.api as smf

crossings = pd.read_csv("crossings.csv")
res = smf.ols("riders ~ fare", data=crossings).fit()  # regvet: waive no-from-test because fare enters linearly by design  # expect: waiver-unknown-rule
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
