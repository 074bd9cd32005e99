"""Runtime mode, end to end for one file: run it, match each recorded fit to a static fit, judge.

The static report comes first (it says which fits exist and which are compared); the run
adds statistics; ``engine.with_runtime`` re-judges the same facts with them. Nothing is
parsed twice.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from regvet.engine import with_runtime
from regvet.model.facts import Fit
from regvet.model.report import FileReport
from regvet.model.runtime import Pairing, RunFailure, RuntimeFacts
from regvet.model.settings import Settings
from regvet.model.span import Span, byte_col, code_point_col
from regvet.model.stats_schema import FitRecord
from regvet.rules import RULES_BY_ID
from regvet.runtime.runner import RunCache, RunResult, memory_ceiling_mb, run


@dataclass
class _Source:
    """The analysed file's Python as the static analysis saw it (joined cells for a notebook)."""

    path: Path
    lines: list[str]
    cells: list[dict[str, Any]] | None  # notebook code cells for the child: index, neutralised source, raw text
    cell_start: dict[int, int]  # cell index -> first line in the joined module


def _source(path: Path, report: FileReport) -> _Source | None:
    if report.python is None:
        return None
    lines = report.python.split("\n")
    if report.cell_map is None:
        return _Source(path, lines, None, {})
    starts = [*list(report.cell_map.starts), len(lines) + 1]
    cells = []
    raw = report.cell_map.sources
    for i, index in enumerate(report.cell_map.cells):
        cell: dict[str, Any] = {"index": index, "source": "\n".join(lines[starts[i] - 1 : starts[i + 1] - 1])}
        if i < len(raw):  # as written, for IPython's shell (the analysed text has its magics replaced)
            cell["raw"] = raw[i]
        cells.append(cell)
    return _Source(path, lines, cells, dict(zip(report.cell_map.cells, report.cell_map.starts, strict=False)))


def options_for(settings: Settings) -> dict[str, Any]:
    """What the probe needs from the configuration (alpha is applied here, not in the child)."""
    return {
        "white_max_columns": settings.white_max_columns,
        "serial_lags": settings.serial_lags or None,
        "time_column": settings.time_column or None,
        "unit_column": settings.unit_column or None,
        "break_candidates": list(settings.break_candidates),
        "robust_se": settings.robust_se,
        "robust_se_large": settings.robust_se_large,
        "robust_se_large_n": settings.robust_se_large_n,
        "cv_folds": settings.cv_folds,
        "cv_seed": settings.cv_seed,
    }


def _frame_position(src: _Source, frame: list[Any], end: bool = False) -> tuple[int, int | None] | None:
    """A recorded frame as (line, code-point column) in the analysed file's coordinates, or None.

    With ``end``, the position just past the call: CPython narrows the *start* of a multi-line
    method call to the method name, but the end is always the closing parenthesis.
    """
    name, line, col = frame[0], frame[1], frame[2]
    if end and len(frame) >= 5:
        line, col = frame[3], frame[4]
    if line is None:
        return None
    if src.cells is not None:
        if not isinstance(name, str) or not name.startswith("<regvet-cell-"):
            return None
        index = int(name[len("<regvet-cell-") : -1])
        start = src.cell_start.get(index)
        if start is None:
            return None
        line = start + line - 1
    elif Path(name) != src.path.resolve():
        return None
    text = src.lines[line - 1] if 0 < line <= len(src.lines) else ""
    return line, None if col is None else code_point_col(text, col)


def _fit_sites(src: _Source, report: FileReport, fit: Fit) -> list[list[Any]]:
    """The end positions of a fit's calls in this file, as the probe's frames record them."""
    sites = []
    for loc in (fit.site, fit.fit_call):
        if loc.path is not None:
            continue
        line, col = loc.span.end_line, loc.span.end_col
        text = src.lines[line - 1] if 0 < line <= len(src.lines) else ""
        if src.cells is not None:
            cell, cell_line = report.cell_map.locate(line)  # type: ignore[union-attr]
            sites.append([f"<regvet-cell-{cell}>", cell_line, byte_col(text, col)])
        else:
            sites.append([str(src.path.resolve()), line, byte_col(text, col)])
    return sites


def _cv_sites(src: _Source, report: FileReport) -> list[list[Any]]:
    """Where the fits whose measures are compared are made (the child cross-validates those)."""
    facts = report.facts
    if facts is None:
        return []
    return [
        site
        for comp in facts.comparisons
        for fid, _ in comp.measures
        for site in _fit_sites(src, report, facts.fit(fid))
    ]


def _compare_groups(src: _Source, report: FileReport) -> list[list[list[list[Any]]]]:
    """Per comparison of two or more fits, each compared fit's call sites: the child pairs those fits
    and recognises an outcome that is a transform of another's (``regvet_pairs``)."""
    facts = report.facts
    if facts is None:
        return []
    groups = []
    for comp in facts.comparisons:
        roots = sorted({facts.root(fid) for fid, _ in comp.measures})
        members = [sites for r in roots if (sites := _fit_sites(src, report, facts.fit(r)))]
        if len(members) >= 2:
            groups.append(members)
    return groups


def pairings(result: RunResult, fit_stats: dict[int, tuple[FitRecord, ...]]) -> tuple[Pairing, ...]:
    """The run's pair lines, from the probe's ``seq`` numbers to the static fits they were matched to."""
    by_seq: dict[int, list[int]] = {}
    for fid, records in fit_stats.items():
        for record in records:
            seq = record.get("seq")
            if isinstance(seq, int):
                by_seq.setdefault(seq, []).append(fid)
    out: dict[tuple[int, int], Pairing] = {}
    for pair in result.pairs:
        for t in by_seq.get(pair.get("transformed", -1), []):
            for level in by_seq.get(pair.get("level", -1), []):
                if t != level:
                    out[(t, level)] = Pairing(t, level, pair)  # the latest run of the two fits wins
    return tuple(out.values())


def match(src: _Source, report: FileReport, result: RunResult) -> dict[int, tuple[FitRecord, ...]]:
    """Recorded fits -> static fit ids, by call site (outermost matching frame first), then formula."""
    facts = report.facts
    if facts is None:
        return {}
    by_end: dict[tuple[int, int], list[Fit]] = {}
    for fit in facts.fits:
        if fit.site.path is None:
            by_end.setdefault((fit.site.span.end_line, fit.site.span.end_col), []).append(fit)
    out: dict[int, list[FitRecord]] = {}
    for record in result.fits:
        candidates: list[Fit] = []
        for frame in reversed(record.get("frames") or []):  # outermost first
            pos = _frame_position(src, frame, end=True)
            if pos is None:
                continue
            line, col = pos
            if col is not None:
                candidates = by_end.get((line, col), [])
            else:  # no column information (Python 3.10): any fit whose site spans the line
                candidates = [
                    f for f in facts.fits if f.site.path is None and f.site.span.line <= line <= f.site.span.end_line
                ]
            if candidates:
                break
        if not candidates:
            continue
        formula = record.get("formula")
        if formula and any(f.formula == formula for f in candidates):
            candidates = [f for f in candidates if f.formula == formula]
        derived = record.get("derived_from") is not None
        preferred = [f for f in candidates if (f.parent is not None) == derived]
        for fit in preferred or candidates:
            out.setdefault(fit.id, []).append(record)
    return {k: tuple(v) for k, v in out.items()}


def failure_of(src: _Source, result: RunResult, timeout: float, memory_mb: int | None) -> RunFailure | None:
    end = result.end
    if result.command_error:
        return RunFailure(result.command_error)
    if end is None:
        if result.timed_out:
            return RunFailure(
                f"it ran for more than {timeout:g} s (`run_timeout`) and was stopped", tuple(result.output_tail)
            )
        if result.signal is not None:
            return RunFailure(killed_by(result, memory_mb), tuple(result.output_tail))
        return RunFailure(
            f"the process ended without reporting (exit status {result.returncode})", tuple(result.output_tail)
        )
    status = end.get("status")
    span = None
    where = end.get("where")
    if where:
        pos = _frame_position(src, [where[0], where[1], None])
        if pos is not None:
            line = pos[0]
            text = src.lines[line - 1] if 0 < line <= len(src.lines) else ""
            indent = len(text) - len(text.lstrip())
            span = Span(line, indent, line, len(text.rstrip()))
    if status == "ok":
        return None
    if status == "exception":
        tb = tuple(end.get("traceback") or ())
        # The probe's one-line form of the exception (error_line) names it; the frames show where.
        return RunFailure(f"it raised {end.get('error') or 'an exception'}", _frames_only(tb), span)
    if status == "exit":
        return RunFailure(f"it called sys.exit({end.get('exit_code')!r}) before the end", (), span)
    if status == "memory":
        limit = f" (`run_memory_mb` = {memory_mb})" if memory_mb else ""
        return RunFailure(f"it ran out of memory{limit}", tuple(end.get("traceback") or ()), span)
    if status == "probe-failed":
        return RunFailure(f"the probe could not start in that interpreter: {end.get('message')}")
    return RunFailure(f"it ended with status {status!r}")


def _frames_only(tb: tuple[str, ...]) -> tuple[str, ...]:
    """A formatted traceback without the exception's own text (already in the reason, on one line).

    Keeps the frames (``  File ...`` and the code line under each) and the one-line notes of a chained
    exception (``  (caused by ...)``); a message that spans many lines would otherwise fill the shown
    tail with its fragments."""
    if not tb or not tb[0].startswith("Traceback"):
        return tb
    last_frame = max((i for i, line in enumerate(tb) if line.startswith("  File ")), default=None)
    if last_frame is None:
        return tb
    kept = list(tb[: last_frame + 1])
    rest = tb[last_frame + 1 :]
    if rest and rest[0].startswith("    "):
        kept.append(rest[0])  # the code line of the innermost frame
    kept += [line for line in rest if line.startswith("  (")]
    return tuple(kept)


#: A process killed by SIGKILL whose peak resident memory reached this share of what the machine (or
#: its cgroup) can give was most likely the out-of-memory killer's choice (a rule of thumb, common
#: practice; from memory: Linux's OOM killer picks the process with the largest resident set).
OOM_SHARE = 0.25


#: A resident peak from this share of the address-space limit on counts as near it (resident memory
#: is always below the address space; a rule of thumb of ours).
NEAR_LIMIT = 0.5


def killed_by(result: RunResult, memory_mb: int | None = None) -> str:
    """Why a run that a signal ended did not finish, by the signal and the evidence of memory use.

    An address-space limit (``run_memory_mb``) never kills: it makes allocations fail, which the probe
    reports as running out of memory, though a native library may abort (SIGABRT, SIGSEGV) when an
    allocation is refused: said when the resident peak came near the limit. A SIGKILL comes from
    outside: the system's out-of-memory killer (then the process was large), someone else, or the
    script itself (the probe saw it send it)."""
    import signal as signals

    sig = result.signal
    try:
        name = signals.Signals(sig).name if sig is not None else "a signal"
    except ValueError:
        name = f"signal {sig}"
    peak = result.peak_mb
    used = f" with a peak of {peak:g} MB resident" if peak is not None else ""
    if result.self_signal is not None and result.self_signal == sig:
        return f"the script ended itself with signal {sig} ({name}) before the end"
    if sig == signals.SIGKILL:
        ceiling = memory_ceiling_mb()
        if peak is not None and ceiling is not None:
            if peak >= OOM_SHARE * ceiling:
                return (
                    f"the process was killed (signal 9, SIGKILL){used} of the {ceiling:.0f} MB this machine "
                    "can give: most likely by the system's out-of-memory killer"
                )
            return (
                f"the process was killed (signal 9, SIGKILL) from outside{used}, far from the {ceiling:.0f} MB "
                "this machine can give: not for memory, as far as regvet can tell"
            )
        return "the process was killed (signal 9, SIGKILL) from outside; regvet cannot tell whether it was for memory"
    text = f"the process was ended by signal {sig} ({name}){used} before the end"
    if memory_mb and peak is not None and peak >= NEAR_LIMIT * memory_mb:
        text += (
            f"; that is near the `run_memory_mb` limit of {memory_mb} MB, where a native library may abort "
            "when an allocation is refused"
        )
    return text


def run_and_judge(
    report: FileReport,
    path: Path,
    settings: Settings,
    *,
    cache: RunCache | None,
    started: Callable[[Any], None] | None = None,
    plot_points: int = 0,
    on_fit: Callable[[FitRecord], None] | None = None,
) -> tuple[FileReport, RunResult | None]:
    """Run ``path`` under the probe and return its report re-judged with the statistics.

    What runs is exactly the Python the static analysis read (``report.python``: an editor's
    unsaved text, a notebook's code cells), and it keys the cache. Files with nothing to run (no
    statsmodels, or a parse error) are returned unchanged. ``plot_points`` > 0 asks the probe for
    up to that many residual points per fit (``FitRecord.points``, for the report's plots);
    ``on_fit`` sees each fit record as the run writes it.
    """
    if report.skipped or report.facts is None or report.python is None:
        return report, None
    if not report.facts.fits and ".fit(" not in report.python:
        return report, None
    if any(f.rule in RULES_BY_ID and RULES_BY_ID[f.rule].blocks_run for f in report.findings):
        return report, None
    src = _source(path, report)
    if src is None:
        return report, None
    options = options_for(settings)
    options["cv_sites"] = _cv_sites(src, report)
    options["compare_groups"] = _compare_groups(src, report)
    if plot_points > 0:
        options["plot_points"] = plot_points
    memory = settings.run_memory_mb or None
    result = run(
        path,
        cells=src.cells,
        python=settings.python,
        timeout=settings.run_timeout,
        memory_mb=memory,
        options=options,
        user_files=list(report.facts.dependencies),
        cache=cache,
        content=report.python.encode("utf-8"),
        started=started,
        on_fit=on_fit,
    )
    fit_stats = match(src, report, result)
    facts = RuntimeFacts(
        fit_stats=fit_stats,
        pairs=pairings(result, fit_stats),
        failure=failure_of(src, result, settings.run_timeout, memory),
        cached=result.cached,
        elapsed_s=result.elapsed_s,
    )
    return with_runtime(report, facts, settings), result
