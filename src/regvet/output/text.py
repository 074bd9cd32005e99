"""Human output: the findings of each fit under one header line for the fit, wrapped to a width.

::

    scripts/fares.py:28:15: res (riders ~ fare + rain_mm)
      run: n=540, RESET p=0.048
      warning no-form-test: `res` has its estimates used ...
      line 46:5: warning no-variance-test: ...
    scripts/fares.py:53:4: error compare-across-outcomes: This compares ...

A finding about one fit is listed under that fit's header (with its own place when it is not the
fit's); a finding about several fits or none stands on its own line. A run's statistics of a fit are
shown once, in its header block. ``--format lines`` (``output/lines.py``) keeps one line per finding.
"""

from __future__ import annotations

import textwrap
from collections import Counter
from collections.abc import Iterable
from dataclasses import dataclass, field

from regvet.model.facts import Fit
from regvet.model.finding import Finding, Severity
from regvet.model.report import FileReport
from regvet.model.span import Span
from regvet.output.safe import printable
from regvet.rules.base import in_header

_COLOURS = {Severity.ERROR: "\033[31m", Severity.WARNING: "\033[33m", Severity.INFO: "\033[36m"}
_BOLD, _DIM, _RESET = "\033[1m", "\033[2m", "\033[0m"
#: The width when standard output is not a terminal (a terminal's own width is used otherwise).
DEFAULT_WIDTH = 120
#: The narrowest width text is wrapped to, whatever the terminal says.
MIN_WIDTH = 60
#: Code spans up to this long are kept on one line (a suggested call reads whole); longer ones wrap.
UNBROKEN_CODE = 48
_NBSP = "\u00a0"
_INDENT = "  "


def place(span: Span, col: bool = True) -> str:
    """A place inside a file as a person reads it: ``12:5``, or ``cell 4, line 10:14`` in a notebook
    (cells counted from 1 as on screen; ``Span.cell`` and JSON's ``cell`` count from 0)."""
    pos = f"{span.line}:{span.col + 1}" if col else f"{span.line}"
    return pos if span.cell is None else f"cell {span.cell + 1}, line {pos}"


def location(path: str, span: Span) -> str:
    """``path:12:5`` for a script, ``path, cell 4, line 10:14`` for a notebook."""
    return f"{path}:{place(span)}" if span.cell is None else f"{path}, {place(span)}"


def stats_summary(f: Finding) -> str | None:
    return f.stats.get("summary") if f.stats else None


@dataclass
class _Block:
    """One header and what is listed under it: a fit's findings, or one finding on its own."""

    key: tuple
    fit: Fit | None
    span: Span
    findings: list[Finding] = field(default_factory=list)


def _fit_span(report: FileReport, fit: Fit) -> Span | None:
    if fit.site.path is not None:
        return None  # placed in another file: the header takes the first finding's place instead
    span = fit.site.span
    return report.cell_map.span(span) if report.cell_map is not None else span


def _specification(fit: Fit) -> str:
    if fit.formula:
        return fit.formula
    outcome = fit.outcome.text if fit.outcome else "y"
    names = list(fit.regressors or ())
    if names:
        shown = ", ".join(names[:6]) + (f" and {len(names) - 6} more" if len(names) > 6 else "")
        return f"{fit.estimator} of {outcome} on {shown}"
    return f"{fit.estimator} of {outcome} on arrays"


def blocks(report: FileReport, findings: Iterable[Finding]) -> list[_Block]:
    """The findings of one file grouped: one block per fit (findings about exactly that fit), one per
    other finding; in the order of each block's first finding."""
    out: dict[tuple, _Block] = {}
    facts = report.facts
    for f in findings:
        fit = None
        if len(set(f.fits)) == 1 and facts is not None:
            try:
                fit = facts.fit(f.fits[0])
            except KeyError:
                fit = None
        if fit is not None:
            key: tuple = ("fit", fit.id)
            if key not in out:
                out[key] = _Block(key, fit, _fit_span(report, fit) or f.span)
        else:
            key = ("finding", len(out))
            out[key] = _Block(key, None, f.span)
        out[key].findings.append(f)
    return list(out.values())


def _keep_code(text: str) -> str:
    """``text`` with the spaces inside its short code spans made unbreakable for the wrapping."""
    parts = text.split("`")
    for i in range(1, len(parts) - 1, 2):  # the odd parts are inside backticks
        if len(parts[i]) <= UNBROKEN_CODE:
            parts[i] = parts[i].replace(" ", _NBSP)
    return "`".join(parts)


def _wrap(first: str, rest: str, indent: str, width: int) -> list[str]:
    """``first`` (kept whole on the first line) followed by ``rest``, wrapped at ``width`` with the
    continuation lines indented by ``indent``; short code spans are not broken."""
    keep = _NBSP not in rest
    lines = textwrap.wrap(
        _keep_code(rest) if keep else rest,
        width=max(width, MIN_WIDTH),
        initial_indent=first,
        subsequent_indent=indent,
        break_long_words=False,
        break_on_hyphens=False,
    )
    if keep:
        lines = [line.replace(_NBSP, " ") for line in lines]
    return lines or [first.rstrip()]


class _Paint:
    def __init__(self, colour: bool) -> None:
        self.colour = colour

    def __call__(self, text: str, code: str) -> str:
        return f"{code}{text}{_RESET}" if self.colour and text else text

    def head(self, line: str, prefix: str, sev: Severity | None = None, rule: str | None = None) -> str:
        """Colour the known leading parts of an already wrapped first line."""
        if not self.colour or not line.startswith(prefix):
            return line
        body = line[len(prefix) :]
        if sev is not None and rule is not None and body.startswith(f"{sev.label} {rule}"):
            tail = body[len(sev.label) + 1 + len(rule) :]
            body = f"{self(sev.label, _COLOURS[sev])} {self(rule, _DIM)}{tail}"
        return f"{self(prefix, _BOLD) if prefix.strip() else prefix}{body}"


def _finding_lines(
    f: Finding, lead: str, indent: str, width: int, paint: _Paint, message: str | None = None
) -> list[str]:
    first = f"{lead}{f.severity.label} {f.rule}: "
    lines = _wrap(first, f.message if message is None else message, indent, width)
    lines[0] = paint.head(lines[0], lead, f.severity, f.rule)
    if f.waived:  # shown with --show-waived
        lines += [paint(line, _DIM) for line in _wrap(f"{indent}waived: ", f.reason or "", indent + _INDENT, width)]
    return lines


def render_block(path: str, block: _Block, width: int, paint: _Paint) -> list[str]:
    loc = location(path, block.span) + ": "
    if block.fit is None:
        (f,) = block.findings
        lines = _finding_lines(f, loc, _INDENT * 2, width, paint)
        per_fit = f.stats["fits"] if f.stats else []
        if len(per_fit) > 1:  # several fits ran: each one's statistics, named
            for x in per_fit:
                lines += [
                    paint(line, _DIM)
                    for line in _wrap(f"{_INDENT}run of {x['fit']}: ", x["summary"], _INDENT * 3, width)
                ]
        elif stats_summary(f):
            lines += [
                paint(line, _DIM) for line in _wrap(f"{_INDENT}run: ", stats_summary(f) or "", _INDENT * 3, width)
            ]
        return lines
    fit = block.fit
    name = fit.result_name or "fit"
    lines = _wrap(loc, f"{name} ({_specification(fit)})", _INDENT * 2, width)
    lines[0] = paint.head(lines[0], loc)
    summary = next((s for s in map(stats_summary, block.findings) if s), None)
    if summary:
        lines += [paint(line, _DIM) for line in _wrap(f"{_INDENT}run: ", summary, _INDENT * 3, width)]
    for f in block.findings:
        lead = _INDENT if _same_start(f.span, block.span) else f"{_INDENT}{place(f.span)}: "
        lines += _finding_lines(f, lead, _INDENT * 3, width, paint, in_header(f.message, fit))
    return lines


def _same_start(a: Span, b: Span) -> bool:
    return (a.cell, a.line, a.col) == (b.cell, b.line, b.col)


def summary_line(reports: list[FileReport], counted: list[list[Finding]]) -> str:
    """The last line: the findings that count (not waived) by severity, in how many files; how many waived.

    ``counted`` holds, per report, its findings that are not waived."""
    counts = Counter(f.severity for fs in counted for f in fs)
    files_with = sum(1 for fs in counted if fs)
    total = sum(counts.values())
    analysed = sum(1 for r in reports if not r.skipped)
    waived = sum(1 for r in reports for f in r.findings if f.waived)
    parts = [f"{counts[s]} {s.label}{'s' if counts[s] != 1 and s != Severity.INFO else ''}" for s in reversed(Severity)]
    text = (
        f"regvet: {total} finding{'s' if total != 1 else ''} ({', '.join(parts)}) in {files_with} of "
        f"{len(reports)} file{'s' if len(reports) != 1 else ''}"
    )
    if analysed != len(reports):
        text += f" ({len(reports) - analysed} without regressions)"
    if waived:
        text += f"; {waived} waived"
    return text


def rule_counts(counted: list[list[Finding]]) -> list[str]:
    """``--counts``: one line per rule, the most frequent first."""
    tally = Counter(f.rule for fs in counted for f in fs)
    if not tally:
        return []
    wide = max(len(r) for r in tally)
    return ["findings per rule:"] + [
        f"{_INDENT}{rule:<{wide}}  {n}" for rule, n in sorted(tally.items(), key=lambda kv: (-kv[1], kv[0]))
    ]


def tail(reports: list[FileReport], counts: bool, width: int | None = None) -> list[str]:
    """What ends every text and lines output: the per-rule counts (``--counts``), then the summary line
    (wrapped at ``width`` when given)."""
    counted = [[f for f in r.findings if not f.waived] for r in reports]
    summary = summary_line(reports, counted)
    wrapped = _wrap("", summary, _INDENT * 2, width) if width is not None else [summary]
    return [*(rule_counts(counted) if counts else []), *wrapped]


def render(
    reports: list[FileReport],
    *,
    colour: bool = False,
    width: int = DEFAULT_WIDTH,
    quiet: bool = False,
    show_waived: bool = False,
    counts: bool = False,
    **_: object,
) -> str:
    paint = _Paint(colour)
    lines: list[str] = []
    if not quiet:
        for report in reports:
            shown = [f for f in report.findings if show_waived or not f.waived]
            if lines and shown:
                lines.append("")  # a blank line between files
            for block in blocks(report, shown):
                lines += render_block(report.path, block, width, paint)
    if lines:
        lines.append("")
    return printable("\n".join([*lines, *tail(reports, counts, width)]) + "\n")
