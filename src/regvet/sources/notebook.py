"""Jupyter notebooks as one Python module with a map back to cells.

Code cells are joined in order (so a test in a later cell covers a fit in an
earlier one). IPython magics and shell escapes are replaced by ``pass`` at the
same indentation, so no line moves and blocks stay valid; cells whose body is
not Python (``%%bash``, ``%%sql``, ...) become blank lines.
"""

from __future__ import annotations

import ast
import io
import json
import re
import tokenize
from dataclasses import dataclass

from regvet.model.cells import CellMap
from regvet.model.span import Span
from regvet.sources.python import SourceError

_LINE_MAGIC = re.compile(r"^(\s*)(?:%|!|[A-Za-z_][\w.]*\s*=\s*[!%])")  # %cmd, !cmd, x = !cmd, x = %cmd
_HELP = re.compile(r"^(\s*)[^#\s].*?\?\??\s*$")  # obj?  obj??
#: Cell magics whose body is ordinary Python.
PYTHON_CELL_MAGICS = frozenset({"time", "timeit", "capture", "prun", "debug", "memit"})


@dataclass(frozen=True)
class NotebookSource:
    python: str
    cell_map: CellMap
    cell_count: int


def _inside_statement(prefix: str) -> bool:
    """True when ``prefix`` ends inside brackets, a triple-quoted string or a continuation."""
    try:
        for _ in tokenize.generate_tokens(io.StringIO(prefix).readline):
            pass
        return False
    except (tokenize.TokenError, IndentationError, SyntaxError):
        return True


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
    for line in lines:
        m = _LINE_MAGIC.match(line) or _HELP.match(line)
        if m and not (out and _inside_statement("\n".join(out) + "\n")):
            out.append(m.group(1) + "pass")
        else:
            out.append(line)
    return "\n".join(out)


def _position(text: str, pos: int) -> Span:
    line = text.count("\n", 0, pos) + 1
    col = pos - (text.rfind("\n", 0, pos) + 1)
    return Span(line, col, line, col)


def read_notebook(text: str) -> NotebookSource | SourceError:
    """Parse notebook JSON (v4, or v3 worksheets) tolerantly into one Python module."""
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
        cells = [c for ws in nb["worksheets"] if isinstance(ws, dict) for c in ws.get("cells", [])]
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
    line = 1
    for index, src in code_cells:
        py = neutralize(src.replace("\r\n", "\n"))
        if not py.endswith("\n"):
            py += "\n"
        starts.append(line)
        indices.append(index)
        parts.append(py)
        line += py.count("\n")
    return NotebookSource("".join(parts), CellMap(tuple(starts), tuple(indices)), cell_count)
