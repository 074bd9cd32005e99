"""Waiver comments: placement, reasons, file-wide waivers, strings that only look like waivers."""

from __future__ import annotations

import textwrap

import pytest

from regvet.engine import analyze
from regvet.sources.waivers import find_waivers

HEAD = "import statsmodels.formula.api as smf\n"


def run(body: str):
    return analyze(HEAD + textwrap.dedent(body), "w.py", strict=True)


def states(report):
    return sorted((f.span.line, f.rule, f.waived, f.reason) for f in report.findings)


def test_trailing_waiver_on_the_finding_line():
    r = run("res = smf.ols('riders ~ fare', data=df).fit()  # regvet: waive no-form-test -- linear by design\nres.params\n")
    assert states(r) == [(2, "no-form-test", True, "linear by design")]


def test_waiver_alone_on_the_line_above():
    r = run("# regvet: waive no-form-test -- linear by design\nres = smf.ols('riders ~ fare', data=df).fit()\nres.params\n")
    assert states(r) == [(3, "no-form-test", True, "linear by design")]


def test_waiver_two_lines_above_or_after_code_does_not_apply():
    r = run("# regvet: waive no-form-test -- too far\n\nres = smf.ols('riders ~ fare', data=df).fit()\nres.params\n")
    assert states(r) == [(4, "no-form-test", False, None)]
    r = run("x = 1  # regvet: waive no-form-test -- trailing on another statement\nres = smf.ols('riders ~ fare', data=df).fit()\nres.params\n")
    assert states(r) == [(3, "no-form-test", False, None)]


def test_several_rules_and_file_wide_waivers():
    r = run(
        """\
        res = smf.ols('riders ~ fare', data=df).fit()  # regvet: waive no-form-test, no-variance-test -- pilot data
        res.summary()
        """
    )
    assert {(f.rule, f.waived) for f in r.findings} == {("no-form-test", True), ("no-variance-test", True)}
    r = run(
        """\
        res = smf.ols('riders ~ fare', data=df).fit()
        res.summary()
        # regvet: waive-file no-variance-test -- the sample is a designed experiment with equal cells
        """
    )
    assert states(r) == [
        (2, "no-form-test", False, None),
        (2, "no-variance-test", True, "the sample is a designed experiment with equal cells"),
    ]


def test_waiver_without_reason_does_not_take_effect():
    r = run("res = smf.ols('riders ~ fare', data=df).fit()  # regvet: waive no-form-test\nres.params\n")
    assert states(r) == [(2, "no-form-test", False, None), (2, "waiver-without-reason", False, None)]
    r = run("res = smf.ols('riders ~ fare', data=df).fit()  # regvet: waive no-form-test --   \nres.params\n")
    assert [s[1] for s in states(r)] == ["no-form-test", "waiver-without-reason"]


@pytest.mark.parametrize(
    "comment,needle",
    [
        ("# regvet: waive -- no rule given", "names no rule"),
        ("# regvet: waive no-frm-test -- typo", "`no-frm-test`, which is not a regvet rule"),
        ("# regvet: waive No_Form -- bad name", "unreadable rule name"),
    ],
)
def test_malformed_waivers_are_reported(comment, needle):
    r = run(f"res = smf.ols('riders ~ fare', data=df).fit()  {comment}\nres.params\n")
    messages = [f.message for f in r.findings if f.rule == "waiver-without-reason"]
    assert len(messages) == 1 and needle in messages[0]
    assert any(f.rule == "no-form-test" and not f.waived for f in r.findings)


def test_waiver_text_inside_strings_is_not_a_waiver():
    src = 's = "# regvet: waive no-form-test -- not a comment"\nt = """\n# regvet: waive-file no-form-test -- nor this\n"""\n'
    assert find_waivers(src) == []
    r = run(src + "res = smf.ols('riders ~ fare', data=df).fit()\nres.params\n")
    assert [(f.rule, f.waived) for f in r.findings] == [("no-form-test", False)]


def test_waivers_found_in_a_file_that_stops_tokenizing():
    src = "x = 1  # regvet: waive no-form-test -- ok\ny = (\n"
    assert [w.rules for w in find_waivers(src)] == [("no-form-test",)]


def test_parse_error_cannot_be_waived():
    r = analyze("# regvet: waive-file parse-error -- please\nimport statsmodels\nx = (\n", "p.py", strict=True)
    assert [(f.rule, f.waived) for f in r.findings] == [("parse-error", False)]
