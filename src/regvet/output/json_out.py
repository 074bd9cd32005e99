"""Machine output: ``{"version": 1, "findings": [...]}`` with 1-based lines and columns."""

from __future__ import annotations

import json
from typing import Any

from regvet.model.finding import Finding
from regvet.model.report import FileReport
from regvet.output.safe import encodable, uri_path, valid_utf8


def finding_dict(path: str, f: Finding) -> dict[str, Any]:
    s = f.span
    out: dict[str, Any] = {
        "rule": f.rule,
        "severity": f.severity.label,
        "path": path,
        "line": s.line,
        "column": s.col + 1,
        "end_line": s.end_line,
        "end_column": s.end_col + 1,
        "cell": s.cell,
        "message": f.message,
        "related": [
            {
                "path": r.path if r.path is not None else path,
                "line": r.span.line,
                "column": r.span.col + 1,
                "cell": r.span.cell,
                "message": r.message,
            }
            for r in f.related
        ],
        "waived": f.waived,
        "reason": f.reason,
        "stats": f.stats,
    }
    if not encodable(path):  # a file name that is not UTF-8: "path" shows it with U+FFFD, this keeps its bytes
        out["path_uri"] = uri_path(path)
    return out


def render(reports: list[FileReport], **_: object) -> str:
    findings = [finding_dict(r.path, f) for r in reports for f in r.findings]
    return (
        valid_utf8(json.dumps({"version": 1, "findings": findings}, indent=2, ensure_ascii=False, allow_nan=False))
        + "\n"
    )
