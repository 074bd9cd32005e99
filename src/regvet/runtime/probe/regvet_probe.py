"""The probe regvet injects into the analysed program's own interpreter.

Runs in the child process only. Imports nothing from regvet (the child's environment may
not have regvet installed at all): standard library, numpy and statsmodels, which the
analysed code already uses. Started by ``regvet_probe_boot.py``.

What it does:
* wraps ``RegressionModel.fit`` and ``RegressionResults.get_robustcov_results`` so every OLS
  or WLS results object the user's code creates is recorded with its call site (the frames
  of the user's own files), and its statistics are computed and written at once, one JSON
  line per fit, so a later crash loses nothing already computed;
* records, with an audit hook, every file the program opens for reading (for the cache key);
* makes ``matplotlib.pyplot.show`` a no-op (the backend is forced to Agg by the parent).
"""

from __future__ import annotations

import json
import os
import sys
import threading
import time
import traceback
import types
from typing import Any

_state = threading.local()
# The probe's own options, not statistics options.
_PROBE_OPTIONS = frozenset({"compare_groups", "cv_sites", "max_fits_per_site", "plot_points"})
_LIBRARY_DIRS: tuple[str, ...] = ()
_PROBE_DIR = os.path.dirname(os.path.abspath(__file__))


class Recorder:
    """Writes one JSON object per line to the output file, flushed after each."""

    def __init__(self, out_path: str, options: dict[str, Any], user_files: set[str]) -> None:
        self.out = open(out_path, "w", encoding="utf-8")  # noqa: SIM115 - open for the whole run, closed by close()
        self.options = options
        self.user_files = user_files  # absolute paths and "<regvet-cell-N>" names
        self.seq = 0
        self.per_site: dict[tuple, int] = {}
        self.limit = int(options.get("max_fits_per_site", 20))
        self.opened: dict[str, None] = {}
        self.ids: dict[int, int] = {}  # id(results) -> seq, for derived fits
        self.keep: list[Any] = []  # keep results alive so ids stay unique during the run
        self.cv_sites = {tuple(s) for s in options.get("cv_sites", [])}
        self.compare_groups = options.get("compare_groups") or []
        self.pairs: Any = None  # regvet_pairs.CompareGroups, made on the first compared fit

    def write(self, record: dict[str, Any]) -> None:
        self.out.write(json.dumps(record, allow_nan=False, default=str) + "\n")
        self.out.flush()

    # --- call sites ----------------------------------------------------------------------------
    def frames(self) -> list[list[Any]]:
        """(file, line, col, end_line, end_col) of each frame in the user's code, innermost first."""
        out: list[list[Any]] = []
        frame: types.FrameType | None = sys._getframe(2)
        while frame is not None:
            filename = frame.f_code.co_filename
            if self._is_user(filename):
                out.append([os.path.abspath(filename) if not filename.startswith("<") else filename, *_position(frame)])
            frame = frame.f_back
        return out

    def _is_user(self, filename: str) -> bool:
        if filename.startswith("<regvet-cell-"):
            return True
        if filename.startswith("<"):
            return False
        path = os.path.abspath(filename)
        if path.startswith(_PROBE_DIR):
            return False
        if path in self.user_files:
            return True
        return not any(path.startswith(d) for d in _LIBRARY_DIRS)

    def called_from_library(self) -> bool:
        """Is the fit being made inside statsmodels or another library (an auxiliary regression)?"""
        frame = sys._getframe(2)  # 0: here, 1: the fit wrapper, 2: whoever called fit
        return frame is not None and not self._is_user(frame.f_code.co_filename)

    # --- fits ----------------------------------------------------------------------------------
    def record(self, res: Any, derived_from: Any = None) -> None:
        frames = self.frames()
        if not frames:
            return
        site = tuple(frames[0])
        count = self.per_site.get(site, 0) + 1
        self.per_site[site] = count
        self.seq += 1
        seq = self.seq
        self.ids[id(res)] = seq
        # A results wrapper's own methods (get_robustcov_results) run on the unwrapped results: know both.
        self.ids[id(getattr(res, "_results", res))] = seq
        self.keep.append(res)
        record: dict[str, Any] = {
            "type": "fit",
            "seq": seq,
            "frames": frames,
            "estimator": type(res.model).__name__,
            "formula": getattr(res.model, "formula", None),
            "cov_type": getattr(res, "cov_type", None),
            "derived_from": self.ids.get(id(derived_from)) if derived_from is not None else None,
            "occurrence": count,
        }
        if count > self.limit:
            record["stats"] = None
            record["note"] = f"statistics computed for the first {self.limit} runs of this call only"
            self.write(record)
            return
        options = {k: v for k, v in self.options.items() if k not in _PROBE_OPTIONS}
        options["cv"] = any((f[0], f[3], f[4]) in self.cv_sites for f in frames)  # by end position
        start = time.perf_counter()
        _state.busy = True
        try:
            from regvet_stats import fit_statistics

            record["stats"] = fit_statistics(res, options)
        except Exception as exc:  # a statistic failing must never fail the user's program
            record["stats"] = None
            record["stats_error"] = f"{type(exc).__name__}: {exc}"
        finally:
            _state.busy = False
        record["stats_seconds"] = round(time.perf_counter() - start, 6)
        limit = int(self.options.get("plot_points") or 0)
        if limit > 0:  # the report's residual plots (regvet report --run)
            _state.busy = True
            try:
                from regvet_points import residual_points

                stats = record.get("stats") or {}
                record["points"] = residual_points(
                    res, limit, bool(stats.get("time_ordered")), self.options.get("time_column")
                )
            except Exception as exc:  # the plots failing must never fail the user's program
                record["points"] = None
                record["points_error"] = f"{type(exc).__name__}: {exc}"
            finally:
                _state.busy = False
        self.write(record)
        if self.compare_groups and record.get("stats") is not None:
            self.pair(seq, frames, res, options)

    def pair(self, seq: int, frames: list[list[Any]], res: Any, options: dict[str, Any]) -> None:
        """Pair lines for a compared fit whose outcome is a transform of another compared fit's."""
        _state.busy = True
        try:
            from regvet_pairs import CompareGroups

            if self.pairs is None:
                self.pairs = CompareGroups(self.compare_groups)
            for line in self.pairs.pairs(seq, frames, res, {k: v for k, v in options.items() if k != "cv"}):
                self.write(line)
        except Exception as exc:  # pairing failing must never fail the user's program
            self.write({"type": "pair-error", "seq": seq, "error": f"{type(exc).__name__}: {exc}"})
        finally:
            _state.busy = False

    def finish(self, status: str, **extra: Any) -> None:
        opened = []
        for path in self.opened:
            try:
                st = os.stat(path)
            except OSError:
                continue
            opened.append([path, st.st_size, st.st_mtime_ns])
        self.write({"type": "end", "status": status, "opened": opened, **extra})
        self.out.close()


def _position(frame: Any) -> list[Any]:
    """The current instruction's source position: line, column (UTF-8 bytes), end line, end column."""
    code = frame.f_code
    try:
        positions = list(code.co_positions())  # Python 3.11+
        line, end_line, col, end_col = positions[frame.f_lasti // 2]
        if line is not None:
            return [line, col, end_line, end_col]
    except (AttributeError, IndexError, ValueError):
        pass
    return [frame.f_lineno, None, frame.f_lineno, None]


_recorder: Recorder | None = None


def install(recorder: Recorder) -> None:
    """Patch statsmodels, matplotlib and the audit hook. Called once, before the user's code."""
    global _recorder, _LIBRARY_DIRS
    _recorder = recorder
    import sysconfig

    dirs = {sysconfig.get_paths().get(k) for k in ("stdlib", "platstdlib", "purelib", "platlib")}
    dirs |= {sys.prefix, sys.base_prefix, sys.exec_prefix}
    _LIBRARY_DIRS = tuple(sorted(os.path.abspath(d) + os.sep for d in dirs if d))
    sys.addaudithook(_audit)
    _patch_statsmodels()
    _patch_matplotlib()


def _audit(event: str, args: tuple) -> None:
    if event != "open" or _recorder is None:
        return
    try:
        path, mode, flags = args[0], args[1], args[2]
        if not isinstance(path, (str, bytes, os.PathLike)):
            return
        reading = (mode is None and not (flags & (os.O_WRONLY | os.O_RDWR))) or (
            isinstance(mode, str) and ("r" in mode or "+" in mode)
        )
        if reading:
            full = os.path.abspath(os.fsdecode(path))
            if not full.startswith(_LIBRARY_DIRS) and not full.startswith(_PROBE_DIR):
                _recorder.opened[full] = None
    except Exception:
        pass


def _patch_statsmodels() -> None:
    from statsmodels.regression import linear_model as lm

    original_fit = lm.RegressionModel.fit
    original_robust = lm.RegressionResults.get_robustcov_results

    def fit(self, *args, **kwargs):
        res = original_fit(self, *args, **kwargs)
        if type(self).__name__ in ("OLS", "WLS") and not getattr(_state, "busy", False):
            if _recorder is not None and not _recorder.called_from_library():
                _recorder.record(res)
        return res

    def get_robustcov_results(self, *args, **kwargs):
        res = original_robust(self, *args, **kwargs)
        if type(self.model).__name__ in ("OLS", "WLS") and not getattr(_state, "busy", False):
            if _recorder is not None and not _recorder.called_from_library():
                _recorder.record(res, derived_from=self)
        return res

    fit.__wrapped__ = original_fit  # type: ignore[attr-defined]
    get_robustcov_results.__wrapped__ = original_robust  # type: ignore[attr-defined]
    lm.RegressionModel.fit = fit
    lm.RegressionResults.get_robustcov_results = get_robustcov_results


class _ShowPatcher:
    """Makes ``matplotlib.pyplot.show`` a no-op as soon as pyplot is imported."""

    def find_spec(self, name, path=None, target=None):
        if name != "matplotlib.pyplot":
            return None
        sys.meta_path.remove(self)
        try:
            import importlib.util

            spec = importlib.util.find_spec(name)
        finally:
            sys.meta_path.insert(0, self)
        if spec is None or spec.loader is None:
            return spec
        loader = spec.loader
        exec_module = loader.exec_module

        def patched(module):
            exec_module(module)
            module.show = lambda *a, **k: None

        loader.exec_module = patched  # type: ignore[method-assign]
        return spec


def _patch_matplotlib() -> None:
    if "matplotlib.pyplot" in sys.modules:
        sys.modules["matplotlib.pyplot"].show = lambda *a, **k: None  # type: ignore[attr-defined]
    else:
        sys.meta_path.insert(0, _ShowPatcher())


def traceback_tail(exc: BaseException, user_files: set[str], limit: int = 12) -> tuple[list[str], list[Any] | None]:
    """The traceback as the user should see it, and the innermost frame in the user's code.

    The shown traceback starts at the outermost frame of the user's code (a notebook cell is named
    ``cell N``, counted from 1) and has no frame of regvet's probe or of IPython anywhere in it: the frames
    that ran the code are regvet's, not the user's. Library frames below the user's code are kept (the
    error happened there). Past ``limit`` lines, the first frame and the last lines are kept. A chained
    exception is one line, by :func:`error_line`."""
    where = None
    for tb_frame, lineno in traceback.walk_tb(exc.__traceback__):
        name = tb_frame.f_code.co_filename
        if name.startswith("<regvet-cell-") or os.path.abspath(name) in user_files:
            where = [name if name.startswith("<") else os.path.abspath(name), lineno]
    try:
        shown = traceback.TracebackException(type(exc), exc, exc.__traceback__)
        notes = [
            f"  ({why} {error_line(other)})"
            for why, other in (("caused by", exc.__cause__), ("while handling", exc.__context__))
            if other is not None and not (why == "while handling" and exc.__suppress_context__)
        ][:1]
        shown.__cause__ = shown.__context__ = None  # type: ignore[assignment]  # the chain in one line each: the user's traceback is this one
        _from_user_code(shown, user_files)
        text = "".join(shown.format()).rstrip().split("\n")
        text[-1:-1] = notes
    except Exception:  # never lose the failure over its formatting
        text = traceback.format_exception_only(type(exc), exc)[-1].rstrip().split("\n")
    text = [line for line in text if line.strip(" ^~") or not line.strip()]  # no caret lines
    if len(text) > limit:
        first = 3 if text[0].startswith("Traceback") else 0
        text = [*text[:first], "  ...", *text[-(limit - first - 1) :]]
    return text, where


def error_line(exc: BaseException, limit: int = 160) -> str:
    """The exception in one line: its type and the first line of its message, cut to ``limit`` characters.

    A message that spans lines (pandas puts whole arrays in some) would otherwise be shown by its last
    line, a fragment that names neither the error nor its cause."""
    kind = type(exc).__qualname__
    module = type(exc).__module__
    if module not in ("builtins", "__main__"):
        kind = f"{module}.{kind}"
    try:
        message = str(exc)
    except Exception:  # a broken __str__ must not lose the failure
        message = ""
    first = next((line.strip() for line in message.splitlines() if line.strip()), "")
    if first and len(message.strip().splitlines()) > 1:
        first += " ..."
    text = f"{kind}: {first}" if first else kind
    return text if len(text) <= limit else text[: limit - 3].rstrip() + "..."


def _shown_name(filename: str) -> str:
    if filename.startswith("<regvet-cell-") and filename.endswith(">"):
        try:
            return f"cell {int(filename[len('<regvet-cell-') : -1]) + 1}"
        except ValueError:
            return filename
    return filename


def _runner_dirs() -> tuple[str, ...]:
    """Folders whose frames are regvet's machinery, never the user's code: the probe and IPython."""
    dirs = [_PROBE_DIR]
    ipython = getattr(sys.modules.get("IPython"), "__file__", None)
    if ipython:
        dirs.append(os.path.dirname(os.path.abspath(ipython)))
    return tuple(d + os.sep for d in dirs)


def _from_user_code(shown: traceback.TracebackException, user_files: set[str]) -> None:
    """Cut ``shown``'s frames to start at the user's code, without the runner's frames."""
    runners = _runner_dirs()

    def runner(frame: traceback.FrameSummary) -> bool:
        name = frame.filename
        return not name.startswith("<") and os.path.abspath(name).startswith(runners)

    def user(frame: traceback.FrameSummary) -> bool:
        name = frame.filename
        if name.startswith("<regvet-cell-") or os.path.abspath(name) in user_files:
            return True
        return _recorder is not None and not runner(frame) and _recorder._is_user(name)

    frames = list(shown.stack)
    first = next((i for i, f in enumerate(frames) if user(f)), len(frames))
    kept = [f for f in frames[first:] if not runner(f)]
    for frame in kept:
        frame.filename = _shown_name(frame.filename)
    shown.stack = traceback.StackSummary.from_list(kept)
    if getattr(shown, "filename", None):  # a SyntaxError: where it is
        shown.filename = _shown_name(shown.filename)
