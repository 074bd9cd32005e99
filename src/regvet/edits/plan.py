"""Which edits can fix one finding: the candidates the language server offers and ``regvet mend`` applies.

Pure: a finding's rule, its fix data and the text in, a list of :class:`PlannedEdit` out, each
with the whole new text (computed with the rewrites of this package). The kinds are the values
of :class:`regvet.rules.base.QuickFix` (a rule declares which it offers, in order) plus
:data:`WAIVER`; ``tests/test_mend.py`` checks that every ``QuickFix`` has a plan here.

Suggested code names the fit by its own variable (``fix["result"]``) and calls the check the
way the file already imports it (:func:`regvet.sources.imports.spelling`); only when nothing
imported reaches the function is an import added.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from functools import partial
from typing import Any

from regvet.edits.comments import add_waiver, rewrite_waiver
from regvet.edits.rewrite import insert_after_statement, set_cov_type
from regvet.edits.text import EditError
from regvet.model.span import Span
from regvet.sources.imports import DIAGNOSTIC_MODULES, spelling

ROBUST_COVARIANCE = "robust-covariance"
INSERT_RESET = "insert-reset"
INSERT_BREUSCH_PAGAN = "insert-breusch-pagan"
WAIVER = "waiver"
#: A waiver comment rewritten in the form regvet reads (the waiver rules' findings carry it as
#: ``rewrite_waiver`` and ``waiver`` in their fix data); offered by the editor, never applied by ``regvet mend``.
REWRITE_WAIVER = "rewrite-waiver"
#: The kinds that change code (everything but a waiver), in the order ``regvet mend`` knows them.
CODE_KINDS = (ROBUST_COVARIANCE, INSERT_RESET, INSERT_BREUSCH_PAGAN)


@dataclass(frozen=True)
class PlannedEdit:
    """One way to fix a finding: what it is, how an editor titles it, and the text after it."""

    kind: str
    title: str
    preferred: bool
    text: str


def _span(values: object) -> Span | None:
    if isinstance(values, (list, tuple)) and len(values) == 4 and all(type(v) is int for v in values):
        return Span(*values)
    return None


def check_call(whole: str, name: str, before_line: int | None) -> tuple[str, tuple[tuple[str, str], ...]]:
    """(how to call ``name`` in code inserted into ``whole``, the imports to add for it)."""
    spelt = spelling(whole, name, DIAGNOSTIC_MODULES, before_line)
    if spelt is not None:
        return spelt, ()
    return name, ((DIAGNOSTIC_MODULES[0], name),)


def plan(
    text: str,
    rule: str,
    kinds: Sequence[str],
    fix: Mapping[str, Any] | None,
    *,
    waiver_line: int | None = None,
    whole: str | None = None,
    whole_line: int | None = None,
    cov_type: str = "HC3",
) -> list[PlannedEdit]:
    """The edits of ``kinds`` (in that order) that apply to a finding of ``rule`` in ``text``, then a waiver.

    ``fix`` is the finding's fix data (``fit_call``, ``statement``, ``result``) in ``text``'s
    coordinates. ``whole`` is the whole program the text belongs to (a notebook's code, for
    one cell) and ``whole_line`` the statement's line in it, for reading the imports in force
    there (default: ``text`` and the statement's own line). ``waiver_line``, when given, adds a
    waiver comment for the finding starting on that line. A kind whose data is missing, or
    whose rewrite cannot be made safely (:class:`EditError`), or that changes nothing, is left
    out. Malformed fix data never raises.
    """
    fix = fix if isinstance(fix, Mapping) else {}
    fit_call = _span(fix.get("fit_call"))
    statement = _span(fix.get("statement"))
    result = fix.get("result") if isinstance(fix.get("result"), str) and fix.get("result") else None
    if whole is None:
        whole, whole_line = text, (statement.line if statement is not None else None)
    makers: list[tuple[str, str, bool, Callable[[], str]]] = []
    for kind in kinds:
        if kind == ROBUST_COVARIANCE and fit_call is not None:
            makers.append(
                (
                    kind,
                    f'Use robust standard errors (cov_type="{cov_type}")',
                    True,
                    partial(set_cov_type, text, fit_call, cov_type),
                )
            )
        elif kind == INSERT_RESET and statement is not None and result:
            call, imports = check_call(whole, "linear_reset", whole_line)
            code = f'print("RESET:", {call}({result}, power=3, use_f=True))'
            makers.append(
                (
                    kind,
                    f"Insert a RESET test of `{result}` after the fit",
                    True,
                    partial(insert_after_statement, text, statement, code, imports),
                )
            )
        elif kind == INSERT_BREUSCH_PAGAN and statement is not None and result:
            call, imports = check_call(whole, "het_breuschpagan", whole_line)
            code = f'print("Breusch-Pagan:", {call}({result}.resid, {result}.model.exog))'
            makers.append(
                (
                    kind,
                    f"Insert a Breusch-Pagan test of `{result}` after the fit",
                    False,
                    partial(insert_after_statement, text, statement, code, imports),
                )
            )
    rewrite, waiver = fix.get("rewrite_waiver"), _span(fix.get("waiver"))
    if isinstance(rewrite, str) and rewrite and waiver is not None:
        title = fix.get("title") if isinstance(fix.get("title"), str) else f"Rewrite the waiver as `{rewrite}`"
        makers.insert(0, (REWRITE_WAIVER, str(title), True, partial(rewrite_waiver, text, waiver, rewrite)))
    if waiver_line is not None:
        makers.append(
            (
                WAIVER,
                f"Waive {rule} here (write the reason)",
                False,
                lambda: add_waiver(text, waiver_line, rule, "REASON"),
            )
        )
    out: list[PlannedEdit] = []
    for kind, title, preferred, make in makers:
        try:
            new = make()
        except EditError:
            continue
        if new != text:
            out.append(PlannedEdit(kind, title, preferred, new))
    return out
