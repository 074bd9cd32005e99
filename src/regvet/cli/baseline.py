"""``regvet baseline``: record today's findings so that ``check`` reports only new ones."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from regvet.cli.common import EXIT_FAILED, EXIT_OK, UsageError
from regvet.cli.scanning import scan
from regvet.project import display_path


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
        sys.stdout.write(
            f"regvet: baseline {display_path(target)} written: {what}; `regvet check` now reports only "
            "new findings\n"
        )
    return EXIT_OK
