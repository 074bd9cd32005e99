"""Rules that judge a run's statistics: each example is run for real (child process, probe,
statsmodels) and its marked findings must come out, and none from the good example.

The examples generate invented data from fixed seeds; what they show is regvet's behaviour,
not any published number (those are in test_runtime_stats.py and test_runtime.py).
"""

from __future__ import annotations

import re
from dataclasses import replace
from pathlib import Path

import pytest

from conftest import expected_markers, found
from regvet.engine import analyze
from regvet.model.settings import Settings
from regvet.rules import ALL_RULES
from regvet.runtime.runner import RunCache
from regvet.runtime.session import run_and_judge

RUNTIME = [r for r in ALL_RULES if r.needs_run]
_CONFIG = re.compile(r"#\s*regvet config for this example:\s*(\w+)\s*=\s*(.+)$", re.MULTILINE)


def settings_of(code: str) -> Settings:
    import ast

    s = Settings()
    for key, value in _CONFIG.findall(code):
        parsed = ast.literal_eval(value.strip())
        s = replace(s, **{key: tuple(parsed) if isinstance(parsed, list) else parsed})
    return s


def run_example(tmp_path: Path, name: str, code: str):
    path = tmp_path / f"{name}.py"
    path.write_text(code)
    settings = settings_of(code)
    report = analyze(code, str(path), settings, strict=True)
    judged, result = run_and_judge(report, path, settings, cache=RunCache(tmp_path / "cache"))
    return judged, result


@pytest.mark.parametrize("rule", RUNTIME, ids=lambda r: r.id)
def test_bad_example_is_flagged_when_run(tmp_path, rule):
    report, result = run_example(tmp_path, "bad", rule.bad)
    assert result is not None
    expected = expected_markers(rule.bad, rule.id)
    assert expected, f"{rule.id}: the bad example marks no finding"
    assert found(report, rule.id) == expected, [f.message for f in report.findings]


@pytest.mark.parametrize("rule", RUNTIME, ids=lambda r: r.id)
def test_good_example_passes_when_run(tmp_path, rule):
    report, result = run_example(tmp_path, "good", rule.good)
    assert result is not None and result.end is not None and result.end["status"] == "ok", result.output_tail
    assert found(report, rule.id) == [], [f.message for f in report.findings if f.rule == rule.id]


ESCAPING = """\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf
from ferrylib import publish_table

rng = np.random.default_rng(21)
fare = rng.uniform(2.0, 9.0, 300)
crossings = pd.DataFrame({"fare": fare})
crossings["riders"] = np.exp(6.5 - 0.35 * fare + rng.normal(0, 0.05 * fare, 300))
res = smf.ols("riders ~ fare", data=crossings).fit()
publish_table(res)
"""


def test_a_fit_passed_only_to_code_regvet_cannot_read_is_judged_like_a_used_one(tmp_path):
    # Seen on a real notebook: a fit handed only to a plotting library got `no-form-test` (the static
    # rules count such an escape as a use) while its RESET p < 0.001 gave no `form-rejected`.
    (tmp_path / "ferrylib.py").write_text("def publish_table(res):\n    return res.params\n")
    report, result = run_example(tmp_path, "escapes", ESCAPING)
    assert result is not None and result.end is not None and result.end["status"] == "ok", result.output_tail
    rules = {f.rule: f for f in report.findings}
    assert "form-rejected" in rules and "no-form-test" in rules, sorted(rules)
    assert "heteroskedastic-plain-se" in rules, sorted(rules)
    text = rules["heteroskedastic-plain-se"].message
    assert "its usual t tests are not valid" in text or "its usual t tests may not be valid" in text, text
