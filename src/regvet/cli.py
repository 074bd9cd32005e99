"""The ``regvet`` command: ``check``, ``rules``, ``explain`` (and ``serve`` once the language server lands).

Exit codes: 0 nothing at or above the fail level; 1 findings at or above it;
2 usage or configuration error; 3 regvet itself failed on a file (the failure is
printed with the file's path, and the scan still covers every other file).

``regvet check`` imports only the standard library and regvet's static core.
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path

from regvet import __version__
from regvet.analysis.providers import ModuleProvider
from regvet.baseline import BASELINE_NAME, BaselineError
from regvet.config import ConfigError, load_settings
from regvet.discovery import MissingPath, discover, read_regular
from regvet.engine import analyze, error_report
from regvet.factcache import FactCache, RecordingModules
from regvet.model.finding import Severity
from regvet.model.report import FileReport
from regvet.model.settings import DEFAULT_EXCLUDE, Settings
from regvet.model.span import Span
from regvet.output.safe import printable, valid_utf8
from regvet.parallel import default_jobs, map_ordered
from regvet.project import FileModules, display_path
from regvet.rules import ALL_RULES, RULES_BY_ID
from regvet.rules.texts import CAUTION, explain, render_rules
from regvet.sources.python import SourceError, decode
from regvet.workspace import ConfigCache, Overrides, project_root, split_rule_ids

EXIT_OK, EXIT_FINDINGS, EXIT_USAGE, EXIT_FAILED = 0, 1, 2, 3
EXTRA_EXCLUDE = (".ipynb_checkpoints", "__pycache__", ".tox", ".nox", ".mypy_cache")


class UsageError(Exception):
    pass


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="regvet",
        description="Find missing and failed specification checks around statsmodels OLS fits.",
        epilog=CAUTION,
    )
    p.add_argument("--version", action="version", version=f"regvet {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")

    c = sub.add_parser(
        "check",
        help="scan files and folders (the default command)",
        description="Read analysis scripts and notebooks (without running them) and report fits whose "
        "specification checks are missing.",
        epilog=CAUTION,
    )
    c.add_argument("paths", nargs="*", default=["."], metavar="PATH", help="files or folders (default: .)")
    c.add_argument("--format", choices=["text", "json", "sarif", "github"], default="text")
    c.add_argument(
        "--fail-on",
        choices=["error", "warning", "info"],
        default="warning",
        help="lowest severity that makes the exit code 1 (default: warning)",
    )
    c.add_argument("--only", metavar="RULES", help="comma-separated rule ids: report only these")
    c.add_argument("--skip", metavar="RULES", help="comma-separated rule ids: never report these")
    c.add_argument("--config", metavar="FILE", help="use this config file instead of searching for one")
    c.add_argument("--no-config", action="store_true", help="ignore config files; use the defaults")
    c.add_argument("--color", choices=["auto", "always", "never"], default="auto", help="colour in text output")
    c.add_argument("--baseline", metavar="FILE", help=f"use this baseline instead of the nearest {BASELINE_NAME}")
    c.add_argument("--no-baseline", action="store_true", help="report every finding, the baselined ones too")
    _run_options(c)

    r = sub.add_parser(
        "run",
        help="the same as `check --run`: EXECUTES the analysed code to attach real statistics",
        description="Run each analysed script or notebook (this EXECUTES your code, in a child process with "
        "limits) and attach the statistics of every fit to the findings.",
        epilog=CAUTION,
    )
    for action in c._actions:
        if action.dest not in ("help", "run"):
            r._add_action(action)
    _subcommands(sub)
    sub.add_parser("rules", help="list the rules")
    sub.add_parser("serve", help="run the language server (stdio; --tcp --port N for 127.0.0.1)")
    e = sub.add_parser("explain", help="explain one rule: rationale, examples, references")
    e.add_argument("rule", metavar="RULE")
    return p


def _scan_options(p: argparse.ArgumentParser) -> None:
    p.add_argument("paths", nargs="*", default=["."], metavar="PATH", help="files or folders (default: .)")
    p.add_argument("--only", metavar="RULES", help="comma-separated rule ids: only these")
    p.add_argument("--skip", metavar="RULES", help="comma-separated rule ids: never these")
    p.add_argument("--config", metavar="FILE", help="use this config file instead of searching for one")
    p.add_argument("--no-config", action="store_true", help="ignore config files; use the defaults")


def _subcommands(sub: argparse._SubParsersAction) -> None:
    rp = sub.add_parser(
        "report",
        help="write the specification audit of the fits: one HTML file (or Markdown for FILE.md)",
        description="Write one document that shows, fit by fit, which specification checks were done, what they "
        "showed and what is missing. HTML is self-contained (it opens from disk and prints); a FILE ending in .md "
        "gives Markdown with the plots as SVG files beside it.",
        epilog=CAUTION,
    )
    _scan_options(rp)
    rp.add_argument("-o", "--output", required=True, metavar="FILE", help="the report to write (.html or .md)")
    _run_options(rp)
    m = sub.add_parser(
        "mend",
        help="apply the editor's quick fixes (robust covariance, RESET, Breusch-Pagan) to the files",
        description="Apply the quick fixes the language server offers to every finding of the selected rules: "
        "robust standard errors on the fit call, or a RESET / Breusch-Pagan test inserted after the fit. Files are "
        "written atomically; a file that changed since it was read is left alone.",
    )
    m.add_argument("paths", nargs="*", default=["."], metavar="PATH", help="files or folders (default: .)")
    m.add_argument("--only", metavar="RULES",
                   help="comma-separated rule ids to fix (default: every rule with a fix: "
                   + ", ".join(r.id for r in ALL_RULES if r.quick_fixes) + ")")  # fmt: skip
    m.add_argument("--preview", action="store_true", help="print a unified diff instead of writing the files")
    m.add_argument("--config", metavar="FILE", help="use this config file instead of searching for one")
    m.add_argument("--no-config", action="store_true", help="ignore config files; use the defaults")
    b = sub.add_parser(
        "baseline",
        help=f"record today's findings in {BASELINE_NAME}, so that `check` reports only new ones",
        description=f"Write the current findings to {BASELINE_NAME} at the project root. `regvet check`, the "
        "pre-commit hook and the language server then report only findings that are not in it.",
    )
    _scan_options(b)
    b.add_argument("--update", action="store_true",
                   help="refresh the existing baseline: drop what is gone, add nothing new")  # fmt: skip
    b.add_argument("--baseline", metavar="FILE", help=f"the baseline file (default: the nearest {BASELINE_NAME}, "
                   "else one at the project root)")  # fmt: skip
    _run_options(b)


def _run_options(p: argparse.ArgumentParser) -> None:
    p.add_argument(
        "--run",
        action="store_true",
        help="runtime mode: EXECUTE each analysed file in a child process (its own folder, stdin closed, "
        "time and memory limits) and attach the statistics of its fits; never used by the pre-commit hook",
    )
    p.add_argument("--no-cache", action="store_true",
                   help="neither read nor write regvet's caches: analyse every file again (and with --run, run again)")
    p.add_argument("--jobs", "-j", type=_jobs, default=None, metavar="N",
                   help="analyse (and with --run, run) N files at a time in worker processes "
                   "(default: the number of cores)")  # fmt: skip


def _jobs(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number of jobs, not {text!r}") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"expected 1 or more jobs, not {value}")
    return value


def main(argv: Sequence[str] | None = None) -> int:
    args_list = list(sys.argv[1:] if argv is None else argv)
    commands = ("check", "run", "report", "mend", "baseline", "rules", "explain", "serve")
    if not args_list or (args_list[0] not in commands and not args_list[0].startswith("-")):
        args_list.insert(0, "check")
    if args_list and args_list[0] == "serve":
        return _serve(args_list[1:])
    parser = _parser()
    try:
        args = parser.parse_args(args_list)
    except SystemExit as exc:  # argparse already printed the problem
        return EXIT_USAGE if exc.code not in (0, None) else EXIT_OK
    if args.command == "run":
        args.run = True
    if args.command == "rules":
        sys.stdout.write(render_rules())
        return EXIT_OK
    if args.command == "explain":
        rule = RULES_BY_ID.get(args.rule)
        if rule is None:
            sys.stderr.write(f"regvet: error: no rule `{args.rule}`; `regvet rules` lists them\n")
            return EXIT_USAGE
        sys.stdout.write(explain(rule.id))
        return EXIT_OK
    try:
        if args.command == "report":
            return run_report(args)
        if args.command == "mend":
            return run_mend(args)
        if args.command == "baseline":
            return run_baseline(args)
        return run_check(args)
    except BaselineError as exc:
        sys.stderr.write(f"regvet: baseline error: {exc}\n")
        return EXIT_USAGE
    except UsageError as exc:
        sys.stderr.write(f"regvet: error: {exc}\n")
        return EXIT_USAGE
    except ConfigError as exc:
        sys.stderr.write(f"regvet: configuration error: {exc}\n")
        return EXIT_USAGE


def _serve(argv: list[str]) -> int:
    """``regvet serve [--tcp --port N]``: the language server (imports pygls only now)."""
    try:
        from regvet.lsp.app import main as serve_main
    except ImportError as exc:  # pragma: no cover - pygls is a core dependency
        sys.stderr.write(f"regvet: error: the language server needs pygls: {exc}\n")
        return EXIT_USAGE
    try:
        return serve_main(argv)
    except SystemExit as exc:
        return EXIT_USAGE if exc.code not in (0, None) else EXIT_OK


# --- check -------------------------------------------------------------------------------------
def _rule_list(text: str | None, flag: str) -> frozenset[str]:
    if not text:
        return frozenset()
    known, unknown = split_rule_ids(t.strip() for t in text.split(",") if t.strip())
    if unknown:
        raise UsageError(f"{flag}: `{unknown[0]}` is not a rule id (see `regvet rules`)")
    return known


def collect_files(paths: Sequence[str], exclude: Sequence[str]) -> list[Path]:
    """Files to scan: named files as given, folders walked for ``.py`` and ``.ipynb`` files.

    Names that are not regular files (symbolic link loops, FIFOs, devices) and folders that cannot be
    listed are left out with a note on standard error (see :mod:`regvet.discovery`)."""
    try:
        found = discover(paths, exclude)
    except MissingPath as exc:
        raise UsageError(f"no such file or folder: {exc}") from None
    for skipped in found.skipped:
        sys.stderr.write(f"regvet: skipped {printable(display_path(skipped.path))}: {skipped.why}\n")
    return found.files


class _SettingsFinder:
    """Settings per file: the nearest config file (each read once), or one forced file, with CLI overrides."""

    def __init__(self, args: argparse.Namespace) -> None:
        self.overrides = Overrides(only=_rule_list(args.only, "--only"), skip=_rule_list(args.skip, "--skip"))
        self.no_config = args.no_config
        self.forced: Settings | None = None
        if args.config:
            path = Path(args.config)
            if not path.is_file():
                raise UsageError(f"--config: no such file: {args.config}")
            self.forced = load_settings(path)
        self.configs = ConfigCache()

    def for_path(self, path: Path) -> Settings:
        if self.forced is not None:
            return self.overrides.apply(self.forced)
        if self.no_config:
            return self.overrides.apply(Settings())
        loaded = self.configs.for_file(path)
        if isinstance(loaded, ConfigError):
            raise loaded
        return self.overrides.apply(loaded)


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

    def __init__(self, stream=None) -> None:
        self.stream = stream if stream is not None else sys.stderr
        self.enabled = bool(getattr(self.stream, "isatty", lambda: False)())
        self.start = time.monotonic()
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

    def finished(self, k: int, n: int, path: Path) -> None:
        self._show(f"regvet: ran {k} of {n} files, last {path.name} ({time.monotonic() - self.start:.0f} s)")

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
            name = next((f.result_name or f.formula for f in fits
                         if line is not None and f.site.span.line <= line <= f.site.span.end_line), None)  # fmt: skip
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
    base_settings = finder.for_path(Path(args.paths[0]) if args.paths else Path("."))
    exclude = (*DEFAULT_EXCLUDE, *EXTRA_EXCLUDE, *base_settings.exclude)
    files = collect_files(args.paths, exclude)
    roots = {Path(p).resolve() for p in args.paths if Path(p).is_dir()}
    default_root = Path.cwd().resolve()
    no_cache = getattr(args, "no_cache", False)
    jobs = getattr(args, "jobs", None) or default_jobs()
    facts = None if no_cache else FactCache()
    tasks = [(file, finder.for_path(file), project_root(file.resolve(), roots, default_root)) for file in files]
    reports = _analyze_all(tasks, facts, jobs)
    cache = None
    running = getattr(args, "run", False)
    if running:
        from regvet.runtime.runner import RunCache

        cache = None if no_cache else RunCache()
    if running and jobs > 1 and len(tasks) > 1:
        reports = _run_all(tasks, reports, cache, jobs, progress, plot_points)
        running = False
    out = Scan()
    for k, ((file, settings, _), report) in enumerate(zip(tasks, reports, strict=True), start=1):
        if running:
            if progress is not None:
                progress.file(k, len(files), file)
            report = _run_file(file, report, settings, cache, progress, plot_points)
        for crash in report.crashes:
            out.failed = True
            where = "the analysis" if crash.where == "analysis" else f"rule {crash.where}"
            sys.stderr.write(printable(f"{report.path}: regvet failed in {where}: {crash.message}\n"))
        out.files.append((file, report))
    if progress is not None:
        progress.done()
    return out


def run_check(args: argparse.Namespace) -> int:
    result = scan(args)
    reports = result.reports
    note = ""
    if not args.no_baseline:
        reports, note = _apply_baselines(result, Path(args.baseline) if args.baseline else None)
    colour = args.color == "always" or (args.color == "auto" and sys.stdout.isatty() and not os.environ.get("NO_COLOR"))
    from regvet.output import renderer

    sys.stdout.write(renderer(args.format)(reports, colour=colour))
    if note:
        (sys.stdout if args.format == "text" else sys.stderr).write(note)
    if result.failed:
        return EXIT_FAILED
    threshold = Severity.parse(args.fail_on)
    hit = any(f.severity >= threshold and not f.waived for r in reports for f in r.findings)
    return EXIT_FINDINGS if hit else EXIT_OK


def _apply_baselines(result: Scan, forced: Path | None) -> tuple[list[FileReport], str]:
    """The reports without their baselined findings, and the line that says what the baselines hid."""
    from regvet.baseline import find_baseline, load, split

    if forced is not None and not forced.is_file():
        raise UsageError(f"--baseline: no such file: {forced}")
    loaded: dict[Path, object] = {}
    tally: dict[Path, list[int]] = {}
    scanned: dict[Path, set[str]] = {}
    reports = []
    for file, report in result.files:
        where = forced if forced is not None else find_baseline(file)
        if where is None:
            reports.append(report)
            continue
        if where not in loaded:
            loaded[where] = load(where)
        baseline = loaded[where]
        key = baseline.key_of(file)  # type: ignore[attr-defined]
        scanned.setdefault(where, set()).add(key)
        part = split(report, baseline.known(key))  # type: ignore[attr-defined]
        counts = tally.setdefault(where, [0, 0])
        counts[0] += part.known
        counts[1] += part.gone
        reports.append(part.report)
    lines = []
    for where, baseline in loaded.items():
        known, gone = tally[where]
        for key, entries in baseline.files.items():  # type: ignore[attr-defined]
            if key not in scanned[where] and not (baseline.folder / key).exists():  # type: ignore[attr-defined]
                gone += len(entries)  # the file itself is gone
        text = f"regvet: baseline {display_path(where)}: {known} known finding{'s' if known != 1 else ''} not shown"
        if gone:
            text += f", {gone} no longer found (refresh it with `regvet baseline --update`)"
        lines.append(text + "\n")
    return reports, "".join(lines)


def _run_all(tasks: list[Task], reports: list[FileReport], cache, jobs: int,
             progress: Progress | None, plot_points: int) -> list[FileReport]:  # fmt: skip
    """Runtime mode for many files, ``jobs`` child processes at a time; each report gets its own run's
    statistics, and the reports stay in the files' order (the progress line counts finished files)."""
    from concurrent.futures import ThreadPoolExecutor, as_completed

    out = list(reports)
    with ThreadPoolExecutor(max_workers=jobs) as pool:  # each thread waits on one child process
        futures = {pool.submit(_run_file, file, report, settings, cache, None, plot_points): i
                   for i, ((file, settings, _), report) in enumerate(zip(tasks, reports, strict=True))}  # fmt: skip
        for done, future in enumerate(as_completed(futures), start=1):
            i = futures[future]
            out[i] = future.result()
            if progress is not None:
                progress.finished(done, len(tasks), tasks[i][0])
    return out


def _run_file(file: Path, report: FileReport, settings: Settings, cache, progress: Progress | None = None,
              plot_points: int = 0) -> FileReport:  # fmt: skip
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


# --- report ------------------------------------------------------------------------------------
#: Most points per residual plot (a larger fit is downsampled deterministically, see regvet_points).
PLOT_POINTS = 300


def run_report(args: argparse.Namespace) -> int:
    """``regvet report``: the specification audit as one HTML file, or Markdown with SVG files beside it."""
    from regvet.audit import build

    output = Path(args.output)
    markdown = output.suffix.lower() == ".md"
    if not markdown and output.suffix.lower() not in (".html", ".htm"):
        raise UsageError(f"-o: the report must be a .html or .md file, not {args.output}")
    if output.is_dir():
        raise UsageError(f"-o: {args.output} is a folder")
    if not output.parent.is_dir():
        raise UsageError(f"-o: no such folder: {output.parent}")
    result = scan(args, Progress() if args.run else None, plot_points=PLOT_POINTS if args.run else 0)
    audit = build(result.reports, ran=args.run)
    plots: dict[str, list] = {}
    same_as = _same_residuals(audit)
    if args.run:
        from regvet.plots import PlotsUnavailable, residual_plots

        try:
            for f in audit.files:
                for fit in f.fits:
                    if fit.points and fit.anchor not in same_as:
                        plots[fit.anchor] = residual_plots(fit.points, fit.name, f"g{len(plots)}-")
        except PlotsUnavailable as exc:
            sys.stderr.write(f"regvet: the report has no plots: {exc}\n")
            plots = {}
    try:
        if markdown:
            from regvet.output.report_md import render as render_md

            folder = f"{output.stem}_plots"
            text, images = render_md(audit, plots, image_dir=folder, same=same_as)
            if images:
                (output.parent / folder).mkdir(exist_ok=True)
            for name, svg in images.items():
                _write_new(output.parent / name, valid_utf8(svg).encode("utf-8"))
        else:
            from regvet.output.report_html import render as render_html

            text = render_html(audit, plots, same=same_as)
        _write_new(output, valid_utf8(text).encode("utf-8"))
    except OSError as exc:
        raise UsageError(f"-o: cannot write {exc.filename or args.output}: {exc.strerror or exc}") from None
    n_files = sum(1 for f in audit.files if f.fits)
    sys.stdout.write(f"regvet: report written to {display_path(output)}: {audit.fit_count} fit"
                     f"{'s' if audit.fit_count != 1 else ''} in {n_files} file{'s' if n_files != 1 else ''}"
                     + (f", {sum(len(v) for v in plots.values())} plots" if args.run else "") + "\n")  # fmt: skip
    return EXIT_FAILED if result.failed else EXIT_OK


def _same_residuals(audit) -> dict[str, str]:
    """Fit anchor -> the anchor of an earlier fit with the very same residual points (a robust-covariance
    copy shares its fit's residuals): those plots are drawn once."""
    import json

    seen: dict[str, str] = {}
    out: dict[str, str] = {}
    for f in audit.files:
        for fit in f.fits:
            if fit.points:
                key = json.dumps(fit.points, sort_keys=True)
                if key in seen:
                    out[fit.anchor] = seen[key]
                else:
                    seen[key] = fit.anchor
    return out


def _write_new(path: Path, data: bytes) -> None:
    """Write ``path`` whole or not at all: a temporary file in the same folder, then a rename."""
    import tempfile

    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".regvet-tmp")
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
        os.chmod(tmp, 0o644)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


# --- mend --------------------------------------------------------------------------------------
def run_mend(args: argparse.Namespace) -> int:
    """``regvet mend``: apply the quick fixes of the selected rules to every file; ``--preview`` shows a diff."""
    from regvet.engine import analyze_cells
    from regvet.mend import (
        MendError,
        Outcome,
        fixable_rules,
        mend_notebook,
        mend_python,
        read_source,
        replace_file,
        unified_diff,
    )

    fixable = fixable_rules()
    rules = _rule_list(args.only, "--only") or frozenset(fixable)
    unfixable = sorted(rules - set(fixable))
    if unfixable:
        raise UsageError(f"--only: `{unfixable[0]}` has no mechanical fix; mend fixes {', '.join(fixable)}")
    args.skip = None
    finder = _SettingsFinder(args)
    base = finder.for_path(Path(args.paths[0]) if args.paths else Path("."))
    files = collect_files(args.paths, (*DEFAULT_EXCLUDE, *EXTRA_EXCLUDE, *base.exclude))
    roots = {Path(p).resolve() for p in args.paths if Path(p).is_dir()}
    texts: dict[Path, str | None] = {}
    module_cache: dict = {}
    edits = changed = 0
    failed = False
    for file in files:
        shown = display_path(file)
        settings = finder.for_path(file)
        provider = FileModules(project_root(file.resolve(), roots, Path.cwd().resolve()), file, texts)
        try:
            original = read_regular(file)
            if file.suffix == ".ipynb":
                try:
                    text = original.decode("utf-8")
                except UnicodeDecodeError as exc:
                    raise MendError(f"the notebook is not UTF-8: {exc.reason}") from None
                def analyze_notebook(cells: list[tuple[int, str]], count: int, shown: str = shown, settings: Settings = settings,
                                     provider: FileModules = provider, key: str = file.stem) -> FileReport:
                    return analyze_cells(cells, count, shown, settings, provider=provider, module_key=key,
                                         module_cache=module_cache)

                outcome: Outcome = mend_notebook(text, analyze_notebook, rules)
                data = outcome.new.encode("utf-8")
            else:
                try:
                    source = read_source(original)
                except MendError:
                    if b"statsmodels" not in original:
                        continue  # nothing to mend in it, and nothing regvet checks there either
                    raise
                def analyze_script(text: str, shown: str = shown, settings: Settings = settings,
                                   provider: FileModules = provider, key: str = file.stem) -> FileReport:
                    return analyze(text, shown, settings, notebook=False, provider=provider, module_key=key,
                                   module_cache=module_cache)

                outcome = mend_python(source.text, analyze_script, rules)
                data = _encode(source, outcome.new)
            if outcome.new != outcome.old:
                if args.preview:
                    sys.stdout.write(unified_diff(shown, outcome))
                else:
                    replace_file(file, data, original)
        except OSError as exc:
            failed = True
            sys.stderr.write(f"{shown}: regvet mend cannot edit the file: {exc.strerror or exc}\n")
            continue
        except MendError as exc:
            failed = True
            sys.stderr.write(f"{shown}: regvet mend left the file as it was: {exc}\n")
            continue
        out = sys.stderr if args.preview else sys.stdout
        for c in outcome.changes:
            where = Span(c.line, 0, c.line, 0, c.cell).describe()
            out.write(f"{shown}, {where}: {c.rule}: {c.title[0].lower() + c.title[1:]}\n")
        for n in outcome.not_fixed:
            where = Span(n.line, 0, n.line, 0, n.cell).describe()
            out.write(f"{shown}, {where}: {n.rule}: not fixed: {n.why}\n")
        if outcome.changes:
            edits += len(outcome.changes)
            changed += 1
    verb = "would make" if args.preview else "made"
    (sys.stderr if args.preview else sys.stdout).write(
        f"regvet mend: {verb} {edits} edit{'s' if edits != 1 else ''} in {changed} of {len(files)} "
        f"file{'s' if len(files) != 1 else ''}\n"
    )
    return EXIT_FAILED if failed else EXIT_OK


def _encode(source, text: str) -> bytes:
    from regvet.mend import encode_source

    return encode_source(source, text)


# --- baseline ----------------------------------------------------------------------------------
def run_baseline(args: argparse.Namespace) -> int:
    """``regvet baseline``: write the current findings to the baseline (``--update``: only drop the gone)."""
    from regvet.baseline import Baseline, entries_for, home_for, load, refreshed, write

    target = Path(args.baseline) if args.baseline else home_for(Path(args.paths[0]) if args.paths else Path("."))
    existing = load(target) if target.is_file() else None
    if args.update and existing is None:
        raise UsageError(f"--update: there is no baseline at {display_path(target)} yet; run `regvet baseline` first")
    result = scan(args)
    if result.failed:
        sys.stderr.write("regvet: no baseline written: regvet failed on a file (see above)\n")
        return EXIT_FAILED
    holder = existing or Baseline(target)
    files = dict(existing.files) if existing is not None else {}
    for key in list(files):
        if not (holder.folder / key).exists():
            del files[key]  # the file is gone
    for file, report in result.files:
        key = holder.key_of(file)
        current = entries_for(report, key)
        files[key] = refreshed(files.get(key, []), current) if args.update else current
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
        write(target, files)
    except OSError as exc:
        raise UsageError(f"cannot write the baseline {display_path(target)}: {exc.strerror or exc}") from None
    total = sum(len(v) for v in files.values())
    before = existing.count() if existing is not None else 0
    what = f"{total} finding{'s' if total != 1 else ''} in {sum(1 for v in files.values() if v)} files"
    if args.update:
        sys.stdout.write(f"regvet: baseline {display_path(target)} refreshed: {what} ({before - total} gone)\n")
    else:
        sys.stdout.write(f"regvet: baseline {display_path(target)} written: {what}; `regvet check` now reports only "
                         "new findings\n")  # fmt: skip
    return EXIT_OK


Task = tuple[Path, Settings, Path]  # a file, its settings and its project root


class FileAnalyzer:
    """Analyses files one task at a time, in this process or in a worker, keeping what serves the next file
    (project modules read and parsed) and writing each analysis to the fact cache."""

    def __init__(self, cache_folder: str | None) -> None:
        self.texts: dict[Path, str | None] = {}
        self.found: dict = {}
        self.module_cache: dict = {}
        self.cache = FactCache(Path(cache_folder)) if cache_folder is not None else None

    def __call__(self, task: Task) -> FileReport:
        file, settings, root = task
        return analyze_file(file, settings, root, self.texts, self.module_cache, cache=self.cache, found=self.found)


def _worker_lost(task: Task, why: str) -> FileReport:
    """The report for a file whose worker process died: regvet failed on it, the scan goes on."""
    from regvet.model.report import Crash

    return FileReport(display_path(task[0]), crashes=(Crash("analysis", why),))


def _analyze_all(tasks: list[Task], cache: FactCache | None, jobs: int) -> list[FileReport]:
    """The report of every task, in order: cached ones from here, the others from ``jobs`` worker processes."""
    reports: list[FileReport | None] = [None] * len(tasks)
    texts: dict[Path, str | None] = {}
    found: dict = {}
    if cache is not None:
        for i, (file, settings, root) in enumerate(tasks):
            reports[i] = _cached(file, settings, root, texts, cache, found)
    todo = [i for i, r in enumerate(reports) if r is None]
    folder = str(cache.folder) if cache is not None else None
    done = map_ordered(FileAnalyzer, (folder,), [tasks[i] for i in todo], jobs, _worker_lost)
    for i, report in zip(todo, done, strict=False):
        reports[i] = report
    return [r for r in reports if r is not None]


def _cached(file: Path, settings: Settings, root: Path, texts: dict[Path, str | None],
            cache: FactCache, found: dict) -> FileReport | None:  # fmt: skip
    try:
        data = read_regular(file)
    except OSError:
        return None
    key = cache.key(data, display_path(file), root, settings, file.suffix == ".ipynb")
    return cache.get(key, FileModules(root, file, texts, found=found))


def analyze_file(
    file: Path, settings: Settings, root: Path, texts: dict[Path, str | None], module_cache: dict,
    cache: FactCache | None = None, found: dict | None = None,
) -> FileReport:  # fmt: skip
    """Read one file and analyse it; unreadable files become ``parse-error`` findings. With ``cache``,
    the analysis is stored there with the project-module lookups it made."""
    shown = display_path(file)
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


def _analyze_bytes(file: Path, shown: str, data: bytes, settings: Settings, provider: ModuleProvider,
                   module_cache: dict) -> FileReport:  # fmt: skip
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
    return error_report(path, SourceError(message, Span(1, 0, 1, 0)), settings)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
