"""The specification audit as one self-contained HTML file (``regvet report -o FILE.html``).

No scripts, no external styles, fonts or images: the plots are inline SVG. Everything a colour
says is also said in words (the states are words; colours only repeat them). The palette below
is checked for WCAG 2.1 contrast (at least 4.5:1) by ``tests/test_report.py``. Pure: an
:class:`~regvet.audit.Audit` and the drawn plots in, text out.
"""

from __future__ import annotations

import html
import re
from collections.abc import Mapping, Sequence

from regvet import __version__
from regvet.audit import (
    DONE,
    MISSING,
    NOT_APPLICABLE,
    PASSED,
    REJECTED,
    STATES,
    WAIVED,
    Audit,
    FileAudit,
    FitAudit,
)
from regvet.model.finding import Finding
from regvet.output.report_cells import comparison_cells

#: State -> (CSS class, text colour, background). Dark text on light backgrounds.
STATE_STYLE = {
    PASSED: ("passed", "#1b5e2b", "#e3f1e6"),
    REJECTED: ("rejected", "#8a1c1c", "#fbe4e4"),
    DONE: ("done", "#0b4f8a", "#e4eef8"),
    MISSING: ("missing", "#6b4100", "#fdf0d5"),
    WAIVED: ("waived", "#3d3d7a", "#ebebf7"),
    NOT_APPLICABLE: ("na", "#454545", "#f0f0f0"),
}
STATE_MEANING = {
    PASSED: "the code runs the check (or uses a covariance that deals with it) and the run shows no problem",
    REJECTED: "the code runs the check and the run shows a problem (a rejected test, an invalid comparison)",
    DONE: "the code runs the check; without --run its result is not known",
    MISSING: "a rule requires the check and the code does not run it (or the run shows a problem never checked)",
    WAIVED: "a waiver comment says why the check does not apply",
    NOT_APPLICABLE: "nothing requires the check for this fit",
}
TEXT, MUTED, LINK, BACKGROUND = "#1a1a1a", "#4a4a4a", "#0b4f8a", "#ffffff"
HEADER_BG, CAUTION_BG, CODE_BG = "#eef1f4", "#fff6dc", "#f3f3f3"


def _css() -> str:
    states = "\n".join(f".state.{cls} {{ color: {fg}; background: {bg}; }}" for cls, fg, bg in STATE_STYLE.values())
    return f"""
body {{ color: {TEXT}; background: {BACKGROUND}; font-family: system-ui, -apple-system, "Segoe UI", sans-serif;
  line-height: 1.45; margin: 0 auto; max-width: 72rem; padding: 1rem 1.5rem; }}
a {{ color: {LINK}; }}
code {{ color: {TEXT}; background: {CODE_BG}; font-family: ui-monospace, "DejaVu Sans Mono", monospace;
  font-size: 0.92em; padding: 0 0.2em; }}
.muted {{ color: {MUTED}; background: {BACKGROUND}; }}
.caution {{ color: {TEXT}; background: {CAUTION_BG}; border-left: 0.3rem solid #8a6d00; padding: 0.6rem 0.9rem; }}
table {{ border-collapse: collapse; margin: 0.6rem 0 1rem; font-size: 0.93rem; }}
th, td {{ border: 1px solid #b8bec6; padding: 0.25rem 0.5rem; text-align: left; vertical-align: top; }}
th {{ color: {TEXT}; background: {HEADER_BG}; }}
td.num {{ text-align: right; font-variant-numeric: tabular-nums; }}
.state {{ font-weight: 600; white-space: nowrap; padding: 0 0.3em; }}
{states}
.change {{ color: #8a1c1c; background: {BACKGROUND}; font-weight: 600; }}
article {{ border-top: 2px solid #b8bec6; margin-top: 1.4rem; padding-top: 0.4rem; }}
dl.facts {{ display: grid; grid-template-columns: max-content 1fr; gap: 0.1rem 1rem; }}
dl.facts dt {{ color: {MUTED}; background: {BACKGROUND}; }}
dl.facts dd {{ margin: 0; }}
figure {{ display: inline-block; margin: 0.3rem 0.6rem 0.6rem 0; max-width: 30rem; vertical-align: top; }}
figure svg {{ max-width: 100%; height: auto; }}
figcaption {{ color: {MUTED}; background: {BACKGROUND}; font-size: 0.85rem; }}
ul.findings li {{ margin-bottom: 0.4rem; }}
ul.notes {{ font-size: 0.88rem; margin-top: -0.4rem; }}
@media print {{
  body {{ max-width: none; padding: 0; font-size: 10pt; }}
  article, table, figure {{ break-inside: avoid; }}
  a {{ color: {TEXT}; text-decoration: none; }}
}}
"""


def _inline(text: str) -> str:
    """Escaped text with `code` spans."""
    parts = re.split(r"`([^`]*)`", text)
    return "".join(html.escape(p) if i % 2 == 0 else f"<code>{html.escape(p)}</code>" for i, p in enumerate(parts))


def _state(state: str) -> str:
    cls = STATE_STYLE[state][0]
    return f'<span class="state {cls}">{html.escape(state)}</span>'


def _table(caption: str, head: Sequence[str], rows: Sequence[Sequence[str]], numeric: Sequence[int] = ()) -> str:
    out = [f"<table>\n<caption>{caption}</caption>\n<thead><tr>"]
    out += [f'<th scope="col">{h}</th>' for h in head]
    out.append("</tr></thead>\n<tbody>")
    for row in rows:
        cells = []
        for i, cell in enumerate(row):
            if i == 0:
                cells.append(f'<th scope="row">{cell}</th>')
            else:
                cells.append(f'<td class="num">{cell}</td>' if i in numeric else f"<td>{cell}</td>")
        out.append("<tr>" + "".join(cells) + "</tr>")
    out.append("</tbody>\n</table>")
    return "\n".join(out)


def _finding_item(f: Finding) -> str:
    label = f"{f.severity.label} <code>{html.escape(f.rule)}</code> at {html.escape(f.span.describe())}"
    extra = f" <em>(waived: {_inline(f.reason or '')})</em>" if f.waived else ""
    return f"<li>{label}{extra}: {_inline(f.message)}</li>"


def _summary(audit: Audit, title: str) -> str:
    files = list(audit.files)
    analysed = [f for f in files if not f.skipped]
    counts = ", ".join(f"{n} {label}" for label, n in audit.counts.items())
    rows = [
        ["Files scanned", f"{len(files)} ({len(files) - len(analysed)} without regressions)"],
        ["Fits", str(audit.fit_count)],
        ["Open findings", f"{sum(audit.counts.values())} ({counts})"],
        ["Waived findings", str(len(audit.waivers))],
    ]
    if audit.ran:
        rows.append(["Fits that ran", f"{audit.fits_ran} of {audit.fit_count}"])
        rows.append(
            [
                "Files whose run failed",
                str(len(audit.failed))
                + (": " + ", ".join(f"<code>{html.escape(p)}</code>" for p, _ in audit.failed) if audit.failed else ""),
            ]
        )
    else:
        rows.append(["Run", "static reading only: the statistics, coefficients and plots need <code>--run</code>"])
    out = ['<section aria-labelledby="summary">\n<h2 id="summary">Summary</h2>']
    out.append(f'<p class="caution"><strong>Caution.</strong> {html.escape(audit.caution)}</p>')
    out.append(_table("What was scanned", ["what", "count"], rows))
    out.append('<h3 id="ranking">Fits ranked by how much their conclusions are at risk</h3>')
    out.append(
        '<p class="muted">First the fits with coefficients whose 5 % significance changes under robust '
        "standard errors while the fit reports the usual ones, then those with rejected tests or invalid "
        "comparisons, then those with missing checks.</p>"
    )
    ranked = []
    for i, fit in enumerate(audit.ranked, start=1):
        states = ", ".join(f"{r.label}: {r.state}" for r in fit.checks if r.state in (REJECTED, MISSING))
        ranked.append(
            [
                str(i),
                f'<a href="#{fit.anchor}"><code>{html.escape(fit.name)}</code></a>',
                f"<code>{html.escape(fit.path)}</code>, {html.escape(fit.where)}",
                html.escape(fit.risk.describe()),
                html.escape(states or "none"),
            ]
        )
    out.append(_table("Fits by risk", ["rank", "fit", "where", "at risk", "rejected or missing checks"], ranked, (0,)))
    out.append('<h3 id="waivers">Waivers and their reasons</h3>')
    if audit.waivers:
        out.append(
            _table(
                "Waived findings",
                ["file", "where", "rule", "reason"],
                [
                    [
                        f"<code>{html.escape(w.path)}</code>",
                        html.escape(w.where),
                        f"<code>{html.escape(w.rule)}</code>",
                        _inline(w.reason),
                    ]
                    for w in audit.waivers
                ],
            )
        )
    else:
        out.append("<p>No finding is waived.</p>")
    if audit.failed:
        out.append('<h3 id="failed">Runs that failed</h3>\n<ul>')
        out += [f"<li><code>{html.escape(p)}</code>: {_inline(why)}</li>" for p, why in audit.failed]
        out.append("</ul>")
    out.append('<h3 id="states">How to read the checks tables</h3>\n<dl>')
    for state in STATES:
        out.append(f"<dt>{_state(state)}</dt><dd>{html.escape(STATE_MEANING[state])}</dd>")
    out.append(
        '</dl>\n<p class="muted">Notebook cells are counted from 0, markdown cells included; lines from 1 '
        "within the cell.</p>\n</section>"
    )
    return "\n".join(out)


def _fit(audit: Audit, fit: FitAudit, plots: Sequence[object], same: tuple[str, str] | None = None) -> str:
    out = [f'<article id="{fit.anchor}">']
    out.append(f"<h3><code>{html.escape(fit.name)}</code>: {html.escape(fit.path)}, {html.escape(fit.where)}</h3>")
    facts = [
        ("Location", f"<code>{html.escape(fit.path)}</code>, {html.escape(fit.where)}"),
        ("Specification", f"<code>{html.escape(fit.specification)}</code> ({html.escape(fit.estimator)})"),
        ("Dependent variable", f"<code>{html.escape(fit.outcome)}</code>" if fit.outcome else "not known"),
        (
            "Observations",
            str(fit.nobs)
            if fit.nobs is not None
            else ("the run recorded no statistics for this fit" if audit.ran else "with <code>--run</code>"),
        ),
        ("Covariance type", html.escape(fit.cov_type)),
        ("Risk", html.escape(fit.risk.describe())),
    ]
    if fit.runs > 1:
        facts.append(("Runs", f"{fit.runs} (the statistics are those of the first run)"))
    if fit.alternatives > 1:
        facts.append(
            (
                "Note",
                f"regvet follows {fit.alternatives} possible fits reaching this place; the one "
                "most at risk is shown",
            )
        )
    out.append('<dl class="facts">' + "".join(f"<dt>{k}</dt><dd>{v}</dd>" for k, v in facts) + "</dl>")
    head = ["check", "state", "done by, or why"]
    if audit.ran:
        head += ["statistic", "form", "p-value"]
    rows = []
    for r in fit.checks:
        row = [html.escape(r.label), _state(r.state), _inline(r.how)]
        if audit.ran:
            row += [html.escape(r.statistic or "—"), html.escape(r.form or "—"), html.escape(r.pvalue or "—")]
        rows.append(row)
    out.append(f'<h4 id="{fit.anchor}-checks">Checks</h4>')
    out.append(
        _table(f"Checks of <code>{html.escape(fit.name)}</code>", head, rows).replace(
            "<table>", '<table class="checks">', 1
        )
    )
    if fit.coefficients:
        kind = html.escape(fit.robust_type or "robust")
        out.append(f'<h4 id="{fit.anchor}-coefficients">Coefficients</h4>')
        crow = []
        for c in fit.coefficients:
            change = f'<span class="change">changes: {html.escape(c.note)}</span>' if c.changes else "same"
            crow.append(
                [
                    f"<code>{html.escape(c.name)}</code>",
                    *(html.escape(v) for v in (c.estimate, c.se, c.p, c.se_robust, c.p_robust)),
                    change,
                ]
            )
        out.append(
            _table(
                f"Coefficients of <code>{html.escape(fit.name)}</code> with the usual and {kind} standard errors",
                ["term", "estimate", "usual SE", "usual p", f"{kind} SE", f"{kind} p", "5 % significance"],
                crow,
                (1, 2, 3, 4, 5),
            )
        )
    out.append(f'<h4 id="{fit.anchor}-findings">Findings</h4>')
    if fit.findings:
        out.append('<ul class="findings">' + "".join(_finding_item(f) for f in fit.findings) + "</ul>")
    else:
        out.append("<p>None.</p>")
    if fit.comparisons:
        out.append(f'<h4 id="{fit.anchor}-comparisons">Comparisons</h4>')
        for comp in fit.comparisons:
            verdict = "valid" if comp.valid else "not valid"
            out.append(
                f"<p>At {html.escape(comp.where)} ({html.escape(comp.how)}): {', '.join(_inline(x) for x in comp.fits)}"
                f"; <strong>{verdict}</strong>{': ' + _inline(comp.problem) if comp.problem else ''}</p>"
            )
            if comp.table:
                cells = comparison_cells(comp.table)
                out.append(
                    _table(
                        "Comparable measures",
                        [html.escape(h) for h in cells.head],
                        [[_inline(c) for c in row] for row in cells.rows],
                        cells.numeric,
                    )
                )
                if cells.notes:
                    out.append('<ul class="notes">' + "".join(f"<li>{_inline(n)}</li>" for n in cells.notes) + "</ul>")
    if same is not None:
        out.append(
            f'<h4 id="{fit.anchor}-plots">Residual plots</h4>\n<p>The same residuals as <a href="#{same[0]}">'
            f"<code>{html.escape(same[1])}</code></a>: its plots apply to this fit too.</p>"
        )
    elif plots:
        out.append(f'<h4 id="{fit.anchor}-plots">Residual plots</h4>')
        for plot in plots:
            out.append(f"<figure>{plot.svg}<figcaption>{html.escape(plot.alt)}</figcaption></figure>")  # type: ignore[attr-defined]
    elif audit.ran and fit.ran:
        why = fit.points_error or "no plot points were recorded"
        out.append(f'<h4 id="{fit.anchor}-plots">Residual plots</h4>\n<p>Not drawn: {html.escape(why)}.</p>')
    out.append("</article>")
    return "\n".join(out)


def _file(
    audit: Audit, index: int, f: FileAudit, plots: Mapping[str, Sequence[object]], same: Mapping[str, tuple[str, str]]
) -> str:
    out = [f'<section aria-labelledby="file-{index}">\n<h2 id="file-{index}">{html.escape(f.path)}</h2>']
    if f.run_failure:
        out.append(f"<p><strong>The run failed:</strong> {_inline(f.run_failure)}</p>")
    if not f.fits:
        out.append("<p>No OLS or WLS fit is judged in this file.</p>")
    for fit in f.fits:
        out.append(_fit(audit, fit, plots.get(fit.anchor, ()), same.get(fit.anchor)))
    if f.other_findings:
        out.append(f'<h3 id="file-{index}-other">Other findings in this file</h3>')
        out.append('<ul class="findings">' + "".join(_finding_item(x) for x in f.other_findings) + "</ul>")
    out.append("</section>")
    return "\n".join(out)


def render(
    audit: Audit,
    plots: Mapping[str, Sequence[object]] | None = None,
    same: Mapping[str, str] | None = None,
    title: str = "Specification audit",
) -> str:
    """The HTML document. ``plots`` maps a fit's anchor to its drawn plots (``regvet.plots.Plot``),
    ``same`` a fit's anchor to the anchor of the fit with the very same residuals (plots drawn once)."""
    plots = plots or {}
    names = {fit.anchor: fit.name for f in audit.files for fit in f.fits}
    same_named = {a: (b, names.get(b, b)) for a, b in (same or {}).items()}
    files = [f for f in audit.files if not f.skipped]
    body = [_summary(audit, title)]
    body += [_file(audit, i, f, plots, same_named) for i, f in enumerate(files)]
    skipped = [f.path for f in audit.files if f.skipped]
    if skipped:
        body.append(
            '<section aria-labelledby="skipped">\n<h2 id="skipped">Files without regressions</h2>\n<ul>'
            + "".join(f"<li><code>{html.escape(p)}</code></li>" for p in skipped)
            + "</ul>\n</section>"
        )
    mode = "with a run of the analysis (--run)" if audit.ran else "from reading the code (no run)"
    return f"""<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="generator" content="regvet {html.escape(__version__)}">
<title>{html.escape(title)}</title>
<style>{_css()}</style>
</head>
<body>
<header>
<h1>{html.escape(title)}</h1>
<p class="muted">Written by regvet {html.escape(__version__)} {html.escape(mode)}; significance level
{audit.alpha:g}.</p>
</header>
<main>
{chr(10).join(body)}
</main>
</body>
</html>
"""
