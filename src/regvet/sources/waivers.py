"""Waiver comments: ``# regvet: waive RULE[, RULE] -- reason`` and ``# regvet: waive-file RULE -- reason``.

A second ``#`` ends the directive (reasons cannot contain ``#``). Only real comments count: they are found with :mod:`tokenize`, so ``#`` inside a
string is never a waiver. Files without the text ``regvet:`` skip tokenizing.
"""

from __future__ import annotations

import io
import re
import tokenize
from dataclasses import dataclass

from regvet.model.span import Span

_DIRECTIVE = re.compile(r"#\s*regvet\s*:\s*(?P<kind>waive-file|waive)\b(?P<rest>.*)$")
_RULE_ID = re.compile(r"^[a-z0-9][a-z0-9-]*$")


@dataclass(frozen=True)
class Waiver:
    """One waiver comment. ``reason`` is None when the comment gives none."""

    file_wide: bool
    rules: tuple[str, ...]
    reason: str | None
    span: Span
    alone: bool  # the comment is the only thing on its line
    malformed: str | None = None  # why the rule list could not be read


def _parse(rest: str) -> tuple[tuple[str, ...], str | None, str | None]:
    reason: str | None = None
    rest = rest.split("#", 1)[0]  # a further comment on the line (another tool's, a test marker) is not ours
    if "--" in rest:
        rest, reason = rest.split("--", 1)
        reason = reason.strip() or None
    names = [n.strip() for n in rest.replace(",", " ").split()]
    bad = [n for n in names if not _RULE_ID.match(n)]
    if not names:
        return (), reason, "names no rule"
    if bad:
        return tuple(n for n in names if _RULE_ID.match(n)), reason, f"has an unreadable rule name {bad[0]!r}"
    return tuple(names), reason, None


def find_waivers(text: str) -> list[Waiver]:
    """Every waiver comment in ``text`` (Python source), in order."""
    if "regvet" not in text:
        return []
    lines = text.split("\n")
    found: list[Waiver] = []
    try:
        for tok in tokenize.generate_tokens(io.StringIO(text).readline):
            if tok.type != tokenize.COMMENT:
                continue
            m = _DIRECTIVE.match(tok.string)
            if not m:
                continue
            rules, reason, malformed = _parse(m["rest"])
            line, col = tok.start
            before = lines[line - 1][:col] if line - 1 < len(lines) else ""
            found.append(
                Waiver(
                    file_wide=m["kind"] == "waive-file",
                    rules=rules,
                    reason=reason,
                    span=Span(line, col, line, col + len(tok.string)),
                    alone=not before.strip(),
                    malformed=malformed,
                )
            )
    except (tokenize.TokenError, IndentationError, SyntaxError):
        pass  # a broken tail: keep the waivers read so far
    return found
