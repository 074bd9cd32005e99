"""Machine output: ``{"version": 1, "findings": [...]}`` with 1-based lines and columns."""

from __future__ import annotations

import json
from typing import Any

from regvet.model.finding import Finding
from regvet.model.report import FileReport


def finding_dict(path: str, f: Finding) -> dict[str, Any]:
    s = f.span
    return {
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


def render(reports: list[FileReport], **_: object) -> str:
    findings = [finding_dict(r.path, f) for r in reports for f in r.findings]
    return json.dumps({"version": 1, "findings": findings}, indent=2, ensure_ascii=False, allow_nan=False) + "\n"
