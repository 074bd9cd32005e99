"""The analyser's bounds: work that does not depend on the input's shape, and what is reported when one is reached.

Formula expansion is checked against patsy (the formula library statsmodels uses) for the term
sets it does expand; the time budget, deep input and a failing rule each give an
``incomplete-analysis`` finding and the scan keeps the other files.
"""

from __future__ import annotations

import json
import time

import pytest

from regvet import engine
from regvet.analysis.formula import MAX_TERMS, parse_formula
from regvet.engine import analyze
from regvet.model.finding import Severity
from regvet.model.settings import Settings
from regvet.rules import ALL_RULES
from regvet.rules.base import Rule

HEAD = "import statsmodels.formula.api as smf\n"


def _patsy_terms(formula: str) -> set[tuple[str, ...]]:
    """The model terms patsy builds for ``formula`` (its reference expansion), intercept left out."""
    patsy = pytest.importorskip("patsy")
    desc = patsy.ModelDesc.from_formula(formula)
    return {tuple(sorted(f.name() for f in t.factors)) for t in desc.rhs_termlist} - {()}


@pytest.mark.parametrize(
    "formula",
    [
        "y ~ (a + b)**1000000000",  # issue 12: a 147-byte formula like this never finished
        "y ~ (a + b + c + d)**50",
        "y ~ (a + b + c)**2 + d",
        "y ~ a * b * c * d * e * f * g * h * i",  # 511 terms, under the cap
        "y ~ (a + b + c + d + e + f + g + h + i)**9",
        "y ~ a:b:c + (d + e)**3",
        "y ~ (a + b)**1 - a",
        "y ~ a / (b + c)",
    ],
)
def test_expanded_formulas_have_patsys_terms(formula):
    started = time.perf_counter()
    parsed = parse_formula(formula)
    assert time.perf_counter() - started < 1.0
    assert parsed is not None and not parsed.too_large
    assert set(parsed.terms) == _patsy_terms(formula)


@pytest.mark.parametrize(
    "formula",
    [
        "y ~ " + " * ".join("abcdefghijklmnopqrst"),  # 20 factors: 2**20 - 1 terms
        "y ~ (a + b + c + d + e + f + g + h + i + j + k + l)**50",  # 4,095 terms
        "y ~ " + " * ".join(f"x{i}" for i in range(400)),
        "y ~ (" + " + ".join(f"x{i}" for i in range(2_000)) + ")**2",
        "y ~ (" + " + ".join(f"x{i}" for i in range(200)) + "):(" + " + ".join(f"z{i}" for i in range(600)) + ")",
    ],
)
def test_formulas_past_the_cap_are_marked_too_large_quickly(formula):
    started = time.perf_counter()
    parsed = parse_formula(formula)
    assert time.perf_counter() - started < 1.0
    assert parsed is not None and parsed.too_large and parsed.terms == ()
    assert {"a", "x0", "x1"} & parsed.variables  # the names it reads are still known


def test_a_formula_just_under_and_just_over_the_cap():
    under = parse_formula("y ~ " + " * ".join("abcdefghi"))  # 2**9 - 1 = 511 terms
    over = parse_formula("y ~ " + " * ".join("abcdefghij"))  # 2**10 - 1 = 1,023 terms
    assert under is not None and len(under.terms) == 511 <= MAX_TERMS
    assert over is not None and over.too_large


def test_deep_parentheses_and_odd_exponents_are_refused_not_raised():
    assert parse_formula("y ~ " + "(" * 5_000 + "a" + ")" * 5_000) is None
    assert parse_formula("y ~ a**" + "9" * 5_000) is not None  # int() would refuse 5,000 digits
    assert parse_formula("y ~ a**٣") is None  # a non-ASCII digit is not an exponent
    assert parse_formula("y\x00 ~ a") is not None  # a NUL on the left: no outcome, still read


def test_a_too_large_formula_is_reported_on_its_fit():
    code = (
        HEAD
        + 'res = smf.ols("riders ~ '
        + " * ".join(f"x{i}" for i in range(20))
        + '", data=df).fit()\nprint(res.params)\n'
    )
    report = analyze(code, "wide.py", strict=True)
    found = [f for f in report.findings if f.rule == "incomplete-analysis"]
    assert [(f.span.line, f.severity) for f in found] == [(2, Severity.WARNING)]
    assert "more than 1,000 terms" in found[0].message and "`res`" in found[0].message


def _script(fits: int) -> str:
    body = "".join(f"r{i} = smf.ols('riders ~ fare + x{i}', data=df).fit()\nprint(r{i}.params)\n" for i in range(fits))
    return HEAD + body


def test_the_time_budget_stops_one_file_with_a_finding():
    code = _script(600)  # 1,200 statements: the clock is read every 256
    full = analyze(code, "long.py")
    assert {f.rule for f in full.findings} >= {"no-form-test"}
    stopped = analyze(code, "long.py", budget=1e-9)
    assert [f.rule for f in stopped.findings] == ["incomplete-analysis"]
    assert "time budget of 1e-09 s (`analysis_budget`)" in stopped.findings[0].message
    assert stopped.crashes == ()  # a bound, not a failure: no exit 3


def test_the_budget_comes_from_the_settings(tmp_path, run_cli):
    (tmp_path / "long.py").write_text(_script(600))
    (tmp_path / "small.py").write_text(_script(1))
    (tmp_path / "regvet.toml").write_text("analysis_budget = 0.000001\n")
    code, out, _ = run_cli("check", "--format", "json", "--no-cache", str(tmp_path))
    by_file = {}
    for f in json.loads(out)["findings"]:
        by_file.setdefault(f["path"].rsplit("/", 1)[-1], set()).add(f["rule"])
    assert by_file["long.py"] == {"incomplete-analysis"}
    assert "no-form-test" in by_file["small.py"]  # under 256 statements: analysed before the clock is read
    assert code == 1


def test_code_over_the_size_limit_is_not_parsed(tmp_path, run_cli):
    """``analysis_max_mb`` bounds the parser's memory (about 100 bytes per byte of code): a larger file gets
    ``incomplete-analysis`` and is never parsed; a smaller one in the same scan is analysed."""
    big = _script(1) + "".join(f"filler_{i} = {i}  # padding of the file\n" for i in range(40_000))
    assert len(big) > 1_000_000
    (tmp_path / "big.py").write_text(big)
    (tmp_path / "small.py").write_text(_script(1))
    (tmp_path / "regvet.toml").write_text("analysis_max_mb = 1\n")
    code, out, _ = run_cli("check", "--format", "json", "--no-cache", str(tmp_path))
    by_file: dict[str, list[dict]] = {}
    for f in json.loads(out)["findings"]:
        by_file.setdefault(f["path"].rsplit("/", 1)[-1], []).append(f)
    [stopped] = by_file["big.py"]
    assert stopped["rule"] == "incomplete-analysis"
    assert f"its Python code is {len(big) / 1e6:.1f} MB, more than `analysis_max_mb` (1 MB)" in stopped["message"]
    assert "raise `analysis_max_mb`" in stopped["message"]
    assert "no-form-test" in {f["rule"] for f in by_file["small.py"]}
    assert code == 1  # a bound, not a failure of regvet (exit 3)
    # under the default limit (10 MB) the same file is analysed
    assert {f.rule for f in analyze(big, "big.py").findings} >= {"no-form-test"}


def test_the_size_limit_counts_a_notebooks_code_not_its_outputs():
    cell = {"cell_type": "code", "metadata": {}, "execution_count": 1, "source": _script(1)}
    picture = {"output_type": "display_data", "data": {"image/png": "A" * 3_000_000}, "metadata": {}}
    cell["outputs"] = [picture]
    text = json.dumps({"nbformat": 4, "nbformat_minor": 5, "metadata": {}, "cells": [cell]})
    assert len(text) > 3_000_000
    report = analyze(text, "plots.ipynb", Settings(analysis_max_mb=1))
    assert "no-form-test" in {f.rule for f in report.findings}


@pytest.mark.parametrize("depth", [1_000, 5_000])
def test_deep_input_is_too_deep_not_a_crash(depth):
    code = HEAD + "x = a" + ".b" * depth + "\nres = smf.ols('riders ~ fare', data=df).fit()\n"
    report = analyze(code, "deep.py")
    assert report.crashes == ()
    assert [f.rule for f in report.findings] in (["incomplete-analysis"], ["parse-error"])
    if report.findings[0].rule == "incomplete-analysis":
        assert "nested too deeply" in report.findings[0].message


def _boom(inp):
    raise ValueError("boom")


BROKEN = Rule(id="broken-rule", severity=Severity.INFO, summary="s", rationale="r", bad="", good="", check=_boom)


def test_a_failing_rule_is_a_finding_and_a_crash(monkeypatch):
    monkeypatch.setattr(engine, "ALL_RULES", (*ALL_RULES, BROKEN))
    report = analyze(_script(1), "one.py")
    assert [c.where for c in report.crashes] == ["broken-rule"]
    found = [f for f in report.findings if f.rule == "incomplete-analysis"]
    assert len(found) == 1 and "bug in regvet" in found[0].message and "`broken-rule`" in found[0].message
    assert "no-form-test" in {f.rule for f in report.findings}  # the other rules' findings are kept


def test_a_failure_outside_the_guarded_stages_is_a_finding(monkeypatch):
    def broken_notebook(text):
        raise KeyError("cells")

    monkeypatch.setattr(engine, "read_notebook", broken_notebook)
    report = analyze("{}", "n.ipynb")
    assert [c.where for c in report.crashes] == ["analysis"]
    assert [f.rule for f in report.findings] == ["incomplete-analysis"]


def test_the_cli_reports_a_failure_as_a_finding_and_exits_3(tmp_path, run_cli, monkeypatch):
    monkeypatch.setattr(engine, "ALL_RULES", (*ALL_RULES, BROKEN))
    (tmp_path / "one.py").write_text(_script(1))
    (tmp_path / "two.py").write_text(_script(2))
    code, out, err = run_cli("check", "--format", "json", "--no-cache", "--jobs", "1", str(tmp_path))
    findings = json.loads(out)["findings"]
    failed = [f for f in findings if f["rule"] == "incomplete-analysis"]
    assert sorted(f["path"].rsplit("/", 1)[-1] for f in failed) == ["one.py", "two.py"]
    assert {f["rule"] for f in findings} > {"incomplete-analysis"}  # every file's other findings are kept
    assert "regvet failed in rule broken-rule" in err
    assert code == 3


def test_a_file_stopped_at_its_budget_is_not_cached(tmp_path, run_cli, monkeypatch):
    (tmp_path / "long.py").write_text(_script(600))
    cache = tmp_path / "cache"
    monkeypatch.setenv("REGVET_CACHE_DIR", str(cache))
    (tmp_path / "regvet.toml").write_text("analysis_budget = 0.000001\n")
    code, out, _ = run_cli("check", "--format", "json", str(tmp_path / "long.py"))
    assert [f["rule"] for f in json.loads(out)["findings"]] == ["incomplete-analysis"]
    assert not [p for p in cache.rglob("*") if p.is_file()]  # nothing stored: the next run tries again
    (tmp_path / "regvet.toml").write_text("analysis_budget = 60\n")
    code, out, _ = run_cli("check", "--format", "json", str(tmp_path / "long.py"))
    assert "no-form-test" in {f["rule"] for f in json.loads(out)["findings"]}
    assert [p for p in cache.rglob("*") if p.is_file()]  # an analysis that finished is cached


def test_magic_neutralisation_is_linear_and_respects_statements():
    from regvet.sources.notebook import neutralize

    cell = (
        "!echo ferry\n" * 20_000
        + "x = (\n!inside brackets\n)\ns = '''\n!inside a string\n'''\ny = 1 + \\\n!continued\ndef broken(:\n"
    )
    started = time.perf_counter()
    out = neutralize(cell).split("\n")
    assert time.perf_counter() - started < 2.0  # 20,000 magic lines: the old re-tokenising took minutes
    assert out[:20_000] == ["pass"] * 20_000
    assert out[20_001] == "!inside brackets" and out[20_004] == "!inside a string" and out[20_007] == "!continued"
    assert len(out) == len(cell.split("\n"))


def test_the_import_precheck_is_linear():
    from regvet.analysis.providers import ModuleSource
    from regvet.engine import mentions_fits

    class Modules:
        def find(self, name, level, importer):
            return (
                ModuleSource("helpers", "helpers.py", "import statsmodels.api as sm\n") if name == "helpers" else None
            )

    text = "from " + "." * 200_000 + "\n" + "import " + "a," * 100_000 + "\nfrom helpers import fit_all\n"
    started = time.perf_counter()
    assert mentions_fits(text, Modules())
    assert time.perf_counter() - started < 2.0


def test_deep_fan_out_of_calls_ends_at_the_budget():
    """Each function calls the next three times (issue 12: seconds to minutes on a few KB); the budget bounds it."""
    code = HEAD + "def f30(d):\n    return smf.ols('riders ~ fare', data=d).fit()\n"
    for i in range(29, -1, -1):
        code += f"def f{i}(d):\n    a = [f{i + 1}(d), f{i + 1}(d[0])][0]\n    c = f{i + 1}(a)\n    return a\n"
    code += "res = f0(df)\nprint(res.summary())\n"
    started = time.perf_counter()
    report = analyze(code, "fan.py", budget=2.0)
    assert time.perf_counter() - started < 10.0
    assert report.crashes == ()
    assert report.over_budget == ("incomplete-analysis" in {f.rule for f in report.findings})
