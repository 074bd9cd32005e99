"""Notebooks: code cells in order, magics neutralised without moving lines, cell-relative positions."""

from __future__ import annotations

import ast
import json

import pytest

from regvet.engine import analyze
from regvet.sources.notebook import neutralize, read_notebook


def notebook(*cells: tuple[str, str]) -> str:
    return json.dumps(
        {
            "cells": [
                {
                    "cell_type": kind,
                    "metadata": {},
                    "source": src.splitlines(keepends=True),
                    **({"outputs": [], "execution_count": None} if kind == "code" else {}),
                }
                for kind, src in cells
            ],
            "metadata": {"kernelspec": {"name": "python3", "display_name": "Python 3", "language": "python"}},
            "nbformat": 4,
            "nbformat_minor": 5,
        }
    )


def test_findings_carry_cell_index_and_cell_line():
    nb = notebook(
        ("markdown", "# Weekly riders\n"),
        ("code", "%matplotlib inline\nimport pandas as pd\nimport statsmodels.formula.api as smf\n"),
        (
            "code",
            "crossings = pd.read_csv('crossings.csv')\n!ls data\nres = smf.ols('riders ~ fare', data=crossings).fit()",
        ),
        ("markdown", "Results:"),
        ("code", "res.summary()"),
    )
    report = analyze(nb, "study.ipynb", strict=True)
    spans = {(f.rule, f.span.cell, f.span.line, f.span.col) for f in report.findings}
    assert spans == {("no-form-test", 2, 3, 6), ("no-variance-test", 2, 3, 6)}
    related = [r for f in report.findings for r in f.related]
    assert {(r.span.cell, r.span.line) for r in related} == {(4, 1)}


def test_a_test_in_a_later_cell_covers_an_earlier_fit():
    nb = notebook(
        (
            "code",
            "import statsmodels.api as sm\nfrom statsmodels.stats.diagnostic import het_breuschpagan, linear_reset",
        ),
        ("code", "res = sm.OLS(y, X).fit()"),
        ("code", "print(res.summary())"),
        ("code", "het_breuschpagan(res.resid, res.model.exog)\nlinear_reset(res, power=3, use_f=True)"),
    )
    assert analyze(nb, "nb.ipynb", strict=True).findings == ()


def test_waivers_in_notebook_cells():
    nb = notebook(
        ("code", "import statsmodels.api as sm"),
        (
            "code",
            "# regvet: waive no-form-test, no-variance-test because exploratory cell, not reported\nres = sm.OLS(y, X).fit()\nres.summary()",
        ),
    )
    report = analyze(nb, "nb.ipynb", strict=True)
    assert report.findings and all(f.waived for f in report.findings)


@pytest.mark.parametrize(
    "text,message",
    [
        ("{not json", "invalid notebook JSON"),
        ("[1, 2]", "the top level is not a JSON object"),
        ('{"cells": 3}', "no list of cells"),
        ('{"cells": [{"cell_type": "code", "source": [1]}]}', "non-text source"),
    ],
)
def test_invalid_notebooks_are_parse_errors(text, message):
    report = analyze(text, "bad.ipynb", strict=True)
    assert [f.rule for f in report.findings] == ["parse-error"]
    assert message in report.findings[0].message


def test_json_error_position():
    report = analyze('{\n  "cells": [\n    oops\n  ]\n}', "bad.ipynb", strict=True)
    f = report.findings[0]
    assert (f.span.line, f.span.col) == (3, 4)


def test_syntax_error_in_a_cell_is_reported_on_that_cell():
    nb = notebook(("code", "import statsmodels.api as sm"), ("markdown", "x"), ("code", "res = sm.OLS(y, X).fit(\n"))
    report = analyze(nb, "bad.ipynb", strict=True)
    assert [(f.rule, f.span.cell, f.span.line) for f in report.findings] == [("parse-error", 2, 1)]


@pytest.mark.parametrize(
    "cell",
    [
        "%matplotlib inline\nimport statsmodels.api as sm\n!pip install foo",
        "files = !ls\nres = sm.OLS(y, X).fit()\nres.summary?",
        "%%time\nfor i in range(3):\n    %timeit res.params\n",
        "x = (1\n     % 2)\n%time y = 1",
        's = """\n%d rows\n"""\n!ls',
        "%%bash\necho hi\nls",
        "if True:\n    %who\n    x = 1",
    ],
)
def test_neutralize_keeps_line_count_and_parses(cell):
    py = neutralize(cell)
    assert py.count("\n") == cell.count("\n")
    ast.parse(py)


def test_valid_python_cells_are_left_alone():
    cell = "x = (1\n     % 2)\nprint(x)"
    assert neutralize(cell) == cell


def test_nbformat_3_worksheets():
    nb = json.dumps(
        {
            "worksheets": [
                {
                    "cells": [
                        {
                            "cell_type": "code",
                            "input": "import statsmodels.api as sm\nres = sm.OLS(y, X).fit()\nres.params",
                        }
                    ]
                }
            ],
            "nbformat": 3,
        }
    )
    src = read_notebook(nb)
    assert "sm.OLS" in src.python
    assert [f.rule for f in analyze(nb, "old.ipynb", strict=True).findings] == ["no-form-test"]


def test_nbformat_written_notebook_roundtrip(tmp_path):
    import nbformat

    nb = nbformat.v4.new_notebook(
        cells=[
            nbformat.v4.new_markdown_cell("# Model"),
            nbformat.v4.new_code_cell(
                "import statsmodels.formula.api as smf\nres = smf.ols('riders ~ fare', data=df).fit()"
            ),
            nbformat.v4.new_code_cell("res.params"),
        ]
    )
    path = tmp_path / "nb.ipynb"
    nbformat.write(nb, str(path))
    report = analyze(path.read_text(), "nb.ipynb", strict=True)
    assert [(f.rule, f.span.cell, f.span.line) for f in report.findings] == [("no-form-test", 1, 2)]


def test_a_broken_cell_is_reported_and_the_other_cells_are_still_checked():
    # Jupyter compiles each cell on its own: one cell with a syntax error fails alone.
    nb = notebook(
        ("code", "import pandas as pd\nimport statsmodels.formula.api as smf\nharbour = pd.read_csv('h.csv')"),
        ("code", "!pip install something\nimport nothing as n -q"),
        ("code", "res = smf.ols('tons ~ cranes', data=harbour).fit()\nprint(res.summary())"),
    )
    report = analyze(nb, "harbour.ipynb", strict=True)
    found = sorted((f.rule, f.span.cell, f.span.line) for f in report.findings)
    assert ("parse-error", 1, 2) in found
    assert ("no-form-test", 2, 1) in found and ("no-variance-test", 2, 1) in found
    (broken,) = [f for f in report.findings if f.rule == "parse-error"]
    assert "other cells were checked" in broken.message


def test_a_notebook_whose_cells_all_parse_gets_no_parse_error():
    nb = notebook(("code", "import statsmodels.api as sm"), ("code", "x = 1"))
    assert [f.rule for f in analyze(nb, "ok.ipynb", strict=True).findings] == []
