"""Running analysed code in a child process with the probe injected, with limits and a cache.

This is the parent side of the runtime mode: it never imports numpy or statsmodels
itself. The child is the configured interpreter (default: the one running regvet),
started in the script's own folder with standard input closed, the matplotlib backend
forced to Agg, an address-space limit and a wall-clock timeout. Its findings come back as
JSON lines in a temporary file, written as each fit completes.

The child leads a session (and so a process group) of its own. When it ends, for whatever
reason, every process still in that group (what the script started and left running) is
killed before the child is reaped: the child's pid, and so the group's id, cannot be reused
meanwhile. A process that leaves the group (a new session, ``setsid``, a daemon) escapes;
only a cgroup could hold it. The child's peak resident memory (``wait4``) and any signal the
script sent itself (recorded by the probe) tell a self-inflicted kill from one for memory.

**This executes the user's code.** It is only ever reached through an explicit request
(``regvet check --run`` / ``regvet run``, or the editor's ``regvet.runFits`` command).
"""

from __future__ import annotations

import hashlib
import json
import os
import select
import signal
import subprocess
import sys
import tempfile
import threading
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, cast

from regvet.model.stats_schema import FitRecord, PairRecord

PROBE_DIR = Path(__file__).resolve().parent / "probe"
BOOT = PROBE_DIR / "regvet_probe_boot.py"

#: The children running now (not yet reaped), so that regvet, stopped itself, can end their groups.
_LIVE: set[subprocess.Popen] = set()
#: Reentrant: :func:`end_all_runs` may be called from a signal handler in a thread that holds it.
_LIVE_LOCK = threading.RLock()


def end_all_runs() -> None:
    """Kill the process group of every child still running.

    For regvet itself being stopped (a signal, Ctrl-C): each run then ends as killed, which is never
    cached. A child is taken out of the set before it is reaped, under the same lock, so no group id
    here can belong to a reaped child (a pid the system may have given to another process)."""
    with _LIVE_LOCK:
        for proc in list(_LIVE):
            try:
                os.killpg(proc.pid, signal.SIGKILL)
            except OSError:
                pass


STDOUT_TAIL = 20
#: In the environment, runs notebooks with the probe's stand-in for IPython even where IPython is installed
#: (the tests' switch; read by the child's ``regvet_cells``).
NO_IPYTHON = "REGVET_PROBE_NO_IPYTHON"


@dataclass
class RunResult:
    """What one run produced: fit records (with statistics), how it ended, and cache facts."""

    fits: list[FitRecord] = field(default_factory=list)
    #: Compared fits whose outcomes are one transform of the other (``regvet_pairs``), by ``seq``.
    pairs: list[PairRecord] = field(default_factory=list)
    end: dict[str, Any] | None = None  # the probe's last record; None when the child was killed
    timed_out: bool = False
    returncode: int | None = None
    signal: int | None = None
    output_tail: list[str] = field(default_factory=list)
    elapsed_s: float = 0.0
    cached: bool = False
    command_error: str | None = None
    #: The child's peak resident set in MB (None where the platform does not tell).
    peak_mb: float | None = None
    #: A signal the script sent to itself or its own group (recorded by the probe just before).
    self_signal: int | None = None

    @property
    def completed(self) -> bool:
        return self.end is not None and self.end.get("status") == "ok"

    def to_json(self) -> dict[str, Any]:
        return {
            "fits": self.fits,
            "pairs": self.pairs,
            "end": self.end,
            "timed_out": self.timed_out,
            "returncode": self.returncode,
            "signal": self.signal,
            "output_tail": self.output_tail,
            "elapsed_s": self.elapsed_s,
            "command_error": self.command_error,
            "peak_mb": self.peak_mb,
            "self_signal": self.self_signal,
        }

    @classmethod
    def from_json(cls, data: dict[str, Any]) -> RunResult:
        return cls(
            fits=list(data.get("fits") or []),
            pairs=list(data.get("pairs") or []),
            end=data.get("end"),
            timed_out=bool(data.get("timed_out")),
            returncode=data.get("returncode"),
            signal=data.get("signal"),
            output_tail=list(data.get("output_tail") or []),
            elapsed_s=float(data.get("elapsed_s") or 0.0),
            command_error=data.get("command_error"),
            peak_mb=data.get("peak_mb"),
            self_signal=data.get("self_signal"),
        )


def probe_version() -> str:
    """A hash of the probe's own files: a changed probe invalidates every cached run."""
    h = hashlib.sha256()
    for path in sorted(PROBE_DIR.glob("*.py")):
        h.update(path.name.encode())
        h.update(path.read_bytes())
    return h.hexdigest()[:16]


def default_cache_dir() -> Path:
    base = os.environ.get("REGVET_CACHE_DIR")
    if base:
        return Path(base)
    xdg = os.environ.get("XDG_CACHE_HOME")
    return Path(xdg) / "regvet" / "runs" if xdg else Path.home() / ".cache" / "regvet" / "runs"


class RunCache:
    """Runs keyed by the script's content, interpreter and options; valid while every file the run
    read keeps its size and modification time."""

    def __init__(self, folder: Path | None = None) -> None:
        self.folder = folder or default_cache_dir()

    @staticmethod
    def key(path: Path, content: bytes, python: str, options: dict[str, Any]) -> str:
        h = hashlib.sha256()
        for part in (str(path.resolve()), python, probe_version(), json.dumps(options, sort_keys=True)):
            h.update(part.encode("utf-8", "surrogatepass"))  # a file name need not be UTF-8
            h.update(b"\0")
        h.update(content)
        return h.hexdigest()

    def get(self, key: str) -> RunResult | None:
        entry = self.folder / f"{key}.json"
        try:
            data = json.loads(entry.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return None
        for path, size, mtime in data.get("opened", []):
            try:
                st = os.stat(path)
            except OSError:
                return None
            if st.st_size != size or st.st_mtime_ns != mtime:
                return None
        result = RunResult.from_json(data["result"])
        result.cached = True
        return result

    def put(self, key: str, result: RunResult) -> None:
        if result.end is None:  # killed (timeout, memory): run again next time
            return
        opened = result.end.get("opened", [])
        try:
            self.folder.mkdir(parents=True, exist_ok=True)
            fd, tmp = tempfile.mkstemp(dir=self.folder, suffix=".tmp")
            with os.fdopen(fd, "w", encoding="utf-8") as fh:
                json.dump({"opened": opened, "result": result.to_json()}, fh)
            os.replace(tmp, self.folder / f"{key}.json")
        except OSError:
            pass  # a cache that cannot be written only costs a re-run


def run(
    path: Path,
    *,
    cells: list[dict[str, Any]] | None = None,
    python: str = "",
    timeout: float = 300.0,
    memory_mb: int | None = None,
    options: dict[str, Any] | None = None,
    user_files: list[str] | None = None,
    cache: RunCache | None = None,
    content: bytes | None = None,
    started: Callable[[subprocess.Popen], None] | None = None,
    on_fit: Callable[[FitRecord], None] | None = None,
) -> RunResult:
    """Run one script (or a notebook's code cells) under the probe; never raises for the user's faults.

    ``started`` receives the child process (the language server uses it to cancel a run);
    ``on_fit`` receives each fit record as the child writes it (for a progress line).
    """
    options = options or {}
    interpreter = python or sys.executable
    content = content if content is not None else path.read_bytes()
    keyed = {**options, "cells": cells is not None}
    if cells is not None:  # the cells as written (magics included) run too, and which shell runs them
        keyed["raw"] = [cell.get("raw") for cell in cells]
        keyed["shell"] = "stand-in" if os.environ.get(NO_IPYTHON) else "ipython"
    key = RunCache.key(path, content, interpreter, keyed) if cache else ""
    if cache is not None:
        hit = cache.get(key)
        if hit is not None:
            return hit
    result = RunResult()
    with tempfile.TemporaryDirectory(prefix="regvet-run-") as tmp:
        out = Path(tmp) / "out.jsonl"
        request = {
            "folder": str(path.resolve().parent),
            "script": None if cells is not None else str(path.resolve()),
            "source": None if cells is not None else content.decode("utf-8", errors="replace"),
            "cells": cells,
            "out": str(out),
            "options": options,
            "memory_mb": memory_mb,
            "user_files": [str(path.resolve()), *(user_files or [])],
        }
        req = Path(tmp) / "request.json"
        req.write_text(json.dumps(request), encoding="utf-8")
        env = dict(os.environ)
        env["MPLBACKEND"] = "Agg"
        env["PYTHONPATH"] = os.pathsep.join(filter(None, [str(PROBE_DIR), env.get("PYTHONPATH", "")]))
        env["PYTHONUNBUFFERED"] = "1"
        env.pop("PYTHONSTARTUP", None)
        env["IPYTHONDIR"] = str(Path(tmp) / "ipython")  # IPython's profile: fresh, never the user's own
        log = Path(tmp) / "output.txt"
        start = time.perf_counter()
        with open(log, "wb") as output:
            try:
                proc = subprocess.Popen(
                    [interpreter, str(BOOT), str(req)],
                    cwd=str(request["folder"]),
                    stdin=subprocess.DEVNULL,
                    stdout=output,
                    stderr=subprocess.STDOUT,
                    env=env,
                    start_new_session=True,  # its own process group: a timeout kills its children too
                )
            except OSError as exc:
                result.command_error = f"cannot start {interpreter}: {exc.strerror or exc}"
                return result
            with _LIVE_LOCK:
                _LIVE.add(proc)
            if started is not None:
                started(proc)
            try:
                if on_fit is None:
                    exited = _exited(proc, timeout)
                else:
                    exited = _wait_watching(proc, timeout, out, on_fit)
            finally:  # also when interrupted (Ctrl-C): end the group, then let the interruption propagate
                with _LIVE_LOCK:
                    _LIVE.discard(proc)
                result.peak_mb = _end_group(proc)
            result.timed_out = not exited
        result.elapsed_s = round(time.perf_counter() - start, 3)
        result.returncode = proc.returncode
        if proc.returncode is not None and proc.returncode < 0:
            result.signal = -proc.returncode
        result.output_tail = _tail(log)
        for record in _records(out):
            if record.get("type") == "fit":
                result.fits.append(cast(FitRecord, record))  # the probe writes FitRecord lines
            elif record.get("type") == "pair":
                result.pairs.append(cast(PairRecord, record))
            elif record.get("type") == "end":
                result.end = record
            elif record.get("type") == "self-signal" and result.signal is not None:
                if record.get("signal") == result.signal:  # the script sent the very signal that ended it
                    result.self_signal = result.signal
    if cache is not None:
        cache.put(key, result)
    return result


def _wait_watching(proc: subprocess.Popen, timeout: float, out: Path, on_fit: Callable[[FitRecord], None]) -> bool:
    """:func:`_exited` with ``timeout``, calling ``on_fit`` for each complete fit line the child adds to ``out``
    (also the lines written just before it ended: the file is read once more after the exit)."""
    deadline = time.monotonic() + timeout
    done = 0  # bytes of ``out`` already passed on
    while True:
        exited = _exited(proc, max(min(0.2, deadline - time.monotonic()), 0.001))
        done = _pass_on(out, done, on_fit)
        if exited:
            return True
        if time.monotonic() >= deadline:
            return False


def _pass_on(out: Path, done: int, on_fit: Callable[[FitRecord], None]) -> int:
    """Hand every complete fit line of ``out`` after byte ``done`` to ``on_fit``; the new count of bytes done."""
    try:
        with open(out, "rb") as fh:
            fh.seek(done)
            chunk = fh.read()
    except OSError:
        return done
    complete = chunk[: chunk.rfind(b"\n") + 1]
    for line in complete.decode("utf-8", errors="replace").splitlines():
        try:
            record = json.loads(line)
        except ValueError:
            continue
        if isinstance(record, dict) and record.get("type") == "fit":
            try:
                on_fit(cast(FitRecord, record))
            except Exception:  # a progress display never stops a run
                pass
    return done + len(complete)


def _exited(proc: subprocess.Popen, timeout: float) -> bool:
    """Whether the child ends within ``timeout`` seconds. It is *not* reaped: while it is a zombie its pid,
    which is its process group's id, cannot be given to another process, so :func:`_end_group` is safe."""
    pidfd_open = getattr(os, "pidfd_open", None)
    if pidfd_open is not None:  # Linux 5.3+: the descriptor becomes readable when the process exits
        try:
            fd = pidfd_open(proc.pid)
        except OSError:
            fd = -1
        if fd >= 0:
            try:  # poll, not select: a server with many open files may hand out a descriptor above 1023
                poller = select.poll()
                poller.register(fd, select.POLLIN)
                return bool(poller.poll(max(timeout, 0.0) * 1000))
            finally:
                os.close(fd)
    waitid = getattr(os, "waitid", None)
    if waitid is None:  # pragma: no cover - Windows: no process groups to end either
        try:
            proc.wait(timeout=timeout)
            return True
        except subprocess.TimeoutExpired:
            return False
    deadline = time.monotonic() + timeout
    delay = 0.001
    while True:
        try:
            if waitid(os.P_PID, proc.pid, os.WEXITED | os.WNOHANG | os.WNOWAIT) is not None:
                return True
        except ChildProcessError:
            return True
        left = deadline - time.monotonic()
        if left <= 0:
            return False
        time.sleep(min(delay, left))
        delay = min(delay * 2, 0.05)


def _end_group(proc: subprocess.Popen) -> float | None:
    """Kill every process left in the child's group (the child too, if it still runs), then reap the child.

    Returns the child's peak resident memory in MB when the platform reports it (``wait4``)."""
    try:
        os.killpg(proc.pid, signal.SIGKILL)
    except (ProcessLookupError, PermissionError, AttributeError, OSError):
        if proc.poll() is None:
            proc.kill()
    wait4 = getattr(os, "wait4", None)
    if wait4 is not None and proc.returncode is None:
        try:
            _, status, usage = wait4(proc.pid, 0)
        except ChildProcessError:
            pass
        else:
            proc.returncode = os.waitstatus_to_exitcode(status)
            # ru_maxrss is in KB on Linux, in bytes on macOS
            return round(usage.ru_maxrss / (1024 * 1024 if sys.platform == "darwin" else 1024), 1)
    proc.wait()
    return None


def memory_ceiling_mb() -> float | None:
    """The memory the machine can give a process, in MB: physical memory, or a smaller cgroup limit."""
    sizes: list[float] = []
    try:
        sizes.append(os.sysconf("SC_PHYS_PAGES") * os.sysconf("SC_PAGE_SIZE") / 2**20)
    except (AttributeError, ValueError, OSError):
        pass
    for limit in ("/sys/fs/cgroup/memory.max", "/sys/fs/cgroup/memory/memory.limit_in_bytes"):
        try:
            text = Path(limit).read_text().strip()
        except OSError:
            continue
        if text.isdigit() and int(text) < 2**60:
            sizes.append(int(text) / 2**20)
    return min(sizes) if sizes else None


def _tail(path: Path) -> list[str]:
    try:
        data = path.read_bytes()[-20000:]
    except OSError:
        return []
    lines = data.decode("utf-8", errors="replace").rstrip().split("\n")
    return [line for line in lines[-STDOUT_TAIL:] if line.strip()]


def _records(path: Path) -> list[dict[str, Any]]:
    out: list[dict[str, Any]] = []
    try:
        text = path.read_text(encoding="utf-8", errors="replace")
    except OSError:
        return out
    for line in text.split("\n"):
        if not line.strip():
            continue
        try:
            out.append(json.loads(line))
        except ValueError:
            break  # a line cut short by a kill: everything before it is good
    return out
