"""GitHub Actions workflow commands: one ``::error``/``::warning``/``::notice`` line per finding."""

from __future__ import annotations

from regvet.model.finding import Severity
from regvet.model.report import FileReport
from regvet.output.safe import printable

_LEVEL = {Severity.ERROR: "error", Severity.WARNING: "warning", Severity.INFO: "notice"}


def _escape_data(text: str) -> str:
    return text.replace("%", "%25").replace("\r", "%0D").replace("\n", "%0A")


def _escape_prop(text: str) -> str:
    return _escape_data(text).replace(":", "%3A").replace(",", "%2C")


def render(reports: list[FileReport], **_: object) -> str:
    out = []
    for report in reports:
        for f in report.findings:
            if f.waived:
                continue
            s = f.span
            props = [f"file={_escape_prop(report.path)}"]
            message = f.message
            if s.cell is None:
                props += [f"line={s.line}", f"endLine={s.end_line}", f"col={s.col + 1}"]
                if s.end_line == s.line:
                    props.append(f"endColumn={s.end_col + 1}")
            else:
                message = f"{s.describe()}: {message}"
            props.append(f"title={_escape_prop('regvet ' + f.rule)}")
            out.append(f"::{_LEVEL[f.severity]} {','.join(props)}::{_escape_data(message)}")
    return printable("\n".join(out) + ("\n" if out else ""))
