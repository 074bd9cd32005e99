"""Waiver comments written into source text, placed with :mod:`tokenize` (comments are not syntax)."""

from __future__ import annotations

import io
import re
import tokenize
from dataclasses import dataclass, field

from regvet.edits.text import EditError, offset
from regvet.model.span import Span
from regvet.sources.tokens import for_tokenize
from regvet.sources.waivers import BECAUSE, Waiver, directive, find_waivers, split_reason

_RULE_ID = re.compile(r"^[a-z0-9][a-z0-9-]*$")
_HEAD = re.compile(r"#\s*regvet\s*:\s*waive\b")
_SKIP = {tokenize.ENCODING, tokenize.NL, tokenize.NEWLINE, tokenize.COMMENT}
_SKIP |= {tokenize.INDENT, tokenize.DEDENT, tokenize.ENDMARKER}
_STRING_OPEN = {getattr(tokenize, n) for n in ("FSTRING_START", "TSTRING_START") if hasattr(tokenize, n)}
_STRING_CLOSE = {getattr(tokenize, n) for n in ("FSTRING_END", "TSTRING_END") if hasattr(tokenize, n)}


def add_waiver(source: str, line: int, rule: str, reason: str = "REASON") -> str:
    """``source`` with ``# regvet: waive RULE because REASON`` waiving the finding that starts on ``line`` (1-based).

    On the first line of a statement the comment goes alone on a new line above it, at its
    indentation. Inside a multi-line statement it is appended to ``line`` (before any comment
    already there), unless that line ends inside a string or with a backslash; then it goes alone
    on a new line directly above ``line`` (valid inside brackets), and when that is not possible
    either (after a backslash, inside a string) :class:`EditError` is raised. A waiver comment already on the chosen line, or alone on
    the line above it, gets ``rule`` added to its rule list (and ``reason`` if it has none)
    instead. Raises :class:`EditError` for a line outside the file, a rule id or reason a waiver
    cannot hold, or a file :mod:`tokenize` cannot read.
    """
    if not _RULE_ID.match(rule):
        raise EditError(f"{rule!r} is not a rule id")
    if "#" in reason or "\n" in reason or "\r" in reason or not reason.strip():
        raise EditError("a waiver reason must be one line of text without '#'")
    lines = source.split("\n")
    if not 1 <= line <= len(lines):
        raise EditError(f"line {line} is outside the file")
    layout = _layout(source)
    if line in layout.starts:
        anchor, alone = line, True
    elif line not in layout.code_end or line in layout.open_at_end or _backslash(lines, layout, line):
        # No trailing comment possible on this line. A comment line directly above it is valid
        # Python when the previous line ends inside brackets, and the engine honours a waiver
        # alone on the line above the finding; after a backslash or inside a string it is not.
        previous = line - 1
        if previous < 1 or previous in layout.open_at_end or _backslash(lines, layout, previous):
            raise EditError(f"no line next to line {line} can hold a waiver comment")
        anchor, alone = line, True
    else:
        anchor, alone = line, False
    comment = directive(False, [rule], reason)
    existing = _waiver_near(find_waivers(source), anchor)
    if existing is not None:
        return _merge(source, existing, rule, reason)
    if alone:
        text = lines[anchor - 1]
        indent = text[: len(text) - len(text.lstrip(" \t\f"))]
        if anchor < len(lines):
            newline = "\r\n" if text.endswith("\r") else "\n"
        else:
            newline = "\r\n" if "\r\n" in source else "\n"
        at = offset(source, anchor, 0)
        return source[:at] + indent + comment + newline + source[at:]
    if line in layout.comment_at:  # keep the comment already there, after ours
        at = offset(source, line, layout.comment_at[line])
        return source[:at] + comment + "  " + source[at:]
    at = offset(source, line, layout.code_end[line])
    return source[:at] + "  " + comment + source[at:]


def rewrite_waiver(source: str, span: Span, new: str) -> str:
    """``source`` with the waiver comment at ``span`` replaced by the directive ``new``
    (``# regvet: waive RULE because REASON``); a further comment after it on the line is kept.

    Raises :class:`EditError` when no waiver comment is at ``span`` or ``new`` is not one line."""
    if "\n" in new or "\r" in new or not _HEAD.match(new):
        raise EditError("the new waiver must be one line starting `# regvet: waive`")
    lines = source.split("\n")
    if not 1 <= span.line <= len(lines) or span.line != span.end_line:
        raise EditError(f"line {span.line} is outside the file")
    start = offset(source, span.line, span.col)
    end = offset(source, span.end_line, span.end_col)
    comment = source[start:end]
    head = _HEAD.match(comment)
    if head is None or "\n" in comment:
        raise EditError("no waiver comment is there any more")
    _, hash_, tail = comment[head.end() :].partition("#")
    return source[:start] + new + ("  #" + tail if hash_ else "") + source[end:]


def _backslash(lines: list[str], layout: _Layout, line: int) -> bool:
    """Does ``line`` end with a backslash continuation?"""
    end = layout.code_end.get(line)
    return end is not None and lines[line - 1][end:].strip().startswith("\\")


@dataclass
class _Layout:
    starts: set[int] = field(default_factory=set)  # lines a logical line (a statement, a clause) starts on
    spans: list[tuple[int, int]] = field(default_factory=list)  # (first, last) line of each logical line
    open_at_end: set[int] = field(default_factory=set)  # lines whose end is inside a string
    code_end: dict[int, int] = field(default_factory=dict)  # line -> column just past its last token
    comment_at: dict[int, int] = field(default_factory=dict)  # line -> column of its comment

    def statement_line(self, line: int) -> int:
        return next((a for a, b in self.spans if a <= line <= b), line)


def _layout(source: str) -> _Layout:
    out = _Layout()
    first: int | None = None
    opened: list[int] = []  # start lines of the f-strings (3.12+) being read
    try:
        for tok in tokenize.generate_tokens(io.StringIO(for_tokenize(source)).readline):  # positions only
            (a, col), (b, end) = tok.start, tok.end
            if tok.type == tokenize.COMMENT:
                out.comment_at[a] = col
            if tok.type == tokenize.NEWLINE and first is not None:
                out.spans.append((first, a))
                first = None
            if tok.type in _SKIP:
                continue
            if first is None:
                first = a
                out.starts.add(a)
            out.code_end[b] = max(end, out.code_end.get(b, 0))
            if tok.type in _STRING_OPEN:
                opened.append(a)
            elif tok.type in _STRING_CLOSE and opened:
                out.open_at_end.update(range(opened.pop(), a))
            elif tok.type == tokenize.STRING:
                out.open_at_end.update(range(a, b))
    except (tokenize.TokenError, SyntaxError) as exc:
        raise EditError(f"cannot read the file's tokens: {exc}") from None
    return out


def _waiver_near(waivers: list[Waiver], line: int) -> Waiver | None:
    """The line waiver that applies to a finding on ``line``: on that line, else alone on the line above."""
    same = [w for w in waivers if not w.file_wide and w.span.line == line]
    above = [w for w in waivers if not w.file_wide and w.alone and w.span.line == line - 1]
    found = same or above
    return found[0] if found else None


def _merge(source: str, waiver: Waiver, rule: str, reason: str) -> str:
    start = offset(source, waiver.span.line, waiver.span.col)
    end = offset(source, waiver.span.end_line, waiver.span.end_col)
    comment = source[start:end]
    head = _HEAD.match(comment)
    if head is None:  # find_waivers and this module disagree on the directive: do not guess
        raise EditError("cannot read the waiver comment already there")
    body, hash_, tail = comment[head.end() :].partition("#")
    gap = "  " if hash_ else ""
    split = split_reason(body)
    if split is None and waiver.intended:  # `RULE -- reason`: rewritten in the form regvet reads
        names = [*waiver.rules, *(() if rule in waiver.rules else (rule,))]
        body = f" {', '.join(names)} {BECAUSE} {waiver.intended}" + gap
        return source[:start] + comment[: head.end()] + body + hash_ + tail + source[end:]
    rules, because, why = split if split is not None else (body, "", "")
    names = rules.replace(",", " ").split()
    if rule in names and why.strip():
        return source
    listed = rules.rstrip() + ("" if rule in names else (", " if names else " ") + rule)
    if why.strip():
        body = listed + rules[len(rules.rstrip()) :] + because + why
    else:
        body = f"{listed} {BECAUSE} {reason}" + gap
    return source[:start] + comment[: head.end()] + body + hash_ + tail + source[end:]
