"""Waiver comments: ``# regvet: waive RULE[, RULE] because REASON`` and ``# regvet: waive-file RULE because REASON``.

The word ``because`` separates the rules from the reason. A second ``#`` ends the directive
(reasons cannot contain ``#``). Only real comments count: they are found with :mod:`tokenize`,
so ``#`` inside a string is never a waiver. Files without the text ``regvet`` skip tokenizing.

A waiver regvet cannot read takes no effect and says why in ``malformed``; the forms people
write by habit (``RULE -- reason``, ``RULE: reason``) are recognised, so the finding can show
the waiver rewritten in the expected form (``expected``).
"""

from __future__ import annotations

import io
import re
import tokenize
from collections.abc import Collection
from dataclasses import dataclass

from regvet.model.span import Span
from regvet.sources.tokens import for_tokenize

_DIRECTIVE = re.compile(r"#\s*regvet\s*:\s*(?P<kind>waive-file|waive)\b(?P<rest>.*)$")
_BECAUSE = re.compile(r"(?:^|\s)because(?=\s|:|$):?")
#: Separators of other habits, between the rules and a reason: `` -- reason``, ``RULE: reason``.
# No `\s*` around it: searched over a comment of many spaces, that backtracked quadratically.
_OTHER_SEPARATOR = re.compile(r"--+|:|—|–|(?<=\s)-(?=\s)")
#: The word that introduces the reason.
BECAUSE = "because"


@dataclass(frozen=True)
class Waiver:
    """One waiver comment. ``reason`` is None when the comment gives none."""

    file_wide: bool
    rules: tuple[str, ...]
    reason: str | None
    span: Span
    alone: bool  # the comment is the only thing on its line
    malformed: str | None = None  # why the waiver could not be read (it then takes no effect)
    expected: str | None = None  # for a malformed waiver: the same waiver in the expected form
    intended: str | None = None  # for a malformed waiver: the reason it gives in another form (`-- reason`)

    @property
    def form(self) -> str:
        return "waive-file" if self.file_wide else "waive"


def directive(file_wide: bool, rules: tuple[str, ...] | list[str], reason: str) -> str:
    """The waiver comment for ``rules`` with ``reason``, in the form regvet reads."""
    kind = "waive-file" if file_wide else "waive"
    return f"# regvet: {kind} {', '.join(rules)} {BECAUSE} {reason}"


def _words(text: str) -> list[tuple[str, bool]]:
    """The names in a rule list, each with whether a comma comes right before it."""
    out: list[tuple[str, bool]] = []
    for i, part in enumerate(text.split(",")):
        for j, word in enumerate(part.split()):
            out.append((word, i > 0 and j == 0))
    return out


def split_reason(rest: str) -> tuple[str, str, str] | None:
    """``rest`` (the text after ``waive``) as (rules, `` because ``, reason), or None without ``because``."""
    m = _BECAUSE.search(rest)
    return (rest[: m.start()], m.group(), rest[m.end() :]) if m else None


def _parse(
    rest: str, file_wide: bool, known: Collection[str] | None
) -> tuple[tuple[str, ...], str | None, str | None, str | None, str | None]:
    """(rules, reason, malformed, expected, intended) of the text after ``waive``/``waive-file``."""
    rest = rest.split("#", 1)[0]  # a further comment on the line (another tool's, a test marker) is not ours
    m = _BECAUSE.search(rest)
    if m:
        # `RULE -- because ...`, `RULE: because ...`: the stray separator is not part of a rule name
        names = [w.rstrip(":") for w, _ in _words(rest[: m.start()]) if w.strip("-:—–")]
        reason = rest[m.end() :].strip() or None
        if not names:
            return (), reason, "names no rule", directive(file_wide, ["RULE"], reason or "REASON"), None
        return tuple(names), reason, None, None, None
    other = _OTHER_SEPARATOR.search(rest)
    if other:  # `RULE -- reason`, `RULE: reason`: a reason in a form regvet does not read
        named = [w for w, _ in _words(rest[: other.start()])]
        why = rest[other.end() :].strip()
        sep = other.group(0)
        shown = f"` {sep} `" if sep != ":" else "`:`"
        problem = f"separates its reason with {shown} instead of the word `because`"
        return (
            tuple(named),
            None,
            problem if named else "names no rule and " + problem,
            directive(file_wide, named or ["RULE"], why or "REASON"),
            why or None,
        )
    words = _words(rest)
    if not words:
        return (), None, "names no rule", directive(file_wide, ["RULE"], "REASON"), None
    if known is not None:  # `RULE fare is linear`: a reason written without `because`
        cut = next((k for k in range(1, len(words)) if words[k][0] not in known and not words[k][1]), None)
        if cut is not None:
            names = [w for w, _ in words[:cut]]
            why = " ".join(w for w, _ in words[cut:])
            return (
                tuple(names),
                None,
                "gives its reason without the word `because`",
                directive(file_wide, names, why),
                why,
            )
    return tuple(w for w, _ in words), None, None, None, None


def find_waivers(text: str, known: Collection[str] | None = None) -> list[Waiver]:
    """Every waiver comment in ``text`` (Python source), in order.

    ``known`` (the rule ids) lets a reason written without ``because`` be told from a list of rules."""
    if "regvet" not in text:
        return []
    lines = text.split("\n")
    found: list[Waiver] = []
    try:
        for tok in tokenize.generate_tokens(io.StringIO(for_tokenize(text)).readline):
            if tok.type != tokenize.COMMENT:
                continue
            (line, col), (end_line, end) = tok.start, tok.end
            if line != end_line or line - 1 >= len(lines):
                continue
            comment = lines[line - 1][col:end]  # the original text (the tokenizer read a safe copy)
            m = _DIRECTIVE.match(comment)
            if not m:
                continue
            file_wide = m["kind"] == "waive-file"
            rules, reason, malformed, expected, intended = _parse(m["rest"], file_wide, known)
            before = lines[line - 1][:col]
            found.append(
                Waiver(
                    file_wide=file_wide,
                    rules=rules,
                    reason=reason,
                    span=Span(line, col, line, end),
                    alone=not before.strip(),
                    malformed=malformed,
                    expected=expected,
                    intended=intended,
                )
            )
    except (tokenize.TokenError, IndentationError, SyntaxError):
        pass  # a broken tail: keep the waivers read so far
    return found
