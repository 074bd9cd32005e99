"""``regvet mend``: the language server's quick fixes, applied in bulk to files on disk.

The edits are the ones :func:`regvet.edits.plan.plan` offers an editor; for each finding of a
selected rule the first kind its rule declares (``Rule.quick_fixes``) is applied. Every edit is
checked by analysing the new text again: an edit that does not clear the finding it targets is
undone and reported, so a second ``mend`` changes nothing.

Pure parts (:func:`mend_python`, :func:`mend_notebook`) take text and an analysis function and
return the new text; :func:`read_source`, :func:`encode_source` and :func:`replace_file` are the
file side: exact bytes in and out (encoding, byte-order mark, line endings kept) and an atomic
replacement that refuses a file changed since it was read.
"""

from __future__ import annotations

import codecs
import difflib
import io
import json
import os
import re
import stat
import tempfile
import time
import tokenize
from collections import Counter
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from regvet.baseline import fingerprint
from regvet.edits.plan import plan
from regvet.model.finding import Finding
from regvet.model.report import FileReport
from regvet.rules import RULES_BY_ID


class MendError(Exception):
    """A file mend cannot edit safely; the message says why."""


@dataclass(frozen=True)
class Change:
    """One edit made: which finding it fixed (its line before the edits), and how."""

    rule: str
    kind: str
    title: str
    line: int
    cell: int | None = None


@dataclass(frozen=True)
class NotFixed:
    rule: str
    line: int
    cell: int | None
    why: str


@dataclass
class Outcome:
    """What mend did to one file: the changes, the findings it could not fix, the text after."""

    old: str
    new: str
    changes: list[Change] = field(default_factory=list)
    not_fixed: list[NotFixed] = field(default_factory=list)
    #: For a notebook: cell index -> (old source, new source) of each changed cell.
    cells: dict[int, tuple[str, str]] = field(default_factory=dict)


def fixable_rules() -> tuple[str, ...]:
    """The rules whose findings mend can fix (those that declare quick fixes)."""
    return tuple(r.id for r in RULES_BY_ID.values() if r.quick_fixes)


def _eligible(f: Finding, rules: frozenset[str]) -> bool:
    rule = RULES_BY_ID.get(f.rule)
    return not f.waived and f.rule in rules and rule is not None and bool(rule.quick_fixes)


def _loop(
    analyse: Callable[[], FileReport],
    text_of: Callable[[int | None], str],
    set_text: Callable[[int | None, str], None],
    rules: frozenset[str],
    whole_of: Callable[[FileReport, Finding], tuple[str | None, int | None]],
) -> tuple[list[Change], list[NotFixed]]:
    changes: list[Change] = []
    stuck: dict[tuple[str, str], NotFixed] = {}
    report = analyse()
    original_lines: dict[tuple[str, str], list[int]] = {}
    for f in report.findings:
        if _eligible(f, rules):
            original_lines.setdefault((f.rule, fingerprint(report, f)), []).append(f.span.line)
    limit = 4 * len(report.findings) + 10
    for _ in range(limit):
        todo = []
        for f in report.findings:
            if _eligible(f, rules):
                key = (f.rule, fingerprint(report, f))
                if key not in stuck:
                    todo.append((f, key))
        if not todo:
            break
        f, key = todo[0]
        before = Counter(k for _, k in todo)[key]
        cell = f.span.cell
        text = text_of(cell)
        whole, whole_line = whole_of(report, f)
        rule = RULES_BY_ID[f.rule]
        kinds = [k.value for k in rule.quick_fixes]
        planned = list(plan(text, f.rule, kinds, f.fix, whole=whole, whole_line=whole_line))
        lines = original_lines.get(key) or [f.span.line]
        line = lines[0]
        if not planned:
            stuck[key] = NotFixed(
                f.rule,
                line,
                cell,
                "no quick fix applies here (regvet edits only a fit call made "
                "in this file, and inserts a check only after a fit whose result has a name)",
            )
            continue
        edit = planned[0]
        set_text(cell, edit.text)
        after = analyse()
        remaining = sum(1 for g in after.findings if _eligible(g, rules) and (g.rule, fingerprint(after, g)) == key)
        if remaining >= before:  # the edit did not clear its finding: undo it
            set_text(cell, text)
            stuck[key] = NotFixed(f.rule, line, cell, f"{edit.title.lower()} does not clear the finding")
            continue
        if len(lines) > 1:
            lines.pop(0)
        changes.append(Change(f.rule, edit.kind, edit.title, line, cell))
        report = after
    return changes, list(stuck.values())


def mend_python(text: str, analyse: Callable[[str], FileReport], rules: frozenset[str]) -> Outcome:
    """Fix the findings of ``rules`` in one Python file's text; ``analyse`` analyses a version of it."""
    state = {"text": text}

    def set_text(_cell: int | None, new: str) -> None:
        state["text"] = new

    changes, not_fixed = _loop(
        lambda: analyse(state["text"]), lambda _c: state["text"], set_text, rules, lambda _r, _f: (None, None)
    )
    return Outcome(text, state["text"], changes, not_fixed)


# --- notebooks ------------------------------------------------------------------------------------
_WS = re.compile(r"[ \t\n\r]*")


def _skip_ws(text: str, i: int) -> int:
    m = _WS.match(text, i)
    return m.end() if m else i


def _source_spans(text: str) -> dict[int, tuple[int, int]]:
    """Cell index -> (start, end) of its ``source`` value in the notebook's JSON text."""
    decoder = json.JSONDecoder()

    def members(i: int):  # yields (key, value start, value end) of the object starting at i
        i = _skip_ws(text, i)
        if text[i : i + 1] != "{":
            raise MendError("the notebook is not a JSON object where a cell was expected")
        i = _skip_ws(text, i + 1)
        if text[i : i + 1] == "}":
            return
        while True:
            key, i = decoder.raw_decode(text, i)
            i = _skip_ws(text, i)
            if text[i : i + 1] != ":":
                raise MendError("unexpected JSON layout in the notebook")
            start = _skip_ws(text, i + 1)
            _, end = decoder.raw_decode(text, start)
            yield key, start, end
            i = _skip_ws(text, end)
            if text[i : i + 1] == ",":
                i = _skip_ws(text, i + 1)
                continue
            if text[i : i + 1] == "}":
                return
            raise MendError("unexpected JSON layout in the notebook")

    out: dict[int, tuple[int, int]] = {}
    for key, start, _end in members(0):
        if key != "cells":
            continue
        i = _skip_ws(text, start)
        if text[i : i + 1] != "[":
            raise MendError('the notebook\'s "cells" is not a list')
        i = _skip_ws(text, i + 1)
        index = 0
        while text[i : i + 1] != "]":
            _, cell_end = decoder.raw_decode(text, i)
            for ckey, cstart, cend in members(i):
                if ckey == "source":
                    out[index] = (cstart, cend)
            index += 1
            i = _skip_ws(text, cell_end)
            if text[i : i + 1] == ",":
                i = _skip_ws(text, i + 1)
    return out


def _source_lines(source: str) -> list[str]:
    """nbformat's list form of a cell source: each line with its newline, the last one without."""
    return re.findall(r"[^\n]*\n|[^\n]+$", source)


def _dump_source(source: str, like: str, ensure_ascii: bool) -> str:
    """The JSON of a new cell source in the layout of the old value's text ``like``."""
    if like.lstrip().startswith('"'):
        return json.dumps(source, ensure_ascii=ensure_ascii)
    items = [json.dumps(line, ensure_ascii=ensure_ascii) for line in _source_lines(source)]
    if not items:
        return "[]"
    if "\n" not in like:
        return "[" + ", ".join(items) + "]"
    first = re.match(r"\[[ \t]*\r?\n([ \t]*)", like)
    close = re.search(r"\r?\n([ \t]*)\]$", like)
    newline = "\r\n" if "\r\n" in like else "\n"
    indent = first.group(1) if first else " "
    end = close.group(1) if close else ""
    return "[" + newline + ("," + newline).join(indent + i for i in items) + newline + end + "]"


def _cell_text(cell: dict[str, Any]) -> str:
    src = cell.get("source", "")
    return "".join(src) if isinstance(src, list) else src


def mend_notebook(
    text: str, analyse: Callable[[list[tuple[int, str]], int], FileReport], rules: frozenset[str]
) -> Outcome:
    """Fix the findings of ``rules`` in a notebook's JSON text; only the edited cells' sources change.

    ``analyse`` analyses ``(cell index, source)`` code cells (as :func:`regvet.engine.analyze_cells`).
    Outputs, metadata and every byte of the JSON outside the edited sources are kept; each new
    source is written in the layout of the old one (a list of lines or one string, the same
    indentation). Raises :class:`MendError` for a notebook it cannot read.
    """
    try:
        nb = json.loads(text)
    except json.JSONDecodeError as exc:
        raise MendError(f"invalid notebook JSON: {exc.msg} (line {exc.lineno})") from None
    if not isinstance(nb, dict) or not isinstance(nb.get("cells"), list):
        raise MendError("not an nbformat 4 notebook (no list of cells); it is left as it is")
    cells = nb["cells"]
    if not all(isinstance(c, dict) for c in cells):
        raise MendError("a cell of the notebook is not a JSON object")
    sources = {i: _cell_text(c) for i, c in enumerate(cells) if c.get("cell_type") == "code"}
    if not all(isinstance(s, str) for s in sources.values()):
        raise MendError("a code cell has a source that is not text")
    original = dict(sources)

    def analyse_now() -> FileReport:
        return analyse(sorted(sources.items()), len(cells))

    def text_of(cell: int | None) -> str:
        return sources[cell] if cell is not None else ""

    def set_text(cell: int | None, new: str) -> None:
        if cell is not None:
            sources[cell] = new

    def whole_of(report: FileReport, f: Finding) -> tuple[str | None, int | None]:
        statement = (f.fix or {}).get("statement")
        line = None
        if report.cell_map is not None and f.span.cell in report.cell_map.cells and isinstance(statement, list):
            start = report.cell_map.starts[report.cell_map.cells.index(f.span.cell)]
            line = start + int(statement[0]) - 1
        return report.python, line

    changes, not_fixed = _loop(analyse_now, text_of, set_text, rules, whole_of)
    changed = {i: (original[i], s) for i, s in sources.items() if s != original[i]}
    if not changed:
        return Outcome(text, text, changes, not_fixed)
    spans = _source_spans(text)
    ensure_ascii = text.isascii() and "\\u" in text
    new = text
    for index in sorted(changed, reverse=True):
        if index not in spans:
            raise MendError(f"cannot find the source of cell {index + 1} in the notebook's text")
        a, b = spans[index]
        new = new[:a] + _dump_source(changed[index][1], text[a:b], ensure_ascii) + new[b:]
    check = json.loads(new)
    if [_cell_text(c) for c in check["cells"]] != [sources.get(i, _cell_text(c)) for i, c in enumerate(cells)]:
        raise MendError("the rewritten notebook does not hold the edited sources (regvet bug); nothing written")
    return Outcome(text, new, changes, not_fixed, changed)


# --- bytes and files ------------------------------------------------------------------------------
@dataclass(frozen=True)
class Source:
    """A Python file's text and how to write it back byte for byte."""

    data: bytes
    text: str
    encoding: str
    bom: bool


def read_source(data: bytes) -> Source:
    """Decode a Python file so that :func:`encode_source` gives back exactly ``data``."""
    try:
        encoding, _ = tokenize.detect_encoding(io.BytesIO(data).readline)
        codecs.lookup(encoding)
    except (SyntaxError, LookupError) as exc:
        raise MendError(f"cannot determine the file's encoding: {exc}") from None
    bom = data.startswith(codecs.BOM_UTF8)
    body = data[len(codecs.BOM_UTF8) :] if bom else data
    if encoding == "utf-8-sig":
        encoding = "utf-8"
    try:
        text = body.decode(encoding)
    except UnicodeDecodeError as exc:
        raise MendError(f"cannot decode the file as {encoding}: {exc.reason}") from None
    source = Source(data, text, encoding, bom)
    if encode_source(source, text) != data:
        raise MendError(f"the file does not round-trip through {encoding}; it is left as it is")
    return source


def encode_source(source: Source, text: str) -> bytes:
    try:
        body = text.encode(source.encoding)
    except UnicodeEncodeError as exc:
        raise MendError(f"the new text cannot be written as {source.encoding}: {exc.reason}") from None
    return (codecs.BOM_UTF8 if source.bom else b"") + body


def _pause(what: str) -> None:
    """Test hook: ``REGVET_TEST_WRITE_PAUSE=<seconds>`` slows the write down so a test can kill it
    mid-write (tests/test_mend.py). Never set outside the tests."""
    value = os.environ.get("REGVET_TEST_WRITE_PAUSE")
    if value:
        time.sleep(float(value))


def replace_file(path: Path, data: bytes, original: bytes) -> None:
    """Replace ``path``'s contents with ``data``: a temporary file in the same folder, then a rename.

    The temporary file gets the original's permissions. Refuses (:class:`MendError`, nothing
    changed) when the file no longer holds ``original``. A process killed at any moment leaves the
    file either as it was or wholly replaced (at worst a stray ``*.regvet-tmp`` file beside it).
    """
    target = path.resolve()
    try:
        mode = stat.S_IMODE(target.stat().st_mode)
    except OSError as exc:
        raise MendError(f"cannot read the file's permissions: {exc.strerror or exc}") from None
    fd, tmp = tempfile.mkstemp(dir=target.parent, prefix=f".{target.name}.", suffix=".regvet-tmp")
    try:
        with os.fdopen(fd, "wb") as fh:
            half = len(data) // 2
            fh.write(data[:half])
            fh.flush()
            _pause("mid-write")
            fh.write(data[half:])
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, mode)
        try:
            now = target.read_bytes()
        except OSError as exc:
            raise MendError(f"cannot read the file again: {exc.strerror or exc}") from None
        if now != original:
            raise MendError("the file changed since regvet read it; nothing written (run mend again)")
        _pause("before-rename")
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise


def unified_diff(shown: str, outcome: Outcome) -> str:
    """The change as a unified diff (per cell for a notebook)."""
    pairs: list[tuple[str, str, str]] = []
    if outcome.cells:
        for index, (old, new) in sorted(outcome.cells.items()):
            pairs.append((f"{shown} (cell {index + 1})", old, new))
    elif outcome.new != outcome.old:
        pairs.append((shown, outcome.old, outcome.new))
    out = []
    for name, old, new in pairs:
        diff = difflib.unified_diff(
            old.splitlines(keepends=True), new.splitlines(keepends=True), fromfile=f"a/{name}", tofile=f"b/{name}"
        )
        for line in diff:
            out.append(line if line.endswith("\n") else line + "\n\\ No newline at end of file\n")
    return "".join(out)
