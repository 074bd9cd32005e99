"""Decode and parse Python source. Errors come back as values, never as exceptions."""

from __future__ import annotations

import ast
import codecs
import io
import tokenize
import warnings
from dataclasses import dataclass
from itertools import pairwise

from regvet.model.span import Span


@dataclass(frozen=True)
class SourceError:
    """Why a file could not be read as Python, and where (1-based line, 0-based column)."""

    message: str
    span: Span


def decode(data: bytes) -> str | SourceError:
    """Decode bytes as Python source (PEP 263 coding cookie, UTF-8 BOM, default UTF-8)."""
    try:
        encoding, _ = tokenize.detect_encoding(io.BytesIO(data).readline)
    except SyntaxError as exc:
        return SourceError(f"cannot determine the file's encoding: {exc}", Span(1, 0, 1, 0))
    refused = None if encoding in ("utf-8", "utf-8-sig") else _refused_encoding(encoding)
    if refused:
        return SourceError(f"the coding cookie names {encoding!r}, which Python refuses: {refused}", Span(1, 0, 1, 0))
    try:
        text = data.decode(encoding)
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        return SourceError(f"cannot decode the file as {encoding}: {exc}", Span(line, 0, line, 0))
    except (LookupError, UnicodeError, ValueError, TypeError) as exc:  # a codec that fails in its own way
        return SourceError(f"cannot decode the file as {encoding}: {exc}", Span(1, 0, 1, 0))
    if text.startswith("\ufeff"):
        text = text[1:]
    return text


#: Characters a coding line is written in: CPython reads it back in the encoding it names, so an
#: encoding that does not spell them as ASCII does (EBCDIC, UTF-16 without a BOM) cannot be declared.
_COOKIE_PROBE = "# -*- coding: abcdefghijklmnopqrstuvwxyz_ABCXYZ-0123456789. -*-\n\t"


def _refused_encoding(name: str) -> str | None:
    """Why CPython would refuse source declared in encoding ``name`` (None when it accepts it)."""
    try:
        info = codecs.lookup(name)
    except LookupError:
        return "it is not a known encoding"
    if not getattr(info, "_is_text_encoding", True):
        return "it is not a text encoding"
    try:
        spelled = codecs.decode(_COOKIE_PROBE.encode("ascii"), info.name)
    except (UnicodeError, ValueError, TypeError, LookupError):
        spelled = None
    if spelled != _COOKIE_PROBE:
        return "it does not write ASCII as ASCII, so the coding line itself cannot be read in it"
    return None


def without_broken_cells(python: str, starts: tuple[int, ...]) -> tuple[str, tuple[SourceError, ...]]:
    """A notebook's joined code with every cell that does not parse on its own blanked out (its lines kept,
    so positions do not move), and the error of each such cell in the joined module's lines.

    Jupyter compiles each cell on its own: a cell with a syntax error fails alone and the others run,
    so the others can be analysed without it. ``starts``: the 1-based first line of each code cell.
    """
    lines = python.split("\n")
    errors: list[SourceError] = []
    bounds = [*starts, len(lines) + 1]
    for first, after in pairwise(bounds):
        chunk = lines[first - 1 : after - 1]
        found = parse("\n".join(chunk))
        if isinstance(found, SourceError):
            span = found.span
            errors.append(
                SourceError(
                    found.message, Span(span.line + first - 1, span.col, span.end_line + first - 1, span.end_col)
                )
            )
            lines[first - 1 : after - 1] = [""] * len(chunk)
    return "\n".join(lines), tuple(errors)


def parse(text: str, filename: str = "<unknown>") -> ast.Module | SourceError:
    """``ast.parse`` with syntax errors turned into a :class:`SourceError` at the error position."""
    try:
        with warnings.catch_warnings():
            # Invalid escape sequences and the like are not regvet's business.
            warnings.simplefilter("ignore")
            return ast.parse(text, filename=filename, type_comments=False)
    except SyntaxError as exc:
        line = exc.lineno or 1
        # SyntaxError.offset is 1-based and counts characters of the line.
        col = max((exc.offset or 1) - 1, 0)
        end_line = getattr(exc, "end_lineno", None) or line
        end_col = getattr(exc, "end_offset", None)
        end_col = max(end_col - 1, col) if end_col and end_line == line else col
        if end_line != line:
            end_line, end_col = line, col
        msg = exc.msg or "invalid syntax"
        return SourceError(f"syntax error: {msg}", Span(line, col, end_line, end_col))
    except (ValueError, RecursionError, MemoryError) as exc:  # NUL bytes, absurd nesting
        return SourceError(f"cannot parse: {exc}", Span(1, 0, 1, 0))
