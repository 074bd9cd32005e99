"""The words regvet says about its rules: the rule table, one rule's full text, the caution.

One source for every front: ``regvet rules`` and ``regvet explain`` print these, the language
server serves the same documents, and ``tests/test_rule_examples.py`` checks them against the
rule objects.
"""

from __future__ import annotations

from regvet.rules import ALL_RULES, RULES_BY_ID

CAUTION = (
    "Passing regvet does not make a model right. regvet finds specification checks that are missing or "
    "failed; it cannot judge whether the economics of a model make sense, whether the variables measure "
    "what they should, or whether the data support causal claims. That judgement stays with the analyst, "
    "and results that inform policy or money deserve review by a qualified statistician or econometrician "
    "under the rules of their field or institution."
)


def render_rules() -> str:
    """One line per rule, in catalogue order: id, default severity, summary."""
    width = max(len(r.id) for r in ALL_RULES)
    lines = [f"{r.id:<{width}}  {r.severity.label:<7}  {r.summary}" for r in ALL_RULES]
    return "\n".join(lines) + "\n"


def explain(rule_id: str) -> str:
    """The full text for one rule (``KeyError`` for an unknown id); the language server shows the same text."""
    r = RULES_BY_ID[rule_id]
    out = [f"{r.id} ({r.severity.label} by default)", "", r.summary, "", r.rationale, ""]
    out += ["Flagged:", "", _indent(r.bad), "", "Passes:", "", _indent(r.good), ""]
    if r.references:
        out += ["References:"] + [f"  - {ref}" for ref in r.references] + [""]
    out += [f"Waive with `# regvet: waive {r.id} -- reason` when the check truly does not apply.", ""]
    out += [CAUTION, ""]
    return "\n".join(out)


def _indent(code: str) -> str:
    return "\n".join(("    " + line) if line else "" for line in code.rstrip("\n").split("\n"))
