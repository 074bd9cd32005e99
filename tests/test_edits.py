"""regvet.edits: the quick-fix rewrites keep every other byte and clear the finding they target."""

from __future__ import annotations

import ast
import difflib
import re

import libcst as cst
import pytest
from libcst.metadata import MetadataWrapper, PositionProvider

from regvet.edits import EditError, TextEdit, add_waiver, insert_after_statement, minimal_edit, set_cov_type
from regvet.engine import analyze
from regvet.model.span import Span

RESET = 'print("RESET:", linear_reset({res}, power=3, use_f=True))'
RESET_IMPORT = ("statsmodels.stats.diagnostic", "linear_reset")
BP = 'print("Breusch-Pagan:", het_breuschpagan({res}.resid, {res}.model.exog))'
BP_IMPORT = ("statsmodels.stats.diagnostic", "het_breuschpagan")

HEAD = 'import pandas as pd\nimport statsmodels.formula.api as smf\n\ncrossings = pd.read_csv("crossings.csv")\n'
CASES = {
    "formula": HEAD + 'res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()\nprint(res.summary())\n',
    "array": (
        "import pandas as pd\nimport statsmodels.api as sm\n\n"
        'crossings = pd.read_csv("crossings.csv")\n'
        'X = sm.add_constant(crossings[["fare", "fuel_price"]])\n'
        'model = sm.OLS(crossings["riders"], X)\n'
        "res = model.fit()\n"
        "print(res.summary())\n"
    ),
    "nonrobust": HEAD
    + 'res = smf.ols("riders ~ fare", data=crossings).fit(cov_type="nonrobust")\nprint(res.pvalues)\n',
    "multiline": HEAD
    + 'res = smf.ols("riders ~ fare", data=crossings).fit(\n    method="qr",\n)\nprint(res.pvalues)\n',
    "function": (
        "import statsmodels.formula.api as smf\n\n\n"
        "def ridership(crossings):\n"
        '    res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()\n'
        "    print(res.summary())\n"
        "    return res\n"
    ),
    "loop": HEAD
    + 'for term in ["fare", "fuel_price"]:\n'
    + '    res = smf.ols(f"riders ~ {term}", data=crossings).fit()\n'
    + "    print(res.pvalues)\n",
    "non_ascii": HEAD.replace("\n\n", "\n\n# Überfahrten je Fähre – ferry crossings 🚢\n")
    + 'tag = "⛴ 🚢"; r_ü = smf.ols("riders ~ fare", data=crossings).fit()  # Fährpreis\n'
    + "print(r_ü.summary())\n",
    "crlf": (
        HEAD + 'res = smf.ols("riders ~ fare", data=crossings).fit(\n    method="qr",\n)  \nprint(res.pvalues)\n'
    ).replace("\n", "\r\n"),
    "docstring_future": (
        '"""Ferry ridership against fares."""\n\nfrom __future__ import annotations\n\n'
        + HEAD
        + 'res = smf.ols("riders ~ fare", data=crossings).fit()\nprint(res.summary())\n'
    ),
    "het_white_imported": (
        HEAD.replace("\n\n", "\nfrom statsmodels.stats.diagnostic import het_white\n\n")
        + 'res = smf.ols("riders ~ fare", data=crossings).fit()\nprint(res.summary(), het_white)\n'
    ),
    "no_trailing_newline": HEAD + 'res = smf.ols("riders ~ fare", data=crossings).fit()\nprint(res.summary())',
}


# --- helpers ----------------------------------------------------------------------------------


def lines(text: str) -> list[str]:
    return re.findall(r"[^\n]*\n|[^\n]+$", text)


def changes(old: str, new: str) -> list[tuple[str, str]]:
    """(removed, added) text for each run of changed lines: what must differ, and nothing else."""
    a, b = lines(old), lines(new)
    ops = difflib.SequenceMatcher(None, a, b, autojunk=False).get_opcodes()
    return [("".join(a[i1:i2]), "".join(b[j1:j2])) for tag, i1, i2, j1, j2 in ops if tag != "equal"]


def apply(old: str, edit: TextEdit) -> str:
    starts = [0] + [m.end() for m in re.finditer("\n", old)]
    a = starts[edit.line - 1] + edit.col
    b = starts[edit.end_line - 1] + edit.end_col
    return old[:a] + edit.new_text + old[b:]


def checked(old: str, new: str) -> str:
    """``new`` parses, is ``old`` plus one minimal edit, and keeps ``old``'s line endings."""
    ast.parse(new)
    edit = minimal_edit(old, new)
    assert edit is not None and apply(old, edit) == new
    if "\r\n" in old:
        assert new.count("\n") == new.count("\r\n"), "a bare LF in a CRLF file"
    return new


def finding(text: str, rule: str):
    found = [f for f in analyze(text, "ferry.py").findings if f.rule == rule and not f.waived]
    assert found, f"no {rule} finding to fix"
    return found[0]


def still(text: str, rule: str) -> list:
    return [f for f in analyze(text, "ferry.py").findings if f.rule == rule and not f.waived]


def fix_span(f, key: str) -> Span:
    return Span(*f.fix[key])


# --- re-analysis clears the finding -----------------------------------------------------------


@pytest.mark.parametrize("name", CASES)
def test_set_cov_type_clears_no_variance_test(name):
    old = CASES[name]
    f = finding(old, "no-variance-test")
    new = checked(old, set_cov_type(old, fix_span(f, "fit_call")))
    assert 'cov_type="HC3"' in new
    assert not still(new, "no-variance-test")
    edit, call = minimal_edit(old, new), fix_span(f, "fit_call")
    assert call.line <= edit.line and edit.end_line <= call.end_line  # only the call changed


@pytest.mark.parametrize("name", CASES)
def test_reset_insertion_clears_no_form_test(name):
    old = CASES[name]
    f = finding(old, "no-form-test")
    code = RESET.format(res=f.fix["result"])
    new = checked(old, insert_after_statement(old, fix_span(f, "statement"), code, (RESET_IMPORT,)))
    assert not still(new, "no-form-test")
    assert new.count("linear_reset") == 2  # imported once, called once


@pytest.mark.parametrize("name", CASES)
def test_breusch_pagan_insertion_clears_no_variance_test(name):
    old = CASES[name]
    f = finding(old, "no-variance-test")
    code = BP.format(res=f.fix["result"])
    new = checked(old, insert_after_statement(old, fix_span(f, "statement"), code, (BP_IMPORT,)))
    assert not still(new, "no-variance-test")


@pytest.mark.parametrize("name", CASES)
def test_waivers_waive_both_findings_in_one_comment(name):
    old = CASES[name]
    form = finding(old, "no-form-test")
    once = checked(old, add_waiver(old, form.span.line, "no-form-test"))
    variance = finding(once, "no-variance-test")
    twice = checked(once, add_waiver(once, variance.span.line, "no-variance-test"))
    assert twice.count("regvet: waive") == 1
    for rule in ("no-form-test", "no-variance-test"):
        (f,) = [f for f in analyze(twice, "ferry.py").findings if f.rule == rule]
        assert f.waived and f.reason == "REASON"
    ((removed, added),) = changes(old, twice)
    assert removed == "" and added.strip() == "# regvet: waive no-form-test, no-variance-test because REASON"


# --- positions --------------------------------------------------------------------------------


def test_libcst_positions_are_code_points_with_exclusive_end_and_no_parentheses():
    src = 'r_ü = ("🚢", (crossings.fit()))\n\tz = 1\n'.replace("\n\t", "\nif 1:\n\t")
    positions = MetadataWrapper(cst.parse_module(src)).resolve(PositionProvider)
    calls = [r for n, r in positions.items() if isinstance(n, cst.Call)]
    assert [(r.start.line, r.start.column, r.end.line, r.end.column) for r in calls] == [(1, 13, 1, 28)]
    node = next(n for n in ast.walk(ast.parse(src)) if isinstance(n, ast.Call))
    line = src.split("\n")[0]
    assert len(line.encode()[: node.col_offset].decode()) == 13  # the same place in code points
    assert len(line.encode()[: node.end_col_offset].decode()) == 28
    assigns = [r for n, r in positions.items() if isinstance(n, cst.Assign)]
    assert [(r.start.line, r.start.column) for r in assigns] == [(1, 0), (3, 1)]  # a tab is one column


# --- set_cov_type -----------------------------------------------------------------------------


@pytest.mark.parametrize(
    "call, expected",
    [
        ("m.fit()", 'm.fit(cov_type="HC3")'),
        ('m.fit(method="qr")', 'm.fit(method="qr", cov_type="HC3")'),
        ('m.fit(method = "qr" )', 'm.fit(method = "qr", cov_type = "HC3" )'),
        ('m.fit(method="qr",)', 'm.fit(method="qr", cov_type="HC3",)'),
        ('m.fit(\n    method="qr",\n)', 'm.fit(\n    method="qr",\n    cov_type="HC3",\n)'),
        ('m.fit(\n    method="qr"\n)', 'm.fit(\n    method="qr",\n    cov_type="HC3"\n)'),
        (
            'm.fit(  # options\n    method="qr",  # solver\n)',
            'm.fit(  # options\n    method="qr",  # solver\n    cov_type="HC3",\n)',
        ),
        ('m.fit(\n    method="qr"  # solver\n)', 'm.fit(\n    method="qr",  # solver\n    cov_type="HC3"\n)'),
        (
            'm.fit(\n    method="qr",\n\n    disp=0,\n)',
            'm.fit(\n    method="qr",\n\n    disp=0,\n    cov_type="HC3",\n)',
        ),
        ('m.fit(method="qr",\n      disp=0)', 'm.fit(method="qr",\n      disp=0,\n      cov_type="HC3")'),
        ("m.fit(cov_type='nonrobust')", "m.fit(cov_type='HC3')"),
        ('m.fit(cov_type="HC1", use_t=True)', 'm.fit(cov_type="HC3", use_t=True)'),
        ('m.fit("pinv", "nonrobust")', 'm.fit("pinv", "HC3")'),
    ],
)
def test_set_cov_type_layouts(call, expected):
    old = f"res = {call}\n"
    end_line = old.count("\n")
    end_col = len(old.split("\n")[-2])
    new = checked(old, set_cov_type(old, Span(1, 6, end_line, end_col)))
    assert new == f"res = {expected}\n"


def test_set_cov_type_takes_other_values():
    assert set_cov_type("r = m.fit()\n", Span(1, 4, 1, 11), "HC1") == 'r = m.fit(cov_type="HC1")\n'


def test_set_cov_type_inside_parentheses_and_chains():
    old = 'res = (\n    smf.ols("riders ~ fare", data=crossings)\n    .fit()\n)\n'
    assert checked(old, set_cov_type(old, Span(2, 4, 3, 10))) == old.replace(".fit()", '.fit(cov_type="HC3")')


@pytest.mark.parametrize("span", [Span(1, 0, 1, 11), Span(1, 4, 1, 10), Span(9, 0, 9, 3)])
def test_set_cov_type_refuses_a_span_without_a_call(span):
    with pytest.raises(EditError, match="no call"):
        set_cov_type("r = m.fit()\n", span)


def test_set_cov_type_refuses_a_file_that_does_not_parse():
    with pytest.raises(EditError, match="cannot parse"):
        set_cov_type("r = m.fit(\n", Span(1, 4, 1, 10))


# --- insert_after_statement -------------------------------------------------------------------


def test_insert_in_a_function_body_keeps_the_rest_of_the_block():
    old = CASES["function"]
    f = finding(old, "no-form-test")
    new = insert_after_statement(old, fix_span(f, "statement"), RESET.format(res="res"), (RESET_IMPORT,))
    assert changes(old, new) == [
        ("", "from statsmodels.stats.diagnostic import linear_reset\n"),
        ("", '    print("RESET:", linear_reset(res, power=3, use_f=True))\n'),
    ]


def test_insert_in_a_loop_and_with_tabs():
    old = "for term in terms:\n\tres = m.fit()\n\tif res:\n\t\tprint(res)\nprint(1)\n"
    new = checked(old, insert_after_statement(old, Span(4, 2, 4, 12), "show(res)\nif x:\n    y()"))
    assert changes(old, new) == [("", "\t\tshow(res)\n\t\tif x:\n\t\t\ty()\n")]


def test_insert_after_the_last_statement_of_a_block_and_of_a_file():
    old = "def f():\n    res = m.fit()\n    # done\n\nres = m.fit()"
    new = checked(old, insert_after_statement(old, Span(2, 4, 2, 17), "check(res)"))
    assert changes(old, new) == [("", "    check(res)\n")]
    new = checked(old, insert_after_statement(old, Span(5, 0, 5, 13), "check(res)"))
    assert new == old + "\ncheck(res)"


def test_insert_after_a_line_of_several_statements_and_a_multiline_statement():
    old = "res = m.fit(); n = 1\nx = 2\n"
    assert insert_after_statement(old, Span(1, 0, 1, 13), "check(res)") == "res = m.fit(); n = 1\ncheck(res)\nx = 2\n"
    old = "results = {\n    'fare': m.fit(),\n}\n"
    new = insert_after_statement(old, Span(1, 0, 3, 1), "check(results)")
    assert new == old + "check(results)\n"


def test_insert_refuses_a_statement_on_its_block_header_line_and_a_wrong_span():
    with pytest.raises(EditError, match="block header"):
        insert_after_statement("if x: res = m.fit()\n", Span(1, 6, 1, 19), "check(res)")
    with pytest.raises(EditError, match="no statement"):
        insert_after_statement("res = m.fit()\n", Span(1, 0, 1, 12), "check(res)")
    with pytest.raises(EditError, match="does not parse"):
        insert_after_statement("res = m.fit()\n", Span(1, 0, 1, 13), "check(res")


def test_import_goes_after_the_last_import_before_the_fit():
    old = "import pandas as pd\nimport statsmodels.api as sm\n\nres = m.fit()\nimport late\n"
    new = insert_after_statement(old, Span(4, 0, 4, 13), "check(res)", (("pkg.mod", "check"),))
    assert changes(old, new) == [("", "from pkg.mod import check\n"), ("", "check(res)\n")]
    assert new.index("from pkg.mod") < new.index("\n\nres")


def test_import_goes_after_docstring_and_future_import():
    old = '"""Ferry ridership."""\nfrom __future__ import annotations\n\n# the model\nres = m.fit()\n'
    new = insert_after_statement(old, Span(5, 0, 5, 13), "check(res)", (("pkg", "check"),))
    assert (
        new
        == '"""Ferry ridership."""\nfrom __future__ import annotations\nfrom pkg import check\n\n# the model\nres = m.fit()\ncheck(res)\n'
    )


def test_import_goes_after_the_docstring_or_below_leading_comments_when_there_is_no_import():
    old = '"""Ferry ridership."""\n\ndef f(crossings):\n    import statsmodels.formula.api as smf\n    res = smf.ols("riders ~ fare", crossings).fit()\n'
    new = checked(old, insert_after_statement(old, Span(5, 4, 5, 51), "check(res)", (("pkg", "check"),)))
    assert changes(old, new) == [("", "from pkg import check\n"), ("", "    check(res)\n")]
    assert new.startswith('"""Ferry ridership."""\nfrom pkg import check\n')
    old = "#!/usr/bin/env python\n# -*- coding: utf-8 -*-\nres = m.fit()\n"
    new = insert_after_statement(old, Span(3, 0, 3, 13), "check(res)", (("pkg", "check"),))
    assert new == "#!/usr/bin/env python\n# -*- coding: utf-8 -*-\nfrom pkg import check\nres = m.fit()\ncheck(res)\n"


@pytest.mark.parametrize(
    "imports, expected",
    [
        (
            "from statsmodels.stats.diagnostic import het_white\n",
            "from statsmodels.stats.diagnostic import het_white, linear_reset\n",
        ),
        (
            "from statsmodels.stats.diagnostic import (het_white)\n",
            "from statsmodels.stats.diagnostic import (het_white, linear_reset)\n",
        ),
        (
            "from statsmodels.stats.diagnostic import (\n    het_white,\n)\n",
            "from statsmodels.stats.diagnostic import (\n    het_white,\n    linear_reset,\n)\n",
        ),
        (
            "from statsmodels.stats.diagnostic import (\n    het_white,\n    het_breuschpagan\n)\n",
            "from statsmodels.stats.diagnostic import (\n    het_white,\n    het_breuschpagan,\n    linear_reset\n)\n",
        ),
    ],
)
def test_name_is_added_to_an_existing_import_of_the_module(imports, expected):
    old = imports + "res = m.fit()\n"
    n = imports.count("\n") + 1
    new = checked(old, insert_after_statement(old, Span(n, 0, n, 13), "check(res)", (RESET_IMPORT,)))
    assert new == expected + "res = m.fit()\ncheck(res)\n"


@pytest.mark.parametrize(
    "imports",
    [
        "from statsmodels.stats.diagnostic import linear_reset\n",
        "from statsmodels.stats.diagnostic import het_white, linear_reset as linear_reset\n",
        "from mytools import linear_reset\n",
        "from statsmodels.stats.diagnostic import *\n",
        "import linear_reset\n",
    ],
)
def test_a_name_already_bound_by_an_import_is_not_imported_again(imports):
    old = imports + "res = m.fit()\n"
    n = imports.count("\n") + 1
    assert insert_after_statement(old, Span(n, 0, n, 13), "check(res)", (RESET_IMPORT,)) == old + "check(res)\n"


def test_two_imports_from_one_module():
    old = "import statsmodels.api as sm\nres = m.fit()\n"
    new = insert_after_statement(old, Span(2, 0, 2, 13), "check(res)", (RESET_IMPORT, BP_IMPORT))
    assert new.startswith(
        "import statsmodels.api as sm\nfrom statsmodels.stats.diagnostic import linear_reset, het_breuschpagan\n"
    )


# --- add_waiver -------------------------------------------------------------------------------


def test_waiver_goes_above_the_statement_at_its_indentation():
    old = "def f():\n    # fit it\n    res = m.fit()  # why\n"
    new = checked(old, add_waiver(old, 3, "no-form-test", "fares are fixed"))
    assert changes(old, new) == [("", "    # regvet: waive no-form-test because fares are fixed\n")]
    assert new.index("regvet") > new.index("# fit it")


MULTI = (
    HEAD
    + 'results = {\n    "fare": smf.ols("riders ~ fare", data=crossings).fit(),  # first\n}\nprint(results["fare"].summary())\n'
)


def test_waiver_inside_a_multiline_statement_is_a_trailing_comment_and_waives():
    f = finding(MULTI, "no-form-test")
    assert f.span.line == 6
    new = checked(MULTI, add_waiver(MULTI, 6, "no-form-test"))
    assert changes(MULTI, new) == [
        (
            '    "fare": smf.ols("riders ~ fare", data=crossings).fit(),  # first\n',
            '    "fare": smf.ols("riders ~ fare", data=crossings).fit(),  # regvet: waive no-form-test because REASON  # first\n',
        )
    ]
    (w,) = [g for g in analyze(new, "ferry.py").findings if g.rule == "no-form-test"]
    assert w.waived and w.reason == "REASON"
    new2 = checked(new, add_waiver(new, 6, "no-variance-test"))
    assert "# regvet: waive no-form-test, no-variance-test because REASON  # first\n" in new2
    assert all(g.waived for g in analyze(new2, "ferry.py").findings if g.rule in ("no-form-test", "no-variance-test"))


def test_trailing_waiver_without_a_comment_and_with_trailing_spaces_and_crlf():
    old = "x = f(\r\n    m.fit(),   \r\n)\r\n"
    assert (
        add_waiver(old, 2, "no-form-test")
        == "x = f(\r\n    m.fit(),  # regvet: waive no-form-test because REASON   \r\n)\r\n"
    )


@pytest.mark.parametrize(
    "old,line,indent",
    [
        ('results = [\n    smf.ols("""riders ~ fare\n    + fuel_price""", data=crossings).fit(),\n]\n', 2, "    "),
        ("if True:\n    results = f(1,\n        m.fit() + \\\n        2)\n", 3, "        "),
    ],
)
def test_waiver_goes_alone_directly_above_a_line_that_cannot_take_a_comment(old, line, indent):
    new = checked(old, add_waiver(old, line, "no-form-test"))
    assert changes(old, new) == [("", f"{indent}# regvet: waive no-form-test because REASON\n")]
    assert new.split("\n")[line - 1] == f"{indent}# regvet: waive no-form-test because REASON"


def test_a_waiver_placed_above_a_line_inside_brackets_is_honoured():
    old = (
        "import statsmodels.formula.api as smf\n"
        "results = [\n"
        '    smf.ols("""riders ~ fare\n    + fuel_price""", data=crossings).fit(),\n'
        "]\n"
        "print(results[0].params)\n"
    )
    [finding] = [f for f in analyze(old, "w.py", strict=True).findings if f.rule == "no-form-test"]
    new = checked(old, add_waiver(old, finding.span.line, "no-form-test"))
    [after] = [f for f in analyze(new, "w.py", strict=True).findings if f.rule == "no-form-test"]
    assert after.waived and after.reason == "REASON"


def test_no_waiver_where_no_line_can_hold_one():
    old = 'x = 1 + \\\n    f("""a\n    b""") + m.fit()\n'
    with pytest.raises(EditError):
        add_waiver(old, 2, "no-form-test")


@pytest.mark.parametrize(
    "old, expected",
    [
        (
            "# regvet: waive no-form-test because fixed fares\nres = m.fit()\n",
            "# regvet: waive no-form-test, no-variance-test because fixed fares\n",
        ),
        (
            "res = m.fit()  # regvet: waive no-form-test because fixed fares\n",
            "res = m.fit()  # regvet: waive no-form-test, no-variance-test because fixed fares\n",
        ),
        (
            "# regvet:waive no-form-test\nres = m.fit()\n",
            "# regvet:waive no-form-test, no-variance-test because REASON\n",
        ),
        (
            "# regvet: waive no-form-test  # expect: x\nres = m.fit()\n",
            "# regvet: waive no-form-test, no-variance-test because REASON  # expect: x\n",
        ),
    ],
)
def test_an_existing_waiver_gets_the_rule(old, expected):
    line = 1 if old.startswith("res") else 2
    new = checked(old, add_waiver(old, line, "no-variance-test"))
    assert lines(new)[0] == expected and new.count("regvet") == 1


@pytest.mark.parametrize(
    "old, expected",
    [
        # an existing waiver in the old ` -- reason` form is rewritten with `because` as the rule is added
        (
            "# regvet: waive no-form-test -- fixed fares\nres = m.fit()\n",
            "# regvet: waive no-form-test, no-variance-test because fixed fares\n",
        ),
        (
            "res = m.fit()  # regvet: waive no-form-test: fixed fares  # expect: x\n",
            "res = m.fit()  # regvet: waive no-form-test, no-variance-test because fixed fares  # expect: x\n",
        ),
        (
            "# regvet: waive no-variance-test -- fixed fares\nres = m.fit()\n",
            "# regvet: waive no-variance-test because fixed fares\n",
        ),
    ],
)
def test_an_existing_waiver_in_another_form_is_rewritten_when_the_rule_is_added(old, expected):
    line = 1 if old.startswith("res") else 2
    new = checked(old, add_waiver(old, line, "no-variance-test"))
    assert lines(new)[0] == expected
    from regvet.sources.waivers import find_waivers

    (w,) = find_waivers(new)
    assert w.malformed is None and w.reason == "fixed fares" and "no-variance-test" in w.rules


def test_rewrite_waiver_replaces_the_directive_and_keeps_what_follows():
    from regvet.edits.comments import rewrite_waiver

    old = "res = m.fit()  # regvet: waive no-frm-test because fixed  # noqa: E501\nprint(1)\n"
    w = Span(1, 15, 1, len(old.split("\n")[0]))
    new = rewrite_waiver(old, w, "# regvet: waive no-form-test because fixed")
    assert new == "res = m.fit()  # regvet: waive no-form-test because fixed  # noqa: E501\nprint(1)\n"
    with pytest.raises(EditError):  # the comment moved away: nothing is guessed
        rewrite_waiver("res = m.fit()\n", Span(1, 0, 1, 5), "# regvet: waive no-form-test because fixed")
    with pytest.raises(EditError):
        rewrite_waiver(old, w, "print(2)")


def test_a_rule_already_waived_with_a_reason_changes_nothing():
    old = "# regvet: waive no-variance-test because ok\nres = m.fit()\n"
    assert add_waiver(old, 2, "no-variance-test") == old


def test_a_file_wide_waiver_or_a_waiver_two_lines_up_is_not_merged():
    old = "# regvet: waive-file no-form-test because all\nres = m.fit()\n"
    assert add_waiver(old, 2, "no-variance-test").count("regvet:") == 2
    old = "# regvet: waive no-form-test because x\n\nres = m.fit()\n"
    assert add_waiver(old, 3, "no-variance-test").count("regvet:") == 2


@pytest.mark.parametrize(
    "rule, reason", [("No Form", "r"), ("no-form-test", "a # b"), ("no-form-test", "a\nb"), ("no-form-test", " ")]
)
def test_add_waiver_refuses_what_a_waiver_cannot_hold(rule, reason):
    with pytest.raises(EditError):
        add_waiver("res = m.fit()\n", 1, rule, reason)


def test_add_waiver_refuses_lines_outside_the_file_and_untokenizable_files():
    with pytest.raises(EditError, match="outside"):
        add_waiver("res = m.fit()\n", 5, "no-form-test")
    with pytest.raises(EditError, match="tokens"):
        add_waiver("res = m.fit(\n", 1, "no-form-test")


# --- minimal_edit -----------------------------------------------------------------------------


def test_minimal_edit():
    assert minimal_edit("abc", "abc") is None
    assert minimal_edit("r_ü = f()\n", "r_ü = f(x)\n") == TextEdit(1, 8, 1, 8, "x")
    assert minimal_edit("🚢 a\nb\n", "🚢 a\nc\n") == TextEdit(2, 0, 2, 1, "c")
    assert minimal_edit("a\nb", "a\n") == TextEdit(2, 0, 2, 1, "")
    assert minimal_edit("aaa", "aaaa") == TextEdit(1, 3, 1, 3, "a")
    assert minimal_edit("", "x\n") == TextEdit(1, 0, 1, 0, "x\n")


def test_minimal_edit_never_splits_a_crlf():
    old, new = "a\r\nb\r\n", "a\r\nx\r\nb\r\n"
    edit = minimal_edit(old, new)
    assert edit == TextEdit(2, 0, 2, 0, "x\r\n") and apply(old, edit) == new
    old, new = "a\r\n", "a\r\n\r\n"
    edit = minimal_edit(old, new)
    assert apply(old, edit) == new and not edit.new_text.startswith("\n")
