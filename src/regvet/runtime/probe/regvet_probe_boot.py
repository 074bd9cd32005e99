"""Child-process entry point of regvet's runtime mode: set limits, install the probe, run the code.

Usage (by the parent, never by hand):
    python regvet_probe_boot.py REQUEST.json

The request names the script (or the notebook's code cells), the output file and the
options. The analysed code runs in its own folder as ``__main__``; notebook cells run in
order in one namespace (``regvet_cells``: IPython's shell when the interpreter has it, else a
stand-in), each compiled under the name ``<regvet-cell-N>`` so call sites carry the cell.
Standard library, numpy and statsmodels only.
"""

from __future__ import annotations

import json
import os
import sys


def _limit_memory(megabytes: int | None) -> None:
    if not megabytes:
        return
    try:
        import resource

        limit = int(megabytes) * 1024 * 1024
        resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
    except (ImportError, ValueError, OSError):  # not on this platform: run without the limit
        pass


def _note_self_signals(recorder) -> None:
    """Record a signal the script sends to itself (or to its own process group) just before it goes:
    the parent then tells a run that killed itself from one killed for memory. Calls pass through
    unchanged, errors included."""
    import signal

    me = os.getpid()

    def note(sig, via: str) -> None:
        try:
            recorder.write({"type": "self-signal", "signal": int(sig), "via": via})
        except Exception:  # never change what the script's call does
            pass

    real_kill, real_killpg = os.kill, getattr(os, "killpg", None)

    def kill(pid, sig):
        if os.getpid() == me and pid in (me, 0, -me):
            note(sig, "os.kill")
        return real_kill(pid, sig)

    os.kill = kill
    if real_killpg is not None:

        def killpg(pgid, sig):
            if os.getpid() == me and pgid in (0, me):
                note(sig, "os.killpg")
            return real_killpg(pgid, sig)

        os.killpg = killpg
    real_raise = getattr(signal, "raise_signal", None)
    if real_raise is not None:

        def raise_signal(sig):
            if os.getpid() == me:
                note(sig, "signal.raise_signal")
            return real_raise(sig)

        signal.raise_signal = raise_signal
    real_abort = os.abort

    def abort():
        if os.getpid() == me:
            note(signal.SIGABRT, "os.abort")
        return real_abort()

    os.abort = abort


def main(argv: list[str]) -> int:
    with open(argv[1], encoding="utf-8") as fh:
        request = json.load(fh)
    _limit_memory(request.get("memory_mb"))
    sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
    import regvet_probe as probe

    folder = request["folder"]
    os.chdir(folder)
    user_files = {os.path.abspath(p) for p in request.get("user_files", [])}
    recorder = probe.Recorder(request["out"], request.get("options", {}), user_files)
    recorder.write({"type": "start", "python": sys.version.split()[0], "pid": os.getpid()})
    _note_self_signals(recorder)
    try:
        probe.install(recorder)
    except Exception as exc:  # statsmodels missing or broken in that interpreter
        recorder.finish("probe-failed", message=f"{type(exc).__name__}: {exc}")
        return 0
    sys.argv = [request.get("script") or "notebook"]
    sys.path.insert(0, folder)
    ran: dict = {}  # what ran the cells (IPython or the stand-in), for the end record
    try:
        if request.get("cells") is not None:
            import regvet_cells

            failure = regvet_cells.run_cells(request["cells"], ran)
            if failure is not None:
                raise failure
        elif request.get("source") is not None:
            # Exactly the text regvet analysed (an editor may hold unsaved changes), under the script's
            # own file name so call sites point into it (and tracebacks show its lines).
            import linecache

            script = request["script"]
            source = request["source"]
            linecache.cache[script] = (len(source), None, source.splitlines(True), script)
            namespace = {"__name__": "__main__", "__file__": script, "__builtins__": __builtins__}
            exec(compile(source, script, "exec"), namespace)
        else:
            import runpy

            runpy.run_path(request["script"], run_name="__main__")
    except SystemExit as exc:
        exit_code = exc.code if isinstance(exc.code, int) or exc.code is None else str(exc.code)
        tail, where = probe.traceback_tail(exc, user_files)
        recorder.finish("exit", exit_code=exit_code, where=where, **ran)
        return 0
    except MemoryError as exc:
        tail, where = probe.traceback_tail(exc, user_files)
        recorder.finish("memory", traceback=tail, where=where, **ran)
        return 0
    except BaseException as exc:  # the user's code failed: report it, keep what was recorded
        tail, where = probe.traceback_tail(exc, user_files)
        recorder.finish("exception", traceback=tail, where=where, error=probe.error_line(exc), **ran)
        return 0
    recorder.finish("ok", **ran)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
