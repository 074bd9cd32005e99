"""Reading, analysing (and with ``--run`` running) the files a command names: ``scan`` and its parts."""

from __future__ import annotations

import argparse
import os
import sys
import time
from dataclasses import dataclass, field
from pathlib import Path

from regvet.analysis.providers import ModuleProvider
from regvet.cli.common import EXTRA_EXCLUDE, UsageError, _SettingsFinder, collect_files, runs_end_with_regvet
from regvet.discovery import read_regular
from regvet.factcache import FactCache, LookupMemo, RecordingModules
from regvet.model.report import FileReport
from regvet.model.settings import DEFAULT_EXCLUDE, Settings
from regvet.model.span import Span
from regvet.output.safe import printable
from regvet.parallel import default_jobs, map_ordered
from regvet.project import FileModules, ScanLookups, display_path
from regvet.workspace import project_root

#: The path that names standard input, and the name its findings are shown under.
STDIN, STDIN_NAME = "-", "<stdin>"


@dataclass
class Scan:
    """What one scan read and judged: each file with its report, and whether regvet itself failed."""

    files: list[tuple[Path, FileReport]] = field(default_factory=list)
    failed: bool = False

    @property
    def reports(self) -> list[FileReport]:
        return [r for _, r in self.files]


class Progress:
    """One line on standard error while fits run (file k of n, the fit just computed, time so far);
    nothing at all when standard error is not a terminal."""

    def __init__(self, stream=None, delay: float = 0.0) -> None:
        self.stream = stream if stream is not None else sys.stderr
        self.enabled = bool(getattr(self.stream, "isatty", lambda: False)())
        self.start = time.monotonic()
        self.delay = delay  # the reading of files is shown only once it has taken this long
        self.head = ""
        self.shown = False

    def _show(self, text: str) -> None:
        if self.enabled:
            self.stream.write("\r\033[K" + text[:150])
            self.stream.flush()
            self.shown = True

    def file(self, k: int, n: int, path: Path) -> None:
        self.head = f"regvet: running file {k} of {n}, {path.name}"
        self._show(f"{self.head} ({time.monotonic() - self.start:.0f} s)")

    def finished(self, k: int, n: int, path: Path, cached: bool = False) -> None:
        last = f"{path.name}, cached" if cached else path.name
        self._show(f"regvet: ran {k} of {n} files, last {last} ({time.monotonic() - self.start:.0f} s)")

    def ran(self, k: int, n: int, path: Path, cached: bool) -> None:
        """After a file's run: say so when its statistics came from the run cache."""
        if cached:
            self._show(f"regvet: file {k} of {n}, {path.name}: cached ({time.monotonic() - self.start:.0f} s)")

    def analysed(self, k: int, n: int, path: Path) -> None:
        """Reading and analysing files (no run): shown once it has taken ``delay`` seconds."""
        elapsed = time.monotonic() - self.start
        if elapsed >= self.delay:
            self._show(f"regvet: read {k} of {n} files, last {path.name} ({elapsed:.0f} s)")

    def fit_for(self, report: FileReport):
        """A callback for the runner: one call per fit the run records."""
        if not self.enabled:
            return None
        fits = [f for f in (report.facts.fits if report.facts else ()) if f.site.path is None]
        count = [0]

        cells = report.cell_map

        def on_fit(record: dict) -> None:
            count[0] += 1
            frames = record.get("frames") or []
            line = frames[-1][1] if frames and len(frames[-1]) > 1 and isinstance(frames[-1][1], int) else None
            where = str(frames[-1][0]) if frames else ""
            if line is not None and cells is not None and where.startswith("<regvet-cell-"):
                index = int(where[len("<regvet-cell-") : -1])  # a notebook cell: its line in the joined module
                line = cells.starts[cells.cells.index(index)] + line - 1 if index in cells.cells else None
            name = next(
                (
                    f.result_name or f.formula
                    for f in fits
                    if line is not None and f.site.span.line <= line <= f.site.span.end_line
                ),
                None,
            )
            what = f"fit {count[0]}" + (f" (`{name}`)" if name else "")
            self._show(f"{self.head}: {what} ({time.monotonic() - self.start:.0f} s)")

        return on_fit

    def done(self) -> None:
        if self.shown:
            self.stream.write("\r\033[K")
            self.stream.flush()


def scan(args: argparse.Namespace, progress: Progress | None = None, plot_points: int = 0) -> Scan:
    """Read, analyse (and with ``--run`` run) every file the arguments name; crashes go to stderr.

    ``plot_points`` asks the run for that many residual points per fit (the report's plots)."""
    finder = _SettingsFinder(args)
    running = getattr(args, "run", False)
    _refuse_runtime_only(finder.overrides.only, running)
    stdin = STDIN in args.paths
    if stdin and (running or getattr(args, "command", "check") not in ("check", None)):
        raise UsageError(
            "`-` (a script on standard input) is read by `regvet check` without --run only; "
            "save the script to a file for this"
        )
    paths = [p for p in args.paths if p != STDIN]
    base_settings = finder.for_path(Path(paths[0]) if paths else Path("."))
    exclude = (*DEFAULT_EXCLUDE, *EXTRA_EXCLUDE, *base_settings.exclude)
    files = collect_files(paths, exclude)
    roots = {Path(p).resolve() for p in args.paths if Path(p).is_dir()}
    default_root = Path.cwd().resolve()
    no_cache = getattr(args, "no_cache", False)
    jobs = getattr(args, "jobs", None) or default_jobs()
    facts = None if no_cache else FactCache()
    found = ScanLookups()
    tasks = [(file, finder.for_path(file), project_root(found.resolve(file), roots, default_root)) for file in files]
    reading = progress if progress is not None else Progress(delay=2.0)
    if running:
        _check_interpreters(tasks)
    reports = _analyze_all(tasks, facts, jobs, reading, found)
    named = {Path(p).resolve() for p in paths if Path(p).is_file()}
    reports = [_named_syntax(task, report, named) for task, report in zip(tasks, reports, strict=True)]
    if stdin:
        file = Path(STDIN)
        settings = finder.for_path(Path.cwd() / STDIN_NAME)
        tasks.append((file, settings, default_root))
        reports.append(
            _analyze_bytes(
                Path.cwd() / STDIN_NAME,
                STDIN_NAME,
                sys.stdin.buffer.read(),
                settings,
                FileModules(default_root, Path.cwd() / STDIN_NAME, {}),
                {},
            )
        )
    cache = None
    if running:
        from regvet.runtime.runner import RunCache

        cache = None if no_cache else RunCache()
    with runs_end_with_regvet(running):
        if running and jobs > 1 and len(tasks) > 1:
            reports = _run_all(tasks, reports, cache, jobs, progress, plot_points)
            running = False
        if running:
            for k, ((file, settings, _), report) in enumerate(zip(tasks, reports, strict=True), start=1):
                if progress is not None:
                    progress.file(k, len(files), file)
                reports[k - 1] = _run_file(file, report, settings, cache, progress, plot_points)
                if progress is not None:
                    progress.ran(k, len(files), file, _was_cached(reports[k - 1]))
    out = Scan()
    for (file, _, _), report in zip(tasks, reports, strict=True):
        for crash in report.crashes:
            out.failed = True
            where = "the analysis" if crash.where == "analysis" else f"rule {crash.where}"
            sys.stderr.write(printable(f"{report.path}: regvet failed in {where}: {crash.message}\n"))
        out.files.append((file, report))
    for shown in {id(p): p for p in (reading, progress) if p is not None}.values():
        shown.done()
    return out


def _named_syntax(task: Task, report: FileReport, named: set[Path]) -> FileReport:
    """A ``.py`` file named on the command line that the quick pre-check skipped (it mentions no
    statsmodels) is still parsed: a syntax error in it is a ``parse-error``, as in any other file."""
    file, settings, _ = task
    if not named or not report.skipped or file.suffix != ".py" or file.resolve() not in named:
        return report
    from regvet.engine import error_report
    from regvet.sources.python import SourceError, decode, parse

    try:
        decoded = decode(read_regular(file))
    except OSError:
        return report
    tree = decoded if isinstance(decoded, SourceError) else parse(decoded, str(file))
    return error_report(report.path, tree, settings) if isinstance(tree, SourceError) else report


def _check_interpreters(tasks: list[Task]) -> None:
    """Every ``python =`` the runs would start exists and is executable: one configuration error
    (exit 2), not a ``run-failed`` finding for every file."""
    import shutil

    seen: set[str] = set()
    for _, settings, _ in tasks:
        python = settings.python
        if not python or python in seen:
            continue
        seen.add(python)
        found = shutil.which(python) if os.sep not in python else (python if os.access(python, os.X_OK) else None)
        if found is None or not Path(found).is_file():
            where = f"{settings.source}: " if settings.source else ""
            raise UsageError(
                f"{where}python = {python!r}: no such interpreter (or it is not executable); "
                "name a Python that exists, or remove the key to use regvet's own"
            )


def _refuse_runtime_only(only: frozenset[str], running: bool) -> None:
    """``--only`` naming nothing but rules that judge a run's statistics, without ``--run``: nothing to check."""
    if not only or running:
        return
    from regvet.rules import RULES_BY_ID

    if all(RULES_BY_ID[r].needs_run for r in only):
        raise UsageError(
            f"--only {','.join(sorted(only))}: {'these rules judge' if len(only) > 1 else 'this rule judges'}"
            " the statistics of a run, so without --run nothing will be checked; add --run (or use "
            "`regvet run`; either EXECUTES the code), or name rules that read the code"
        )


def _run_all(
    tasks: list[Task], reports: list[FileReport], cache, jobs: int, progress: Progress | None, plot_points: int
) -> list[FileReport]:
    """Runtime mode for many files, ``jobs`` child processes at a time; each report gets its own run's
    statistics, and the reports stay in the files' order (the progress line counts finished files)."""
    from concurrent.futures import ThreadPoolExecutor, as_completed

    out = list(reports)
    with ThreadPoolExecutor(max_workers=jobs) as pool:  # each thread waits on one child process
        futures = {
            pool.submit(_run_file, file, report, settings, cache, None, plot_points): i
            for i, ((file, settings, _), report) in enumerate(zip(tasks, reports, strict=True))
        }
        for done, future in enumerate(as_completed(futures), start=1):
            i = futures[future]
            out[i] = future.result()
            if progress is not None:
                progress.finished(done, len(tasks), tasks[i][0], _was_cached(out[i]))
    return out


def _was_cached(report: FileReport) -> bool:
    """Did the report's run statistics come from the run cache?"""
    runtime = report.rule_input.runtime if report.rule_input is not None else None
    return bool(runtime is not None and runtime.cached)


def _run_file(
    file: Path, report: FileReport, settings: Settings, cache, progress: Progress | None = None, plot_points: int = 0
) -> FileReport:
    """Runtime mode for one file (imports the runtime part only now)."""
    from regvet.runtime.session import run_and_judge

    extra: dict = {}
    if plot_points:
        extra["plot_points"] = plot_points
    on_fit = progress.fit_for(report) if progress is not None else None
    if on_fit is not None:
        extra["on_fit"] = on_fit
    judged, _ = run_and_judge(report, file, settings, cache=cache, **extra)
    return judged


Task = tuple[Path, Settings, Path]  # a file, its settings and its project root


class FileAnalyzer:
    """Analyses files one task at a time, in this process or in a worker, keeping what serves the next file
    (project modules read and parsed) and writing each analysis to the fact cache."""

    def __init__(self, cache_folder: str | None) -> None:
        self.texts: dict[Path, str | None] = {}
        self.found = ScanLookups()
        self.module_cache: dict = {}
        self.cache = FactCache(Path(cache_folder)) if cache_folder is not None else None

    def __call__(self, task: Task) -> FileReport:
        file, settings, root = task
        return analyze_file(file, settings, root, self.texts, self.module_cache, cache=self.cache, found=self.found)


def _worker_lost(task: Task, why: str) -> FileReport:
    """The report for a file whose worker process died: regvet failed on it, the scan goes on."""
    from regvet.engine import failure_report
    from regvet.model.report import Crash

    return failure_report(display_path(task[0]), Crash("analysis", why), task[1])


def _analyze_all(
    tasks: list[Task],
    cache: FactCache | None,
    jobs: int,
    progress: Progress | None = None,
    found: ScanLookups | None = None,
) -> list[FileReport]:
    """The report of every task, in order: cached ones from here, the others from ``jobs`` worker processes
    (``progress`` counts the files read; ``found``: the scan's shared lookups)."""
    reports: list[FileReport | None] = [None] * len(tasks)
    texts: dict[Path, str | None] = {}
    found = found if found is not None else ScanLookups()
    if cache is not None:
        memo = LookupMemo()
        for i, (file, settings, root) in enumerate(tasks):
            reports[i] = _cached(file, settings, root, texts, cache, found, memo)
    todo = [i for i, r in enumerate(reports) if r is None]
    folder = str(cache.folder) if cache is not None else None
    finished = [len(tasks) - len(todo)]

    def on_done(index: int) -> None:
        finished[0] += 1
        if progress is not None:
            progress.analysed(finished[0], len(tasks), tasks[todo[index]][0])

    done = map_ordered(FileAnalyzer, (folder,), [tasks[i] for i in todo], jobs, _worker_lost, on_done)
    for i, report in zip(todo, done, strict=False):
        reports[i] = report
    return [r for r in reports if r is not None]


def _cached(
    file: Path,
    settings: Settings,
    root: Path,
    texts: dict[Path, str | None],
    cache: FactCache,
    found: ScanLookups,
    memo: LookupMemo,
) -> FileReport | None:
    try:
        data = read_regular(file)
    except OSError:
        return None
    key = cache.key(data, found.show(file), root, settings, file.suffix == ".ipynb")
    return cache.get(key, FileModules(root, file, texts, found=found), memo)


def analyze_file(
    file: Path,
    settings: Settings,
    root: Path,
    texts: dict[Path, str | None],
    module_cache: dict,
    cache: FactCache | None = None,
    found: ScanLookups | None = None,
) -> FileReport:
    """Read one file and analyse it; unreadable files become ``parse-error`` findings. With ``cache``,
    the analysis is stored there with the project-module lookups it made."""
    found = found if found is not None else ScanLookups()
    shown = found.show(file)
    try:
        data = read_regular(file)
    except OSError as exc:
        return _unreadable(shown, settings, f"cannot read the file: {exc.strerror or exc}")
    modules = FileModules(root, file, texts, found=found)
    if cache is None:
        return _analyze_bytes(file, shown, data, settings, modules, module_cache)
    provider = RecordingModules(modules)
    report = _analyze_bytes(file, shown, data, settings, provider, module_cache)
    cache.put(cache.key(data, shown, root, settings, file.suffix == ".ipynb"), provider.lookups, report)
    return report


def _analyze_bytes(
    file: Path, shown: str, data: bytes, settings: Settings, provider: ModuleProvider, module_cache: dict
) -> FileReport:
    """Decode and analyse one file's bytes (the analysis core is imported only now: a run whose reports
    all come from the fact cache never needs it)."""
    from regvet.engine import analyze, error_report
    from regvet.sources.python import SourceError, decode

    if file.suffix == ".ipynb":
        try:
            text = data.decode("utf-8-sig")
        except UnicodeDecodeError as exc:
            return _unreadable(shown, settings, f"the notebook is not UTF-8: {exc.reason}")
    else:
        decoded = decode(data)
        if isinstance(decoded, SourceError):
            return error_report(shown, decoded, settings)
        text = decoded
    return analyze(text, shown, settings, provider=provider, module_cache=module_cache, module_key=file.stem)


def _unreadable(path: str, settings: Settings, message: str) -> FileReport:
    from regvet.engine import error_report
    from regvet.sources.python import SourceError

    return error_report(path, SourceError(message, Span(1, 0, 1, 0)), settings)
