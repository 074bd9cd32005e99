"""Kate (Debian 12's 22.12 package), headless, with the shipped ``editor_configs/kate/lspclient-settings.json``.

Kate runs on Qt's offscreen platform with a throwaway home. ``regvet`` on its PATH is a small
wrapper that records what Kate sends and what the server answers, so the test sees the real
exchange: Kate starts ``regvet serve`` from the shipped file, opens the script, and regvet
publishes its findings for the fit's line.

The second test records how Kate picks servers: one language server per document, the first
entry whose ``highlightingModeRegex`` matches. That is why the shipped entry replaces the
Python server instead of running beside it (editor_configs/README.md says so); if a later Kate
starts both, the test fails and the README must change.

Skipped when Kate is missing, unless ``REGVET_REQUIRE_EDITORS=1`` (set by ``.ci/run``).
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
import time
from pathlib import Path

import pytest

CONFIG = Path(__file__).parents[1] / "editor_configs" / "kate" / "lspclient-settings.json"
WAIT = 90  # seconds for Kate to start the server and get diagnostics, generous for slow CI machines

SCRIPT = """\
import statsmodels.formula.api as smf

res = smf.ols("riders ~ fare", data=crossings).fit()
print(res.summary())
"""

#: A stand-in language server: it notes that it was started, then reads until Kate closes it.
STAND_IN = """\
import pathlib, sys
pathlib.Path(sys.argv[1]).write_text("started")
for _ in sys.stdin.buffer:
    pass
"""


def need_kate() -> str:
    exe = shutil.which("kate")
    if exe is None:
        reason = "kate is not installed (.ci/run installs it with apt-get)"
        if os.environ.get("REGVET_REQUIRE_EDITORS") == "1":
            pytest.fail(f"REGVET_REQUIRE_EDITORS=1 but {reason}", pytrace=False)
        pytest.skip(reason)
    return exe


def kate_home(tmp_path: Path, servers: dict, allowed: list[str]) -> dict:
    """A home for Kate with the LSP client plugin on, ``servers`` as the user's server settings and
    ``allowed`` as the command lines the user already allowed (Kate asks before starting a server)."""
    home = tmp_path / "home"
    (home / ".config" / "kate" / "lspclient").mkdir(parents=True)
    (home / ".config" / "kate" / "lspclient" / "settings.json").write_text(json.dumps({"servers": servers}))
    (home / ".config" / "katerc").write_text(
        "[Kate Plugins]\nlspclientplugin=true\n\n[lspclient]\n"
        f"AllowedServerCommandLines={','.join(allowed)}\nBlockedServerCommandLines=\n"
    )
    return dict(
        os.environ,
        HOME=str(home),
        XDG_CONFIG_HOME=str(home / ".config"),
        XDG_CACHE_HOME=str(home / ".cache"),
        XDG_DATA_HOME=str(home / ".local" / "share"),
        XDG_RUNTIME_DIR=str(tmp_path / "runtime"),
        QT_QPA_PLATFORM="offscreen",
    )


def run_kate(exe: str, env: dict, script: Path, done, cwd: Path) -> None:
    """Kate on ``script`` until ``done()`` holds or WAIT passes, then ended."""
    (cwd / "runtime").mkdir(exist_ok=True, mode=0o700)
    proc = subprocess.Popen(
        [exe, "-n", str(script)],
        cwd=cwd,
        env=env,
        stdin=subprocess.DEVNULL,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
        start_new_session=True,
    )
    try:
        deadline = time.monotonic() + WAIT
        while time.monotonic() < deadline and not done() and proc.poll() is None:
            time.sleep(0.25)
    finally:
        if proc.poll() is None:
            os.killpg(proc.pid, 15)
            try:
                proc.wait(10)
            except subprocess.TimeoutExpired:
                os.killpg(proc.pid, 9)
                proc.wait()


def messages(path: Path) -> list[dict]:
    """The JSON-RPC messages in a recorded stream (``Content-Length`` framing)."""
    data = path.read_bytes() if path.exists() else b""
    found = []
    while True:
        head, sep, rest = data.partition(b"\r\n\r\n")
        if not sep:
            return found
        length = next(
            int(line.split(b":")[1]) for line in head.split(b"\r\n") if line.lower().startswith(b"content-length")
        )
        if len(rest) < length:
            return found
        found.append(json.loads(rest[:length]))
        data = rest[length:]


def test_the_shipped_config_starts_regvet_in_kate_and_its_findings_arrive(tmp_path):
    exe = need_kate()
    script = tmp_path / "project" / "harbour_fit.py"
    script.parent.mkdir()
    (script.parent / ".git").mkdir()  # a root indication file of the shipped entry
    script.write_text(SCRIPT)
    sent, answered = tmp_path / "sent.bin", tmp_path / "answered.bin"
    bin_dir = tmp_path / "bin"
    bin_dir.mkdir()
    wrapper = bin_dir / "regvet"
    real = Path(sys.executable).with_name("regvet")
    wrapper.write_text(f'#!/bin/sh\ntee "{sent}" | "{real}" "$@" | tee "{answered}"\n')
    wrapper.chmod(0o755)

    servers = json.loads(CONFIG.read_text())["servers"]  # the shipped file, as the user pastes it
    env = kate_home(tmp_path, servers, [f"{wrapper} serve"])
    env["PATH"] = f"{bin_dir}{os.pathsep}{env['PATH']}"

    def published() -> bool:
        return any(
            m.get("method") == "textDocument/publishDiagnostics" and m["params"]["diagnostics"]
            for m in messages(answered)
        )

    run_kate(exe, env, script, published, tmp_path)

    asked = messages(sent)
    assert [m["method"] for m in asked[:1]] == ["initialize"], asked[:2]
    opened = [m["params"]["textDocument"] for m in asked if m.get("method") == "textDocument/didOpen"]
    assert [Path(d["uri"].removeprefix("file://")).name for d in opened] == ["harbour_fit.py"], opened
    assert opened[0]["languageId"] == "python"
    diagnostics = [
        d
        for m in messages(answered)
        if m.get("method") == "textDocument/publishDiagnostics"
        for d in m["params"]["diagnostics"]
    ]
    fit_line = next(i for i, text in enumerate(SCRIPT.splitlines()) if ".fit(" in text)  # 0-based, as in LSP
    assert {(d["range"]["start"]["line"], d["code"]) for d in diagnostics} >= {
        (fit_line, "no-form-test"),
        (fit_line, "no-variance-test"),
    }, diagnostics


def test_kate_starts_one_language_server_per_document(tmp_path):
    """Two entries that both match Python documents: Kate starts only the one under the ``python`` key.
    (This is Kate's behaviour, recorded so the README's advice stays true.)"""
    exe = need_kate()
    script = tmp_path / "project" / "quay.py"
    script.parent.mkdir()
    (script.parent / ".git").mkdir()
    script.write_text("import os\n")
    stand_in = tmp_path / "stand_in.py"
    stand_in.write_text(STAND_IN)
    python = shutil.which("python3") or sys.executable
    marks = {name: tmp_path / f"started-{name}" for name in ("user", "second")}
    servers = {
        "python": {"command": ["python3", str(stand_in), str(marks["user"])], "highlightingModeRegex": "^Python$"},
        "second-python": {
            "command": ["python3", str(stand_in), str(marks["second"])],
            "highlightingModeRegex": "^Python$",
        },
    }
    allowed = [f"{python} {stand_in} {marks[name]}" for name in marks]
    env = kate_home(tmp_path, servers, allowed)
    run_kate(exe, env, script, lambda: marks["user"].exists(), tmp_path)
    time.sleep(2)  # time for a second server to start too, were Kate to start one
    assert marks["user"].exists(), "Kate started no server at all"
    assert not marks["second"].exists(), "Kate now starts two servers for one document: update editor_configs/README.md"
