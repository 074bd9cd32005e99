"""``regvet report``: the specification audit as one HTML file, or Markdown with SVG files beside it."""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

from regvet.cli.common import EXIT_FAILED, EXIT_OK, UsageError
from regvet.cli.scanning import Progress, scan
from regvet.output.safe import valid_utf8
from regvet.project import display_path

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
    sys.stdout.write(
        f"regvet: report written to {display_path(output)}: {audit.fit_count} fit"
        f"{'s' if audit.fit_count != 1 else ''} in {n_files} file{'s' if n_files != 1 else ''}"
        + (f", {sum(len(v) for v in plots.values())} plots" if args.run else "")
        + "\n"
    )
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
