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
    r = run(
        "res = smf.ols('riders ~ fare', data=df).fit()  # regvet: waive no-form-test because linear by design\nres.params\n"
    )
    assert states(r) == [(2, "no-form-test", True, "linear by design")]


def test_waiver_alone_on_the_line_above():
    r = run(
        "# regvet: waive no-form-test because linear by design\nres = smf.ols('riders ~ fare', data=df).fit()\nres.params\n"
    )
    assert states(r) == [(3, "no-form-test", True, "linear by design")]


def test_waiver_two_lines_above_or_after_code_does_not_apply():
    r = run(
        "# regvet: waive no-form-test because too far\n\nres = smf.ols('riders ~ fare', data=df).fit()\nres.params\n"
    )
    assert states(r) == [(4, "no-form-test", False, None)]
    r = run(
        "x = 1  # regvet: waive no-form-test because trailing on another statement\nres = smf.ols('riders ~ fare', data=df).fit()\nres.params\n"
    )
    assert states(r) == [(3, "no-form-test", False, None)]


def test_several_rules_and_file_wide_waivers():
    r = run(
        """\
        res = smf.ols('riders ~ fare', data=df).fit()  # regvet: waive no-form-test, no-variance-test because pilot data
        res.summary()
        """
    )
    assert {(f.rule, f.waived) for f in r.findings} == {("no-form-test", True), ("no-variance-test", True)}
    r = run(
        """\
        res = smf.ols('riders ~ fare', data=df).fit()
        res.summary()
        # regvet: waive-file no-variance-test because the sample is a designed experiment with equal cells
        """
    )
    assert states(r) == [
        (2, "no-form-test", False, None),
        (2, "no-variance-test", True, "the sample is a designed experiment with equal cells"),
    ]


def test_waiver_without_reason_does_not_take_effect():
    r = run("res = smf.ols('riders ~ fare', data=df).fit()  # regvet: waive no-form-test\nres.params\n")
    assert states(r) == [(2, "no-form-test", False, None), (2, "waiver-without-reason", False, None)]
    r = run("res = smf.ols('riders ~ fare', data=df).fit()  # regvet: waive no-form-test because   \nres.params\n")
    assert [s[1] for s in states(r)] == ["no-form-test", "waiver-without-reason"]


@pytest.mark.parametrize(
    "comment,needle",
    [
        (
            "# regvet: waive because no rule given",
            "names no rule, so it takes no effect. Write it as " "`# regvet: waive RULE because no rule given`",
        ),
        ("# regvet: waive -- no rule given", "names no rule and separates its reason with ` -- `"),
        # the old separator and other habits: the message shows the waiver in the form regvet reads
        (
            "# regvet: waive no-form-test -- linear by design",
            "separates its reason with ` -- ` instead of the word "
            "`because`, so it takes no effect. Write it as `# regvet: waive no-form-test because linear by design`",
        ),
        (
            "# regvet: waive no-form-test: linear by design",
            "separates its reason with `:` instead of the word "
            "`because`, so it takes no effect. Write it as `# regvet: waive no-form-test because linear by design`",
        ),
        (
            "# regvet: waive no-form-test - linear by design",
            "separates its reason with ` - ` instead of the word "
            "`because`, so it takes no effect. Write it as `# regvet: waive no-form-test because linear by design`",
        ),
        (
            "# regvet: waive no-form-test, no-variance-test -- pilot",
            "`# regvet: waive no-form-test, " "no-variance-test because pilot`",
        ),
        (
            "# regvet: waive no-form-test linear by design",
            "gives its reason without the word `because`, so it takes "
            "no effect. Write it as `# regvet: waive no-form-test because linear by design`",
        ),
        (
            "# regvet: waive no-form-test",
            "gives no reason, so it takes no effect. Say why the check does not apply, as in "
            "`# regvet: waive no-form-test because REASON`",
        ),
    ],
)
def test_malformed_waivers_say_the_expected_form(comment, needle):
    r = run(f"res = smf.ols('riders ~ fare', data=df).fit()  {comment}\nres.params\n")
    messages = [f.message for f in r.findings if f.rule == "waiver-without-reason"]
    assert len(messages) == 1 and needle in messages[0], messages
    assert any(f.rule == "no-form-test" and not f.waived for f in r.findings)
    assert not any(f.rule == "waiver-unknown-rule" for f in r.findings)


def test_the_written_form_the_message_suggests_is_read_as_a_waiver():
    """Pasting the form the message shows waives the finding (the message is a working fix)."""
    import re

    r = run(
        "res = smf.ols('riders ~ fare', data=df).fit()  # regvet: waive no-form-test -- linear by design\nres.params\n"
    )
    (message,) = [f.message for f in r.findings if f.rule == "waiver-without-reason"]
    suggested = re.search(r"Write it as `([^`]+)`", message)[1]
    r = run(f"res = smf.ols('riders ~ fare', data=df).fit()  {suggested}\nres.params\n")
    assert states(r) == [(2, "no-form-test", True, "linear by design")]


@pytest.mark.parametrize(
    "comment,needle",
    [
        (
            "# regvet: waive no-frm-test because typo",
            "`no-frm-test`, which is not a regvet rule, so it waives nothing "
            "for that name. Did you mean `no-form-test`?",
        ),
        ("# regvet: waive No_Form_Test because other case", "Did you mean `no-form-test`?"),
        ("# regvet: waive NO-FORM-TEST because capitals", "Did you mean `no-form-test`?"),
        (
            "# regvet: waive no-varience-test, no-from-test because two typos",
            "`no-varience-test` and `no-from-test`, "
            "which are not regvet rules, so it waives nothing for them. Did you mean `no-variance-test` for "
            "`no-varience-test`, `no-form-test` for `no-from-test`?",
        ),
        (
            "# regvet: waive ferry-schedule because nothing close",
            "`ferry-schedule`, which is not a regvet rule, so it "
            "waives nothing for that name. `regvet rules` lists the rules.",
        ),
    ],
)
def test_unknown_rule_gets_its_own_finding_with_the_nearest_rule(comment, needle):
    r = run(f"res = smf.ols('riders ~ fare', data=df).fit()  {comment}\nres.params\n")
    messages = [f.message for f in r.findings if f.rule == "waiver-unknown-rule"]
    assert len(messages) == 1 and needle in messages[0], messages
    assert not any(f.rule == "waiver-without-reason" for f in r.findings)  # it has a reason: not reported as without
    assert any(f.rule == "no-form-test" and not f.waived for f in r.findings)


def test_known_rules_beside_an_unknown_one_are_still_waived():
    r = run(
        "res = smf.ols('riders ~ fare', data=df).fit()  # regvet: waive no-frm-test, no-variance-test because pilot"
        "\nres.summary()\n"
    )
    assert states(r) == [
        (2, "no-form-test", False, None),
        (2, "no-variance-test", True, "pilot"),
        (2, "waiver-unknown-rule", False, None),
    ]


def test_unknown_rule_and_no_reason_are_both_reported():
    r = run("res = smf.ols('riders ~ fare', data=df).fit()  # regvet: waive-file no-frm-test\nres.params\n")
    rules = [f.rule for f in r.findings]
    assert rules.count("waiver-unknown-rule") == 1 and rules.count("waiver-without-reason") == 1


def test_waiver_findings_cannot_be_waived():
    r = run(
        "# regvet: waive-file waiver-unknown-rule, waiver-without-reason because quiet please\n"
        "res = smf.ols('riders ~ fare', data=df).fit()  # regvet: waive no-frm-test because x\nres.params\n"
    )
    assert ("waiver-unknown-rule", False) in [(f.rule, f.waived) for f in r.findings]


@pytest.mark.parametrize(
    "comment,rules,reason",
    [
        ("# regvet: waive no-form-test because fare is fixed", ("no-form-test",), "fare is fixed"),
        (
            "#regvet:waive no-form-test,no-variance-test because   pilot  ",
            ("no-form-test", "no-variance-test"),
            "pilot",
        ),
        (
            "# regvet: waive no-form-test because the word because is fine here",
            ("no-form-test",),
            "the word because is fine here",
        ),
        ("# regvet: waive no-form-test because -- dashes in a reason", ("no-form-test",), "-- dashes in a reason"),
        (
            "# regvet: waive no-form-test because fares: fixed  # expect: no-form-test",
            ("no-form-test",),
            "fares: fixed",
        ),
        ("# regvet: waive no-form-test because", ("no-form-test",), None),
        ("# regvet: waive no-form-test -- because fares are fixed", ("no-form-test",), "fares are fixed"),
        ("# regvet: waive no-form-test: because fares are fixed", ("no-form-test",), "fares are fixed"),
        ("# regvet: waive no-form-test because: fares are fixed", ("no-form-test",), "fares are fixed"),
    ],
)
def test_reading_the_because_form(comment, rules, reason):
    (w,) = find_waivers(f"x = 1  {comment}\n")
    assert (w.rules, w.reason, w.malformed) == (rules, reason, None)


def test_waiver_text_inside_strings_is_not_a_waiver():
    src = 's = "# regvet: waive no-form-test because not a comment"\nt = """\n# regvet: waive-file no-form-test because nor this\n"""\n'
    assert find_waivers(src) == []
    r = run(src + "res = smf.ols('riders ~ fare', data=df).fit()\nres.params\n")
    assert [(f.rule, f.waived) for f in r.findings] == [("no-form-test", False)]


def test_waivers_found_in_a_file_that_stops_tokenizing():
    src = "x = 1  # regvet: waive no-form-test because ok\ny = (\n"
    assert [w.rules for w in find_waivers(src)] == [("no-form-test",)]


def test_parse_error_cannot_be_waived():
    r = analyze("# regvet: waive-file parse-error because please\nimport statsmodels\nx = (\n", "p.py", strict=True)
    assert [(f.rule, f.waived) for f in r.findings] == [("parse-error", False)]


# --- the tokenizer's safe copy (sources/tokens.py) -----------------------------------------------
def _tokens(text: str) -> list[tuple[int, tuple[int, int], tuple[int, int]]]:
    import io
    import tokenize

    try:
        return [(t.type, t.start, t.end) for t in tokenize.generate_tokens(io.StringIO(text).readline)]
    except (tokenize.TokenError, SyntaxError):
        return []


def test_the_safe_copy_keeps_every_token_of_real_code_in_place():
    from pathlib import Path

    from regvet.sources.tokens import for_tokenize

    root = Path(__file__).resolve().parents[1]
    files = [*root.glob("fixtures/**/*.py"), *root.glob("src/regvet/**/*.py"), *root.glob("tests/*.py")]
    assert len(files) > 100
    for path in files:
        text = path.read_text(encoding="utf-8")
        assert _tokens(for_tokenize(text)) == _tokens(text), path


def test_the_safe_copy_changes_only_a_character_that_begins_no_token_after_a_long_run():
    from regvet.sources.tokens import RUN, for_tokenize

    blanks = " \t" * RUN
    for bad in ("$", "?", "`", "!", "\x00", "\x0b", "€", "\\ "):
        text = f"total = (price\n{blanks}{bad}\n)\n"
        safe = for_tokenize(text)
        assert len(safe) == len(text) and safe == text.replace(blanks + bad[0], blanks + "x"), repr(bad)
    for fine in ("!=", "'s'", '"s"', "# note", "\\\n", "(", "x", "7", "é", "+"):
        text = f"total = (price\n{blanks}{fine}\n)\n"
        assert for_tokenize(text) == text, repr(fine)
    assert (
        for_tokenize(f"a = 1 $\nb = 2{' ' * (RUN - 1)}$\n") == f"a = 1 $\nb = 2{' ' * (RUN - 1)}$\n"
    )  # short runs stay


def test_a_waiver_whose_text_was_made_safe_keeps_its_own_text():
    from regvet.rules import RULES_BY_ID

    spaces = " " * 200
    text = f"x = 1  # regvet: waive no-form-test because the price{spaces}$ is fixed by contract\n"
    (waiver,) = find_waivers(text, RULES_BY_ID)
    assert waiver.reason is not None and waiver.reason.endswith("$ is fixed by contract"), waiver.reason
    assert waiver.span.end_col == len(text) - 1
