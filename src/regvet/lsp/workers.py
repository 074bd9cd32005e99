"""Analyses for the language server in child processes, each within a time budget.

A thread cannot be stopped: one document whose analysis never ends (a formula with a huge power)
would hold a thread, its CPU and its memory for good, and keep the process from exiting. So the
server sends each analysis (a picklable :class:`Job`: the snapshot, the settings, the project
root and the unsaved buffers) to one of a few long-lived ``python -m regvet.lsp.workers``
processes and waits for the report on the event loop:

* an analysis that outlives its budget is ended by killing its process (a fresh one takes its
  place when next needed), and the caller gets :class:`AnalysisTimeout`;
* a caller that is cancelled (a newer version of the document arrived) leaves the analysis a
  short grace to finish (its result is then dropped); after that its process is killed;
* each process has an address-space limit, so a runaway analysis fails there with a
  ``MemoryError`` (:class:`AnalysisFailed`) instead of taking the editor's memory;
* ``close()`` kills every process at once (``shutdown``/``exit``/end of the stream).

Frames on the pipes are an 8-byte big-endian length and a pickle; only this module's own
processes are at either end.
"""

from __future__ import annotations

import asyncio
import contextlib
import os
import pickle
import struct
import sys
from dataclasses import dataclass
from pathlib import Path
from typing import Any

DEFAULT_BUDGET_S = 10.0
GRACE_S = 0.5  #: what a stale analysis may still take before its process is killed
MEMORY_MB = 2048  #: address-space limit of each analysis process
WORKERS = 3  #: analyses at once (two pathological documents still leave one for the rest)
_LEN = struct.Struct(">Q")


class AnalysisTimeout(Exception):
    """The analysis outlived its budget; its process was killed."""


class AnalysisFailed(Exception):
    """The analysis raised, or its process died (out of memory, killed)."""


@dataclass(frozen=True)
class Job:
    """Everything one analysis needs, taken on the event loop; pickled to the child."""

    snap: Any  # server.FileSnapshot | server.NotebookSnapshot
    settings: Any  # model.settings.Settings
    root: Path | None
    path: Path | None
    overlay: dict[Path, str]


def analyse_job(job: Job, module_cache: dict | None) -> Any:
    """The static analysis of one snapshot (the engine's, exactly as the CLI's): a FileReport."""
    from regvet.engine import analyze, analyze_cells
    from regvet.project import FileModules

    path = job.path
    provider = FileModules(job.root, path, overlay=job.overlay, show=str) if path and job.root else None
    shown = str(path) if path is not None else job.snap.key
    module_key = path.stem if path is not None else ""
    snap = job.snap
    if hasattr(snap, "cells"):
        return analyze_cells(
            snap.code_cells(),
            len(snap.cells),
            shown,
            job.settings,
            provider=provider,
            module_key=module_key,
            module_cache=module_cache,
        )
    return analyze(
        snap.text,
        shown,
        job.settings,
        notebook=False,
        provider=provider,
        module_key=module_key,
        module_cache=module_cache,
    )


class Worker:
    def __init__(self, proc: asyncio.subprocess.Process) -> None:
        self.proc = proc

    async def send(self, payload: bytes) -> None:
        assert self.proc.stdin is not None
        self.proc.stdin.write(_LEN.pack(len(payload)) + payload)
        await self.proc.stdin.drain()

    async def receive(self) -> tuple[str, Any]:
        assert self.proc.stdout is not None
        (size,) = _LEN.unpack(await self.proc.stdout.readexactly(_LEN.size))
        return pickle.loads(await self.proc.stdout.readexactly(size))

    def kill(self) -> None:
        with contextlib.suppress(ProcessLookupError, OSError):
            self.proc.kill()


class AnalysisPool:
    """Up to ``size`` analysis processes, started when first needed and reused."""

    def __init__(self, size: int = WORKERS, memory_mb: int = MEMORY_MB) -> None:
        self.size = size
        self.memory_mb = memory_mb
        self.idle: list[Worker] = []
        self.all: set[Worker] = set()
        self._slots: asyncio.Semaphore | None = None
        self.closed = False
        self.tasks: set[asyncio.Task] = set()  # settling and warming (kept referenced until done)

    def background(self, coro: Any) -> None:
        task = asyncio.ensure_future(coro)
        self.tasks.add(task)
        task.add_done_callback(self.tasks.discard)

    @property
    def slots(self) -> asyncio.Semaphore:
        if self._slots is None:  # made on the running loop
            self._slots = asyncio.Semaphore(self.size)
        return self._slots

    async def _spawn(self) -> Worker:
        proc = await asyncio.create_subprocess_exec(
            sys.executable,
            "-m",
            "regvet.lsp.workers",
            str(self.memory_mb),
            stdin=asyncio.subprocess.PIPE,
            stdout=asyncio.subprocess.PIPE,
            stderr=asyncio.subprocess.DEVNULL,
        )
        worker = Worker(proc)
        self.all.add(worker)
        return worker

    def _discard(self, worker: Worker) -> None:
        worker.kill()
        self.all.discard(worker)
        if worker in self.idle:
            self.idle.remove(worker)

    async def run(self, job: Job, budget: float) -> Any:
        """The report of ``job``, or AnalysisTimeout / AnalysisFailed; cancellable."""
        if self.closed:
            raise AnalysisFailed("the server is shutting down")
        payload = pickle.dumps(job, protocol=pickle.HIGHEST_PROTOCOL)
        await self.slots.acquire()
        handed_off = False  # to _settle, which then releases the slot
        worker: Worker | None = None
        try:
            worker = self.idle.pop() if self.idle else await self._spawn()
            loop = asyncio.get_running_loop()
            started = loop.time()
            await worker.send(payload)
            reply = asyncio.ensure_future(worker.receive())
            try:
                done, _ = await asyncio.wait({reply}, timeout=budget)
            except asyncio.CancelledError:
                grace = max(0.0, min(GRACE_S, budget - (loop.time() - started)))
                handed_off = True
                self.background(self._settle(worker, reply, grace))
                raise
            if not done:
                reply.cancel()
                raise AnalysisTimeout(budget)
            try:
                status, value = reply.result()
            except (asyncio.IncompleteReadError, EOFError, pickle.UnpicklingError) as exc:
                raise AnalysisFailed("the analysis process ended without a report (out of memory?)") from exc
            self._return(worker)
            worker = None
            if status != "ok":
                raise AnalysisFailed(value)
            return value
        except (BrokenPipeError, ConnectionResetError) as exc:
            raise AnalysisFailed("the analysis process ended") from exc
        finally:
            if not handed_off:
                if worker is not None:  # timed out, died or failed on the way: never reused
                    self._discard(worker)
                self.slots.release()

    async def _settle(self, worker: Worker, reply: asyncio.Future, grace: float) -> None:
        """A cancelled analysis: keep its process if it answers within ``grace``, else kill it."""
        try:
            done, _ = await asyncio.wait({reply}, timeout=grace)
            if done and not reply.cancelled() and reply.exception() is None:
                self._return(worker)
            else:
                reply.cancel()
                self._discard(worker)
        finally:
            self.slots.release()

    def _return(self, worker: Worker) -> None:
        if self.closed or worker.proc.returncode is not None:
            self._discard(worker)
        else:
            self.idle.append(worker)

    async def warm(self) -> None:
        """Start one process ahead of the first analysis."""
        if not self.all and not self.closed:
            self.idle.append(await self._spawn())

    def close(self) -> None:
        self.closed = True
        for worker in list(self.all):
            self._discard(worker)


# --- the child -------------------------------------------------------------------------------------
def _limit_memory(mb: int) -> None:
    try:
        import resource

        limit = mb * 1024 * 1024
        resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
    except (ImportError, ValueError, OSError):
        pass  # not on this platform: the budget still holds


def child(memory_mb: int) -> None:
    """Answer jobs on stdin with ("ok", FileReport) or ("error", text) on stdout, until stdin ends."""
    _limit_memory(memory_mb)
    inp = os.fdopen(os.dup(0), "rb", buffering=0)
    out = os.fdopen(os.dup(1), "wb", buffering=0)
    os.dup2(2, 1)  # a stray print in imported code must not corrupt the frames
    module_cache: dict = {}
    while True:
        head = _read_exactly(inp, _LEN.size)
        if head is None:
            return
        body = _read_exactly(inp, _LEN.unpack(head)[0])
        if body is None:
            return
        try:
            job = pickle.loads(body)
            reply: tuple[str, Any] = ("ok", analyse_job(job, module_cache))
            data = pickle.dumps(reply, protocol=pickle.HIGHEST_PROTOCOL)
        except MemoryError:
            module_cache.clear()
            data = pickle.dumps(("error", f"ran out of memory (the limit is {memory_mb} MB)"))
        except BaseException as exc:  # every failure is an answer, never a dead pipe
            data = pickle.dumps(("error", f"{type(exc).__name__}: {exc}"[:500]))
        if len(module_cache) > 64:
            module_cache.clear()
        out.write(_LEN.pack(len(data)) + data)


def _read_exactly(stream: Any, n: int) -> bytes | None:
    parts = []
    while n:
        chunk = stream.read(min(n, 1 << 20))
        if not chunk:
            return None
        parts.append(chunk)
        n -= len(chunk)
    return b"".join(parts)


if __name__ == "__main__":
    child(int(sys.argv[1]) if len(sys.argv) > 1 else MEMORY_MB)
