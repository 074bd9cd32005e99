"""Human output: ``path:line:col: severity rule message`` lines and a one-line summary."""

from __future__ import annotations

from regvet.model.finding import Finding, Severity
from regvet.model.report import FileReport
from regvet.output.safe import printable

_COLOURS = {Severity.ERROR: "\033[31m", Severity.WARNING: "\033[33m", Severity.INFO: "\033[36m"}
_BOLD, _DIM, _RESET = "\033[1m", "\033[2m", "\033[0m"


def location(path: str, f: Finding) -> str:
    s = f.span
    if s.cell is not None:
        return f"{path}:cell {s.cell}:{s.line}:{s.col + 1}"
    return f"{path}:{s.line}:{s.col + 1}"


def render(reports: list[FileReport], *, colour: bool = False, **_: object) -> str:
    lines: list[str] = []
    counts = {sev: 0 for sev in Severity}
    waived = 0
    files_with = 0
    for report in reports:
        shown = [f for f in report.findings if not f.waived]
        waived += len(report.findings) - len(shown)
        if shown:
            files_with += 1
        for f in shown:
            counts[f.severity] += 1
            sev = f.severity.label
            loc = location(report.path, f)
            message = f.message
            if f.stats and f.stats.get("summary"):
                message += f" [run: {f.stats['summary']}]"
            if colour:
                lines.append(f"{_BOLD}{loc}:{_RESET} {_COLOURS[f.severity]}{sev}{_RESET} {_DIM}{f.rule}{_RESET} {message}")
            else:
                lines.append(f"{loc}: {sev} {f.rule} {message}")
    total = sum(counts.values())
    analysed = sum(1 for r in reports if not r.skipped)
    parts = [f"{counts[s]} {s.label}{'s' if counts[s] != 1 and s != Severity.INFO else ''}" for s in reversed(Severity)]
    summary = (
        f"regvet: {total} finding{'s' if total != 1 else ''} ({', '.join(parts)}) in {files_with} of "
        f"{len(reports)} file{'s' if len(reports) != 1 else ''}"
    )
    if analysed != len(reports):
        summary += f" ({len(reports) - analysed} without regressions)"
    if waived:
        summary += f"; {waived} waived"
    lines.append(summary)
    return printable("\n".join(lines) + "\n")
