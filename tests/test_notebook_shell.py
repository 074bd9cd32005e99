"""Runtime notebooks run like Jupyter: IPython's shell when the analysis interpreter has it, else the probe's
stand-in (forced here with the child's ``REGVET_PROBE_NO_IPYTHON``); tracebacks start at the user's code.

Real child processes, real notebooks (nbformat JSON written here, checked by ``nbformat.validate``), real
statsmodels fits. The expected displays and values come from the cells themselves (a ``repr`` the cell
defines, a fit's own ``nobs``), nothing is recorded from an earlier run.
"""

from __future__ import annotations

import json
import textwrap
from pathlib import Path

import nbformat
import pytest

from regvet.engine import analyze
from regvet.model.settings import Settings
from regvet.runtime.runner import NO_IPYTHON
from regvet.runtime.session import run_and_judge

pytest.importorskip("IPython")  # a test extra (pyproject.toml): both paths are tested where it is installed

SHELLS = ["ipython", "stand-in"]


def notebook(*cells: str) -> str:
    """An nbformat 4 notebook: a markdown cell first (so cell indices and code-cell order differ), then code."""
    nb = nbformat.v4.new_notebook()
    nb.cells = [nbformat.v4.new_markdown_cell("# Harbour tonnage")] + [
        nbformat.v4.new_code_cell(textwrap.dedent(c).strip("\n")) for c in cells
    ]
    nbformat.validate(nb)
    return nbformat.writes(nb)


def judge(tmp_path: Path, text: str, shell: str, monkeypatch, name: str = "harbour.ipynb"):
    if shell == "stand-in":
        monkeypatch.setenv(NO_IPYTHON, "1")
    else:
        monkeypatch.delenv(NO_IPYTHON, raising=False)
    path = tmp_path / name
    path.write_text(text)
    settings = Settings(run_timeout=90)
    report = analyze(text, str(path), settings, strict=True)
    return run_and_judge(report, path, settings, cache=None)


SETUP = """\
%matplotlib inline
%load_ext autoreload
%autoreload 2
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf
import matplotlib.pyplot as plt

rng = np.random.default_rng(11)
tons = pd.DataFrame({"cranes": rng.integers(1, 9, 80), "rain": rng.uniform(0, 20, 80)})
tons["tonnage"] = 50 + 12 * tons["cranes"] - 0.8 * tons["rain"] + rng.normal(0, 4, 80)
"""

JUPYTER_ONLY = """\
!touch shell_escape_ran.txt
listing = !ls
assert list(listing) == [], listing
%pip install harbour-tonnage-not-a-package
display(tons.head(3))
ip = get_ipython()
ip.run_line_magic("config", "InlineBackend.figure_format = 'retina'")
class Shown:
    def __repr__(self):
        return "harbour-display-" + str(6 * 7)
Shown()
"""

QUIET = """\
Shown();
"""

TIMED = """\
%%time
res = smf.ols("tonnage ~ cranes + rain", data=tons).fit()
plt.plot(res.fittedvalues); plt.show()
print(res.pvalues.to_dict())
"""

BASH = """\
%%bash
touch bash_cell_ran.txt
"""


@pytest.mark.parametrize("shell", SHELLS)
def test_a_notebook_with_magics_display_and_get_ipython_runs(tmp_path, monkeypatch, shell):
    text = notebook(SETUP, JUPYTER_ONLY, QUIET, TIMED, BASH)
    report, result = judge(tmp_path, text, shell, monkeypatch)
    assert result is not None and result.completed, (result.end, result.output_tail)
    assert result.end["shell"].startswith("IPython ") if shell == "ipython" else result.end["shell"] == "stand-in"
    output = "\n".join(result.output_tail)
    # The last expression of a cell is displayed, as text; a trailing `;` hides it (Jupyter's rule).
    assert "harbour-display-42" in output and output.count("harbour-display-42") == 1, output
    assert "cranes" in output and "tonnage" in output  # display(tons.head(3))
    # Shell escapes never run, in either shell, and say so in the output.
    assert not (tmp_path / "shell_escape_ran.txt").exists() and not (tmp_path / "bash_cell_ran.txt").exists()
    assert "shell command not run: touch shell_escape_ran.txt" in output or shell == "stand-in"
    if shell == "stand-in":
        assert output.count("IPython is not available here") == 1
    else:
        assert "harbour-tonnage-not-a-package" in output  # %pip named, not run
        assert "Out[" in output  # IPython's own display of the last expression
    # The fit in the %%time cell (notebook cell 4, its line 2) is recorded there and its statistics meet the
    # static finding at the same place.
    [fit] = result.fits
    assert fit["frames"][0][:2] == ["<regvet-cell-4>", 2]
    finding = next(f for f in report.findings if f.rule == "no-variance-test")
    assert (finding.span.cell, finding.span.line) == (4, 2)
    assert finding.stats["fits"][0]["statistics"]["nobs"] == 80


@pytest.mark.parametrize("shell", SHELLS)
def test_fits_map_to_their_cell_and_line_after_magic_lines(tmp_path, monkeypatch, shell):
    fitting = """\
    %time first = smf.ols("tonnage ~ cranes", data=tons).fit()
    def fit_rain(data):
        return smf.ols("tonnage ~ rain", data=data).fit()

    !echo between the fits
    second = fit_rain(tons)
    third = smf.ols(
        "tonnage ~ cranes + rain",
        data=tons,
    ).fit(cov_type="HC3")
    print(second.summary(), third.summary())
    """
    report, result = judge(tmp_path, notebook(SETUP, fitting), shell, monkeypatch)
    assert result is not None and result.completed, (result.end, result.output_tail)
    # `%time` runs its statement in IPython (the static analysis reads it as `pass`, so it is no static fit);
    # the other two fits are recorded at their own cell lines in either shell.
    sites = {tuple(f["frames"][-1][:2]) for f in result.fits}
    assert {("<regvet-cell-2>", 6), ("<regvet-cell-2>", 10)} <= sites
    judged = {
        (f.span.cell, f.span.line): f.stats["fits"][0]["statistics"]["nobs"]
        for f in report.findings
        if f.rule == "no-variance-test" and f.stats
    }
    assert judged == {(2, 6): 80}  # the HC3 fit has no variance finding; the helper's fit is judged at its call


def test_capture_runs_as_in_jupyter_and_its_fit_keeps_its_line(tmp_path, monkeypatch):
    captured = """\
    %%capture harbour_out
    res = smf.ols("tonnage ~ cranes + rain", data=tons).fit()
    print("captured-line", int(res.nobs), res.summary())
    """
    after = """\
    assert "captured-line 80" in harbour_out.stdout, harbour_out.stdout
    """
    report, result = judge(tmp_path, notebook(SETUP, captured, after), "ipython", monkeypatch)
    assert result is not None and result.completed, (result.end, result.output_tail)
    assert "captured-line" not in "\n".join(result.output_tail)  # %%capture kept it from the output
    [fit] = result.fits
    assert fit["frames"][0][:2] == ["<regvet-cell-2>", 2]
    finding = next(f for f in report.findings if f.rule == "no-variance-test")
    assert (finding.span.cell, finding.span.line) == (2, 2) and finding.stats


HELPER_RAISES = """\
def tonnage_per_crane(frame):
    return check_cranes(frame)

def check_cranes(frame):
    raise ValueError("harbour 7 has no cranes")
"""


HELPER_LINES = (
    "tonnage_per_crane(tons)",
    "    return check_cranes(frame)",
    '    raise ValueError("harbour 7 has no cranes")',
)


def _frames(detail: list[str]) -> list[str]:
    return [line.strip() for line in detail if line.strip().startswith("File ")]


@pytest.mark.parametrize("shell", SHELLS)
def test_a_notebook_traceback_starts_in_the_users_cell(tmp_path, monkeypatch, shell):
    text = notebook(
        SETUP, "res = smf.ols('tonnage ~ cranes', data=tons).fit()", HELPER_RAISES, "tonnage_per_crane(tons)"
    )
    report, result = judge(tmp_path, text, shell, monkeypatch)
    assert result is not None and result.end["status"] == "exception"
    detail = result.end["traceback"]
    frames = _frames(detail)
    assert frames[0].startswith('File "cell 5", line 1, in <module>'), detail
    assert frames[1:] == [
        'File "cell 4", line 2, in tonnage_per_crane',
        'File "cell 4", line 5, in check_cranes',
    ], detail
    assert detail[-1] == "ValueError: harbour 7 has no cranes"
    assert '    raise ValueError("harbour 7 has no cranes")' in detail  # the cell's own line is shown
    assert not any("regvet_" in line or "IPython" in line or "interactiveshell" in line for line in detail), detail
    [failed] = [f for f in report.findings if f.rule == "run-failed"]
    assert 'its traceback: File "cell 5", line 1, in <module>' in failed.message
    assert (failed.span.cell, failed.span.line) == (3, 5)  # the innermost line of the user's code
    assert "the statistics of the 1 fit run completed before that are kept" in failed.message


def test_a_script_traceback_starts_in_the_users_file(tmp_path):
    code = SETUP.split("import numpy", 1)[1]
    code = "import numpy" + code + "res = smf.ols('tonnage ~ cranes', data=tons).fit()\n" + HELPER_RAISES
    code += "tonnage_per_crane(tons)\n"
    path = tmp_path / "harbour.py"
    path.write_text(code)
    settings = Settings(run_timeout=90)
    report = analyze(code, str(path), settings, strict=True)
    report, result = run_and_judge(report, path, settings, cache=None)
    assert result is not None and result.end["status"] == "exception"
    detail = result.end["traceback"]
    frames = _frames(detail)
    lines = code.split("\n")
    last, call, raised = (lines.index(t) + 1 for t in HELPER_LINES)
    assert frames == [
        f'File "{path.resolve()}", line {last}, in <module>',
        f'File "{path.resolve()}", line {call}, in tonnage_per_crane',
        f'File "{path.resolve()}", line {raised}, in check_cranes',
    ], detail
    assert "tonnage_per_crane(tons)" in [line.strip() for line in detail]  # the line itself, from the text that ran
    assert not any("regvet_" in line or "runpy" in line for line in detail), detail
    [failed] = [f for f in report.findings if f.rule == "run-failed"]
    assert f'its traceback: File "{path.resolve()}", line {last}, in <module>' in failed.message


@pytest.mark.parametrize("shell", SHELLS)
def test_a_library_error_keeps_the_library_frames_below_the_users_code(tmp_path, monkeypatch, shell):
    # statsmodels raises inside the fit regvet's probe wraps: its frames stay, the probe's wrapper does not.
    text = notebook(SETUP, "bad = smf.ols('tonnage ~ no_such_column', data=tons).fit()")
    _, result = judge(tmp_path, text, shell, monkeypatch)
    detail = result.end["traceback"]
    frames = _frames(detail)
    assert frames[0].startswith('File "cell 3", line 1, in <module>'), detail
    assert any("patsy" in f or "statsmodels" in f or "formulaic" in f for f in frames[1:]), detail
    assert not any("regvet_probe" in line or "IPython" in line for line in detail), detail
    assert "no_such_column" in detail[-1] or "no_such_column" in json.dumps(detail)
