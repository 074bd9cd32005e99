"""Text positions and the one-replacement diff an editor applies (standard library only)."""

from __future__ import annotations

from dataclasses import dataclass


class EditError(Exception):
    """An edit that cannot be made safely; the message says why."""


@dataclass(frozen=True)
class TextEdit:
    """Replace the text from (line, col) to (end_line, end_col) with ``new_text``.

    Positions as :class:`regvet.model.span.Span` uses them: 1-based lines, 0-based columns in
    code points, exclusive end. Lines are separated by ``\\n`` (a ``\\r`` before it counts as
    the last character of its line).
    """

    line: int
    col: int
    end_line: int
    end_col: int
    new_text: str


def offset(text: str, line: int, col: int) -> int:
    """The index in ``text`` of 1-based ``line``, 0-based code-point ``col``; EditError when outside the text."""
    start = 0
    for _ in range(line - 1):
        start = text.find("\n", start) + 1
        if start == 0:
            raise EditError(f"line {line} is past the end of the file")
    end = text.find("\n", start)
    end = len(text) if end < 0 else end
    if line < 1 or not 0 <= col <= end - start:
        raise EditError(f"line {line}, column {col} is outside the file")
    return start + col


def position(text: str, index: int) -> tuple[int, int]:
    """(1-based line, 0-based code-point column) of ``index`` in ``text``."""
    return text.count("\n", 0, index) + 1, index - (text.rfind("\n", 0, index) + 1)


def minimal_edit(old: str, new: str) -> TextEdit | None:
    """The single replacement turning ``old`` into ``new``, or None when they are equal.

    The common prefix and suffix (by characters) are left out; positions are in ``old``. The
    replaced range never starts or ends between the ``\\r`` and ``\\n`` of a CRLF.
    """
    if old == new:
        return None
    limit = min(len(old), len(new))
    start = 0
    while start < limit and old[start] == new[start]:
        start += 1
    tail = 0
    while tail < limit - start and old[-1 - tail] == new[-1 - tail]:
        tail += 1
    if 0 < start < len(old) and old[start - 1] == "\r" and old[start] == "\n":
        start -= 1
    end = len(old) - tail
    if 0 < end < len(old) and old[end - 1] == "\r" and old[end] == "\n":
        tail -= 1
        end += 1
    line, col = position(old, start)
    end_line, end_col = position(old, end)
    return TextEdit(line, col, end_line, end_col, new[start : len(new) - tail])
