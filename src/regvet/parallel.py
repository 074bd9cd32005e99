"""One function over many inputs in worker processes, the results in input order.

``map_ordered(factory, factory_args, items, jobs, lost)`` builds one worker per process with
``factory(*factory_args)`` (a callable kept for the life of the process, so what it caches, such
as parsed project modules, serves every item it gets) and returns ``[worker(item) for item in
items]``. With one job, or one item, everything runs in this process.

A worker process that dies (a signal, ``os._exit``, the kernel's out-of-memory killer) costs only
its own item: the items that were in flight are run again one by one, each in a process of its
own, and the one whose process dies again gets ``lost(item, why)`` as its result; the scan then
goes on in a fresh pool. Only a bounded number of items is in flight at a time.
"""

from __future__ import annotations

import os
import signal
from collections.abc import Callable, Sequence
from typing import TYPE_CHECKING, Any, TypeVar

if TYPE_CHECKING:  # imported when a pool is used: a one-job run does not pay for multiprocessing
    from concurrent.futures import Future

T = TypeVar("T")
R = TypeVar("R")

_WORKER: Callable[[Any], Any] | None = None


def default_jobs() -> int:
    """The number of cores this process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):
        return max(1, os.cpu_count() or 1)


def _context() -> Any:
    import multiprocessing

    methods = multiprocessing.get_all_start_methods()
    # fork starts a worker in milliseconds with regvet already imported; the CLI has no threads then.
    return multiprocessing.get_context("fork" if "fork" in methods else None)


def _init(factory: Callable[..., Callable[[Any], Any]], args: tuple) -> None:
    global _WORKER
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # the parent handles Ctrl-C and ends the pool
    _WORKER = factory(*args)


def _call(item: Any) -> Any:
    assert _WORKER is not None
    return _WORKER(item)


def _alone(factory: Callable[..., Callable[[T], R]], args: tuple, item: T, conn: Any) -> None:
    try:
        conn.send(("ok", factory(*args)(item)))
    except BaseException as exc:
        conn.send(("error", f"{type(exc).__name__}: {exc}"))
    finally:
        conn.close()


def _describe_exit(code: int | None) -> str:
    if code is None:
        return "the worker process did not finish"
    if code < 0:
        try:
            name = signal.Signals(-code).name
        except ValueError:
            name = f"signal {-code}"
        return f"the worker process analysing it was killed ({name})"
    return f"the worker process analysing it exited with status {code}"


def run_alone(factory: Callable[..., Callable[[T], R]], args: tuple, item: T, lost: Callable[[T, str], R]) -> R:
    """``factory(*args)(item)`` in a process of its own; ``lost(item, why)`` if that process dies."""
    ctx = _context()
    receive, send = ctx.Pipe(duplex=False)
    proc = ctx.Process(target=_alone, args=(factory, args, item, send), daemon=True)
    proc.start()
    send.close()
    try:
        status, value = receive.recv()
    except EOFError:
        proc.join()
        return lost(item, _describe_exit(proc.exitcode))
    finally:
        receive.close()
    proc.join()
    if status == "error":
        return lost(item, f"the worker process failed: {value}")
    return value


def _harvest(
    future: Future,
    running: dict[Future, int],
    results: dict[int, Any],
    items: Sequence[Any],
    lost: Callable[[Any, str], Any],
) -> None:
    """Move a finished future's result into ``results`` (BrokenProcessPool propagates, the future kept)."""
    from concurrent.futures.process import BrokenProcessPool

    index = running[future]
    try:
        results[index] = future.result()
    except BrokenProcessPool:
        raise
    except Exception as exc:  # the worker raised, or its result could not be sent back
        results[index] = lost(items[index], f"the worker process failed: {type(exc).__name__}: {exc}")
    del running[future]


def map_ordered(
    factory: Callable[..., Callable[[T], R]],
    factory_args: tuple,
    items: Sequence[T],
    jobs: int,
    lost: Callable[[T, str], R],
    on_done: Callable[[int], None] | None = None,
) -> list[R]:
    """``[factory(*factory_args)(item) for item in items]``, over ``jobs`` processes. ``on_done`` is
    called with each item's index as its result arrives (in the parent, in the order they finish)."""
    done_hook = on_done if on_done is not None else (lambda _: None)
    if jobs <= 1 or len(items) <= 1:
        worker = factory(*factory_args)
        out = []
        for i, item in enumerate(items):
            out.append(worker(item))
            done_hook(i)
        return out
    from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
    from concurrent.futures.process import BrokenProcessPool

    results: dict[int, R] = {}
    pending = list(range(len(items)))[::-1]  # popped from the end: input order
    window = 4 * jobs
    while pending:
        suspects: list[int] = []
        with ProcessPoolExecutor(
            max_workers=min(jobs, len(pending)),
            mp_context=_context(),
            initializer=_init,
            initargs=(factory, factory_args),
        ) as pool:
            running: dict[Future, int] = {}
            try:
                while pending or running:
                    while pending and len(running) < window:
                        index = pending.pop()
                        running[pool.submit(_call, items[index])] = index
                    done, _ = wait(running, return_when=FIRST_COMPLETED)
                    for future in done:
                        index = running[future]
                        _harvest(future, running, results, items, lost)
                        done_hook(index)
            except BrokenProcessPool:  # a worker died: keep what finished, suspect the rest
                for future in list(running):
                    if (
                        future.done()
                        and not future.cancelled()
                        and not isinstance(future.exception(), BrokenProcessPool)
                    ):
                        index = running[future]
                        _harvest(future, running, results, items, lost)
                        done_hook(index)
                suspects = sorted(running.values())
            except BaseException:
                pool.shutdown(wait=False, cancel_futures=True)
                raise
        for index in suspects:  # which of the items in flight killed its process: each on its own
            if index not in results:
                results[index] = run_alone(factory, factory_args, items[index], lost)
                done_hook(index)
    return [results[i] for i in range(len(items))]
