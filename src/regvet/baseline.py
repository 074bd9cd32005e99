"""The baseline: findings a project accepted when it adopted regvet, so that only new ones are reported.

``regvet baseline`` writes ``regvet-baseline.json`` (our own format, below) at the project root;
``regvet check``, the pre-commit hook and the language server then leave out the findings it
lists. A finding is known by its file, its rule and a **fingerprint** of the code it is about
(:func:`fingerprint`): the fit's own code and specification, never a line number, so inserting
lines above a fit, reformatting it or renaming a variable elsewhere keeps it known, while a new
fit (or a changed one) is new. Identical code twice in one file gives the same fingerprint; the
baseline counts them, so a third copy is still new.

The file::

    {
      "format": "regvet-baseline",
      "version": 1,
      "files": {
        "analysis/fares.py": [
          {"rule": "no-form-test", "fingerprint": "9c1e...", "about": "`level`", "line": 18}
        ]
      }
    }

Paths are relative to the baseline's folder, with forward slashes. ``about`` and ``line`` are
there for people reading the file; matching uses only the path, the rule and the fingerprint.

The fingerprint and the matching are pure; :func:`find_baseline`, :func:`load` and
:func:`write` are the only functions here that touch the file system.
"""

from __future__ import annotations

import ast
import hashlib
import json
import os
import re
import tempfile
from collections import Counter
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field, replace
from pathlib import Path

from regvet.baseline_file import BASELINE_NAME, BaselineError, find_baseline
from regvet.config import ROOT_MARKERS
from regvet.model.finding import Finding
from regvet.model.report import FileReport
from regvet.model.span import Span
from regvet.rules import RULES_BY_ID

FORMAT = "regvet-baseline"
VERSION = 1


# --- fingerprints (pure) -------------------------------------------------------------------------
def _joined(report: FileReport, span: Span) -> Span:
    """A finding's span in the analysed Python's coordinates (a notebook's joined cells)."""
    if span.cell is None or report.cell_map is None:
        return span
    cells = report.cell_map.cells
    if span.cell not in cells:
        return span
    start = report.cell_map.starts[cells.index(span.cell)]
    return Span(start + span.line - 1, span.col, start + span.end_line - 1, span.end_col)


def _slice(lines: list[str], span: Span) -> str:
    if not 1 <= span.line <= span.end_line <= len(lines):
        return ""
    if span.line == span.end_line:
        return lines[span.line - 1][span.col : span.end_col]
    parts = [
        lines[span.line - 1][span.col :],
        *lines[span.line : span.end_line - 1],
        lines[span.end_line - 1][: span.end_col],
    ]
    return "\n".join(parts)


def normalized_code(lines: list[str], span: Span) -> str:
    """The code at ``span`` with layout removed: its syntax tree without positions (whitespace,
    line breaks, comments and quote style do not count); the text without whitespace when it is
    not an expression."""
    text = _slice(lines, span).strip()
    if not text:
        return ""
    try:
        node: ast.AST = ast.parse(f"(\n{text}\n)", mode="eval").body
        dumped = ast.dump(node, annotate_fields=False, include_attributes=False)
    except (SyntaxError, ValueError, RecursionError):
        dumped = text
    return re.sub(r"\s+", "", dumped)


def fingerprint(report: FileReport, finding: Finding) -> str:
    """A digest of what ``finding`` is about, independent of where in the file it is.

    Made of the rule, the code at the finding (normalised by :func:`normalized_code`) and, for
    each fit it is about, that fit's estimator, formula, covariance type and the code of its
    site, fit call and model constructor in the analysed file (a helper's path for code
    elsewhere, by its file name). Neither line numbers, cell indices nor the message take part.
    """
    lines = (report.python or "").split("\n")
    parts = [finding.rule, normalized_code(lines, _joined(report, finding.span))]
    facts = report.facts
    for fid in finding.fits:
        try:
            fit = facts.fit(fid) if facts is not None else None
        except KeyError:
            fit = None
        if fit is None:
            continue
        parts += [fit.estimator, re.sub(r"\s+", "", fit.formula or ""), fit.cov_type or "?"]
        for loc in (fit.site, fit.fit_call):
            # code in a helper module: its file name (fronts show its path differently)
            parts.append(
                loc.path.replace("\\", "/").rsplit("/", 1)[-1] if loc.path else normalized_code(lines, loc.span)
            )
        if fit.model_span is not None:
            parts.append(normalized_code(lines, fit.model_span))
    if finding.rule == "parse-error" or (not finding.fits and not parts[1]):
        parts.append(re.sub(r"\d+", "#", finding.message))
    # surrogatepass: a helper module's file name may not be UTF-8 (the same bytes as "utf-8" otherwise)
    return hashlib.sha256("\0".join(parts).encode("utf-8", "surrogatepass")).hexdigest()[:20]


def _about(report: FileReport, finding: Finding) -> str:
    facts = report.facts
    names = []
    for fid in finding.fits[:3]:
        try:
            fit = facts.fit(fid) if facts is not None else None
        except KeyError:
            continue
        if fit is not None:
            names.append(
                f"`{fit.result_name}`" if fit.result_name else f"`{fit.formula}`" if fit.formula else fit.estimator
            )
    return ", ".join(names) or finding.message.split(". ")[0][:80]


def baselinable(finding: Finding) -> bool:
    """Findings a baseline may hold: not waived, of a rule that can be waived (the engine's own
    findings, a parse error or a waiver without a reason, are never hidden)."""
    rule = RULES_BY_ID.get(finding.rule)
    return not finding.waived and rule is not None and rule.waivable


# --- the baseline's contents (pure) --------------------------------------------------------------
@dataclass(frozen=True)
class Entry:
    path: str
    rule: str
    fingerprint: str
    about: str = ""
    line: int = 0

    @property
    def key(self) -> tuple[str, str]:
        return (self.rule, self.fingerprint)


def entries_for(report: FileReport, rel_path: str) -> list[Entry]:
    """The baseline entries for the findings of one file report, in the report's order."""
    out = []
    for f in report.findings:
        if baselinable(f):
            out.append(Entry(rel_path, f.rule, fingerprint(report, f), _about(report, f), f.span.line))
    return out


@dataclass
class Baseline:
    """A loaded baseline: its file, and its entries by file."""

    path: Path
    files: dict[str, list[Entry]] = field(default_factory=dict)

    @property
    def folder(self) -> Path:
        return self.path.parent

    def key_of(self, file: Path) -> str:
        """How the baseline names ``file``: relative to its folder when inside it, else absolute."""
        resolved = file.resolve()
        try:
            return resolved.relative_to(self.folder.resolve()).as_posix()
        except ValueError:
            return resolved.as_posix()

    def known(self, key: str) -> Counter[tuple[str, str]]:
        return Counter(e.key for e in self.files.get(key, ()))

    def count(self) -> int:
        return sum(len(v) for v in self.files.values())


@dataclass(frozen=True)
class Split:
    """A report without its known findings, and what the baseline said about the file."""

    report: FileReport
    known: int  # findings left out because the baseline lists them
    gone: int  # baseline entries of this file that no longer match a finding


def split(report: FileReport, known: Mapping[tuple[str, str], int]) -> Split:
    """``report`` without the findings ``known`` lists (each entry hides one finding, in source order)."""
    left = Counter(known)
    kept: list[Finding] = []
    hidden = 0
    for f in report.findings:
        if baselinable(f):
            key = (f.rule, fingerprint(report, f))
            if left[key] > 0:
                left[key] -= 1
                hidden += 1
                continue
        kept.append(f)
    if not hidden:
        return Split(report, 0, sum(left.values()))
    return Split(replace(report, findings=tuple(kept)), hidden, sum(left.values()))


def refreshed(old: list[Entry], current: list[Entry]) -> list[Entry]:
    """``--update``: the old entries still present in ``current`` (as many times as both have them),
    with today's ``about`` and ``line``; nothing new is added."""
    budget = Counter(e.key for e in old)
    out = []
    for e in current:
        if budget[e.key] > 0:
            budget[e.key] -= 1
            out.append(e)
    return out


def to_json(files: Mapping[str, list[Entry]]) -> str:
    body = {
        "format": FORMAT,
        "version": VERSION,
        "files": {
            path: [{"rule": e.rule, "fingerprint": e.fingerprint, "about": e.about, "line": e.line} for e in entries]
            for path, entries in sorted(files.items())
            if entries
        },
    }
    text = json.dumps(body, indent=2, ensure_ascii=False) + "\n"
    # A file name that is not UTF-8 holds lone surrogates (PEP 383): written as JSON \u escapes, the file
    # stays valid UTF-8 and reads back as the very same key.
    return _SURROGATE.sub(lambda m: f"\\u{ord(m.group()):04x}", text)


_SURROGATE = re.compile("[\ud800-\udfff]")


def from_json(text: str, path: Path) -> Baseline:
    """Parse a baseline file's text; :class:`BaselineError` names the file and what is wrong."""
    try:
        data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise BaselineError(f"{path}: not valid JSON (line {exc.lineno}, column {exc.colno}: {exc.msg})") from None
    if not isinstance(data, dict) or data.get("format") != FORMAT:
        raise BaselineError(f'{path}: not a regvet baseline (no "format": "{FORMAT}")')
    if data.get("version") != VERSION:
        raise BaselineError(f"{path}: baseline version {data.get('version')!r} is not supported (expected {VERSION})")
    files = data.get("files")
    if not isinstance(files, dict):
        raise BaselineError(f'{path}: "files" must be an object of file paths')
    out: dict[str, list[Entry]] = {}
    for key, items in files.items():
        if not isinstance(items, list):
            raise BaselineError(f"{path}: the entries of {key!r} must be a list")
        entries = []
        for i, item in enumerate(items):
            if not (
                isinstance(item, dict)
                and isinstance(item.get("rule"), str)
                and isinstance(item.get("fingerprint"), str)
            ):
                raise BaselineError(f'{path}: entry {i} of {key!r} needs a "rule" and a "fingerprint" (strings)')
            line = item.get("line")
            entries.append(
                Entry(
                    key, item["rule"], item["fingerprint"], str(item.get("about", "")), line if type(line) is int else 0
                )
            )
        out[key] = entries
    return Baseline(path, out)


# --- files ----------------------------------------------------------------------------------------
def home_for(start: Path) -> Path:
    """Where a new baseline for ``start`` goes: the existing one, else the project root, else
    ``start``'s own folder."""
    found = find_baseline(start)
    if found is not None:
        return found
    here = (start if start.is_dir() else start.parent).resolve()
    for folder in (here, *here.parents):
        if any((folder / m).exists() for m in ROOT_MARKERS):
            return folder / BASELINE_NAME
    return here / BASELINE_NAME


def load(path: Path) -> Baseline:
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        raise BaselineError(f"{path}: cannot read the baseline: {exc.strerror or exc}") from None
    except UnicodeDecodeError:
        raise BaselineError(f"{path}: the baseline is not UTF-8 text") from None
    return from_json(text, path)


def write(path: Path, files: Mapping[str, list[Entry]]) -> None:
    """Write the baseline atomically (a temporary file in the same folder, then a rename)."""
    data = to_json(files).encode("utf-8")
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".regvet-tmp")
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


_LOADED: dict[Path, tuple[tuple[int, int], Baseline | None]] = {}


def hide_known(report: FileReport, path: str | Path | None) -> FileReport:
    """``report`` without the findings the baseline of ``path`` lists (the language server's one call).

    The baseline is found as :func:`find_baseline` does and read again whenever it changes on
    disk; a baseline that cannot be read hides nothing.
    """
    if path is None or not report.findings:
        return report
    file = Path(path)
    found = find_baseline(file)
    if found is None:
        return report
    try:
        st = found.stat()
    except OSError:
        return report
    stamp = (st.st_mtime_ns, st.st_size)
    cached = _LOADED.get(found)
    if cached is None or cached[0] != stamp:
        try:
            baseline: Baseline | None = load(found)
        except BaselineError:
            baseline = None
        _LOADED[found] = cached = (stamp, baseline)
    baseline = cached[1]
    if baseline is None:
        return report
    return split(report, baseline.known(baseline.key_of(file))).report


def counts(entries: Iterable[Entry]) -> Counter[tuple[str, str]]:
    return Counter(e.key for e in entries)
