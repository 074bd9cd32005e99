"""One finding per place: a loop or comprehension that makes several fits at one call site gets one
finding per rule at that site, naming how many fits the site makes, their specifications and, when
only some of them are flagged, which. JSON keeps every fit in ``related``; the hover lists them.

Each case is a small ferry-ridership script (invented names); ``# expect: RULE`` markers give where
the findings are (one per rule and site), and each row says, per marked rule, which specifications
the site makes and which of them are flagged.
"""

from __future__ import annotations

import json
import textwrap

import pytest

from conftest import expected_markers, found
from regvet.engine import analyze
from regvet.model.settings import Settings
from regvet.rules.base import listed as and_list
from regvet.status import fits_at, hover_markdown

VAR = "no-variance-test"
FORM = "no-form-test"
SERIAL = "no-serial-test"

_HEAD = """\
import pandas as pd
import statsmodels.api as sm
import statsmodels.formula.api as smf
from statsmodels.stats.diagnostic import het_breuschpagan, linear_reset

ferries = pd.read_csv("ferries.csv")
"""

SPREAD = ["`riders ~ fare`", "`riders ~ temp`", "`riders ~ wind`"]
TWO = ["`riders ~ fare`", "`riders ~ temp`"]
THREE = ["`riders ~ fare`", "`riders ~ fare + temp`", "`riders ~ fare + temp + wind`"]


def _script(body: str) -> str:
    return _HEAD + textwrap.dedent(body).strip("\n") + "\n"


# (id, body, {rule: (every specification at the site, the flagged ones)})
CASES = [
    (
        "loop-over-three-formulas",
        """
        for formula in ["riders ~ fare", "riders ~ fare + temp", "riders ~ fare + temp + wind"]:
            res = smf.ols(formula, data=ferries).fit()  # expect: no-form-test, no-variance-test
            print(res.summary())
    """,
        {FORM: (THREE, THREE), VAR: (THREE, THREE)},
    ),
    (
        "comprehension-one-checked",
        """
        fits = [smf.ols(f, data=ferries).fit() for f in ["riders ~ fare", "riders ~ temp", "riders ~ wind"]]  # expect: no-form-test, no-variance-test
        print(het_breuschpagan(fits[1].resid, fits[1].model.exog))
        for r in fits:
            print(r.pvalues)
    """,
        {VAR: (SPREAD, ["`riders ~ fare`", "`riders ~ wind`"]), FORM: (SPREAD, SPREAD)},
    ),
    (
        "comprehension-only-one-unchecked",
        """
        fits = [smf.ols(f, data=ferries).fit() for f in ["riders ~ fare", "riders ~ temp"]]  # expect: no-form-test
        print(linear_reset(fits[0], power=3, use_f=True))
        for r in fits:
            print(r.params)
    """,
        {FORM: (["`riders ~ fare`", "`riders ~ temp`"], ["`riders ~ temp`"])},
    ),
    (
        "helper-called-in-a-loop",
        """
        def fit_one(cols):
            return sm.OLS(ferries["riders"], sm.add_constant(ferries[cols])).fit()

        for cols in (["fare"], ["fare", "temp"]):
            print(fit_one(cols).summary())  # expect: no-form-test, no-variance-test
    """,
        {r: (["`riders` on `fare`", "`riders` on `fare + temp`"],) * 2 for r in (VAR, FORM)},
    ),
    (
        "same-formula-on-two-harbours",
        """
        def fit_port(frame):
            return smf.ols("riders ~ fare", data=frame).fit()

        for name in ["north.csv", "south.csv"]:
            print(fit_port(pd.read_csv(name)).summary())  # expect: no-form-test, no-variance-test
    """,
        {r: (["fit 1 `riders ~ fare`", "fit 2 `riders ~ fare`"],) * 2 for r in (VAR, FORM)},
    ),
    (
        "check-applied-conditionally-in-the-loop",
        """
        for formula in ["riders ~ fare", "riders ~ fare + temp", "riders ~ fare + temp + wind"]:
            res = smf.ols(formula, data=ferries).fit()  # expect: no-form-test, no-variance-test
            if "temp" in formula:
                print(het_breuschpagan(res.resid, res.model.exog))
            print(res.pvalues)
    """,
        {VAR: (THREE, ["`riders ~ fare`"]), FORM: (THREE, THREE)},
    ),
    (
        "check-on-the-first-step-of-enumerate",
        """
        for i, formula in enumerate(["riders ~ fare", "riders ~ temp"]):
            res = smf.ols(formula, data=ferries).fit()  # expect: no-form-test, no-variance-test
            if i == 0:
                print(het_breuschpagan(res.resid, res.model.exog))
            else:
                print(res.bse)
            print(res.pvalues)
    """,
        {VAR: (TWO, ["`riders ~ temp`"]), FORM: (TWO, TWO)},
    ),
    (
        "check-under-a-condition-on-data-is-credited-to-each",
        """
        for formula in ["riders ~ fare", "riders ~ fare + temp"]:
            res = smf.ols(formula, data=ferries).fit()  # expect: no-form-test
            if res.nobs > 30:
                print(het_breuschpagan(res.resid, res.model.exog))
            print(res.pvalues)
    """,
        {FORM: (THREE[:2], THREE[:2])},
    ),
    (
        "loop-all-checked",
        """
        for formula in ["riders ~ fare", "riders ~ fare + temp"]:
            res = smf.ols(formula, data=ferries).fit()
            print(het_breuschpagan(res.resid, res.model.exog), linear_reset(res, power=3, use_f=True))
            print(res.summary())
    """,
        {},
    ),
    (
        "two-lines-two-findings",
        """
        small = smf.ols("riders ~ fare", data=ferries).fit()  # expect: no-form-test, no-variance-test
        large = smf.ols("riders ~ fare + temp", data=ferries).fit()  # expect: no-form-test, no-variance-test
        print(small.summary(), large.summary())
    """,
        {},
    ),
]


@pytest.mark.parametrize("body, sites", [pytest.param(b, s, id=i) for i, b, s in CASES])
def test_one_finding_per_site(body, sites):
    code = _script(body)
    report = analyze(code, "ferries.py", Settings())
    got = [f for f in found(report) if f[1] in (VAR, FORM)]
    assert got == [m for m in expected_markers(code) if m[1] in (VAR, FORM)]
    for f in report.findings:
        if f.rule not in (VAR, FORM):
            continue
        if f.rule not in sites:  # a site with one fit: the message is the fit's own
            assert "fits from this line" not in f.message
            assert len(f.fits) == 1
            continue
        every, flagged = sites[f.rule]
        if flagged == every:
            lead = "both fits" if len(every) == 2 else f"all {len(every)} fits"
            assert f.message.startswith(f"For {lead} from this line, {and_list(every)}: ")
        else:
            assert f.message.startswith(
                f"For {len(flagged)} of the {len(every)} fits from this line, {and_list(flagged)}: "
            )
        assert len(f.fits) == len(flagged)
        listed = [r.message for r in f.related if "from this line" in r.message]
        assert len(listed) == len(every)
        for i, spec in enumerate(every, start=1):
            state = "" if spec in flagged else "; not flagged"
            assert listed[i - 1] == f"fit {i} of {len(every)} from this line: {spec}{state}"


def test_single_fit_message_unchanged():
    code = _script("""
        res = smf.ols("riders ~ fare", data=ferries).fit()
        print(res.summary())
    """)
    (finding,) = [f for f in analyze(code, "ferries.py").findings if f.rule == VAR]
    assert finding.message.startswith("`res` reports inference")


def test_json_keeps_every_fit_in_related(tmp_path, run_cli):
    path = tmp_path / "ferries.py"
    path.write_text(_script(CASES[0][1]))
    code, out, _ = run_cli("check", "--format", "json", "--only", VAR, str(path))
    assert code == 1
    (finding,) = json.loads(out)["findings"]
    listed = [r["message"] for r in finding["related"] if "from this line" in r["message"]]
    assert listed == [f"fit {i} of 3 from this line: {s}" for i, s in enumerate(THREE, start=1)]
    assert finding["line"] == 8


def test_hover_lists_the_fits_of_the_site():
    code = _script(CASES[1][1])
    report = analyze(code, "ferries.py")
    parts = hover_markdown(report, fits_at(report, 7, 12))
    assert parts[0] == "**regvet** · 3 fits from this line: `riders ~ fare`, `riders ~ temp`, `riders ~ wind`"
    assert len(parts) == 4
    # the checked fit is done for variance; the others are missing
    assert (
        "variance: **done**" in parts[2] and "variance: **missing**" in parts[1] and "variance: **missing**" in parts[3]
    )


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
                    "source": textwrap.dedent(c).strip("\n"),
                }
                for c in cells
            ],
        }
    )


def test_notebook_loop_gives_one_finding_in_its_cell():
    nb = _notebook(
        _HEAD,
        """
        formulas = ["riders ~ fare", "riders ~ fare + temp", "riders ~ fare + temp + wind"]
        """,
        """
        for formula in formulas:
            res = smf.ols(formula, data=ferries).fit()
            if formula != "riders ~ fare":
                print(res.summary())
        """,
    )
    report = analyze(nb, "ferries.ipynb", Settings())
    (finding,) = [f for f in report.findings if f.rule == VAR]
    assert finding.span.cell == 2 and finding.span.line == 2
    assert finding.message.startswith(f"For 2 of the 3 fits from this line, {and_list(THREE[1:])}: ")
    # the related fits are placed in the cell too
    assert all(r.span.cell == 2 for r in finding.related if "from this line" in r.message)


# --- a fit bound to a `global` (or `nonlocal`) name inside a function ------------------------------
# (id, body): the ``# expect`` markers are the findings of the two rules; none means neither fires.
GLOBALS = [
    (
        "global-used-after-the-call",
        """
        def fit_riders():
            global late
            late = smf.ols("riders ~ temp", data=ferries).fit()  # expect: no-variance-test

        fit_riders()
        print(late.pvalues)
    """,
    ),
    (
        "global-bound-first-at-module-level",
        """
        res = None

        def refit(frame):
            global res
            res = smf.ols("riders ~ fare", data=frame).fit()  # expect: no-variance-test

        refit(ferries)
        print(res.summary().tables[1])
    """,
    ),
    (
        "global-used-inside-the-function",
        """
        def refit():
            global res
            res = smf.ols("riders ~ fare", data=ferries).fit()  # expect: no-variance-test
            print(res.bse)

        refit()
    """,
    ),
    (
        "global-checked-after-the-call",
        """
        def fit_riders():
            global late
            late = smf.ols("riders ~ temp", data=ferries).fit()

        fit_riders()
        print(het_breuschpagan(late.resid, late.model.exog))
        print(late.pvalues)
    """,
    ),
    (
        "global-fit-never-used",
        """
        def fit_riders():
            global late
            late = smf.ols("riders ~ temp", data=ferries).fit()

        fit_riders()
    """,
    ),
    (
        "global-in-a-loop-of-calls",
        """
        def fit_riders(formula):
            global last
            last = smf.ols(formula, data=ferries).fit()  # expect: no-variance-test

        for formula in ["riders ~ fare", "riders ~ temp"]:
            fit_riders(formula)
            print(last.pvalues)
    """,
    ),
    (
        "nonlocal-in-a-closure",
        """
        def study():
            res = None

            def refit():
                nonlocal res
                res = smf.ols("riders ~ fare", data=ferries).fit()  # expect: no-variance-test

            refit()
            print(res.pvalues)

        study()
    """,
    ),
    (
        "local-of-the-same-name-is-not-the-global",
        """
        late = None

        def fit_riders():
            late = smf.ols("riders ~ temp", data=ferries).fit()
            return None

        fit_riders()
        print(late)
    """,
    ),
]


@pytest.mark.parametrize("body", [pytest.param(b, id=i) for i, b in GLOBALS])
def test_fit_bound_to_a_global_name(body):
    code = _script(body)
    got = [f for f in found(analyze(code, "ferries.py", Settings())) if f[1] == VAR]
    assert got == expected_markers(code, VAR)


def test_global_fit_across_notebook_cells():
    nb = _notebook(
        _HEAD,
        """
        def fit_riders():
            global late
            late = smf.ols("riders ~ temp", data=ferries).fit()
        """,
        "fit_riders()",
        "late.summary()",
    )
    (finding,) = [f for f in analyze(nb, "ferries.ipynb", Settings()).findings if f.rule == VAR]
    assert (finding.span.cell, finding.span.line) == (1, 3)
    assert "`late` reports inference (`summary`, cell 4, line 1)" in finding.message


# --- a robust or HAC version of the same specification on the same data is reported too -----------
# (id, body, {(line in the body, rule): the robust version's name}): the ``# expect`` markers of the two
# rules give every finding; those listed are downgraded to info because that robust version is reported.
ROBUST = [
    (
        "second-fit-hc3-beside",
        """
        plain = smf.ols("riders ~ fare", data=ferries).fit()  # expect: no-variance-test
        robust = smf.ols("riders ~ fare", data=ferries).fit(cov_type="HC3")
        print(plain.summary(), robust.summary())
    """,
        {(1, VAR): "`robust`"},
    ),
    (
        "get-robustcov-results-beside",
        """
        plain = smf.ols("riders ~ fare", data=ferries).fit()  # expect: no-variance-test
        robust = plain.get_robustcov_results(cov_type="HC1")
        print(plain.summary())
        print(robust.summary())
    """,
        {(1, VAR): "`robust`"},
    ),
    (
        "array-api-second-fit-hc3",
        """
        X = sm.add_constant(ferries[["fare", "temp"]])
        plain = sm.OLS(ferries["riders"], X).fit()  # expect: no-variance-test
        robust = sm.OLS(ferries["riders"], X).fit(cov_type="HC3")
        print(plain.pvalues, robust.pvalues)
    """,
        {(2, VAR): "`robust`"},
    ),
    (
        "robust-version-not-reported",
        """
        plain = smf.ols("riders ~ fare", data=ferries).fit()  # expect: no-variance-test
        robust = plain.get_robustcov_results(cov_type="HC1")
        print(plain.summary())
    """,
        {},
    ),
    (
        "robust-version-of-another-specification",
        """
        plain = smf.ols("riders ~ fare", data=ferries).fit()  # expect: no-variance-test
        robust = smf.ols("riders ~ fare + temp", data=ferries).fit(cov_type="HC3")
        print(plain.summary(), robust.summary())
    """,
        {},
    ),
    (
        "robust-version-on-other-data",
        """
        plain = smf.ols("riders ~ fare", data=ferries).fit()  # expect: no-variance-test
        robust = smf.ols("riders ~ fare", data=ferries.dropna()).fit(cov_type="HC3")
        print(plain.summary(), robust.summary())
    """,
        {},
    ),
    (
        "robust-version-after-the-data-changed",
        """
        plain = smf.ols("riders ~ fare", data=ferries).fit()  # expect: no-variance-test
        ferries = ferries[ferries.riders > 0]
        robust = smf.ols("riders ~ fare", data=ferries).fit(cov_type="HC3")
        print(plain.summary(), robust.summary())
    """,
        {},
    ),
    (
        "robust-version-of-another-estimator",
        """
        plain = smf.ols("riders ~ fare", data=ferries).fit()  # expect: no-variance-test
        robust = smf.wls("riders ~ fare", data=ferries).fit(cov_type="HC3")
        print(plain.summary(), robust.summary())
    """,
        {},
    ),
    (
        "hac-version-on-time-ordered-data",
        """
        daily = pd.read_csv("daily.csv", parse_dates=["day"], index_col="day")
        plain = smf.ols("riders ~ fare", data=daily).fit()  # expect: no-variance-test, no-serial-test
        hac = smf.ols("riders ~ fare", data=daily).fit(cov_type="HAC", cov_kwds={"maxlags": 7})
        print(plain.summary(), hac.summary())
    """,
        {(2, VAR): "`hac`", (2, SERIAL): "`hac`"},
    ),
    (
        "hc3-version-does-not-answer-serial",
        """
        daily = pd.read_csv("daily.csv", parse_dates=["day"], index_col="day")
        plain = smf.ols("riders ~ fare", data=daily).fit()  # expect: no-variance-test, no-serial-test
        robust = smf.ols("riders ~ fare", data=daily).fit(cov_type="HC3")  # expect: no-serial-test
        print(plain.summary(), robust.summary())
    """,
        {(2, VAR): "`robust`"},
    ),
    (
        "test-on-a-second-fit-counts-for-both",
        """
        first = smf.ols("riders ~ rain", data=ferries).fit()
        second = smf.ols("riders ~ rain", data=ferries).fit()
        print(het_breuschpagan(second.resid, second.model.exog))
        print(first.summary())
    """,
        {},
    ),
    (
        "test-on-a-fit-of-another-specification-does-not",
        """
        first = smf.ols("riders ~ rain", data=ferries).fit()  # expect: no-variance-test
        second = smf.ols("riders ~ rain + fare", data=ferries).fit()
        print(het_breuschpagan(second.resid, second.model.exog))
        print(first.summary())
    """,
        {},
    ),
    (
        "same-specification-in-two-loop-steps-is-not-the-same-data",
        """
        def fit_port(frame, cov):
            return smf.ols("riders ~ fare", data=frame).fit(cov_type=cov)

        plain = fit_port(pd.read_csv("north.csv"), "nonrobust")  # expect: no-variance-test
        robust = fit_port(pd.read_csv("south.csv"), "HC3")
        print(plain.summary(), robust.summary())
    """,
        {},
    ),
]


@pytest.mark.parametrize("body, downgraded", [pytest.param(b, d, id=i) for i, b, d in ROBUST])
def test_robust_version_reported_beside(body, downgraded):
    code = _script(body)
    report = analyze(code, "ferries.py", Settings())
    rules = (VAR, SERIAL)
    assert [f for f in found(report) if f[1] in rules] == [m for m in expected_markers(code) if m[1] in rules]
    offset = _HEAD.count("\n")
    for f in report.findings:
        if f.rule not in rules:
            continue
        robust = downgraded.get((f.span.line - offset, f.rule))
        if robust is None:
            assert f.severity.label == "warning" and "version of the same specification" not in f.message
        else:
            assert f.severity.label == "info"
            assert f"version of the same specification on the same data is reported too, {robust} at line " in f.message


def test_hover_names_the_robust_version():
    code = _script(ROBUST[0][1])
    report = analyze(code, "ferries.py")
    (plain,) = fits_at(report, 7, 12)
    (text,) = hover_markdown(report, [plain])
    assert "- variance: **missing**: an HC3 version is reported (line 8)" in text


def test_robust_version_across_notebook_cells():
    nb = _notebook(
        _HEAD,
        'plain = smf.ols("riders ~ fare", data=ferries).fit()\nprint(plain.summary())',
        'robust = plain.get_robustcov_results(cov_type="HC3")\nrobust.summary()',
    )
    (finding,) = [f for f in analyze(nb, "ferries.ipynb", Settings()).findings if f.rule == VAR]
    assert finding.severity.label == "info" and (finding.span.cell, finding.span.line) == (1, 1)
    assert (
        "An HC3 version of the same specification on the same data is reported too, `robust` at cell 3, line 1,"
        in finding.message
    )
