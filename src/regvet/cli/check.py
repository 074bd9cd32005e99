"""``regvet check``: scan, hide what the baselines know, render, exit code."""

from __future__ import annotations

import argparse
import os
import shutil
import sys
from pathlib import Path

from regvet.cli.common import EXIT_FAILED, EXIT_FINDINGS, EXIT_OK, UsageError, emit
from regvet.cli.scanning import STDIN, Progress, Scan, scan
from regvet.model.finding import Severity
from regvet.model.report import FileReport
from regvet.project import display_path

#: The formats a person reads, which ``--quiet``, ``--show-waived`` and ``--counts`` shape.
TEXT_FORMATS = ("text", "lines")


def run_check(args: argparse.Namespace) -> int:
    text = args.format in TEXT_FORMATS
    for flag, on in (("--quiet", args.quiet), ("--show-waived", args.show_waived), ("--counts", args.counts)):
        if on and not text:
            raise UsageError(f"{flag} shapes the text and lines formats, not --format {args.format}")
    result = scan(args, Progress() if getattr(args, "run", False) else None)
    reports = result.reports
    note = ""
    if not result.files:
        where = ", ".join(args.paths)
        (sys.stdout if text else sys.stderr).write(
            f"regvet: no files were found to check in {where} (regvet reads .py and .ipynb files)\n"
        )
        if text:
            return EXIT_OK
    if not args.no_baseline:
        reports, note = _apply_baselines(result, Path(args.baseline) if args.baseline else None)
    colour = args.color == "always" or (args.color == "auto" and sys.stdout.isatty() and not os.environ.get("NO_COLOR"))
    from regvet.output import renderer

    emit(
        renderer(args.format)(
            reports,
            colour=colour,
            width=text_width(),
            quiet=args.quiet,
            show_waived=args.show_waived,
            counts=args.counts,
        ),
        utf8=args.format in ("json", "sarif"),
    )
    if note:
        (sys.stdout if text else sys.stderr).write(note)
    if result.failed:
        return EXIT_FAILED
    threshold = Severity.parse(args.fail_on)
    hit = any(f.severity >= threshold and not f.waived for r in reports for f in r.findings)
    return EXIT_FINDINGS if hit else EXIT_OK


def text_width() -> int:
    """The width text output is wrapped to: the terminal's when standard output is one (or ``COLUMNS``
    when set), else ``DEFAULT_WIDTH``."""
    from regvet.output.text import DEFAULT_WIDTH, MIN_WIDTH

    columns = os.environ.get("COLUMNS", "")
    if columns.isdigit() and int(columns) > 0:
        return max(int(columns), MIN_WIDTH)
    if sys.stdout.isatty():
        return max(shutil.get_terminal_size((DEFAULT_WIDTH, 24)).columns, MIN_WIDTH)
    return DEFAULT_WIDTH


def _apply_baselines(result: Scan, forced: Path | None) -> tuple[list[FileReport], str]:
    """The reports without their baselined findings, and the line that says what the baselines hid."""
    from regvet.baseline_file import find_baseline

    if forced is not None and not forced.is_file():
        raise UsageError(f"--baseline: no such file: {forced}")
    loaded: dict[Path, object] = {}
    nearest: dict[Path, Path | None] = {}  # per folder: every file of a folder has the same baseline
    tally: dict[Path, list[int]] = {}
    scanned: dict[Path, set[str]] = {}
    reports = []
    for file, report in result.files:
        if str(file) == STDIN:
            reports.append(report)  # standard input has no place in a baseline
            continue
        if forced is not None:
            where: Path | None = forced
        else:
            if file.parent not in nearest:
                nearest[file.parent] = find_baseline(file.parent)
            where = nearest[file.parent]
        if where is None:
            reports.append(report)
            continue
        if where not in loaded:
            from regvet.baseline import load

            loaded[where] = load(where)
        baseline = loaded[where]
        key = baseline.key_of(file)  # type: ignore[attr-defined]
        scanned.setdefault(where, set()).add(key)
        from regvet.baseline import split

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
