"""run-failed: the analysed code did not run to the end in runtime mode."""

from __future__ import annotations

from collections.abc import Iterator

from regvet.model.finding import Finding, Severity
from regvet.model.span import Span
from regvet.rules.base import Rule, RuleInput


def check(inp: RuleInput) -> Iterator[Finding]:
    failure = inp.runtime.failure if inp.runtime is not None else None
    if failure is None:
        return
    lines = [line.strip() for line in failure.detail if line.strip()]
    traceback = bool(lines) and lines[0].startswith("Traceback")
    if traceback:  # from the user's outermost frame (the probe cut it there): keep that frame and the end
        lines = lines[1:]
        if len(lines) > 7:
            lines = [*lines[:2], "...", *lines[-4:]]
    else:
        lines = lines[-4:]
    detail = " | ".join(lines)
    kept = sum(1 for v in inp.runtime.fit_stats.values() for r in v if r.get("stats")) if inp.runtime else 0
    done = (
        f"the statistics of the {kept} fit run{'' if kept == 1 else 's'} completed before that are kept"
        if kept
        else "no fit had run before that"
    )
    yield RULE.finding(
        failure.span or Span(1, 0, 1, 0),
        f"This file's run stopped: {failure.reason}, so the fits it did not reach were not checked; {done}. "
        + (
            f"Make it run to the end; its {'traceback' if traceback else 'last output'}: {detail}."
            if detail
            else "Make it run to the end."
        ),
    )


RULE = Rule(
    id="run-failed",
    severity=Severity.ERROR,
    summary="In runtime mode, the file raised, exited early, timed out or ran out of memory.",
    rationale=(
        "The runtime mode runs each analysed file in a child process (its own folder, standard input closed, "
        "a non-interactive plotting backend, a wall-clock limit `run_timeout` and an address-space limit "
        "`run_memory_mb`). When the run stops before the end, the fits it did not reach have no statistics. "
        "The finding is placed on the line that failed when it is in this file, and carries the traceback "
        "from the first frame of the analysed code on (no frame of regvet's or IPython's; a notebook cell "
        "is named `cell N`), or the reason.\n\n"
        "Runtime mode only."
    ),
    bad="""\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

crossings = pd.DataFrame({"fare": np.linspace(2, 9, 40), "riders": np.linspace(400, 300, 40)})
res = smf.ols("riders ~ fare", data=crossings).fit(cov_type="HC3")
raise RuntimeError("the ferry timetable file is missing")  # expect: run-failed
""",
    good="""\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

crossings = pd.DataFrame({"fare": np.linspace(2, 9, 40), "riders": np.linspace(400, 300, 40)})
res = smf.ols("riders ~ fare", data=crossings).fit(cov_type="HC3")
""",
    check=check,
    needs_run=True,
)
