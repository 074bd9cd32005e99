"""Positions and findings in LSP terms: regvet spans (1-based lines, code-point columns) to LSP ranges.

LSP positions are 0-based lines and columns counted in the negotiated encoding
(UTF-16 code units unless the client offers otherwise). Lines are split on
``\\n``, ``\\r\\n`` and ``\\r`` only, as LSP and Python do (not ``str.splitlines``,
which also splits on form feeds and other separators).
"""

from __future__ import annotations

import re
from typing import Any

from lsprotocol import types as t

from regvet.model.finding import Finding, Severity
from regvet.model.span import Span

_LINE_BREAK = re.compile(r"\r\n|\r|\n")
#: The code of the server's diagnostic on a broken config file (not a rule: nothing to waive).
CONFIG_ERROR = "config-error"
SEVERITY = {
    Severity.ERROR: t.DiagnosticSeverity.Error,
    Severity.WARNING: t.DiagnosticSeverity.Warning,
    Severity.INFO: t.DiagnosticSeverity.Information,
}


def split_lines(text: str) -> list[str]:
    return _LINE_BREAK.split(text)


class Positions:
    """Converts between code-point columns and client columns for one text."""

    def __init__(self, text: str, encoding: str | None) -> None:
        self.lines = split_lines(text)
        self.encoding = str(encoding or t.PositionEncodingKind.Utf16.value)

    def _units(self, text: str) -> int:
        if self.encoding == "utf-8":
            return len(text.encode("utf-8"))
        if self.encoding == "utf-32":
            return len(text)
        return len(text.encode("utf-16-le")) // 2

    def to_client(self, line: int, col: int) -> t.Position:
        """regvet (1-based line, code-point column) to an LSP position."""
        index = max(line - 1, 0)
        if index >= len(self.lines):
            return t.Position(line=index, character=0)
        text = self.lines[index]
        return t.Position(line=index, character=self._units(text[: max(col, 0)]))

    def from_client(self, pos: t.Position) -> tuple[int, int]:
        """An LSP position to regvet's (1-based line, code-point column)."""
        if pos.line >= len(self.lines):
            return pos.line + 1, 0
        text = self.lines[pos.line]
        if self.encoding == "utf-32":
            return pos.line + 1, min(pos.character, len(text))
        units = 0
        for i, ch in enumerate(text):
            if units >= pos.character:
                return pos.line + 1, i
            units += self._units(ch)
        return pos.line + 1, len(text)

    def range(self, span: Span) -> t.Range:
        return t.Range(start=self.to_client(span.line, span.col), end=self.to_client(span.end_line, span.end_col))


def json_safe(value: Any) -> Any:
    """Plain JSON values only: no NaN or infinity, no numpy scalars (they break the message)."""
    if isinstance(value, dict):
        return {str(k): json_safe(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [json_safe(v) for v in value]
    if isinstance(value, bool) or value is None or isinstance(value, str):
        return value
    if isinstance(value, int):
        return int(value)
    if isinstance(value, float):
        return value if value == value and value not in (float("inf"), float("-inf")) else None
    try:  # numpy scalars and the like
        return json_safe(value.item())
    except AttributeError:
        return str(value)


def to_diagnostic(
    f: Finding,
    positions: Positions,
    related: list[t.DiagnosticRelatedInformation],
    rule_doc_uri: str | None,
) -> t.Diagnostic:
    data: dict[str, Any] = {"rule": f.rule, "fix": f.fix}
    message = f.message
    if f.stats:
        data["stats"] = f.stats
        if f.stats.get("summary"):
            message += f" [run: {f.stats['summary']}]"
    return t.Diagnostic(
        range=positions.range(f.span),
        message=message,
        severity=SEVERITY[f.severity],
        code=f.rule,
        code_description=t.CodeDescription(href=rule_doc_uri) if rule_doc_uri else None,
        source="regvet",
        related_information=related or None,
        data=json_safe(data),
    )
