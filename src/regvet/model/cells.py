"""Where a notebook's cells sit in the one module regvet analyses: a pure value."""

from __future__ import annotations

from bisect import bisect_right
from dataclasses import dataclass, field

from regvet.model.span import Span


@dataclass(frozen=True)
class CellMap:
    """Maps lines of the joined module back to (cell index, line within the cell)."""

    starts: tuple[int, ...]  # 1-based first line of each code cell in the joined module
    cells: tuple[int, ...]  # the cell index of each of those code cells
    #: Each code cell's text as written (magics kept, line ends normalised), for the runtime's IPython shell.
    sources: tuple[str, ...] = field(default=(), compare=False, repr=False)

    def locate(self, line: int) -> tuple[int, int]:
        i = bisect_right(self.starts, line) - 1
        if i < 0:
            return (self.cells[0] if self.cells else 0, line)
        return self.cells[i], line - self.starts[i] + 1

    def span(self, span: Span) -> Span:
        """Turn a span of the joined module into a cell-relative one."""
        cell, line = self.locate(span.line)
        end_cell, end_line = self.locate(span.end_line)
        if end_cell != cell:  # a span never crosses cells in practice; clamp to be safe
            end_line, end_col = line, span.col
        else:
            end_col = span.end_col
        return Span(line, span.col, end_line, end_col, cell)
