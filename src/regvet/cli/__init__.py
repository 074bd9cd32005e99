"""The ``regvet`` command: ``check``, ``rules``, ``explain`` (and ``serve`` once the language server lands).

Exit codes: 0 nothing at or above the fail level; 1 findings at or above it;
2 usage or configuration error; 3 regvet itself failed on a file (the failure is
printed with the file's path, and the scan still covers every other file).

``regvet check`` imports only the standard library and regvet's static core.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable, Sequence

from regvet import __version__
from regvet.baseline_file import BASELINE_NAME, BaselineError
from regvet.cli.common import (
    EXIT_FAILED,
    EXIT_FINDINGS,
    EXIT_OK,
    EXIT_USAGE,
    EXTRA_EXCLUDE,
    Stopped,
    UsageError,
    collect_files,
    tolerant_streams,
)
from regvet.cli.scanning import Progress, Scan, analyze_file, scan
from regvet.config import ConfigError
from regvet.model.caution import CAUTION

__all__ = [
    "EXIT_FAILED",
    "EXIT_FINDINGS",
    "EXIT_OK",
    "EXIT_USAGE",
    "EXTRA_EXCLUDE",
    "Progress",
    "Scan",
    "UsageError",
    "analyze_file",
    "collect_files",
    "main",
    "scan",
]


def _parser(only: str | None = None) -> argparse.ArgumentParser:
    """The argument parser; with ``only``, just that command's part of it (each run parses one command)."""
    p = argparse.ArgumentParser(
        prog="regvet",
        description="Find missing and failed specification checks around statsmodels OLS fits.",
        epilog=CAUTION,
    )
    p.add_argument("--version", action="version", version=f"regvet {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")

    def wanted(command: str) -> bool:
        return only is None or only == command

    if wanted("check"):
        c = sub.add_parser(
            "check",
            help="scan files and folders (the default command)",
            description="Read analysis scripts and notebooks (without running them) and report fits whose "
            "specification checks are missing.",
            epilog=CAUTION,
        )
        _check_options(c, run_verb=False)
    if wanted("run"):
        r = sub.add_parser(
            "run",
            help="the same as `check --run`: EXECUTES the analysed code to attach real statistics",
            description="Run each analysed script or notebook (this EXECUTES your code, in a child process with "
            "limits) and attach the statistics of every fit to the findings.",
            epilog=CAUTION,
        )
        _check_options(r, run_verb=True)
    _subcommands(sub, wanted)
    if wanted("rules"):
        sub.add_parser("rules", help="list the rules: id, default severity, `run` for those that judge a run, summary")
    if wanted("serve"):
        sub.add_parser("serve", help="run the language server (stdio; --tcp [--port N] for 127.0.0.1)")
    if wanted("explain"):
        e = sub.add_parser("explain", help="explain rules: rationale, examples, references")
        e.add_argument(
            "rule", nargs="+", metavar="RULE", help="a rule id as `regvet rules` lists it, in any letter case"
        )
    return p


def _check_options(c: argparse.ArgumentParser, run_verb: bool) -> None:
    """The options of ``check``, and of ``run`` (``run_verb``: the same without ``--run``, which it implies)."""
    c.add_argument(
        "paths",
        nargs="*",
        default=["."],
        metavar="PATH",
        help="files or folders (default: .)"
        + ("" if run_verb else "; `-` reads one script from standard input (not with --run)"),
    )
    c.add_argument(
        "--format",
        choices=["text", "lines", "json", "sarif", "github"],
        default="text",
        help="text: each fit's findings under one header line, wrapped to the terminal (default); "
        "lines: one `path:line:col:` line per finding, for tools; json; sarif (2.1.0); "
        "github: workflow annotations",
    )
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
    c.add_argument(
        "--color",
        choices=["auto", "always", "never"],
        default="auto",
        help="colour in text output (default auto: on a terminal, unless NO_COLOR is set)",
    )
    c.add_argument("--baseline", metavar="FILE", help=f"use this baseline instead of the nearest {BASELINE_NAME}")
    c.add_argument("--no-baseline", action="store_true", help="report every finding, the baselined ones too")
    c.add_argument(
        "--quiet",
        "-q",
        action="store_true",
        help="print only the summary line (and the counts with --counts), no findings (text and lines)",
    )
    c.add_argument(
        "--show-waived", action="store_true", help="list the waived findings too, each with its reason (text and lines)"
    )
    c.add_argument(
        "--counts", action="store_true", help="end with the number of findings of each rule (text and lines)"
    )
    _run_options(c, run_verb)


def _scan_options(p: argparse.ArgumentParser) -> None:
    p.add_argument("paths", nargs="*", default=["."], metavar="PATH", help="files or folders (default: .)")
    p.add_argument("--only", metavar="RULES", help="comma-separated rule ids: only these")
    p.add_argument("--skip", metavar="RULES", help="comma-separated rule ids: never these")
    p.add_argument("--config", metavar="FILE", help="use this config file instead of searching for one")
    p.add_argument("--no-config", action="store_true", help="ignore config files; use the defaults")


def _subcommands(sub: argparse._SubParsersAction, wanted: Callable[[str], bool]) -> None:
    if wanted("report"):
        rp = sub.add_parser(
            "report",
            help="write the specification audit of the fits: one HTML file (or Markdown for FILE.md)",
            description="Write one document that shows, fit by fit, which specification checks were done, what "
            "they showed and what is missing. HTML is self-contained (it opens from disk and prints); a FILE ending "
            "in .md gives Markdown with the plots as SVG files beside it.",
            epilog=CAUTION,
        )
        _scan_options(rp)
        rp.add_argument("-o", "--output", required=True, metavar="FILE", help="the report to write (.html or .md)")
        _run_options(rp)
    if wanted("mend"):
        from regvet.rules import ALL_RULES

        m = sub.add_parser(
            "mend",
            help="apply the editor's quick fixes (robust covariance, RESET, Breusch-Pagan) to the files",
            description="Apply the quick fixes the language server offers to every finding of the selected rules: "
            "robust standard errors on the fit call, or a RESET / Breusch-Pagan test inserted after the fit. Files "
            "are written atomically; a file that changed since it was read is left alone.",
        )
        m.add_argument("paths", nargs="*", default=["."], metavar="PATH", help="files or folders (default: .)")
        m.add_argument(
            "--only",
            metavar="RULES",
            help="comma-separated rule ids to fix (default: every rule with a fix: "
            + ", ".join(r.id for r in ALL_RULES if r.quick_fixes)
            + ")",
        )
        m.add_argument("--preview", action="store_true", help="print a unified diff instead of writing the files")
        m.add_argument("--config", metavar="FILE", help="use this config file instead of searching for one")
        m.add_argument("--no-config", action="store_true", help="ignore config files; use the defaults")
    if wanted("baseline"):
        b = sub.add_parser(
            "baseline",
            help=f"record today's findings in {BASELINE_NAME}, so that `check` reports only new ones",
            description=f"Write the current findings to {BASELINE_NAME} at the project root. `regvet check`, the "
            "pre-commit hook and the language server then report only findings that are not in it.",
        )
        _scan_options(b)
        b.add_argument(
            "--update", action="store_true", help="refresh the existing baseline: drop what is gone, add nothing new"
        )
        b.add_argument(
            "--baseline",
            metavar="FILE",
            help=f"the baseline file (default: the nearest {BASELINE_NAME}, " "else one at the project root)",
        )
        _run_options(b)


def _run_options(p: argparse.ArgumentParser, run_verb: bool = False) -> None:
    """``--run``, ``--no-cache`` and ``--jobs``; for ``regvet run`` (``run_verb``) without ``--run`` and in its words."""
    if not run_verb:
        p.add_argument(
            "--run",
            action="store_true",
            help="runtime mode: EXECUTE each analysed file in a child process (its own folder, stdin closed, "
            "time and memory limits) and attach the statistics of its fits; never used by the pre-commit hook",
        )
    p.set_defaults(run=run_verb)
    p.add_argument(
        "--no-cache",
        action="store_true",
        help="neither read nor write regvet's caches: analyse "
        + ("and run every file again" if run_verb else "every file again (and with --run, run again)"),
    )
    p.add_argument(
        "--jobs",
        "-j",
        type=_jobs,
        default=None,
        metavar="N",
        help="analyse " + ("and run" if run_verb else "(and with --run, run)") + " N files at a time in "
        "worker processes (default: the number of cores)",
    )


def _jobs(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number of jobs, not {text!r}") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"expected 1 or more jobs, not {value}")
    return value


COMMANDS = ("check", "run", "report", "mend", "baseline", "rules", "explain", "serve")
#: The options that take a value (so that a value spelled like a command is not taken for one).
_VALUED = {
    "--format",
    "--fail-on",
    "--only",
    "--skip",
    "--config",
    "--color",
    "--baseline",
    "--jobs",
    "-j",
    "-o",
    "--output",
    "--port",
    "--log-file",
}


def arrange(argv: list[str]) -> list[str]:
    """The arguments with the command first: ``check`` when none is named (``regvet fixtures/demo``,
    ``regvet -``), and options written before the command moved after it (``regvet --format json
    fixtures/demo`` is ``regvet check --format json fixtures/demo``)."""
    if not argv:
        return ["check"]
    first = argv[0]
    if first in COMMANDS or first in ("-h", "--help", "--version"):
        return argv
    if first == "-" or not first.startswith("-"):
        return ["check", *argv]
    for i, arg in enumerate(argv):
        if arg in COMMANDS and argv[i - 1] not in _VALUED:
            return [arg, *argv[:i], *argv[i + 1 :]]
    return ["check", *argv]


def main(argv: Sequence[str] | None = None) -> int:
    given = list(sys.argv[1:] if argv is None else argv)
    args_list = arrange(given)
    if args_list and args_list[0] == "serve":
        from regvet.cli.info import _serve

        return _serve(args_list[1:])
    parser = _parser(args_list[0] if args_list[0] in COMMANDS else None)
    try:
        args = parser.parse_args(args_list)
    except SystemExit as exc:  # argparse already printed the problem
        if exc.code in (0, None):
            return EXIT_OK
        if given and given[0].startswith("-") and given[0] != "-" and args_list[0] in COMMANDS:
            sys.stderr.write(
                "regvet: the command comes first, then its options and paths, as in `regvet check "
                f"--format json fixtures/demo`; this was read as `regvet {' '.join(args_list)}`\n"
            )
        return EXIT_USAGE
    tolerant_streams()
    if args.command == "rules":
        from regvet.rules.texts import render_rules

        sys.stdout.write(render_rules())
        return EXIT_OK
    if args.command == "explain":
        return _explain(args.rule)
    try:
        if args.command == "report":
            from regvet.cli.report import run_report

            return run_report(args)
        if args.command == "mend":
            from regvet.cli.mend import run_mend

            return run_mend(args)
        if args.command == "baseline":
            from regvet.cli.baseline import run_baseline

            return run_baseline(args)
        from regvet.cli.check import run_check

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
    except Stopped as exc:
        import signal

        sys.stderr.write(
            f"regvet: stopped by {signal.Signals(exc.signum).name}; the scripts it was running were ended, "
            "and their runs were not cached\n"
        )
        return 128 + exc.signum
    except KeyboardInterrupt:
        sys.stderr.write("regvet: interrupted; nothing more was checked (runs in progress were ended)\n")
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())


def _explain(names: list[str]) -> int:
    """``regvet explain RULE...``: each rule's text, the caution once at the end; a typo gets the nearest rule."""
    from regvet.rules.texts import explain, find_rule, nearest_rule

    rules = []
    for name in names:
        rule = find_rule(name)
        if rule is None:
            guess = nearest_rule(name)
            hint = f"; did you mean `{guess}`?" if guess else "; `regvet rules` lists them"
            sys.stderr.write(f"regvet: error: no rule `{name}`{hint}\n")
            return EXIT_USAGE
        rules.append(rule)
    texts = [explain(r.id, caution=False) for r in rules]
    sys.stdout.write("\n".join(texts) + "\n" + CAUTION + "\n")
    return EXIT_OK
