"""Source positions in regvet's own convention.

A :class:`Span` has 1-based lines and 0-based columns counted in Unicode code
points, with an exclusive end (``end_col`` is the column just past the last
character). Fronts convert at the edges: the CLI prints 1-based columns, SARIF
declares ``unicodeCodePoints``, the language server converts to UTF-16.

For notebooks, ``cell`` is the 0-based index in the notebook's full cell list
(markdown cells counted) and ``line``/``end_line`` are 1-based within that cell.
"""

from __future__ import annotations

from dataclasses import dataclass


def code_point_col(text: str, byte_col: int) -> int:
    """A UTF-8 byte column of ``text`` (what ``ast`` and CPython's code positions give) in code points."""
    if text.isascii():
        return byte_col
    return len(text.encode("utf-8")[:byte_col].decode("utf-8", errors="replace"))


def byte_col(text: str, col: int) -> int:
    """A code-point column of ``text`` as a UTF-8 byte column."""
    return col if text.isascii() else len(text[:col].encode("utf-8"))


@dataclass(frozen=True, order=True)
class Span:
    line: int
    col: int
    end_line: int
    end_col: int
    cell: int | None = None

    def sort_key(self) -> tuple[int, int, int]:
        return (-1 if self.cell is None else self.cell, self.line, self.col)

    def describe(self) -> str:
        """Short human form: ``line 12`` or ``cell 4, line 2`` (cells counted from 1, as people count them
        on screen; ``cell`` itself counts from 0)."""
        if self.cell is None:
            return f"line {self.line}"
        return f"cell {self.cell + 1}, line {self.line}"
