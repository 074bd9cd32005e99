"""``--format lines``: one line per finding, ``path:line:col: severity rule message``, for tools that read
``file:line:col:`` (a notebook's place is ``path, cell N, line L:C:``, cells counted from 1), then the summary."""

from __future__ import annotations

from regvet.model.report import FileReport
from regvet.output.safe import printable
from regvet.output.text import _BOLD, _COLOURS, _DIM, _RESET, location, stats_summary, tail


def render(
    reports: list[FileReport],
    *,
    colour: bool = False,
    quiet: bool = False,
    show_waived: bool = False,
    counts: bool = False,
    **_: object,
) -> str:
    lines: list[str] = []
    for report in reports if not quiet else ():
        for f in report.findings:
            if f.waived and not show_waived:
                continue
            sev = f.severity.label
            loc = location(report.path, f.span)
            message = f.message
            if f.waived:
                message += f" (waived: {f.reason})"
            if stats_summary(f):
                message += f" [run: {stats_summary(f)}]"
            if colour:
                lines.append(
                    f"{_BOLD}{loc}:{_RESET} {_COLOURS[f.severity]}{sev}{_RESET} {_DIM}{f.rule}{_RESET} {message}"
                )
            else:
                lines.append(f"{loc}: {sev} {f.rule} {message}")
    return printable("\n".join([*lines, *tail(reports, counts)]) + "\n")
