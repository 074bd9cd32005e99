"""The specification audit as Markdown (``regvet report -o FILE.md``): tables that code hosting sites
render, and the residual plots as separate SVG files beside the document.

Pure: :func:`render` returns the document and the image files to write (name -> SVG text); the
command writes them.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

from regvet import __version__
from regvet.audit import MISSING, REJECTED, STATES, Audit, FitAudit
from regvet.model.finding import Finding
from regvet.output.report_cells import comparison_cells
from regvet.output.report_html import STATE_MEANING


def _cell(text: object) -> str:
    return str(text).replace("|", "\\|").replace("\n", " ")


def _table(head: Sequence[str], rows: Sequence[Sequence[object]]) -> list[str]:
    out = ["| " + " | ".join(head) + " |", "|" + "|".join(" --- " for _ in head) + "|"]
    out += ["| " + " | ".join(_cell(c) for c in row) + " |" for row in rows]
    return [*out, ""]


def _finding(f: Finding) -> str:
    waived = f" (waived: {f.reason})" if f.waived else ""
    return f"- {f.severity.label} `{f.rule}` at {f.span.describe()}{waived}: {f.message}"


def _fit(
    audit: Audit, fit: FitAudit, images: Sequence[tuple[str, str]], same: tuple[str, str] | None = None
) -> list[str]:
    out = [f'### <a id="{fit.anchor}"></a>`{fit.name}`: {fit.path}, {fit.where}', ""]
    nobs = str(fit.nobs) if fit.nobs is not None else ("not recorded by the run" if audit.ran else "with `--run`")
    out += _table(
        ["fact", "value"],
        [
            ["location", f"`{fit.path}`, {fit.where}"],
            ["specification", f"`{fit.specification}` ({fit.estimator})"],
            ["dependent variable", f"`{fit.outcome}`" if fit.outcome else "not known"],
            ["observations", nobs],
            ["covariance type", fit.cov_type],
            ["risk", fit.risk.describe()],
        ],
    )
    head = ["check", "state", "done by, or why"] + (["statistic", "form", "p-value"] if audit.ran else [])
    rows = []
    for r in fit.checks:
        row: list[object] = [r.label, f"**{r.state}**", r.how]
        if audit.ran:
            row += [r.statistic or "—", r.form or "—", r.pvalue or "—"]
        rows.append(row)
    out += ["#### Checks", "", *_table(head, rows)]
    if fit.coefficients:
        kind = fit.robust_type or "robust"
        out += ["#### Coefficients", ""]
        out += _table(
            ["term", "estimate", "usual SE", "usual p", f"{kind} SE", f"{kind} p", "5 % significance"],
            [
                [
                    f"`{c.name}`",
                    c.estimate,
                    c.se,
                    c.p,
                    c.se_robust,
                    c.p_robust,
                    f"**changes**: {c.note}" if c.changes else "same",
                ]
                for c in fit.coefficients
            ],
        )
    out += ["#### Findings", ""]
    out += [_finding(f) for f in fit.findings] or ["None."]
    out.append("")
    if fit.comparisons:
        out += ["#### Comparisons", ""]
        for comp in fit.comparisons:
            verdict = "valid" if comp.valid else "not valid"
            out.append(
                f"- At {comp.where} ({comp.how}): {', '.join(comp.fits)}; **{verdict}**"
                + (f": {comp.problem}" if comp.problem else "")
            )
        out.append("")
        for comp in fit.comparisons:
            if comp.table:
                cells = comparison_cells(comp.table)
                out += _table(cells.head, cells.rows)
                out += [*(f"- {note}" for note in cells.notes), ""] if cells.notes else []
    if same is not None:
        out += [
            "#### Residual plots",
            "",
            f"The same residuals as [`{same[1]}`](#{same[0]}): its plots apply to this " "fit too.",
            "",
        ]
    elif images:
        out += ["#### Residual plots", ""]
        for alt, path in images:
            out += [f"![{alt}]({path})", "", f"*{alt}*", ""]
    elif audit.ran and fit.ran:
        out += ["#### Residual plots", "", f"Not drawn: {fit.points_error or 'no plot points were recorded'}.", ""]
    return out


def render(
    audit: Audit,
    plots: Mapping[str, Sequence[object]] | None = None,
    image_dir: str = "plots",
    same: Mapping[str, str] | None = None,
    title: str = "Specification audit",
) -> tuple[str, dict[str, str]]:
    """(the Markdown document, {relative path of each image: its SVG text}); ``plots`` and ``same`` as
    for :func:`regvet.output.report_html.render`."""
    plots = plots or {}
    names = {fit.anchor: fit.name for f in audit.files for fit in f.fits}
    same_named = {a: (b, names.get(b, b)) for a, b in (same or {}).items()}
    files: dict[str, str] = {}
    mode = "with a run of the analysis (`--run`)" if audit.ran else "from reading the code (no run)"
    out = [f"# {title}", "", f"Written by regvet {__version__} {mode}; significance level {audit.alpha:g}.", ""]
    out += ["## Summary", "", f"> **Caution.** {audit.caution}", ""]
    analysed = [f for f in audit.files if not f.skipped]
    counts = ", ".join(f"{n} {label}" for label, n in audit.counts.items())
    rows: list[list[object]] = [
        ["files scanned", f"{len(audit.files)} ({len(audit.files) - len(analysed)} without regressions)"],
        ["fits", audit.fit_count],
        ["open findings", f"{sum(audit.counts.values())} ({counts})"],
        ["waived findings", len(audit.waivers)],
    ]
    if audit.ran:
        rows.append(["fits that ran", f"{audit.fits_ran} of {audit.fit_count}"])
        rows.append(["files whose run failed", ", ".join(f"`{p}`" for p, _ in audit.failed) or "none"])
    else:
        rows.append(["run", "static reading only: the statistics, coefficients and plots need `--run`"])
    out += _table(["what", "count"], rows)
    out += ["### Fits ranked by how much their conclusions are at risk", ""]
    out += _table(
        ["rank", "fit", "where", "at risk", "rejected or missing checks"],
        [
            [
                i,
                f"[`{fit.name}`](#{fit.anchor})",
                f"`{fit.path}`, {fit.where}",
                fit.risk.describe(),
                ", ".join(f"{r.label}: {r.state}" for r in fit.checks if r.state in (REJECTED, MISSING)) or "none",
            ]
            for i, fit in enumerate(audit.ranked, start=1)
        ],
    )
    out += ["### Waivers and their reasons", ""]
    if audit.waivers:
        out += _table(
            ["file", "where", "rule", "reason"],
            [[f"`{w.path}`", w.where, f"`{w.rule}`", w.reason] for w in audit.waivers],
        )
    else:
        out += ["No finding is waived.", ""]
    if audit.failed:
        out += ["### Runs that failed", ""] + [f"- `{p}`: {why}" for p, why in audit.failed] + [""]
    out += ["### How to read the checks tables", ""]
    out += [f"- **{s}**: {STATE_MEANING[s]}" for s in STATES] + [""]
    out += ["Notebook cells are counted from 0, markdown cells included; lines from 1 within the cell.", ""]
    for f in analysed:
        out += [f"## {f.path}", ""]
        if f.run_failure:
            out += [f"**The run failed:** {f.run_failure}", ""]
        if not f.fits:
            out += ["No OLS or WLS fit is judged in this file.", ""]
        for fit in f.fits:
            images = []
            for plot in plots.get(fit.anchor, ()):
                name = f"{image_dir}/{fit.anchor}-{plot.kind}.svg"  # type: ignore[attr-defined]
                files[name] = plot.svg  # type: ignore[attr-defined]
                images.append((plot.alt, name))  # type: ignore[attr-defined]
            out += _fit(audit, fit, images, same_named.get(fit.anchor))
        if f.other_findings:
            out += ["### Other findings in this file", ""] + [_finding(x) for x in f.other_findings] + [""]
    skipped = [f.path for f in audit.files if f.skipped]
    if skipped:
        out += ["## Files without regressions", ""] + [f"- `{p}`" for p in skipped] + [""]
    return "\n".join(out).rstrip("\n") + "\n", files
