"""parse-error: the file cannot be read as Python (or as a notebook)."""

from __future__ import annotations

from collections.abc import Iterator

from regvet.model.finding import Finding, Severity
from regvet.rules.base import Rule, RuleInput


def check(inp: RuleInput) -> Iterator[Finding]:
    err = inp.source_error
    if err is not None:
        yield RULE.finding(
            err.span,
            f"This file cannot be analysed: {err.message}, so nothing in it was checked. Fix that and check it again.",
        )
    for cell in inp.broken_cells:
        yield RULE.finding(
            cell.span,
            f"This notebook cell cannot be analysed: {cell.message}, so fits that depend on it may go unchecked. "
            "The other cells were checked without it, as Jupyter runs each cell on its own; fix it to have it checked.",
        )


RULE = Rule(
    id="parse-error",
    severity=Severity.ERROR,
    summary="The file cannot be parsed; nothing in it was checked.",
    rationale=(
        "regvet reads code without running it, so a file with a syntax error (or a notebook whose JSON is "
        "broken) cannot be analysed at all: any fit in it goes unchecked. One finding is placed at the error "
        "position and the scan goes on with the other files. In a notebook, a code cell that does not parse "
        "on its own gets the finding and the other cells are still checked (Jupyter runs each cell on its "
        "own)."
    ),
    bad="""\
import statsmodels.formula.api as smf

res = smf.ols("riders ~ fare", data=crossings).fit(  # expect: parse-error
""",
    good="""\
import statsmodels.formula.api as smf

res = smf.ols("riders ~ fare", data=crossings).fit()
""",
    check=check,
    waivable=False,
    blocks_run=True,
)
