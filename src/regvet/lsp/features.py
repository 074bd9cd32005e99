"""Hover and quick fixes of the language server: what a fit's checks are, and edits that add them.

Registered by :func:`regvet.lsp.app.create_server`; they read the analyses that
:mod:`regvet.lsp.server` keeps per document (and ask for one when it is stale).
"""

from __future__ import annotations

import asyncio
from urllib.parse import unquote

from lsprotocol import types as t

from regvet.lsp.convert import Positions
from regvet.lsp.server import RegvetServer, analyse
from regvet.rules import RULES_BY_ID


async def hover(ls: RegvetServer, params: t.HoverParams) -> t.Hover | None:
    from regvet.status import fits_at, hover_markdown

    uri = params.text_document.uri
    key = ls.target_of(uri)
    if key is None:
        return None
    result = ls.results.get(key)
    if result is None or result.version != ls.current_version(key):
        result = await analyse(ls, key)
    if result is None:
        return None
    cell = next((i for i, u in result.cells.items() if unquote(u) == unquote(uri)), None)
    text = result.texts.get(uri) or next((v for k, v in result.texts.items() if unquote(k) == unquote(uri)), None) or ""
    positions = Positions(text, ls.workspace.position_encoding)
    line, col = positions.from_client(params.position)
    parts: list[str] = []
    fits = fits_at(result.report, line, col, cell)
    parts.extend(hover_markdown(result.report, fits))
    for d in result.diagnostics.get(uri, []):
        r = d.range
        if (
            (r.start.line, r.start.character)
            <= (params.position.line, params.position.character)
            <= (
                r.end.line,
                r.end.character,
            )
        ):
            rule = RULES_BY_ID.get(str(d.code))
            if rule is not None:
                parts.append(f"**regvet {rule.id}** ({rule.severity.label}): {rule.summary}\n\n{rule.rationale}")
    if not parts:
        return None
    return t.Hover(contents=t.MarkupContent(kind=t.MarkupKind.Markdown, value="\n\n---\n\n".join(parts)))


async def code_action(ls: RegvetServer, params: t.CodeActionParams) -> list[t.CodeAction] | None:
    uri = params.text_document.uri
    doc = ls.open_text(uri)
    if doc is None:
        return None
    diagnostics = [d for d in params.context.diagnostics if d.source == "regvet"]
    if not diagnostics:  # some clients send none: use ours that overlap the range
        key = ls.target_of(uri)
        result = ls.results.get(key) if key else None
        if result is not None:
            for d in result.diagnostics.get(uri, []):
                if d.range.start.line <= params.range.end.line and d.range.end.line >= params.range.start.line:
                    diagnostics.append(d)
    if not diagnostics:
        return None
    nb = ls.workspace.get_notebook_document(cell_uri=uri)
    whole = _notebook_text(ls, nb) if nb is not None else doc.source
    loop = asyncio.get_running_loop()
    return await loop.run_in_executor(ls.pool, build_actions, uri, doc.source, whole, doc.version, diagnostics)


def _notebook_text(ls: RegvetServer, nb: t.NotebookDocument) -> str:
    parts = []
    for cell in nb.cells:
        doc = ls.open_text(cell.document)
        if doc is not None and cell.kind == t.NotebookCellKind.Code:
            parts.append(doc.source)
    return "\n".join(parts)


def build_actions(
    uri: str, text: str, whole: str, version: int | None, diagnostics: list[t.Diagnostic]
) -> list[t.CodeAction]:
    """Quick fixes for regvet diagnostics, each a WorkspaceEdit computed with libcst."""
    from regvet.lsp.actions import quick_fixes

    return quick_fixes(uri, text, whole, version, diagnostics)
