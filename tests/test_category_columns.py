"""A formula term naming a column that holds categories is read like ``C(column)`` by ``no-break-test``.

Invented harbour data and names. Each case marks the expected ``no-break-test`` findings with a
trailing ``# expect: no-break-test``; a case without a marker asserts that the rule does not fire.
"""

from __future__ import annotations

import textwrap

import pytest

from conftest import expected_markers, found
from regvet.engine import analyze
from regvet.model.settings import Settings

_HEAD = "import numpy as np\nimport pandas as pd\nimport statsmodels.formula.api as smf\n\nships = pd.read_csv('ships.csv')\n"

CASES = [
    (
        "pd.Categorical-column-shifts-the-intercept",
        """
        ships["berth"] = pd.Categorical(ships["berth"])
        res = smf.ols("tons ~ cranes + berth", data=ships).fit()  # expect: no-break-test
        print(res.summary())
    """,
    ),
    (
        "astype-category-column",
        """
        ships["line"] = ships["line"].astype("category")
        res = smf.ols("tons ~ cranes + line", data=ships).fit()  # expect: no-break-test
        print(res.params)
    """,
    ),
    (
        "assign-categorical",
        """
        typed = ships.assign(berth=pd.Categorical(ships["berth"]))
        res = smf.ols("tons ~ cranes + berth", data=typed.dropna()).fit()  # expect: no-break-test
        print(res.summary())
    """,
    ),
    (
        "categorical-interacted-with-the-slope",
        """
        ships["berth"] = pd.Categorical(ships["berth"])
        res = smf.ols("tons ~ cranes * berth", data=ships).fit()
        print(res.summary())
    """,
    ),
    (
        "only-categorical-terms-have-no-slope-to-compare",
        """
        ships["berth"] = pd.Categorical(ships["berth"])
        res = smf.ols("tons ~ berth", data=ships).fit()
        print(res.summary())
    """,
    ),
    (
        "ordinary-column-is-not-a-categorical",
        """
        ships["berth"] = ships["berth"].astype(float)
        res = smf.ols("tons ~ cranes + berth", data=ships).fit()
        print(res.summary())
    """,
    ),
    (
        "categorical-of-another-frame",
        """
        other = ships.copy()
        other["berth"] = pd.Categorical(other["berth"])
        res = smf.ols("tons ~ cranes + berth", data=ships).fit()
        print(res.summary())
    """,
    ),
]

# Fixed effects and designs without slopes (names of periods and unit identifiers: common practice).
CASES += [
    (
        "two-ordinary-categoricals-are-not-fixed-effects",
        """
        res = smf.ols("tons ~ cranes + C(line) + C(cargo)", data=ships).fit()  # expect: no-break-test
        print(res.summary())
    """,
    ),
    (
        "unit-and-period-effects",
        """
        res = smf.ols("tons ~ cranes + C(port) + C(year)", data=ships).fit()
        print(res.summary())
    """,
    ),
    (
        "a-unit-identifier-alone-is-a-fixed-effect",
        """
        res = smf.ols("tons ~ cranes + C(ship_id)", data=ships).fit()
        print(res.summary())
    """,
    ),
    (
        "only-a-categorical-has-no-slope",
        """
        res = smf.ols("tons ~ C(line)", data=ships).fit()
        print(res.summary())
    """,
    ),
]


@pytest.mark.parametrize("body", [c[1] for c in CASES], ids=[c[0] for c in CASES])
def test_category_columns_in_formulas(body):
    code = _HEAD + textwrap.dedent(body)
    report = analyze(code, "ships.py", Settings())
    got = [f for f in found(report) if f[1] == "no-break-test"]
    assert got == [m for m in expected_markers(code) if m[1] == "no-break-test"]
