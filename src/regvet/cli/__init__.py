"""The ``regvet`` command: ``check``, ``rules``, ``explain`` (and ``serve`` once the language server lands).

Exit codes: 0 nothing at or above the fail level; 1 findings at or above it;
2 usage or configuration error; 3 regvet itself failed on a file (the failure is
printed with the file's path, and the scan still covers every other file).

``regvet check`` imports only the standard library and regvet's static core.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence

from regvet import __version__
from regvet.baseline import BASELINE_NAME, BaselineError
from regvet.cli.baseline import run_baseline
from regvet.cli.check import run_check
from regvet.cli.common import (
    EXIT_FAILED,
    EXIT_FINDINGS,
    EXIT_OK,
    EXIT_USAGE,
    EXTRA_EXCLUDE,
    UsageError,
    collect_files,
    tolerant_streams,
)
from regvet.cli.info import _serve
from regvet.cli.mend import run_mend
from regvet.cli.report import run_report
from regvet.cli.scanning import Progress, Scan, analyze_file, scan
from regvet.config import ConfigError
from regvet.rules import ALL_RULES, RULES_BY_ID
from regvet.rules.texts import CAUTION, explain, render_rules

__all__ = [
    "EXIT_FAILED", "EXIT_FINDINGS", "EXIT_OK", "EXIT_USAGE", "EXTRA_EXCLUDE", "Progress", "Scan", "UsageError",
    "analyze_file", "collect_files", "explain", "main", "scan",
]


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
    c.add_argument("--format", choices=["text", "lines", "json", "sarif", "github"], default="text",
                   help="text: each fit's findings under one header line, wrapped to the terminal (default); "
                   "lines: one `path:line:col:` line per finding, for tools; json; sarif (2.1.0); "
                   "github: workflow annotations")  # fmt: skip
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
    sub.add_parser("serve", help="run the language server (stdio; --tcp [--port N] for 127.0.0.1)")
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
    tolerant_streams()
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


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
