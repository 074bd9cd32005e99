"""incomplete-analysis: regvet stopped short of analysing (part of) the file, so fits may be unchecked.

Causes, all of them bounds that hold whatever the input (README, "Reliability"): a formula
that expands to too many terms to read, a file nested too deeply, larger than ``analysis_max_mb``
or taking longer than the per-file time budget, and a failure of regvet itself (a bug: the finding says so, and the CLI
exits 3 at the end of the scan).
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator

from regvet.analysis.formula import MAX_TERMS
from regvet.model.finding import Finding, Severity
from regvet.model.report import Crash
from regvet.model.span import Span
from regvet.rules.base import Rule, RuleInput, opening

_START = Span(1, 0, 1, 0)


def check(inp: RuleInput) -> Iterator[Finding]:
    for why in inp.stopped:
        budget = next((f", or raise `{key}`" for key in ("analysis_budget", "analysis_max_mb") if key in why), "")
        yield RULE.finding(
            _START,
            f"This file was not analysed: {why}, so none of its fits were checked. "
            f"Split it into smaller files{budget}.",
        )
    for fit in inp.judged_fits():
        if fit.formula_too_large:
            yield RULE.fit_finding(
                fit,
                f"{opening(fit)} has a formula that expands to more than {MAX_TERMS:,} terms, too many for regvet "
                "to read, so the checks that depend on its terms were not made. "
                "Write out the terms the model needs: this one has more columns than most samples have rows.",
            )


def crash_findings(crashes: Iterable[Crash]) -> list[Finding]:
    """One finding for each part of regvet that failed on the file (the engine adds them after the rules ran)."""
    out = []
    for crash in crashes:
        where = "the analysis" if crash.where == "analysis" else f"rule `{crash.where}`"
        out.append(
            RULE.finding(
                _START,
                f"This file's analysis failed in {where}: {crash.message}, so the findings it would have given "
                "are missing. This is a bug in regvet: please report it.",
            )
        )
    return out


RULE = Rule(
    id="incomplete-analysis",
    severity=Severity.WARNING,
    summary="regvet could not analyse all of the file (too large, too deep, over its time budget, or a failure).",
    rationale=(
        "regvet keeps every stage of its analysis bounded, whatever the input, so that one hostile or "
        "generated file cannot stall a scan or an editor. When a bound is reached the file (or the fit) is "
        "reported instead of being passed over silently: a formula that expands to more terms than regvet "
        "reads (powers of long sums, products of many factors), code nested too deeply for the analyser, "
        "Python code larger than `analysis_max_mb` (the parser alone needs about 100 bytes of memory per "
        "byte of code), or a file that takes longer than the per-file time budget. Fits in what was not analysed may lack "
        "checks that regvet could not ask for. A failure of regvet itself is reported the same way, says "
        "that it is a bug, and makes `regvet check` exit with status 3. The finding cannot be waived: "
        "shorten the formula or split the file."
    ),
    bad="""\
import statsmodels.formula.api as smf

wide = smf.ols(  # expect: incomplete-analysis
    "riders ~ (fare + fuel_price + wind_speed + rain_mm + holiday + ferries + berths + tide + gusts + fog + ice)**11",
    data=crossings,
).fit()
print(wide.params)
""",
    good="""\
import statsmodels.formula.api as smf

wide = smf.ols("riders ~ (fare + fuel_price + wind_speed)**2 + rain_mm + holiday", data=crossings).fit()
print(wide.params)
""",
    check=check,
    waivable=False,
)
