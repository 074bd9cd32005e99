"""The words regvet says about its rules: the rule table, one rule's full text, the caution.

One source for every front: ``regvet rules`` and ``regvet explain`` print these, the language
server serves the same documents, and ``tests/test_rule_examples.py`` checks them against the
rule objects.
"""

from __future__ import annotations

import difflib
import re

from regvet.model.caution import CAUTION
from regvet.rules import ALL_RULES, RULES_BY_ID
from regvet.rules.base import Rule
from regvet.sources.waivers import directive

#: The marker the test suite reads on an example's flagged lines (``# expect: RULE``).
_EXPECT = re.compile(r"\s*#\s*expect:[^#\n]*$")
#: An example's configuration line for the test suite (``# regvet config for this example: KEY = VALUE``).
_CONFIG = re.compile(r"^\s*#\s*regvet config for this example:\s*(?P<setting>.+?)\s*$")
#: The mark ``regvet rules`` puts on the rules that judge a run's statistics.
RUN_MARK = "run"


def render_rules() -> str:
    """One line per rule, in catalogue order: id, default severity, `run` for the runtime-only rules, summary;
    then a line that says what `run` means."""
    width = max(len(r.id) for r in ALL_RULES)
    mark = len(RUN_MARK)
    lines = [
        f"{r.id:<{width}}  {r.severity.label:<7}  {RUN_MARK if r.needs_run else '':<{mark}}  {r.summary}"
        for r in ALL_RULES
    ]
    lines += [
        "",
        f"{RUN_MARK}: judges the statistics of a run, so it is reported only by `regvet run` "
        "(or `check --run`), which executes the code.",
    ]
    return "\n".join(lines) + "\n"


def find_rule(name: str) -> Rule | None:
    """The rule called ``name`` in any letter case (``_`` for ``-`` too), or None."""
    return RULES_BY_ID.get(name.strip().lower().replace("_", "-"))


def nearest_rule(name: str) -> str | None:
    """The rule id closest to a misspelt ``name``, or None when none is close."""
    plain = name.strip().lower().replace("_", "-")
    close = difflib.get_close_matches(plain, list(RULES_BY_ID), n=1, cutoff=0.6)
    return close[0] if close else None


def shown_example(code: str) -> tuple[list[str], str]:
    """(settings, code) of an example as a person reads it: the test suite's ``# expect:`` markers
    taken off the flagged lines, its configuration comments taken out and returned as settings."""
    settings: list[str] = []
    lines: list[str] = []
    for line in code.rstrip("\n").split("\n"):
        m = _CONFIG.match(line)
        if m:
            settings.append(m["setting"])
            continue
        lines.append(_EXPECT.sub("", line))
    return settings, "\n".join(lines)


def explain(rule_id: str, caution: bool = True) -> str:
    """The full text for one rule (``KeyError`` for an unknown id); the language server shows the same text.

    ``caution`` ends it with the caution; ``regvet explain`` of several rules prints it once, after the last."""
    r = RULES_BY_ID[rule_id]
    out = [
        f"{r.id} ({r.severity.label} by default{'; runtime mode only' if r.needs_run else ''})",
        "",
        r.summary,
        "",
        r.rationale,
        "",
    ]
    for title, example in (("Flagged:", r.bad), ("Passes:", r.good)):
        settings, code = shown_example(example)
        out += [title, ""]
        if settings:
            out += ["With " + ", ".join(f"`{s}`" for s in settings) + " under `[tool.regvet]`:", ""]
        out += [_indent(code), ""]
    if r.references:
        out += ["References:"] + [f"  - {ref}" for ref in r.references] + [""]
    if r.waivable:
        waiver = directive(False, [r.id], "REASON")
        out += [f"When the check truly does not apply, waive it with `{waiver}`.", ""]
    if caution:
        out += [CAUTION, ""]
    return "\n".join(out)


def _indent(code: str) -> str:
    return "\n".join(("    " + line) if line else "" for line in code.rstrip("\n").split("\n"))
