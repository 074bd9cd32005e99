"""Quick fixes: regvet diagnostics to code actions whose edits come from :mod:`regvet.edits` (libcst).

Each action is a single minimal ``TextEdit`` (the changed region only), so everything
else in the document stays byte-for-byte as it was.
"""

from __future__ import annotations

import re

from lsprotocol import types as t

from regvet.lsp.convert import CONFIG_ERROR, Positions
from regvet.model.span import Span
from regvet.rules import RULES_BY_ID, QuickFix

RESET = ("statsmodels.stats.diagnostic", "linear_reset")
BREUSCH_PAGAN = ("statsmodels.stats.diagnostic", "het_breuschpagan")


def _span(values: object) -> Span | None:
    if isinstance(values, (list, tuple)) and len(values) == 4 and all(isinstance(v, int) for v in values):
        return Span(*values)  # type: ignore[arg-type]
    return None


def _imported(whole: str, name: str) -> bool:
    return re.search(rf"^\s*(?:from\s+[\w.]+\s+)?import\s[^\n]*\b{re.escape(name)}\b", whole, re.MULTILINE) is not None


def _action(title: str, uri: str, old: str, new: str, version: int | None, diag: t.Diagnostic,
            preferred: bool = False) -> t.CodeAction | None:  # fmt: skip
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


def quick_fixes(uri: str, text: str, whole: str, version: int | None,
                diagnostics: list[t.Diagnostic]) -> list[t.CodeAction]:  # fmt: skip
    """Actions for the given diagnostics. ``whole`` is the whole notebook's code for a cell (imports)."""
    from regvet.edits import EditError, add_waiver, insert_after_statement, set_cov_type

    actions: list[t.CodeAction] = []
    for diag in diagnostics:
        data = diag.data if isinstance(diag.data, dict) else {}
        rule = data.get("rule") or str(diag.code)
        fix = data.get("fix") if isinstance(data.get("fix"), dict) else {}
        fit_call = _span(fix.get("fit_call"))
        statement = _span(fix.get("statement"))
        result = fix.get("result") if isinstance(fix.get("result"), str) else None
        candidates: list[tuple[str, object, bool]] = []
        try:
            known = RULES_BY_ID.get(rule)
            for kind in known.quick_fixes if known is not None else ():
                if kind is QuickFix.ROBUST_COVARIANCE and fit_call is not None:
                    candidates.append(('Use robust standard errors (cov_type="HC3")',
                                       lambda: set_cov_type(text, fit_call, "HC3"), True))  # fmt: skip
                if kind is QuickFix.INSERT_RESET and statement is not None and result:
                    code = f'print("RESET:", linear_reset({result}, power=3, use_f=True))'
                    imports = () if _imported(whole, RESET[1]) else (RESET,)
                    candidates.append((f"Insert a RESET test of `{result}` after the fit",
                                       lambda c=code, i=imports: insert_after_statement(text, statement, c, i), True))  # fmt: skip
                if kind is QuickFix.INSERT_BREUSCH_PAGAN and statement is not None and result:
                    code = f'print("Breusch-Pagan:", het_breuschpagan({result}.resid, {result}.model.exog))'
                    imports = () if _imported(whole, BREUSCH_PAGAN[1]) else (BREUSCH_PAGAN,)
                    candidates.append((f"Insert a Breusch-Pagan test of `{result}` after the fit",
                                       lambda c=code, i=imports: insert_after_statement(text, statement, c, i), False))  # fmt: skip
            if rule != CONFIG_ERROR and (known is None or known.waivable):
                line = diag.range.start.line + 1
                candidates.append((f"Waive {rule} here (write the reason)",
                                   lambda r=rule, ln=line: add_waiver(text, ln, r, "REASON"), False))  # fmt: skip
        except Exception:  # malformed data from a client: offer nothing for this diagnostic
            continue
        for title, make, preferred in candidates:
            try:
                new = make()  # type: ignore[operator]
            except EditError:
                continue
            action = _action(title, uri, text, new, version, diag, preferred)
            if action is not None:
                actions.append(action)
    return actions
