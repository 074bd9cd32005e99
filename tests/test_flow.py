"""How results flow: containers, loops, functions, project modules, and the rules judging what reaches them.

Each case is a small ferry-ridership script whose expected findings are marked with
trailing ``# expect: RULE`` comments; only the rules a case is about are compared,
so a counter-snippet without markers asserts that none of those rules fires.
"""

from __future__ import annotations

import textwrap
from pathlib import Path

import pytest

from conftest import expected_markers, found
from regvet.engine import analyze
from regvet.model.settings import Settings
from regvet.project import FileModules

VAR = "no-variance-test"
FORM = "no-form-test"
SERIAL = "no-serial-test"
BREAK = "no-break-test"
MISMATCH = "mismatched-diagnostic"
ACROSS = "compare-across-outcomes"
R2 = "r2-unadjusted-compare"

_HEAD = """\
import numpy as np
import pandas as pd
import statsmodels.api as sm
import statsmodels.formula.api as smf
from statsmodels.stats.diagnostic import acorr_breusch_godfrey, het_breuschpagan, het_white, linear_reset

crossings = pd.read_csv("crossings.csv")
"""


def case(case_id: str, code: str, *rules: str, xfail: str | None = None, settings: Settings | None = None):
    marks = [pytest.mark.xfail(strict=True, reason=f"analyser: {xfail}")] if xfail else []
    return pytest.param(_HEAD + textwrap.dedent(code), rules, settings, id=case_id, marks=marks)


def _check(report, code: str, rules: tuple[str, ...]) -> None:
    assert not report.skipped and report.facts is not None and report.facts.fits, "no fit was analysed"
    got = [f for f in found(report) if f[1] in rules]
    want = [m for m in expected_markers(code) if m[1] in rules]
    assert got == want


# --- containers and loops --------------------------------------------------------------------
CONTAINERS = [
    case(
        "list-loop-checks-each",
        """
        small = smf.ols("riders ~ fare", data=crossings).fit()
        large = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        for res in [small, large]:
            print(het_breuschpagan(res.resid, res.model.exog))
        print(small.summary(), large.summary())
    """,
        VAR,
    ),
    case(
        "list-loop-checks-one-only",
        """
        small = smf.ols("riders ~ fare", data=crossings).fit()
        large = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()  # expect: no-variance-test
        for res in [small]:
            print(het_breuschpagan(res.resid, res.model.exog))
        print(small.summary(), large.summary())
    """,
        VAR,
    ),
    case(
        "list-built-by-append",
        """
        fits = []
        for formula in ["riders ~ fare", "riders ~ fare + wind_speed"]:
            fits.append(smf.ols(formula, data=crossings).fit())
        for res in fits:
            print(linear_reset(res, power=3, use_f=True), het_white(res.resid, res.model.exog))
            print(res.summary())
    """,
        VAR,
        FORM,
    ),
    case(
        "tuple-unpacked",
        """
        pair = (smf.ols("riders ~ fare", data=crossings).fit(), smf.ols("riders ~ wind_speed", data=crossings).fit())
        first, second = pair
        het_breuschpagan(first.resid, first.model.exog)
        het_white(second.resid, second.model.exog)
        print(first.summary(), second.summary())
    """,
        VAR,
    ),
    case(
        "tuple-unpacked-unchecked-second",
        """
        pair = (
            smf.ols("riders ~ fare", data=crossings).fit(),
            smf.ols("riders ~ wind_speed", data=crossings).fit(),  # expect: no-variance-test
        )
        first, second = pair
        het_breuschpagan(first.resid, first.model.exog)
        print(first.summary(), second.summary())
    """,
        VAR,
    ),
    case(
        "dict-items-loop",
        """
        fits = {
            "fare": smf.ols("riders ~ fare", data=crossings).fit(),
            "weather": smf.ols("riders ~ fare + wind_speed", data=crossings).fit(),
        }
        for name, res in fits.items():
            print(name, het_white(res.resid, res.model.exog))
        for res in fits.values():
            print(res.summary())
    """,
        VAR,
    ),
    case(
        "dict-items-loop-no-check",
        """
        fits = {
            "fare": smf.ols("riders ~ fare", data=crossings).fit(),  # expect: no-variance-test
            "weather": smf.ols("riders ~ fare + wind_speed", data=crossings).fit(),  # expect: no-variance-test
        }
        for name, res in fits.items():
            print(name, res.summary())
    """,
        VAR,
    ),
    case(
        "dict-values-loop",
        """
        fits = {"fare": smf.ols("riders ~ fare", data=crossings).fit()}
        fits["weather"] = smf.ols("riders ~ fare + wind_speed", data=crossings).fit()
        for res in fits.values():
            linear_reset(res, power=2)
        print(fits["fare"].params, fits["weather"].params)
    """,
        FORM,
    ),
    case(
        "dict-subscript-checked-one",
        """
        fits = {"fare": smf.ols("riders ~ fare", data=crossings).fit()}
        fits["weather"] = smf.ols("riders ~ fare + wind_speed", data=crossings).fit()  # expect: no-form-test
        linear_reset(fits["fare"], power=2)
        print(fits["weather"].params)
    """,
        FORM,
    ),
    case(
        "zip-labels-and-fits",
        """
        small = smf.ols("riders ~ fare", data=crossings).fit()
        large = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        for label, res in zip(["small", "large"], [small, large]):
            print(label, het_breuschpagan(res.resid, res.model.exog))
        print(small.summary(), large.summary())
    """,
        VAR,
    ),
    case(
        "enumerate-fits",
        """
        models = [smf.ols("riders ~ fare", data=crossings).fit(), smf.ols("riders ~ wind_speed", data=crossings).fit()]
        for i, res in enumerate(models):
            print(i, linear_reset(res, power=3), res.params)
    """,
        FORM,
    ),
    case(
        "enumerate-wrong-position",
        """
        models = [smf.ols("riders ~ fare", data=crossings).fit()]  # expect: no-form-test
        for i, res in enumerate(models):
            print(i, res.params)
    """,
        FORM,
    ),
    case(
        "list-comprehension-of-diagnostics",
        """
        small = smf.ols("riders ~ fare", data=crossings).fit()
        large = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        tests = [het_breuschpagan(r.resid, r.model.exog) for r in (small, large)]
        print(small.summary(), large.summary())
    """,
        VAR,
    ),
    case(
        "comprehension-of-fits-then-loop",
        """
        formulas = ["riders ~ fare", "riders ~ fare + fuel_price"]
        fits = [smf.ols(f, data=crossings).fit() for f in formulas]
        for res in fits:
            het_breuschpagan(res.resid, res.model.exog)
            print(res.pvalues)
    """,
        VAR,
    ),
    case(
        "comprehension-of-fits-unchecked",
        """
        formulas = ["riders ~ fare", "riders ~ fare + fuel_price"]
        fits = [smf.ols(f, data=crossings).fit() for f in formulas]  # expect: no-variance-test
        for res in fits:
            print(res.pvalues)
    """,
        VAR,
    ),
    case(
        "dict-comprehension-of-diagnostics",
        """
        fits = {
            "fare": smf.ols("riders ~ fare", data=crossings).fit(),
            "fuel": smf.ols("riders ~ fuel_price", data=crossings).fit(),
        }
        resets = {name: linear_reset(r, power=2, use_f=True) for name, r in fits.items()}
        print({name: r.params for name, r in fits.items()})
    """,
        FORM,
    ),
    case(
        "generator-into-list",
        """
        small = smf.ols("riders ~ fare", data=crossings).fit()
        large = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        results = list(het_white(r.resid, r.model.exog) for r in [small, large])
        print(small.bse, large.bse)
    """,
        VAR,
    ),
    case(
        "attribute-of-result-bound-then-checked",
        """
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        resid, exog = res.resid, res.model.exog
        print(het_breuschpagan(resid, exog))
        print(res.summary())
    """,
        VAR,
    ),
    case(
        "reassigned-name",
        """
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        final = res
        het_breuschpagan(final.resid, final.model.exog)
        print(res.summary())
    """,
        VAR,
    ),
]


# --- functions in the same file ---------------------------------------------------------------
FUNCTIONS = [
    case(
        "function-fits-and-returns",
        """
        def fit_riders(formula):
            return smf.ols(formula, data=crossings).fit()


        a = fit_riders("riders ~ fare")  # expect: no-variance-test
        b = fit_riders("riders ~ fare + fuel_price")  # expect: no-variance-test
        print(a.summary(), b.summary())
    """,
        VAR,
    ),
    case(
        "function-fits-and-returns-checked-at-one-site",
        """
        def fit_riders(formula):
            return smf.ols(formula, data=crossings).fit()


        a = fit_riders("riders ~ fare")
        b = fit_riders("riders ~ fare + fuel_price")  # expect: no-variance-test
        het_breuschpagan(a.resid, a.model.exog)
        print(a.summary(), b.summary())
    """,
        VAR,
    ),
    case(
        "function-runs-diagnostic-on-argument",
        """
        def check_variance(res):
            return het_breuschpagan(res.resid, res.model.exog)


        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        check_variance(res)
        print(res.summary())
    """,
        VAR,
    ),
    case(
        "function-reads-argument-without-checking",
        """
        def report(res):
            print(res.rsquared, res.summary())


        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()  # expect: no-variance-test
        report(res)
    """,
        VAR,
    ),
    case(
        "nested-helper-runs-diagnostic",
        """
        def _bp(model_result):
            return het_breuschpagan(model_result.resid, model_result.model.exog)


        def run_checks(res):
            return {"bp": _bp(res), "reset": linear_reset(res, power=3)}


        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        run_checks(res)
        print(res.summary())
    """,
        VAR,
        FORM,
    ),
    case(
        "nested-helper-fits",
        """
        def _fit(formula):
            return smf.ols(formula, data=crossings).fit()


        def fit_one(formula):
            res = _fit(formula)
            return res


        res = fit_one("riders ~ fare + wind_speed")  # expect: no-form-test
        print(res.params)
    """,
        FORM,
    ),
    case(
        "function-fits-and-checks-inside",
        """
        def fit_checked(formula):
            res = smf.ols(formula, data=crossings).fit()
            print(het_breuschpagan(res.resid, res.model.exog))
            return res


        res = fit_checked("riders ~ fare + fuel_price")
        print(res.summary())
    """,
        VAR,
    ),
    case(
        "function-returns-tuple-of-fits",
        """
        def fit_pair():
            small = smf.ols("riders ~ fare", data=crossings).fit()
            large = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
            return small, large


        small, large = fit_pair()  # expect: no-variance-test
        het_breuschpagan(small.resid, small.model.exog)
        print(small.summary(), large.summary())
    """,
        VAR,
    ),
    case(
        "function-applied-in-loop",
        """
        def check_variance(res):
            return het_white(res.resid, res.model.exog)


        fits = [smf.ols(f, data=crossings).fit() for f in ("riders ~ fare", "riders ~ wind_speed")]
        for res in fits:
            check_variance(res)
        print([r.summary() for r in fits])
    """,
        VAR,
    ),
    case(
        "map-with-diagnostic-helper",
        """
        def check_form(res):
            return linear_reset(res, power=3, use_f=True)


        fits = [smf.ols("riders ~ fare", data=crossings).fit(), smf.ols("riders ~ fuel_price", data=crossings).fit()]
        resets = list(map(check_form, fits))
        print([r.params for r in fits])
    """,
        FORM,
    ),
    case(
        "fit-function-in-comprehension",
        """
        def fit_riders(formula):
            return smf.ols(formula, data=crossings).fit()


        formulas = ("riders ~ fare", "riders ~ fare + fuel_price")
        fits = [fit_riders(f) for f in formulas]  # expect: no-form-test
        print([r.params for r in fits])
    """,
        FORM,
    ),
    case(
        "fit-function-in-loop-checked",
        """
        def fit_riders(formula):
            return smf.ols(formula, data=crossings).fit()


        for formula in ("riders ~ fare", "riders ~ fare + fuel_price"):
            res = fit_riders(formula)
            print(linear_reset(res, power=3), res.params)
    """,
        FORM,
    ),
    case(
        "check-on-robust-copy-counts-for-original",
        """
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        robust = res.get_robustcov_results(cov_type="HC3")
        het_breuschpagan(robust.resid, robust.model.exog)
        print(res.summary())
    """,
        VAR,
    ),
    case(
        "function-appends-to-global-list",
        """
        results = []


        def run(formula):
            results.append(smf.ols(formula, data=crossings).fit())


        run("riders ~ fare")
        run("riders ~ fare + wind_speed")
        for res in results:
            het_breuschpagan(res.resid, res.model.exog)
            print(res.summary())
    """,
        VAR,
    ),
    # not returned: the fit stays at its `.fit` inside the function
    case(
        "function-appends-to-global-list-unchecked",
        """
        results = []


        def run(formula):
            results.append(smf.ols(formula, data=crossings).fit())  # expect: no-variance-test


        run("riders ~ fare")
        for res in results:
            print(res.summary())
    """,
        VAR,
    ),
    case(
        "method-of-a-class",
        """
        class RidershipModel:
            def __init__(self, formula):
                self.res = smf.ols(formula, data=crossings).fit()

            def check(self):
                return het_breuschpagan(self.res.resid, self.res.model.exog)


        m = RidershipModel("riders ~ fare + fuel_price")
        m.check()
        print(m.res.summary())
    """,
        VAR,
    ),
]


def _analyze(code: str, settings: Settings | None = None, **kw):
    return analyze(code, "flow.py", settings, strict=True, **kw)


@pytest.mark.parametrize("code, rules, settings", CONTAINERS + FUNCTIONS)
def test_flow_through_containers_and_functions(code, rules, settings):
    _check(_analyze(code, settings), code, rules)


def test_fit_returned_from_function_points_at_inner_fit():
    code = _HEAD + textwrap.dedent(
        """
        def fit_riders(formula):
            return smf.ols(formula, data=crossings).fit()


        a = fit_riders("riders ~ fare")
        b = fit_riders("riders ~ fare + fuel_price")
        print(a.summary(), b.summary())
        """
    )
    lines = code.split("\n")
    inner = next(i for i, line in enumerate(lines, 1) if "return smf.ols" in line)
    report = _analyze(code)
    findings = [f for f in report.findings if f.rule == VAR]
    assert sorted(f.span.line for f in findings) == [inner + 3, inner + 4]
    for f in findings:
        assert any(r.span.line == inner and r.path is None and "fit is made here" in r.message for r in f.related)
    assert {f.fit_call.span.line for f in report.facts.fits} == {inner}


def test_fit_returned_through_two_functions_names_each_hop():
    code = _HEAD + textwrap.dedent(
        """
        def _fit(formula):
            return smf.ols(formula, data=crossings).fit()


        def fit_one(formula):
            return _fit(formula)


        res = fit_one("riders ~ fare")
        print(res.params)
        """
    )
    lines = code.split("\n")
    inner = next(i for i, line in enumerate(lines, 1) if "return smf.ols" in line)
    hop = next(i for i, line in enumerate(lines, 1) if "return _fit" in line)
    (finding,) = [f for f in _analyze(code).findings if f.rule == FORM]
    assert finding.span.line == next(i for i, line in enumerate(lines, 1) if line.startswith("res = fit_one"))
    assert [r.span.line for r in finding.related[:2]] == [inner, hop]


# --- project modules --------------------------------------------------------------------------
_HELPERS = """\
from statsmodels.stats.diagnostic import het_breuschpagan


def check_variance(res):
    return het_breuschpagan(res.resid, res.model.exog)


def describe(res):
    return res.params


def check_all(fits):
    for res in fits:
        het_breuschpagan(res.resid, res.model.exog)


def publish(res):
    from stargazer.stargazer import Stargazer

    return Stargazer([res]).render_html()
"""
_PKG_MOD = """\
import statsmodels.formula.api as smf

from .diag import white_test


def fit_riders(formula, data):
    return smf.ols(formula, data=data).fit()


def fit_all(formulas, data):
    return {f: smf.ols(f, data=data).fit() for f in formulas}


def fit_and_check(formula, data):
    res = smf.ols(formula, data=data).fit()
    white_test(res)
    return res
"""
_PKG_DIAG = """\
from statsmodels.stats.diagnostic import het_white


def white_test(res):
    return het_white(res.resid, res.model.exog)
"""
_ROOT_LIB = """\
from statsmodels.stats.diagnostic import linear_reset


def reset(res):
    return linear_reset(res, power=3, use_f=True)
"""


@pytest.fixture
def project(tmp_path: Path):
    """A scanned root with helpers.py, a package pkg/ (mod.py importing .diag) and ferrylib.py."""
    (tmp_path / "helpers.py").write_text(_HELPERS)
    (tmp_path / "ferrylib.py").write_text(_ROOT_LIB)
    (tmp_path / "pkg").mkdir()
    (tmp_path / "pkg" / "__init__.py").write_text("")
    (tmp_path / "pkg" / "mod.py").write_text(_PKG_MOD)
    (tmp_path / "pkg" / "diag.py").write_text(_PKG_DIAG)
    (tmp_path / "scripts").mkdir()
    (tmp_path / "scripts" / "local_checks.py").write_text(_HELPERS)

    def run(code: str, main: str = "main.py"):
        path = tmp_path / main
        path.write_text(code)
        provider = FileModules(root=tmp_path, main=path)
        return analyze(code, main, provider=provider, strict=True)

    run.root = tmp_path  # type: ignore[attr-defined]
    return run


_MAIN_HEAD = 'import pandas as pd\n\ncrossings = pd.read_csv("crossings.csv")\n'
MODULE_CASES = [
    pytest.param(
        """
        import statsmodels.formula.api as smf
        from helpers import check_variance

        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        check_variance(res)
        print(res.summary())
    """,
        "main.py",
        (VAR,),
        id="from-helpers-import-diagnostic",
    ),
    pytest.param(
        """
        import statsmodels.formula.api as smf
        from helpers import describe

        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()  # expect: no-variance-test
        describe(res)
        print(res.summary())
    """,
        "main.py",
        (VAR,),
        id="helper-without-diagnostic",
    ),
    pytest.param(
        """
        import statsmodels.formula.api as smf
        import helpers

        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        helpers.check_variance(res)
        print(res.summary())
    """,
        "main.py",
        (VAR,),
        id="import-helpers-attribute-call",
    ),
    pytest.param(
        """
        import statsmodels.formula.api as smf
        from .helpers import check_variance

        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        check_variance(res)
        print(res.summary())
    """,
        "main.py",
        (VAR,),
        id="relative-import-from-main",
    ),
    pytest.param(
        """
        from pkg.mod import fit_riders

        res = fit_riders("riders ~ fare + fuel_price", crossings)  # expect: no-variance-test, no-form-test
        print(res.summary())
    """,
        "main.py",
        (VAR, FORM),
        id="fit-made-in-package-module",
    ),
    pytest.param(
        """
        import pkg.mod

        res = pkg.mod.fit_riders("riders ~ fare + fuel_price", crossings)  # expect: no-variance-test
        print(res.summary())
    """,
        "main.py",
        (VAR,),
        id="import-pkg.mod-attribute-call",
    ),
    pytest.param(
        """
        from pkg import mod

        res = mod.fit_riders("riders ~ fare", crossings)  # expect: no-variance-test
        print(res.summary())
    """,
        "main.py",
        (VAR,),
        id="from-pkg-import-mod",
    ),
    pytest.param(
        """
        import statsmodels.api as sm
        from pkg import mod

        res = mod.fit_riders("riders ~ fare", crossings)  # expect: no-variance-test
        print(res.summary(), sm.__name__)
    """,
        "main.py",
        (VAR,),
        id="from-pkg-import-mod-statsmodels-in-main",
    ),
    pytest.param(
        """
        from helpers import check_variance
        from pkg.mod import fit_riders

        res = fit_riders("riders ~ fare + fuel_price", crossings)
        check_variance(res)
        print(res.summary())
    """,
        "main.py",
        (VAR,),
        id="fit-in-one-module-checked-in-another",
    ),
    pytest.param(
        """
        from pkg.mod import fit_and_check

        res = fit_and_check("riders ~ fare + fuel_price", crossings)  # expect: no-form-test
        print(res.summary())
    """,
        "main.py",
        (VAR, FORM),
        id="relative-import-inside-package",
    ),
    pytest.param(
        """
        import statsmodels.formula.api as smf
        from ferrylib import reset
        from local_checks import check_variance

        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        reset(res)
        check_variance(res)
        print(res.summary())
    """,
        "scripts/main.py",
        (VAR, FORM),
        id="script-folder-and-scanned-root",
    ),
    pytest.param(
        """
        import statsmodels.formula.api as smf
        from helpers import check_all

        small = smf.ols("riders ~ fare", data=crossings).fit()
        large = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        check_all([small, large])
        print(small.summary(), large.summary())
    """,
        "main.py",
        (VAR,),
        id="helper-loops-over-list-argument",
    ),
    pytest.param(
        """
        from helpers import check_variance
        from pkg.mod import fit_all

        fits = fit_all(["riders ~ fare", "riders ~ fare + wind_speed"], crossings)  # expect: no-form-test
        for name, res in fits.items():
            check_variance(res)
            print(name, res.summary())
    """,
        "main.py",
        (VAR, FORM),
        id="module-returns-dict-of-fits",
    ),
    pytest.param(
        """
        import statsmodels.formula.api as smf
        from ferry_unknown_lib import check_variance

        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()  # expect: no-variance-test
        check_variance(res)
        print(res.summary())
    """,
        "main.py",
        (VAR,),
        id="module-not-in-project",
    ),
]


@pytest.mark.parametrize("code, main, rules", MODULE_CASES)
def test_flow_into_project_modules(project, code, main, rules):
    code = _MAIN_HEAD + textwrap.dedent(code)
    _check(project(code, main), code, rules)


def test_escape_inside_project_module_is_named(project):
    code = _MAIN_HEAD + textwrap.dedent(
        """
        import statsmodels.formula.api as smf
        from helpers import publish

        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()  # expect: no-form-test
        publish(res)
        """
    )
    report = project(code)
    _check(report, code, (FORM,))
    (finding,) = [f for f in report.findings if f.rule == FORM]
    assert "`Stargazer`" in finding.message and "diagnostic_helpers" in finding.message


def test_diagnostic_helpers_names_a_project_function(project):
    code = _MAIN_HEAD + textwrap.dedent(
        """
        import statsmodels.formula.api as smf
        from helpers import describe

        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()  # expect: no-form-test
        describe(res)
        print(res.summary())
        """
    )
    path = project.root / "main.py"  # type: ignore[attr-defined]
    path.write_text(code)
    settings = Settings(diagnostic_helpers=(("helpers.describe", ("variance",)),))
    provider = FileModules(root=project.root, main=path)  # type: ignore[attr-defined]
    report = analyze(code, "main.py", settings, provider=provider, strict=True)
    _check(report, code, (VAR, FORM))


def test_fit_made_in_package_module_points_into_it(project):
    code = _MAIN_HEAD + textwrap.dedent(
        """
        from pkg.mod import fit_riders

        res = fit_riders("riders ~ fare + fuel_price", crossings)
        print(res.summary())
        """
    )
    report = project(code)
    (finding,) = [f for f in report.findings if f.rule == VAR]
    inner = _PKG_MOD.split("\n").index("    return smf.ols(formula, data=data).fit()") + 1
    (made,) = [r for r in finding.related if "fit is made here" in r.message]
    assert made.path is not None and made.path.replace("\\", "/").endswith("pkg/mod.py")
    assert made.span.line == inner


# --- escapes and diagnostic_helpers -----------------------------------------------------------
ESCAPES = [
    case(
        "third-party-table",
        """
        from stargazer.stargazer import Stargazer

        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()  # expect: no-variance-test, no-form-test
        html = Stargazer([res]).render_html()
    """,
        VAR,
        FORM,
    ),
    case(
        "callable-from-unknown-registry",
        """
        from ferry_checks import CHECKS

        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()  # expect: no-variance-test, no-form-test
        for check in CHECKS:
            check(res)
    """,
        VAR,
        FORM,
    ),
    case(
        "getattr-on-unknown-module",
        """
        import ferry_reports

        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()  # expect: no-variance-test, no-form-test
        getattr(ferry_reports, "publish")(res)
    """,
        VAR,
        FORM,
    ),
    case(
        "callable-parameter",
        """
        from ferry_reports import load_reporter


        def apply(fn, res):
            return fn(res)


        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()  # expect: no-variance-test, no-form-test
        apply(load_reporter("html"), res)
    """,
        VAR,
        FORM,
    ),
    case(
        "method-of-dynamically-imported-module",
        """
        import importlib

        reports = importlib.import_module("ferry_reports")
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()  # expect: no-variance-test, no-form-test
        reports.publish(res)
    """,
        VAR,
        FORM,
    ),
]


@pytest.mark.parametrize("code, rules, settings", ESCAPES)
def test_escape_is_reported_and_named(code, rules, settings):
    report = _analyze(code, settings)
    _check(report, code, rules)
    for f in report.findings:
        if f.rule in rules:
            assert "diagnostic_helpers" in f.message and "cannot see into" in f.message


def test_inference_plus_escape_mentions_diagnostic_helpers():
    code = _HEAD + textwrap.dedent(
        """
        from stargazer.stargazer import Stargazer

        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        print(res.summary())
        Stargazer([res]).render_html()
        """
    )
    (finding,) = [f for f in _analyze(code).findings if f.rule == VAR]
    assert "`Stargazer`" in finding.message and "diagnostic_helpers" in finding.message


def test_finding_without_escape_does_not_mention_diagnostic_helpers():
    code = _HEAD + 'res = smf.ols("riders ~ fare", data=crossings).fit()\nprint(res.summary())\n'
    findings = [f for f in _analyze(code).findings if f.rule in (VAR, FORM)]
    assert len(findings) == 2 and not any("diagnostic_helpers" in f.message for f in findings)


_OURLIB = Settings(diagnostic_helpers=(("ourlib.check_fit", ("form", "variance")),))
HELPERS = [
    case(
        "configured-helper-from-import",
        """
        from ourlib import check_fit

        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        check_fit(res)
        print(res.summary())
    """,
        VAR,
        FORM,
        settings=_OURLIB,
    ),
    case(
        "configured-helper-module-alias",
        """
        import ourlib as ol

        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        ol.check_fit(res)
        print(res.summary())
    """,
        VAR,
        FORM,
        settings=_OURLIB,
    ),
    case(
        "configured-helper-in-loop",
        """
        from ourlib import check_fit

        fits = [smf.ols("riders ~ fare", data=crossings).fit(), smf.ols("riders ~ wind_speed", data=crossings).fit()]
        for res in fits:
            check_fit(res)
            print(res.summary())
    """,
        VAR,
        FORM,
        settings=_OURLIB,
    ),
    case(
        "configured-helper-covers-only-its-families",
        """
        from ourlib import check_fit

        weekly = pd.read_csv("weekly.csv", parse_dates=["week"], index_col="week")
        res = smf.ols("riders ~ fare + fuel_price", data=weekly).fit()  # expect: no-serial-test
        check_fit(res)
        print(res.summary())
    """,
        VAR,
        FORM,
        SERIAL,
        settings=_OURLIB,
    ),
    case(
        "helper-not-configured",
        """
        from ourlib import check_fit

        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()  # expect: no-variance-test, no-form-test
        check_fit(res)
        print(res.summary())
    """,
        VAR,
        FORM,
    ),
    case(
        "other-function-of-configured-module",
        """
        from ourlib import plot_fit

        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()  # expect: no-variance-test, no-form-test
        plot_fit(res)
        print(res.summary())
    """,
        VAR,
        FORM,
        settings=_OURLIB,
    ),
]


@pytest.mark.parametrize("code, rules, settings", HELPERS)
def test_diagnostic_helpers_setting(code, rules, settings):
    _check(_analyze(code, settings), code, rules)


# --- mismatched diagnostics -------------------------------------------------------------------
_TWO_ARRAY_FITS = """
    X1 = sm.add_constant(crossings[["fare"]])
    X2 = sm.add_constant(crossings[["fare", "fuel_price"]])
"""
MISMATCHES = [
    case(
        "resid-of-one-exog-of-other",
        _TWO_ARRAY_FITS
        + """
    res1 = sm.OLS(crossings["riders"], X1).fit()  # expect: no-variance-test
    res2 = sm.OLS(crossings["riders"], X2).fit()  # expect: no-variance-test
    print(het_breuschpagan(res2.resid, res1.model.exog))  # expect: mismatched-diagnostic
    print(res1.summary(), res2.summary())
    """,
        MISMATCH,
        VAR,
    ),
    case(
        "resid-of-one-design-matrix-of-other",
        _TWO_ARRAY_FITS
        + """
    res1 = sm.OLS(crossings["riders"], X1).fit()
    res2 = sm.OLS(crossings["riders"], X2).fit()  # expect: no-variance-test
    print(het_white(res2.resid, X1))  # expect: mismatched-diagnostic
    het_breuschpagan(res1.resid, X1)
    print(res1.summary(), res2.summary())
    """,
        MISMATCH,
        VAR,
    ),
    case(
        "same-fit-resid-and-design",
        _TWO_ARRAY_FITS
        + """
    res1 = sm.OLS(crossings["riders"], X1).fit()
    res2 = sm.OLS(crossings["riders"], X2).fit()
    het_breuschpagan(res1.resid, res1.model.exog)
    het_breuschpagan(res2.resid, X2)
    print(res1.summary(), res2.summary())
    """,
        MISMATCH,
        VAR,
    ),
    case(
        "robust-copy-shares-residuals",
        """
    res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
    robust = res.get_robustcov_results(cov_type="HC1")
    het_breuschpagan(robust.resid, res.model.exog)
    print(res.summary())
    """,
        MISMATCH,
        VAR,
    ),
    case(
        "mismatch-inside-helper",
        _TWO_ARRAY_FITS
        + """
    def bp(resid, exog):
        return het_breuschpagan(resid, exog)  # expect: mismatched-diagnostic


    res1 = sm.OLS(crossings["riders"], X1).fit()
    res2 = sm.OLS(crossings["riders"], X2).fit()
    bp(res2.resid, res1.model.exog)
    """,
        MISMATCH,
    ),
    case(
        "formula-fits-mismatched",
        """
    level = smf.ols("riders ~ fare", data=crossings).fit()  # expect: no-variance-test
    weather = smf.ols("riders ~ fare + wind_speed", data=crossings).fit()  # expect: no-variance-test
    het_white(level.resid, weather.model.exog)  # expect: mismatched-diagnostic
    print(level.summary(), weather.summary())
    """,
        MISMATCH,
        VAR,
    ),
    case(
        "mismatch-paired-by-zip",
        _TWO_ARRAY_FITS
        + """
    res1 = sm.OLS(crossings["riders"], X1).fit()  # expect: no-variance-test
    res2 = sm.OLS(crossings["riders"], X2).fit()  # expect: no-variance-test
    for r, other in zip([res1, res2], [res2, res1]):
        het_white(r.resid, other.model.exog)  # expect: mismatched-diagnostic
    print(res1.summary(), res2.summary())
    """,
        MISMATCH,
        VAR,
    ),
]


@pytest.mark.parametrize("code, rules, settings", MISMATCHES)
def test_mismatched_diagnostics(code, rules, settings):
    _check(_analyze(code, settings), code, rules)


# --- robust covariance ------------------------------------------------------------------------
ROBUST = [
    case(
        "default-covariance-flagged",
        """
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()  # expect: no-variance-test
        print(res.summary())
    """,
        VAR,
    ),
    case(
        "explicit-nonrobust-flagged",
        """
        model = smf.ols("riders ~ fare + fuel_price", data=crossings)
        res = model.fit(cov_type="nonrobust")  # expect: no-variance-test
        print(res.summary())
    """,
        VAR,
    ),
    case(
        "cov_type-HC3",
        """
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit(cov_type="HC3")
        print(res.summary())
    """,
        VAR,
    ),
    case(
        "cov_type-cluster",
        """
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit(
            cov_type="cluster", cov_kwds={"groups": crossings["route"]}
        )
        print(res.summary())
    """,
        VAR,
    ),
    case(
        "get_robustcov_results-HC1",
        """
        base = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        robust = base.get_robustcov_results(cov_type="HC1")
        print(robust.summary())
    """,
        VAR,
    ),
    case(
        "get_robustcov_results-positional",
        """
        X = sm.add_constant(crossings[["fare", "wind_speed"]])
        robust = sm.OLS(crossings["riders"], X).fit().get_robustcov_results("HC3")
        print(robust.pvalues)
    """,
        VAR,
    ),
    case(
        "bse-read",
        """
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()  # expect: no-variance-test
        print(res.params / res.bse)
    """,
        VAR,
    ),
    case(
        "HC3_se-read",
        """
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        print(res.params / res.HC3_se)
    """,
        VAR,
    ),
    case(
        "robust-fit-in-function",
        """
        def fit_robust(formula):
            return smf.ols(formula, data=crossings).fit(cov_type="HC3")


        res = fit_robust("riders ~ fare + fuel_price")
        print(res.summary())
    """,
        VAR,
    ),
]


@pytest.mark.parametrize("code, rules, settings", ROBUST)
def test_robust_covariance(code, rules, settings):
    _check(_analyze(code, settings), code, rules)


# --- time-ordered data ------------------------------------------------------------------------
TIME = [
    case(
        "parse_dates",
        """
        weekly = pd.read_csv("weekly.csv", parse_dates=["week"], index_col="week")
        res = smf.ols("riders ~ fare + fuel_price", data=weekly).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        SERIAL,
    ),
    case(
        "shift-column",
        """
        crossings["riders_prev"] = crossings["riders"].shift(1)
        res = smf.ols("riders ~ fare + riders_prev", data=crossings.dropna()).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        SERIAL,
    ),
    case(
        "diff-column",
        """
        crossings["fare_change"] = crossings["fare"].diff()
        res = smf.ols("riders ~ fare_change + wind_speed", data=crossings).fit()  # expect: no-serial-test
        print(res.pvalues)
    """,
        SERIAL,
    ),
    case(
        "lag-column-in-formula",
        """
        res = smf.ols("riders ~ fare + lag_riders", data=crossings).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        SERIAL,
    ),
    case(
        "tsa-import-elsewhere-is-not-evidence",
        """
        import statsmodels.tsa.api as tsa

        print(tsa.adfuller(crossings["riders"]))
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        print(res.summary())
    """,
        SERIAL,
    ),
    case(
        "time-data-array-api",
        """
        weekly = pd.read_csv("weekly.csv", parse_dates=["week"], index_col="week")
        X = sm.add_constant(weekly[["fare", "fuel_price"]])
        res = sm.OLS(weekly["riders"], X).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        SERIAL,
    ),
    case(
        "to_datetime-then-set_index",
        """
        crossings["date"] = pd.to_datetime(crossings["date"])
        daily = crossings.set_index("date")
        res = smf.ols("riders ~ fare + wind_speed", data=daily).fit()  # expect: no-serial-test
        print(res.summary())
    """,
        SERIAL,
    ),
    case(
        "sm.tsa-attribute-elsewhere-is-not-evidence",
        """
        print(sm.tsa.acf(crossings["riders"], nlags=4))
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        print(res.summary())
    """,
        SERIAL,
    ),
    case(
        "from-tsa-import-elsewhere-is-not-evidence",
        """
        from statsmodels.tsa.stattools import adfuller

        print(adfuller(crossings["riders"]))
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        print(res.summary())
    """,
        SERIAL,
    ),
    case(
        "time-data-estimates-only",
        """
        weekly = pd.read_csv("weekly.csv", parse_dates=["week"], index_col="week")
        res = smf.ols("riders ~ fare + fuel_price", data=weekly).fit()
        print(res.params)
    """,
        SERIAL,
    ),
    case(
        "cross-section-not-flagged",
        """
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        print(res.summary())
    """,
        SERIAL,
    ),
    case(
        "HAC-covariance",
        """
        weekly = pd.read_csv("weekly.csv", parse_dates=["week"], index_col="week")
        res = smf.ols("riders ~ fare + fuel_price", data=weekly).fit(cov_type="HAC", cov_kwds={"maxlags": 4})
        print(res.summary())
    """,
        SERIAL,
    ),
    case(
        "HC3-is-not-HAC",
        """
        weekly = pd.read_csv("weekly.csv", parse_dates=["week"], index_col="week")
        res = smf.ols("riders ~ fare + fuel_price", data=weekly).fit(cov_type="HC3")  # expect: no-serial-test
        print(res.summary())
    """,
        SERIAL,
    ),
    case(
        "breusch-godfrey",
        """
        crossings["riders_prev"] = crossings["riders"].shift(1)
        res = smf.ols("riders ~ fare + riders_prev", data=crossings.dropna()).fit()
        print(acorr_breusch_godfrey(res, nlags=4))
        print(res.summary())
    """,
        SERIAL,
    ),
    case(
        "durbin-watson",
        """
        from statsmodels.stats.stattools import durbin_watson

        res = smf.ols("riders ~ fare + lag_riders", data=crossings).fit()
        print(durbin_watson(res.resid))
        print(res.summary())
    """,
        SERIAL,
    ),
    case(
        "HAC-robust-copy",
        """
        weekly = pd.read_csv("weekly.csv", parse_dates=["week"], index_col="week")
        base = smf.ols("riders ~ fare + fuel_price", data=weekly).fit()
        hac = base.get_robustcov_results(cov_type="HAC", maxlags=4)
        print(hac.summary())
    """,
        SERIAL,
    ),
]


@pytest.mark.parametrize("code, rules, settings", TIME)
def test_time_ordered_data(code, rules, settings):
    _check(_analyze(code, settings), code, rules)


# --- structural breaks ------------------------------------------------------------------------
_SEASON = 'restricted = smf.ols("riders ~ fare + fuel_price + C(season)", data=crossings).fit()'
BREAKS = [
    case(
        "intercept-shift-untested",
        f"""
        {_SEASON}  # expect: no-break-test
        print(restricted.params)
    """,
        BREAK,
    ),
    case(
        "no-group-no-finding",
        """
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        print(res.params)
    """,
        BREAK,
    ),
    case(
        "interacted-model-not-flagged",
        """
        res = smf.ols("riders ~ (fare + fuel_price) * C(season)", data=crossings).fit()
        print(res.params)
    """,
        BREAK,
    ),
    case(
        "anova_lm-restricted-interacted",
        f"""
        from statsmodels.stats.anova import anova_lm

        {_SEASON}
        interacted = smf.ols("riders ~ (fare + fuel_price) * C(season)", data=crossings).fit()
        print(anova_lm(restricted, interacted))
        print(restricted.params)
    """,
        BREAK,
    ),
    case(
        "sm.stats.anova_lm",
        f"""
        {_SEASON}
        interacted = smf.ols("riders ~ (fare + fuel_price) * C(season)", data=crossings).fit()
        print(sm.stats.anova_lm(restricted, interacted))
        print(restricted.params)
    """,
        BREAK,
    ),
    case(
        "compare_f_test",
        f"""
        {_SEASON}
        interacted = smf.ols("riders ~ fare * C(season) + fuel_price * C(season)", data=crossings).fit()
        f_value, p_value, df_diff = interacted.compare_f_test(restricted)
        print(restricted.params)
    """,
        BREAK,
    ),
    case(
        "anova_lm-of-unrelated-models",
        f"""
        from statsmodels.stats.anova import anova_lm

        {_SEASON}  # expect: no-break-test
        small = smf.ols("riders ~ fare", data=crossings).fit()
        large = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        print(anova_lm(small, large))
        print(restricted.params)
    """,
        BREAK,
    ),
    case(
        "hand-made-chow",
        f"""
        {_SEASON}
        summer = smf.ols("riders ~ fare + fuel_price", data=crossings[crossings["season"] == "summer"]).fit()
        winter = smf.ols("riders ~ fare + fuel_price", data=crossings[crossings["season"] != "summer"]).fit()
        a, b, pooled = summer, winter, restricted
        k = 3
        n = len(crossings)
        chow = ((pooled.ssr - (a.ssr + b.ssr)) / k) / ((a.ssr + b.ssr) / (n - 2 * k))
        print(chow, restricted.params)
    """,
        BREAK,
    ),
    case(
        "hand-made-chow-with-sum",
        f"""
        {_SEASON}
        parts = [smf.ols("riders ~ fare + fuel_price", data=g).fit() for _, g in crossings.groupby("season")]
        k = 3
        unrestricted = sum(r.ssr for r in parts)
        chow = ((restricted.ssr - unrestricted) / k) / (unrestricted / (len(crossings) - 2 * k))
        print(chow, restricted.params)
    """,
        BREAK,
    ),
    case(
        "hand-made-chow-with-sum-of-list",
        f"""
        {_SEASON}
        summer = smf.ols("riders ~ fare + fuel_price", data=crossings[crossings["season"] == "summer"]).fit()
        winter = smf.ols("riders ~ fare + fuel_price", data=crossings[crossings["season"] != "summer"]).fit()
        k, n = 3, len(crossings)
        unrestricted = sum([summer.ssr, winter.ssr])
        chow = ((restricted.ssr - unrestricted) / k) / (unrestricted / (n - 2 * k))
        print(chow, restricted.params)
    """,
        BREAK,
    ),
    case(
        "f_test-on-interacted-model",
        f"""
        {_SEASON}
        interacted = smf.ols("riders ~ fare * C(season) + fuel_price", data=crossings).fit()
        print(interacted.f_test("fare:C(season)[T.winter] = 0"))
        print(restricted.params)
    """,
        BREAK,
    ),
    case(
        "breaks_cusumolsresid",
        f"""
        from statsmodels.stats.diagnostic import breaks_cusumolsresid

        {_SEASON}
        print(breaks_cusumolsresid(restricted.resid, ddof=int(restricted.df_model) + 1))
        print(restricted.params)
    """,
        BREAK,
    ),
]


@pytest.mark.parametrize("code, rules, settings", BREAKS)
def test_structural_breaks(code, rules, settings):
    _check(_analyze(code, settings), code, rules)


# --- hand-made tests --------------------------------------------------------------------------
HAND_MADE = [
    case(
        "reset-by-auxiliary-formula",
        """
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        crossings["yhat"] = res.fittedvalues
        aux = smf.ols("riders ~ fare + fuel_price + I(yhat**2) + I(yhat**3)", data=crossings).fit()
        print(aux.f_test("I(yhat ** 2) = 0, I(yhat ** 3) = 0"))
        print(res.params)
    """,
        FORM,
    ),
    case(
        "reset-by-column_stack",
        """
        X = sm.add_constant(crossings[["fare", "fuel_price"]])
        res = sm.OLS(crossings["riders"], X).fit()
        X_aux = np.column_stack([X, res.fittedvalues**2, res.fittedvalues**3])
        aux = sm.OLS(crossings["riders"], X_aux).fit()
        print(aux.compare_f_test(res))
        print(res.params)
    """,
        FORM,
    ),
    case(
        "fitted-values-without-powers-is-not-reset",
        """
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()  # expect: no-form-test
        crossings["yhat"] = res.fittedvalues
        aux = smf.ols("riders ~ yhat", data=crossings).fit()
        print(res.params)
    """,
        FORM,
    ),
    case(
        "variance-by-squared-residuals",
        """
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        crossings["u2"] = res.resid**2
        aux = smf.ols("u2 ~ fare", data=crossings).fit()
        print(aux.fvalue, aux.f_pvalue)
        print(res.summary())
    """,
        VAR,
    ),
    case(
        "auxiliary-regression-not-judged",
        """
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit(cov_type="HC3")
        crossings["u2"] = res.resid**2
        aux = smf.ols("u2 ~ fare + fuel_price", data=crossings).fit()
        print(aux.summary())
    """,
        VAR,
        FORM,
    ),
    case(
        "variance-by-np.power",
        """
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        crossings["u2"] = np.power(res.resid, 2)
        aux = smf.ols("u2 ~ fare + fuel_price + I(fare**2)", data=crossings).fit()
        print(aux.f_pvalue, res.summary())
    """,
        VAR,
    ),
    case(
        "residuals-unsquared-are-not-a-variance-test",
        """
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()  # expect: no-variance-test
        crossings["u"] = res.resid
        aux = smf.ols("u ~ wind_speed", data=crossings).fit()
        print(aux.params, res.summary())
    """,
        VAR,
    ),
    case(
        "variance-by-assign",
        """
        res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
        aux = smf.ols("u2 ~ fare + fuel_price", data=crossings.assign(u2=res.resid**2)).fit()
        print(aux.f_pvalue, res.summary())
    """,
        VAR,
    ),
]


@pytest.mark.parametrize("code, rules, settings", HAND_MADE)
def test_hand_made_tests(code, rules, settings):
    _check(_analyze(code, settings), code, rules)


# --- comparisons of fit measures --------------------------------------------------------------
_LEVEL_LOG = """
    level = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
    logged = smf.ols("np.log(riders) ~ fare + fuel_price", data=crossings).fit()
"""
_SMALL_LARGE = """
    small = smf.ols("riders ~ fare", data=crossings).fit()
    large = smf.ols("riders ~ fare + fuel_price + wind_speed", data=crossings).fit()
"""
COMPARES = [
    case(
        "max-key-rsquared-log-vs-level",
        _LEVEL_LOG
        + """
    best = max([level, logged], key=lambda r: r.rsquared)  # expect: compare-across-outcomes
    """,
        ACROSS,
        R2,
    ),
    case(
        "sorted-key-aic-log-vs-level",
        _LEVEL_LOG
        + """
    ranked = sorted([level, logged], key=lambda r: r.aic)  # expect: compare-across-outcomes
    """,
        ACROSS,
    ),
    case(
        "min-dict-get-aic",
        _LEVEL_LOG
        + """
    aics = {"level": level.aic, "log": logged.aic}
    best = min(aics, key=aics.get)  # expect: compare-across-outcomes
    """,
        ACROSS,
    ),
    case(
        "aic-difference",
        _LEVEL_LOG
        + """
    gain = level.aic - logged.aic  # expect: compare-across-outcomes
    """,
        ACROSS,
    ),
    case(
        "llf-ratio",
        _LEVEL_LOG
        + """
    ratio = level.llf / logged.llf  # expect: compare-across-outcomes
    """,
        ACROSS,
    ),
    case(
        "comparison-operator",
        _LEVEL_LOG
        + """
    if logged.rsquared_adj > level.rsquared_adj:  # expect: compare-across-outcomes
        print("log model")
    """,
        ACROSS,
    ),
    case(
        "dict-of-fits-keyed",
        _LEVEL_LOG
        + """
    fits = {"level": level, "log": logged}
    best = max(fits, key=lambda name: fits[name].bic)  # expect: compare-across-outcomes
    """,
        ACROSS,
    ),
    case(
        "measure-through-function",
        _LEVEL_LOG
        + """
    def score(res):
        return res.bic


    better = score(level) < score(logged)  # expect: compare-across-outcomes
    """,
        ACROSS,
    ),
    case(
        "sorted-dict-items-by-aic",
        _LEVEL_LOG
        + """
    fits = {"level": level, "log": logged}
    ranked = sorted(fits.items(), key=lambda kv: kv[1].aic)  # expect: compare-across-outcomes
    """,
        ACROSS,
    ),
    case(
        "max-dict-values-by-rsquared",
        _LEVEL_LOG
        + """
    fits = {"level": level, "log": logged}
    best = max(fits.values(), key=lambda r: r.rsquared)  # expect: compare-across-outcomes
    """,
        ACROSS,
    ),
    case(
        "same-outcome-aic-fine",
        _SMALL_LARGE
        + """
    best = min([small, large], key=lambda r: r.aic)
    gain = small.aic - large.aic
    """,
        ACROSS,
        R2,
    ),
    case(
        "max-key-rsquared-nested",
        _SMALL_LARGE
        + """
    best = max([small, large], key=lambda r: r.rsquared)  # expect: r2-unadjusted-compare
    """,
        ACROSS,
        R2,
    ),
    case(
        "sorted-key-rsquared-nested",
        _SMALL_LARGE
        + """
    ranked = sorted([small, large], key=lambda r: r.rsquared, reverse=True)  # expect: r2-unadjusted-compare
    """,
        R2,
    ),
    case(
        "rsquared-operator-nested",
        _SMALL_LARGE
        + """
    if large.rsquared > small.rsquared:  # expect: r2-unadjusted-compare
        print("large wins")
    """,
        R2,
    ),
    case(
        "rsquared-difference-nested",
        _SMALL_LARGE
        + """
    gain = large.rsquared - small.rsquared  # expect: r2-unadjusted-compare
    """,
        R2,
    ),
    case(
        "rsquared_adj-fine",
        _SMALL_LARGE
        + """
    best = max([small, large], key=lambda r: r.rsquared_adj)
    """,
        R2,
    ),
    case(
        "rsquared-same-size-fine",
        """
    fare = smf.ols("riders ~ fare", data=crossings).fit()
    wind = smf.ols("riders ~ wind_speed", data=crossings).fit()
    best = max([fare, wind], key=lambda r: r.rsquared)
    """,
        R2,
        ACROSS,
    ),
    case(
        "rsquared-in-loop-over-fits",
        _SMALL_LARGE
        + """
    best = small
    for res in [small, large]:
        if res.rsquared > best.rsquared:  # expect: r2-unadjusted-compare
            best = res
    """,
        R2,
    ),
]


@pytest.mark.parametrize("code, rules, settings", COMPARES)
def test_comparisons(code, rules, settings):
    _check(_analyze(code, settings), code, rules)


# --- known blind spots ---------------------------------------------------------------------------
# Each of these is a real false negative of the static analysis, kept as a strict xfail so that
# fixing one is noticed (the test then passes and must lose its mark).
BLIND_SPOTS = [
    case(
        "measures-compared-inside-a-dataframe",
        """
        level = smf.ols("riders ~ fare", data=crossings).fit()
        logged = smf.ols("np.log(riders) ~ fare", data=crossings).fit()
        table = pd.DataFrame({"r2": [level.rsquared, logged.rsquared]}, index=["level", "log"])
        best = table["r2"].idxmax()  # expect: compare-across-outcomes
    """,
        ACROSS,
        xfail="pandas operations on a table of fit measures are opaque to the collector",
    ),
    case(
        "attribute-set-in-a-later-method",
        """
        class Study:
            def report(self):
                print(self.res.summary())

            def fit(self):
                self.res = smf.ols("riders ~ fare", data=crossings).fit()  # expect: no-variance-test


        study = Study()
        study.fit()
        study.report()
    """,
        VAR,
        xfail="methods are analysed in definition order, so `self.res` is unknown in `report`, "
        "which comes first; calls through instances are not followed",
    ),
]


@pytest.mark.parametrize("code, rules, settings", BLIND_SPOTS)
def test_known_blind_spots(code, rules, settings):
    _check(_analyze(code, settings), code, rules)
