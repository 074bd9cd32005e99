"""The ``regvet`` command: ``check``, ``rules``, ``explain`` (and ``serve`` once the language server lands).

Exit codes: 0 nothing at or above the fail level; 1 findings at or above it;
2 usage or configuration error; 3 regvet itself failed on a file (the failure is
printed with the file's path, and the scan still covers every other file).

``regvet check`` imports only the standard library and regvet's static core.
"""

from __future__ import annotations

import argparse
import fnmatch
import os
import sys
from pathlib import Path
from typing import Sequence

from regvet import __version__
from regvet.config import ConfigError, load_settings
from regvet.engine import analyze, error_report
from regvet.model.finding import Severity
from regvet.model.report import FileReport
from regvet.model.settings import DEFAULT_EXCLUDE, Settings
from regvet.model.span import Span
from regvet.project import FileModules, display_path
from regvet.rules import RULES_BY_ID
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
    sub.add_parser("rules", help="list the rules")
    sub.add_parser("serve", help="run the language server (stdio; --tcp --port N for 127.0.0.1)")
    e = sub.add_parser("explain", help="explain one rule: rationale, examples, references")
    e.add_argument("rule", metavar="RULE")
    return p


def _run_options(p: argparse.ArgumentParser) -> None:
    p.add_argument(
        "--run",
        action="store_true",
        help="runtime mode: EXECUTE each analysed file in a child process (its own folder, stdin closed, "
        "time and memory limits) and attach the statistics of its fits; never used by the pre-commit hook",
    )
    p.add_argument("--no-cache", action="store_true", help="with --run: run again even if nothing changed")


def main(argv: Sequence[str] | None = None) -> int:
    args_list = list(sys.argv[1:] if argv is None else argv)
    commands = ("check", "run", "rules", "explain", "serve")
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
        return run_check(args)
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


def _excluded(rel: Path, patterns: Sequence[str]) -> bool:
    posix = rel.as_posix()
    for pat in patterns:
        pat = pat.rstrip("/")
        if "/" in pat:
            if fnmatch.fnmatch(posix, pat) or fnmatch.fnmatch(posix, pat + "/*"):
                return True
        elif any(fnmatch.fnmatch(part, pat) for part in rel.parts):
            return True
    return False


def collect_files(paths: Sequence[str], exclude: Sequence[str]) -> list[Path]:
    """Files to scan: named files as given, folders walked for ``.py`` and ``.ipynb`` files."""
    files: list[Path] = []
    for raw in paths:
        path = Path(raw)
        if path.is_file():
            files.append(path)
        elif path.is_dir():
            for folder, dirs, names in os.walk(path):
                rel_folder = Path(folder).relative_to(path)
                dirs[:] = sorted(d for d in dirs if not _excluded(rel_folder / d, exclude))
                for name in sorted(names):
                    if name.endswith((".py", ".ipynb")) and not _excluded(rel_folder / name, exclude):
                        files.append(Path(folder) / name)
        else:
            raise UsageError(f"no such file or folder: {raw}")
    seen: set[Path] = set()
    unique = []
    for f in files:
        key = f.resolve()
        if key not in seen:
            seen.add(key)
            unique.append(f)
    return unique


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


def run_check(args: argparse.Namespace) -> int:
    finder = _SettingsFinder(args)
    base_settings = finder.for_path(Path(args.paths[0]) if args.paths else Path("."))
    exclude = (*DEFAULT_EXCLUDE, *EXTRA_EXCLUDE, *base_settings.exclude)
    files = collect_files(args.paths, exclude)
    roots = {Path(p).resolve() for p in args.paths if Path(p).is_dir()}
    default_root = Path.cwd().resolve()
    texts: dict[Path, str | None] = {}
    module_cache: dict = {}
    cache = None
    if getattr(args, "run", False):
        from regvet.runtime.runner import RunCache

        cache = None if args.no_cache else RunCache()
    reports: list[FileReport] = []
    failed = False
    for file in files:
        settings = finder.for_path(file)
        root = project_root(file.resolve(), roots, default_root)
        report = analyze_file(file, settings, root, texts, module_cache)
        if getattr(args, "run", False):
            report = _run_file(file, report, settings, cache)
        for crash in report.crashes:
            failed = True
            where = "the analysis" if crash.where == "analysis" else f"rule {crash.where}"
            sys.stderr.write(f"{report.path}: regvet failed in {where}: {crash.message}\n")
        reports.append(report)
    colour = args.color == "always" or (args.color == "auto" and sys.stdout.isatty() and not os.environ.get("NO_COLOR"))
    from regvet.output import FORMATS

    sys.stdout.write(FORMATS[args.format](reports, colour=colour))
    if failed:
        return EXIT_FAILED
    threshold = Severity.parse(args.fail_on)
    hit = any(f.severity >= threshold and not f.waived for r in reports for f in r.findings)
    return EXIT_FINDINGS if hit else EXIT_OK


def _run_file(file: Path, report: FileReport, settings: Settings, cache) -> FileReport:  # type: ignore[no-untyped-def]
    """Runtime mode for one file (imports the runtime part only now)."""
    from regvet.runtime.session import run_and_judge

    judged, _ = run_and_judge(report, file, settings, cache=cache)
    return judged


def analyze_file(
    file: Path, settings: Settings, root: Path, texts: dict[Path, str | None], module_cache: dict
) -> FileReport:
    """Read one file and analyse it; unreadable files become ``parse-error`` findings."""
    shown = display_path(file)
    try:
        data = file.read_bytes()
    except OSError as exc:
        return _unreadable(shown, settings, f"cannot read the file: {exc.strerror or exc}")
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
    provider = FileModules(root, file, texts)
    return analyze(text, shown, settings, provider=provider, module_cache=module_cache, module_key=file.stem)


def _unreadable(path: str, settings: Settings, message: str) -> FileReport:
    return error_report(path, SourceError(message, Span(1, 0, 1, 0)), settings)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
