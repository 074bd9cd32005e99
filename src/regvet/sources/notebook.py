"""Jupyter notebooks as one Python module with a map back to cells.

Code cells are joined in order (so a test in a later cell covers a fit in an
earlier one). IPython magics and shell escapes are replaced by ``pass`` at the
same indentation, so no line moves and blocks stay valid; cells whose body is
not Python (``%%bash``, ``%%sql``, ...) become blank lines. The work is linear in the
cell: one scan that follows brackets, strings and continuations tells whether a line
starts inside a statement (where a ``!`` or ``%`` is not a magic).
"""

from __future__ import annotations

import ast
import re
from dataclasses import dataclass

from regvet.model.cells import CellMap
from regvet.model.span import Span
from regvet.sources.python import SourceError

_LINE_MAGIC = re.compile(r"^(\s*)(?:%|!|[A-Za-z_][\w.]*\s*=\s*[!%])")  # %cmd, !cmd, x = !cmd, x = %cmd
#: Cell magics whose body is ordinary Python.
PYTHON_CELL_MAGICS = frozenset({"time", "timeit", "capture", "prun", "debug", "memit"})


@dataclass(frozen=True)
class NotebookSource:
    python: str
    cell_map: CellMap
    cell_count: int


class _Statements:
    """Follows brackets, strings and backslash continuations over lines fed one by one."""

    def __init__(self) -> None:
        self.depth = 0  # open brackets
        self.quote: str | None = None  # the open triple quote
        self.continued = False  # the last line ended with a backslash

    @property
    def inside(self) -> bool:
        """Whether the next line starts inside a statement (brackets, a triple-quoted string, a continuation)."""
        return self.depth > 0 or self.quote is not None or self.continued

    def feed(self, line: str) -> None:
        i, n = 0, len(line)
        self.continued = False
        while i < n:
            c = line[i]
            if self.quote is not None:
                if c == "\\":
                    i += 2
                    continue
                if line.startswith(self.quote, i):
                    self.quote = None
                    i += 3
                    continue
            elif c == "#":
                return
            elif c in "([{":
                self.depth += 1
            elif c in ")]}":
                self.depth = max(self.depth - 1, 0)
            elif c in "'\"":
                if line.startswith(c * 3, i):
                    self.quote = c * 3
                    i += 3
                    continue
                i += 1
                while i < n and line[i] != c:
                    i += 2 if line[i] == "\\" else 1
                if i > n:  # a backslash at the end of the line continues the string
                    self.continued = True
            elif c == "\\" and i == n - 1:
                self.continued = True
            i += 1


def _help_line(line: str) -> re.Match | None:
    """``obj?`` or ``obj??`` (the part before the indentation's end as group 1), or None."""
    body = line.lstrip()
    end = body.rstrip()
    if len(end) >= 2 and end.endswith("?") and not end.startswith("#"):
        return re.match(r"(\s*)", line)
    return None


def neutralize(cell: str) -> str:
    """Python text with exactly as many lines as ``cell``; magics become ``pass``."""
    lines = cell.split("\n")
    if lines and lines[0].lstrip().startswith("%%"):
        name = (lines[0].lstrip()[2:].split() or [""])[0]
        if name not in PYTHON_CELL_MAGICS:
            return "\n".join("" for _ in lines)
        lines[0] = ""
    joined = "\n".join(lines)
    try:
        ast.parse(joined)
        return joined  # valid Python: leave every byte alone
    except (SyntaxError, ValueError):
        pass
    out: list[str] = []
    statements = _Statements()
    for line in lines:
        m = _LINE_MAGIC.match(line) or _help_line(line)
        if m and not statements.inside:
            line = m.group(1) + "pass"
        out.append(line)
        statements.feed(line)
    return "\n".join(out)


def _position(text: str, pos: int) -> Span:
    line = text.count("\n", 0, pos) + 1
    col = pos - (text.rfind("\n", 0, pos) + 1)
    return Span(line, col, line, col)


def read_notebook(text: str) -> NotebookSource | SourceError:
    """Parse notebook JSON (v4, or v3 worksheets) tolerantly into one Python module."""
    import json

    try:
        nb = json.loads(text)
    except json.JSONDecodeError as exc:
        return SourceError(f"invalid notebook JSON: {exc.msg}", _position(text, exc.pos))
    except RecursionError:
        return SourceError("invalid notebook JSON: nested too deeply", Span(1, 0, 1, 0))
    if not isinstance(nb, dict):
        return SourceError("invalid notebook: the top level is not a JSON object", Span(1, 0, 1, 0))
    cells = nb.get("cells")
    if cells is None and isinstance(nb.get("worksheets"), list):  # nbformat 3
        cells = []
        for number, ws in enumerate(nb["worksheets"]):
            held = ws.get("cells", []) if isinstance(ws, dict) else None
            if not isinstance(held, list):
                return SourceError(f"invalid notebook: worksheet {number + 1} has no list of cells", Span(1, 0, 1, 0))
            cells.extend(held)
    if not isinstance(cells, list):
        return SourceError("invalid notebook: no list of cells", Span(1, 0, 1, 0))
    code: list[tuple[int, str]] = []
    for index, cell in enumerate(cells):
        if not isinstance(cell, dict) or cell.get("cell_type") != "code":
            continue
        src = cell.get("source", cell.get("input", ""))
        if isinstance(src, list):
            if not all(isinstance(s, str) for s in src):
                return SourceError(f"invalid notebook: cell {index + 1} has a non-text source", Span(1, 0, 1, 0))
            src = "".join(src)
        if not isinstance(src, str):
            return SourceError(f"invalid notebook: cell {index + 1} has a non-text source", Span(1, 0, 1, 0))
        code.append((index, src))
    return join_cells(code, len(cells))


def join_cells(code_cells: list[tuple[int, str]], cell_count: int) -> NotebookSource:
    """One Python module from ``(cell index, source)`` pairs of code cells, in notebook order."""
    parts: list[str] = []
    starts: list[int] = []
    indices: list[int] = []
    raw: list[str] = []
    line = 1
    for index, src in code_cells:
        raw.append(src.replace("\r\n", "\n"))
        py = neutralize(raw[-1])
        if not py.endswith("\n"):
            py += "\n"
        starts.append(line)
        indices.append(index)
        parts.append(py)
        line += py.count("\n")
    return NotebookSource("".join(parts), CellMap(tuple(starts), tuple(indices), tuple(raw)), cell_count)
