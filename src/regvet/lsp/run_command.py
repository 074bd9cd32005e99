"""The ``regvet.runFits`` command: run a document's code (it EXECUTES it) and show its fits' statistics.

Never started by typing, only by the user through the editor's command. The static report is
reused when it describes the same document version; the run happens in the analysis pool in a
child process (``regvet.runtime``), which cancelling kills. Work-done progress is reported when
the client supports it.
"""

from __future__ import annotations

import asyncio
import os
import signal
import uuid
from pathlib import Path
from typing import Any

from lsprotocol import types as t
from pygls.uris import to_fs_path

from regvet.lsp.convert import json_safe
from regvet.lsp.server import RegvetServer, Snapshot, build_result, publish, run_analysis
from regvet.model.report import FileReport


def _run_target(
    ls: RegvetServer, snap: Snapshot, overlay: dict[Path, str], procs: list, current: FileReport | None
) -> tuple[FileReport, Any]:
    """In the pool: the static report (reused when it is of this version), then the run (this
    EXECUTES the user's code), then judgement."""
    from regvet.runtime.runner import RunCache
    from regvet.runtime.session import run_and_judge

    report = current if current is not None else run_analysis(ls, snap, overlay)
    fs = to_fs_path(snap.key)
    if not fs:
        return report, None
    path = Path(fs)
    return run_and_judge(report, path, ls.settings_for(path.resolve()), cache=RunCache(), started=procs.append)


def _kill_all(procs: list) -> None:
    """Kill the child's whole process group (it runs in its own session)."""
    for proc in procs:
        try:
            os.killpg(proc.pid, signal.SIGKILL)
        except (ProcessLookupError, PermissionError, OSError):
            pass


async def run_fits(ls: RegvetServer, uri: str) -> dict:
    """Run the document's code (it EXECUTES it) and show the statistics of its fits.

    Only ever started by the user (the editor's command). Reports work-done progress when the
    client supports it; cancelling (progress cancel or ``$/cancelRequest``) kills the child.
    """
    key = ls.target_of(uri)
    snap = ls.snapshot(key) if key else None
    if key is None or snap is None:
        return {"ran": False, "reason": "the document is not open"}
    token = None
    win = ls.client_capabilities.window
    if win and win.work_done_progress:
        token = str(uuid.uuid4())
        await ls.work_done_progress.create_async(token)
        ls.work_done_progress.begin(
            token,
            t.WorkDoneProgressBegin(
                title="regvet: running the fits", message=Path(to_fs_path(key) or key).name, cancellable=True
            ),
        )
    procs: list = []
    loop = asyncio.get_running_loop()
    previous = ls.results.get(key)
    current = previous.report if previous is not None and previous.version == snap.version else None
    future = loop.run_in_executor(ls.pool, _run_target, ls, snap, ls.overlay(), procs, current)
    cancelled = False
    try:
        while not future.done():
            if token is not None and ls.work_done_progress.tokens[token].cancelled() and not cancelled:
                cancelled = True
                _kill_all(procs)
            await asyncio.wait([future], timeout=0.1)
        report, result = future.result()
    except asyncio.CancelledError:
        _kill_all(procs)
        raise
    finally:
        if token is not None:
            ls.work_done_progress.end(token, t.WorkDoneProgressEnd(message="cancelled" if cancelled else "done"))
    if cancelled:
        return {"ran": False, "reason": "cancelled"}
    runtime = report.rule_input.runtime if report.rule_input is not None else None
    if runtime is not None:
        ls.runtime[key] = (snap.version, runtime)
    if ls.current_version(key) == snap.version:
        built = build_result(ls, snap, report)
        ls.results[key] = built
        if ls.use_pull:
            refresh = ls.client_capabilities.workspace
            if refresh and refresh.diagnostics and refresh.diagnostics.refresh_support:
                ls.workspace_diagnostic_refresh(None)
        else:
            publish(ls, built)
    fits = sum(len(v) for v in runtime.fit_stats.values()) if runtime else 0
    return json_safe(
        {
            "ran": result is not None,
            "fits": fits,
            "cached": bool(runtime and runtime.cached),
            "failed": runtime.failure.reason if runtime and runtime.failure else None,
            "findings": len(report.findings),
        }
    )
