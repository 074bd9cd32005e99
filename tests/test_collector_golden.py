"""The collector's speed work changes no finding: a scan of the installed statsmodels (sources and tests)
gives exactly the findings recorded, before the optimisations, in ``tests/data/statsmodels_findings.json``.

Each finding is kept as its rule, place, waiver state, related places and a hash of its message. A
deliberate change of what regvet reports on statsmodels refreshes the record with
``REGVET_UPDATE_GOLDEN=1 .venv/bin/python -m pytest tests/test_collector_golden.py`` (say why in the
commit); the test skips on another statsmodels version than the recorded one.
"""

from __future__ import annotations

import hashlib
import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

RECORD = Path(__file__).parent / "data" / "statsmodels_findings.json"


def _row(f: dict, root: str) -> list:
    def rel(p: str) -> str:
        return Path(p).resolve().relative_to(root).as_posix()

    related = [[rel(r["path"]), r["line"], r["column"], r["message"]] for r in f["related"]]
    digest = hashlib.sha256(json.dumps([f["message"], related]).encode()).hexdigest()[:20]
    return [
        rel(f["path"]),
        f["line"],
        f["column"],
        f["end_line"],
        f["end_column"],
        f["rule"],
        f["severity"],
        f["waived"],
        digest,
    ]


def test_statsmodels_findings_are_unchanged():
    import statsmodels

    root = Path(statsmodels.__file__).parent.resolve()
    proc = subprocess.run(
        [sys.executable, "-m", "regvet", "check", str(root), "--format", "json", "--no-config", "--no-cache"],
        capture_output=True,
        text=True,
        timeout=900,
    )
    assert proc.returncode in (0, 1), proc.stderr
    rows = [_row(f, str(root)) for f in json.loads(proc.stdout)["findings"]]
    if os.environ.get("REGVET_UPDATE_GOLDEN") == "1":
        head = json.dumps(statsmodels.__version__)
        RECORD.write_text(
            f'{{"statsmodels": {head}, "findings": [\n' + ",\n".join(json.dumps(r) for r in rows) + "\n]}\n"
        )
    record = json.loads(RECORD.read_text())
    if record["statsmodels"] != statsmodels.__version__:
        pytest.skip(f"recorded on statsmodels {record['statsmodels']}, installed {statsmodels.__version__}")
    assert len(rows) > 300
    missing = [r for r in record["findings"] if r not in rows]
    extra = [r for r in rows if r not in record["findings"]]
    assert (missing, extra) == ([], []), f"{len(missing)} findings gone, {len(extra)} new"


QUIET_SNIPPETS = {
    # each: a module whose uncalled functions must not be skipped, or whose skipping changes nothing
    "self-attribute-read-later": """import statsmodels.api as sm

class Harbour:
    def setup(self):
        self.cov = "HC3"

    def fit(self, y, X):
        res = sm.OLS(y, X).fit(cov_type=self.cov)
        return res.summary()
""",
    "global-list-grown-by-a-helper": """import numpy as np
import statsmodels.api as sm

fits = []

def keep(x):
    fits.append(x)

res = sm.OLS(np.ones(5), np.ones(5)).fit()
keep(res)
print(fits[0].summary())
""",
    "global-rebound": """import numpy as np
import statsmodels.api as sm

res = sm.OLS(np.ones(5), np.ones(5)).fit()

def show():
    print(res.summary())

def reset():
    global res
    res = None

def show_again():
    print(res.summary())
""",
    "numpy-only-helpers-and-a-fit": """import numpy as np
import statsmodels.api as sm

def scale(x):
    return (x - np.mean(x)) / np.std(x)

def fit_it(y, x):
    return sm.OLS(y, sm.add_constant(scale(x))).fit()

def report(y, x):
    res = fit_it(y, x)
    print(res.bse)
""",
}


@pytest.mark.parametrize("name", sorted(QUIET_SNIPPETS))
def test_skipping_quiet_functions_changes_no_finding_in_snippets(name, monkeypatch):
    from regvet.analysis.collect import Collector
    from regvet.engine import analyze

    code = QUIET_SNIPPETS[name]
    skipping = analyze(code, "snippet.py", strict=True)
    monkeypatch.setattr(Collector, "quiet", lambda self, func, seen: False)
    running = analyze(code, "snippet.py", strict=True)
    assert [(f.rule, f.span, f.message) for f in skipping.findings] == [
        (f.rule, f.span, f.message) for f in running.findings
    ]
    assert running.findings  # each snippet has something to find


def test_skipping_quiet_functions_changes_no_finding_over_statsmodels_regression(monkeypatch):
    """Before/after over a folder: the same findings with every uncalled function run as without skipping."""
    import statsmodels

    from regvet.analysis.collect import Collector
    from regvet.cli import analyze_file
    from regvet.model.settings import Settings

    root = Path(statsmodels.__file__).parent
    files = sorted((root / "regression").rglob("*.py")) + sorted((root / "stats" / "tests").glob("test_d*.py"))

    def scan() -> list:
        texts: dict = {}
        cache: dict = {}
        out = []
        for f in files:
            report = analyze_file(f, Settings(), root, texts, cache)
            assert report.crashes == ()
            out += [(report.path, f.rule, f.span, f.message, f.related) for f in report.findings]
        return out

    skipping = scan()
    monkeypatch.setattr(Collector, "quiet", lambda self, func, seen: False)
    assert scan() == skipping and len(skipping) > 20
