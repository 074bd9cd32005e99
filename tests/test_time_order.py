"""Time order belongs to the fit's own data: each kind of evidence, positive and negative.

Each case is a small harbour-freight script (invented data and names) whose expected
``no-serial-test`` findings are marked with trailing ``# expect: no-serial-test`` comments; a case
without a marker asserts that the rule does not fire. The list of evidence follows the rule's
rationale (``regvet explain no-serial-test``); the date-like column names are common practice.
"""

from __future__ import annotations

import json
import textwrap

import pytest

from conftest import expected_markers, found
from regvet.engine import analyze
from regvet.model.settings import Settings
from regvet.project import FileModules

SERIAL = "no-serial-test"

_HEAD = """\
import numpy as np
import pandas as pd
import statsmodels.api as sm
import statsmodels.formula.api as smf

"""


def _script(body: str) -> str:
    return _HEAD + textwrap.dedent(body).strip("\n") + "\n"


# (id, body, settings)
CASES = [
    # --- a date or period index -----------------------------------------------------------------
    (
        "read-index_col-parsed",
        """
        tons = pd.read_csv("tons.csv", parse_dates=["day"], index_col="day")
        res = smf.ols("tons ~ cranes + rain", data=tons).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        None,
    ),
    (
        "read-index_col-0-parse_dates-true",
        """
        tons = pd.read_csv("tons.csv", index_col=0, parse_dates=True)
        res = smf.ols("tons ~ cranes + rain", data=tons).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        None,
    ),
    (
        "read-index_col-date-like-name",
        """
        tons = pd.read_excel("tons.xlsx", index_col="Month")
        res = smf.ols("tons ~ cranes + rain", data=tons).fit()  # expect: no-serial-test
        print(res.pvalues)
    """,
        None,
    ),
    (
        "read-index_col-not-date-like",
        """
        tons = pd.read_csv("tons.csv", index_col="berth")
        res = smf.ols("tons ~ cranes + rain", data=tons).fit()
        print(res.summary())
    """,
        None,
    ),
    (
        "read-parse_dates-only-is-an-ordinary-column",
        """
        tons = pd.read_csv("tons.csv", parse_dates=["arrived"])
        res = smf.ols("tons ~ cranes + rain", data=tons).fit()
        print(res.summary())
    """,
        None,
    ),
    (
        "set_index-of-parsed-date-column",
        """
        tons = pd.read_csv("tons.csv", parse_dates=["day"])
        daily = tons.set_index("day")
        res = smf.ols("tons ~ cranes + rain", data=daily).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        None,
    ),
    (
        "set_index-of-to_datetime-column",
        """
        tons = pd.read_csv("tons.csv")
        tons["day"] = pd.to_datetime(tons["day"], format="%Y-%m-%d")
        tons = tons.dropna().set_index("day")
        res = smf.ols("tons ~ cranes + rain", data=tons).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        None,
    ),
    (
        "set_index-of-to_datetime-call",
        """
        tons = pd.read_csv("tons.csv")
        tons = tons.set_index(pd.to_datetime(tons["stamp"]))
        res = smf.ols("tons ~ cranes + rain", data=tons).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        None,
    ),
    (
        "set_index-of-a-date-like-name",
        """
        tons = pd.read_csv("tons.csv").set_index("quarter")
        res = smf.ols("tons ~ cranes + rain", data=tons).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        None,
    ),
    (
        "set_index-of-another-column",
        """
        tons = pd.read_csv("tons.csv").set_index("berth")
        res = smf.ols("tons ~ cranes + rain", data=tons).fit()
        print(res.summary())
    """,
        None,
    ),
    (
        "index-assigned-dates",
        """
        tons = pd.read_csv("tons.csv")
        tons.index = pd.PeriodIndex(tons["q"], freq="Q")
        res = smf.ols("tons ~ cranes + rain", data=tons).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        None,
    ),
    (
        "date_range-as-index",
        """
        rng = np.random.default_rng(5)
        frame = pd.DataFrame({"tons": rng.normal(size=60), "cranes": rng.normal(size=60)},
                             index=pd.date_range("2021-01-01", periods=60, freq="W"))
        res = smf.ols("tons ~ cranes", data=frame).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        None,
    ),
    (
        "frame-built-from-time-ordered-columns",
        """
        tons = pd.read_csv("tons.csv", parse_dates=["day"], index_col="day")
        both = pd.DataFrame({"tons": tons["tons"], "cranes": tons["cranes"]})
        res = smf.ols("tons ~ cranes", data=both).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        None,
    ),
    (
        "concat-of-time-ordered-frames",
        """
        north = pd.read_csv("north.csv", parse_dates=["day"], index_col="day")
        south = pd.read_csv("south.csv", parse_dates=["day"], index_col="day")
        both = pd.concat([north, south])
        res = smf.ols("tons ~ cranes", data=both).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        None,
    ),
    (
        "asfreq",
        """
        tons = pd.read_csv("tons.csv").asfreq("D")
        res = smf.ols("tons ~ cranes + rain", data=tons).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        None,
    ),
    (
        "resample",
        """
        tons = pd.read_csv("tons.csv").resample("M").sum()
        res = smf.ols("tons ~ cranes + rain", data=tons).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        None,
    ),
    (
        "sorted-by-date-column",
        """
        tons = pd.read_csv("tons.csv", parse_dates=["day"])
        tons = tons.sort_values(["berth", "day"])
        res = smf.ols("tons ~ cranes + rain", data=tons).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        None,
    ),
    (
        "sorted-by-another-column",
        """
        tons = pd.read_csv("tons.csv", parse_dates=["day"])
        tons = tons.sort_values("berth")
        res = smf.ols("tons ~ cranes + rain", data=tons).fit()
        print(res.summary())
    """,
        None,
    ),
    # --- lags, leads and differences of its own data ---------------------------------------------
    (
        "groupby-shift",
        """
        tons = pd.read_csv("tons.csv")
        tons["tons_prev"] = tons.groupby("berth")["tons"].shift(1)
        res = smf.ols("tons ~ tons_prev + rain", data=tons.dropna()).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        None,
    ),
    (
        "pct_change",
        """
        tons = pd.read_csv("tons.csv")
        growth = tons[["tons", "cranes"]].pct_change().dropna()
        res = smf.ols("tons ~ cranes", data=growth).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        None,
    ),
    (
        "diff-in-formula",
        """
        tons = pd.read_csv("tons.csv")
        res = smf.ols("tons.diff() ~ cranes", data=tons).fit()
        print(res.summary())
    """,
        None,
    ),
    (
        "lagmat-arrays",
        """
        from statsmodels.tsa.tsatools import lagmat

        tons = pd.read_csv("tons.csv")
        lags = lagmat(tons["tons"].to_numpy(), maxlag=2, trim="both")
        res = sm.OLS(tons["tons"].to_numpy()[2:], sm.add_constant(lags)).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        None,
    ),
    (
        "add_trend",
        """
        from statsmodels.tsa.tsatools import add_trend

        tons = pd.read_csv("tons.csv")
        X = add_trend(tons[["cranes", "rain"]], trend="ct")
        res = sm.OLS(tons["tons"], X).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        None,
    ),
    # --- not evidence ---------------------------------------------------------------------------------
    (
        "dates-in-arithmetic",
        """
        tons = pd.read_csv("tons.csv")
        tons["days_waiting"] = (pd.to_datetime(tons["left"]) - pd.to_datetime(tons["arrived"])).dt.days
        res = smf.ols("tons ~ days_waiting + cranes", data=tons).fit()
        print(res.summary())
    """,
        None,
    ),
    (
        "dates-as-ordinary-column",
        """
        tons = pd.read_csv("tons.csv")
        tons["arrived"] = pd.to_datetime(tons["arrived"])
        res = smf.ols("tons ~ cranes + rain", data=tons).fit()
        print(res.summary())
    """,
        None,
    ),
    (
        "time-series-elsewhere-in-the-file",
        """
        from statsmodels.tsa.stattools import adfuller

        daily = pd.read_csv("daily.csv", parse_dates=["day"], index_col="day")
        print(adfuller(daily["tons"]))
        ships = pd.read_csv("ships.csv")
        res = smf.ols("tons ~ length + draught", data=ships).fit()
        print(res.summary())
    """,
        None,
    ),
    (
        "another-frame-is-time-ordered",
        """
        daily = pd.read_csv("daily.csv", parse_dates=["day"], index_col="day")
        print(daily.describe())
        ships = pd.read_csv("ships.csv")
        res = smf.ols("tons ~ length + draught", data=ships).fit()
        print(res.summary())
    """,
        None,
    ),
    # --- the configured time column ------------------------------------------------------------------
    (
        "time_column-is-a-column-of-its-data",
        """
        tons = pd.read_csv("tons.csv", parse_dates=["day"])
        res = smf.ols("tons ~ cranes + rain", data=tons).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        Settings(time_column="day"),
    ),
    (
        "time_column-in-the-formula",
        """
        tons = pd.read_csv("tons.csv")
        res = smf.ols("tons ~ cranes + rain + day", data=tons).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        Settings(time_column="day"),
    ),
    (
        "time_column-not-a-column-of-its-data",
        """
        tons = pd.read_csv("tons.csv")
        res = smf.ols("tons ~ cranes + rain", data=tons).fit()
        print(res.summary())
    """,
        Settings(time_column="day"),
    ),
    # --- flow: helpers, copies, selections -------------------------------------------------------------
    (
        "helper-function-returns-indexed-frame",
        """
        def load(path):
            frame = pd.read_csv(path, parse_dates=["day"])
            return frame.set_index("day").sort_index()

        tons = load("tons.csv")
        sub = tons.loc[tons["rain"] > 0].copy()
        res = smf.ols("tons ~ cranes", data=sub).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        None,
    ),
    (
        "query-and-column-selection",
        """
        tons = pd.read_csv("tons.csv", parse_dates=["day"], index_col="day")
        sub = tons.query("cranes > 2")[["tons", "cranes", "rain"]]
        X = sm.add_constant(sub[["cranes", "rain"]])
        res = sm.OLS(sub["tons"], X).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        None,
    ),
]


@pytest.mark.parametrize("body, settings", [(c[1], c[2]) for c in CASES], ids=[c[0] for c in CASES])
def test_time_order_evidence(body, settings):
    code = _script(body)
    report = analyze(code, "harbour.py", settings or Settings())
    assert report.facts is not None and report.facts.fits, "no fit was analysed"
    assert [f for f in found(report) if f[1] == SERIAL] == [m for m in expected_markers(code) if m[1] == SERIAL]


def _serial(report):
    return [f for f in report.findings if f.rule == SERIAL]


def test_the_message_names_the_evidence_and_where_it_is():
    code = _script("""
        tons = pd.read_csv("tons.csv")
        tons["day"] = pd.to_datetime(tons["day"])
        daily = tons.set_index("day")
        res = smf.ols("tons ~ cranes + rain", data=daily).fit()
        print(res.summary())
    """)
    (finding,) = _serial(analyze(code, "harbour.py", Settings()))
    assert "`tons.set_index('day')`" in finding.message or '`tons.set_index("day")`' in finding.message
    assert "line 8" in finding.message  # the set_index call, after the five lines of imports
    assert any(r.span.line == 8 and "time order" in r.message for r in finding.related)


def test_a_project_module_helper_gives_its_frame_time_order(tmp_path):
    (tmp_path / "freight_data.py").write_text(
        "import pandas as pd\n\n\ndef daily(path):\n"
        "    return pd.read_csv(path, parse_dates=['day'], index_col='day')\n"
    )
    main = tmp_path / "model.py"
    code = _script("""
        from freight_data import daily

        tons = daily("tons.csv")
        res = smf.ols("tons ~ cranes + rain", data=tons).fit()  # expect: no-serial-test
        print(res.summary())
    """)
    main.write_text(code)
    report = analyze(code, str(main), Settings(), provider=FileModules(root=tmp_path, main=main))
    assert [f for f in found(report) if f[1] == SERIAL] == [m for m in expected_markers(code) if m[1] == SERIAL]
    (finding,) = _serial(report)
    assert "freight_data.py, line 5" in finding.message


def _notebook(*cells: str) -> str:
    return json.dumps(
        {
            "nbformat": 4,
            "nbformat_minor": 5,
            "metadata": {},
            "cells": [
                {
                    "cell_type": "code",
                    "metadata": {},
                    "execution_count": None,
                    "outputs": [],
                    "source": textwrap.dedent(c).strip("\n").splitlines(keepends=True),
                }
                for c in cells
            ],
        }
    )


def test_notebook_evidence_across_cells():
    nb = _notebook(
        "import pandas as pd\nimport statsmodels.formula.api as smf\n",
        "tons = pd.read_csv('tons.csv', parse_dates=['day'])\ntons = tons.set_index('day')\n",
        "res = smf.ols('tons ~ cranes', data=tons).fit()\nprint(res.summary())\n",
    )
    (finding,) = _serial(analyze(nb, "harbour.ipynb", Settings()))
    (where,) = [r.span for r in finding.related if "time order" in r.message]
    assert (where.cell, where.line) == (1, 2)  # the second cell (0-based index), its second line
    assert where.describe() in finding.message


def test_notebook_dates_in_arithmetic_are_not_evidence():
    nb = _notebook(
        "import pandas as pd\nimport statsmodels.formula.api as smf\n",
        "ships = pd.read_csv('ships.csv')\nships['wait'] = (pd.to_datetime(ships.out) - pd.to_datetime(ships.inn)).dt.days\n",
        "res = smf.ols('tons ~ wait', data=ships).fit()\nprint(res.summary())\n",
    )
    assert _serial(analyze(nb, "harbour.ipynb", Settings())) == []


@pytest.mark.runtime
def test_the_run_shows_a_date_index_the_code_did_not(tmp_path):
    # Real run: `set_axis` of a date range is no evidence the static reading counts, but the fit's
    # rows then have a DatetimeIndex, which the probe reports.
    from regvet.runtime.runner import RunCache
    from regvet.runtime.session import run_and_judge

    code = _script("""
        rng = np.random.default_rng(4)
        frame = pd.DataFrame({"cranes": rng.normal(5, 1, 80)})
        frame["tons"] = 20 + 2 * frame["cranes"] + rng.normal(0, 1, 80)
        frame = frame.set_axis(pd.date_range("2020-01-06", periods=80, freq="W-MON"))
        res = smf.ols("tons ~ cranes", data=frame).fit()
        print(res.summary())
    """)
    path = tmp_path / "weekly.py"
    path.write_text(code)
    static = analyze(code, str(path), Settings(), strict=True)
    assert _serial(static) == []
    judged, result = run_and_judge(static, path, Settings(), cache=RunCache(tmp_path / "cache"))
    assert result is not None
    (finding,) = _serial(judged)
    assert "the run shows it" in finding.message and "DatetimeIndex" in finding.message
