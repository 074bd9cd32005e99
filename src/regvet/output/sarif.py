"""SARIF 2.1.0 output (OASIS standard), valid against the official schema.

Columns are Unicode code points (``run.columnKind``), lines and columns 1-based,
``endColumn`` just past the end. Waived findings become in-source suppressions
with their reason as justification. Notebook findings keep the cell in a logical
location and the result's property bag; their region is relative to that cell.
"""

from __future__ import annotations

import hashlib
import json
import re
from pathlib import Path
from typing import Any

from regvet import __version__
from regvet.model.finding import Finding, Severity
from regvet.model.report import FileReport
from regvet.model.span import Span
from regvet.output.safe import uri_path, valid_utf8
from regvet.rules import ALL_RULES

_LEVEL = {Severity.ERROR: "error", Severity.WARNING: "warning", Severity.INFO: "note"}
_PROBLEM = {Severity.ERROR: "error", Severity.WARNING: "warning", Severity.INFO: "recommendation"}
SCHEMA_URI = "https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json"


def _uri(path: str) -> str:
    return uri_path(Path(path).as_posix())  # a name that is not UTF-8: its own bytes, percent-encoded


def _region(span: Span) -> dict[str, int]:
    return {
        "startLine": span.line,
        "startColumn": span.col + 1,
        "endLine": span.end_line,
        "endColumn": span.end_col + 1,
    }


#: The places a message names (``line 30``, ``cell 8, line 8``): left out of the fingerprint.
_PLACE = re.compile(r"\b(?:cell|line)s? \d+")


def _fingerprint(rule: str, path: str, message: str, cell: int | None) -> str:
    # Stable across runs that only move lines: rule, path, cell and message (messages name the
    # fit by variable or formula; the lines they name are left out).
    head = _PLACE.sub("#", message)
    return hashlib.sha256(f"{rule}\0{path}\0{cell}\0{head}".encode("utf-8", "surrogatepass")).hexdigest()[:32]


def _location(path: str, span: Span, message: str | None = None, id_: int | None = None) -> dict[str, Any]:
    loc: dict[str, Any] = {
        "physicalLocation": {
            "artifactLocation": {"uri": _uri(path), "uriBaseId": "%SRCROOT%"},
            "region": _region(span),
        }
    }
    if span.cell is not None:
        loc["logicalLocations"] = [{"name": f"cell {span.cell}", "kind": "module"}]
    if message:
        loc["message"] = {"text": message}
    if id_ is not None:
        loc["id"] = id_
    return loc


def _result(path: str, f: Finding, index: dict[str, int]) -> dict[str, Any]:
    result: dict[str, Any] = {
        "ruleId": f.rule,
        "ruleIndex": index[f.rule],
        "level": _LEVEL[f.severity],
        "message": {"text": f.message},
        "locations": [_location(path, f.span)],
        "partialFingerprints": {"regvet/v1": _fingerprint(f.rule, path, f.message, f.span.cell)},
    }
    if f.related:
        result["relatedLocations"] = [_location(r.path or path, r.span, r.message, i) for i, r in enumerate(f.related)]
    props: dict[str, Any] = {}
    if f.span.cell is not None:
        props["cell"] = f.span.cell
    if f.stats is not None:
        props["regvet"] = f.stats
    if props:
        result["properties"] = props
    if f.waived:
        result["suppressions"] = [{"kind": "inSource", "status": "accepted", "justification": f.reason or ""}]
    return result


def _rule_descriptor(rule) -> dict[str, Any]:
    help_text = f"{rule.rationale}\n\nRun `regvet explain {rule.id}` for examples and references."
    return {
        "id": rule.id,
        "name": "".join(p.capitalize() for p in rule.id.split("-")),
        "shortDescription": {"text": rule.summary},
        "fullDescription": {"text": rule.rationale.split("\n\n")[0]},
        "help": {"text": help_text, "markdown": help_text},
        "defaultConfiguration": {"level": _LEVEL[rule.severity]},
        "properties": {"tags": ["statistics", "regression"], "problem.severity": _PROBLEM[rule.severity]},
    }


def build(reports: list[FileReport], root: Path | None = None) -> dict[str, Any]:
    rules = [_rule_descriptor(r) for r in ALL_RULES]
    index = {r.id: i for i, r in enumerate(ALL_RULES)}
    results = [_result(rep.path, f, index) for rep in reports for f in rep.findings]
    base = (root or Path.cwd()).resolve().as_uri().rstrip("/") + "/"
    return {
        "$schema": SCHEMA_URI,
        "version": "2.1.0",
        "runs": [
            {
                "tool": {
                    "driver": {
                        "name": "regvet",
                        "version": __version__,
                        "semanticVersion": __version__,
                        "informationUri": "https://pypi.org/project/regvet/",
                        "rules": rules,
                    }
                },
                "originalUriBaseIds": {"%SRCROOT%": {"uri": base}},
                "columnKind": "unicodeCodePoints",
                "automationDetails": {"id": "regvet/check/"},
                "results": results,
            }
        ],
    }


def render(reports: list[FileReport], **_: object) -> str:
    return valid_utf8(json.dumps(build(reports), indent=2, ensure_ascii=False, allow_nan=False)) + "\n"
