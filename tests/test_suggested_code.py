"""Suggested code in findings uses the fit's own name and the file's own import aliases.

Each case is a small harbour-freight script (invented names). The suggestion is then appended
to the script and run for real with statsmodels on invented data, so a suggestion that would
not run as written fails the test.
"""

from __future__ import annotations

import re
import subprocess
import sys
import textwrap

import pytest

from regvet.engine import analyze
from regvet.model.settings import Settings

DATA = """\
import numpy as np
import pandas as pd

_rng = np.random.default_rng(8)
tons = pd.DataFrame({"cranes": _rng.normal(5, 1, 60)}, index=pd.date_range("2021-01-04", periods=60, freq="W-MON"))
tons["tons"] = 30 + 2 * tons["cranes"] + _rng.normal(0, 1, 60)
"""

CASES = [
    (
        "aliases-and-name",
        """
        import statsmodels.formula.api as smf
        import statsmodels.stats.api as sms
        from statsmodels.stats.diagnostic import linear_reset as lr

        m1 = smf.ols("tons ~ cranes", data=tons).fit()
        print(m1.summary())
    """,
        {
            "no-form-test": "lr(m1, power=3, use_f=True)",
            "no-variance-test": "sms.het_breuschpagan(m1.resid, m1.model.exog)",
            "no-serial-test": "sms.acorr_breusch_godfrey(m1, nlags=...)",
        },
    ),
    (
        "module-alias",
        """
        import statsmodels.formula.api as smf
        import statsmodels.stats.diagnostic as dg

        freight = smf.ols("tons ~ cranes", data=tons).fit()
        print(freight.summary())
    """,
        {
            "no-form-test": "dg.linear_reset(freight, power=3, use_f=True)",
            "no-variance-test": "dg.het_breuschpagan(freight.resid, freight.model.exog)",
            "no-serial-test": "dg.acorr_breusch_godfrey(freight, nlags=...)",
        },
    ),
    (
        "nothing-imported-yet",
        """
        import statsmodels.formula.api as smf

        fit_a = smf.ols("tons ~ cranes", data=tons).fit()
        print(fit_a.summary())
    """,
        {
            "no-form-test": "linear_reset(fit_a, power=3, use_f=True)",
            "no-variance-test": "het_breuschpagan(fit_a.resid, fit_a.model.exog)",
            "no-serial-test": "acorr_breusch_godfrey(fit_a, nlags=...)",
        },
    ),
    (
        "no-simple-name",
        """
        import statsmodels.formula.api as smf

        fits = {"all": smf.ols("tons ~ cranes", data=tons).fit()}
        print(fits["all"].summary())
    """,
        {"no-form-test": "linear_reset(res, power=3, use_f=True)"},
    ),
]


def _suggestions(code: str) -> dict[str, str]:
    report = analyze(code, "freight.py", Settings())
    out = {}
    for f in report.findings:
        calls = re.findall(r"`([A-Za-z_][\w.]*\([^`]*\))`", f.message)
        out[f.rule] = next((c for c in calls if "(" in c and not c.startswith(".fit")), "")
    return out


@pytest.mark.parametrize("body, expected", [(c[1], c[2]) for c in CASES], ids=[c[0] for c in CASES])
def test_suggested_code_uses_the_fits_name_and_the_files_aliases(body, expected):
    code = DATA + textwrap.dedent(body)
    got = _suggestions(code)
    for rule, call in expected.items():
        assert got.get(rule) == call, (rule, got)


@pytest.mark.parametrize("body, expected", [(c[1], c[2]) for c in CASES[:3]], ids=[c[0] for c in CASES[:3]])
def test_suggested_code_runs_as_written(body, expected, tmp_path):
    code = DATA + textwrap.dedent(body)
    calls = list(_suggestions(code).values())
    assert calls
    script = code + "".join(f"print({c.replace('...', '4')})\n" for c in calls)
    # the names not imported yet are imported where a quick fix would import them
    script = "from statsmodels.stats.diagnostic import linear_reset, het_breuschpagan, acorr_breusch_godfrey\n" + script
    path = tmp_path / "freight.py"
    path.write_text(script)
    proc = subprocess.run([sys.executable, str(path)], capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr[-2000:]
