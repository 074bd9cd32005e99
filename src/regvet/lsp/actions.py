"""Quick fixes: regvet diagnostics to code actions whose edits come from :mod:`regvet.edits` (libcst).

Each action is a single minimal ``TextEdit`` (the changed region only), so everything
else in the document stays byte-for-byte as it was.
"""

from __future__ import annotations

from lsprotocol import types as t

from regvet.lsp.convert import CONFIG_ERROR, Positions
from regvet.rules import RULES_BY_ID


def _action(
    title: str, uri: str, old: str, new: str, version: int | None, diag: t.Diagnostic, preferred: bool = False
) -> t.CodeAction | None:
    from regvet.edits import minimal_edit

    edit = minimal_edit(old, new)
    if edit is None:
        return None
    pos = Positions(old, None)
    text_edit = t.TextEdit(
        range=t.Range(start=pos.to_client(edit.line, edit.col), end=pos.to_client(edit.end_line, edit.end_col)),
        new_text=edit.new_text,
    )
    change = t.TextDocumentEdit(
        text_document=t.OptionalVersionedTextDocumentIdentifier(uri=uri, version=version), edits=[text_edit]
    )
    return t.CodeAction(
        title=title,
        kind=t.CodeActionKind.QuickFix,
        diagnostics=[diag],
        is_preferred=preferred,
        edit=t.WorkspaceEdit(document_changes=[change]),
    )


def quick_fixes(
    uri: str, text: str, whole: str, version: int | None, diagnostics: list[t.Diagnostic]
) -> list[t.CodeAction]:
    """Actions for the given diagnostics. ``whole`` is the whole notebook's code for a cell (imports).

    The edits are planned by :func:`regvet.edits.plan.plan`, the same planner ``regvet mend`` uses.
    """
    from regvet.edits.plan import plan

    actions: list[t.CodeAction] = []
    for diag in diagnostics:
        data = diag.data if isinstance(diag.data, dict) else {}
        rule = data.get("rule") or str(diag.code)
        fix = data.get("fix") if isinstance(data.get("fix"), dict) else {}
        try:
            known = RULES_BY_ID.get(rule)
            kinds = [k.value for k in known.quick_fixes] if known is not None else []
            waivable = rule != CONFIG_ERROR and (known is None or known.waivable)
            planned = plan(
                text,
                rule,
                kinds,
                fix,
                waiver_line=diag.range.start.line + 1 if waivable else None,
                whole=whole if whole != text else None,
            )
        except Exception:  # malformed data from a client: offer nothing for this diagnostic
            continue
        for edit in planned:
            action = _action(edit.title, uri, text, edit.text, version, diag, edit.preferred)
            if action is not None:
                actions.append(action)
    return actions
