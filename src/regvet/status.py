"""Where each check stands for one fit: the compact status an editor shows on hover.

Pure: a :class:`~regvet.engine.FileReport` in, values out. Positions are the
report's own (cell-relative for notebooks).
"""

from __future__ import annotations

from dataclasses import dataclass

from regvet.analysis.catalog import HAC_COV, ROBUST_COV
from regvet.model.facts import Fit, Loc
from regvet.model.finding import Finding
from regvet.model.report import FileReport
from regvet.model.settings import Settings
from regvet.model.span import Span
from regvet.rules import ALL_RULES, rules_for_family
from regvet.rules.base import RuleInput, robust_version, site_labels, specification
from regvet.rules.no_break_test import break_question

#: The check families the hover shows, by label (the rules that report each one missing say so
#: with ``Rule.family``).
FAMILY_LABELS = {
    "functional form": "form",
    "variance": "variance",
    "normality": "normality",
    "serial correlation": "serial",
    "breaks": "breaks",
}


@dataclass(frozen=True)
class FamilyStatus:
    family: str
    state: str  # "done" | "missing" | "waived" | "not needed" | "failed"
    detail: str = ""


@dataclass(frozen=True)
class FitStatus:
    fit: Fit
    span: Span  # the fit site, in the report's coordinates
    title: str
    families: tuple[FamilyStatus, ...]

    def markdown(self) -> str:
        lines = [f"**regvet** · {self.title}", ""]
        for fam in self.families:
            detail = f": {fam.detail}" if fam.detail else ""
            lines.append(f"- {fam.family}: **{fam.state}**{detail}")
        return "\n".join(lines)


def _span(report: FileReport, span: Span) -> Span:
    return report.cell_map.span(span) if report.cell_map is not None else span


def _where(report: FileReport, loc: Loc) -> str:
    if loc.path is not None:
        return f"{loc.path}, line {loc.span.line}"
    return _span(report, loc.span).describe()


def _contains(span: Span, line: int, col: int, cell: int | None) -> bool:
    if span.cell != cell:
        return False
    return (span.line, span.col) <= (line, col) <= (span.end_line, span.end_col)


def fits_at(report: FileReport, line: int, col: int, cell: int | None = None) -> list[Fit]:
    """Fits whose site contains the position (1-based line, 0-based code-point column)."""
    if report.facts is None:
        return []
    out = []
    for fit in report.facts.fits:
        if fit.site.path is None and not fit.auxiliary and _contains(_span(report, fit.site.span), line, col, cell):
            out.append(fit)
    return out


def _finding_for(report: FileReport, family: str, fit: Fit) -> Finding | None:
    """The finding on the fit's site of a rule that reports ``family`` missing, if any."""
    rules = {r.id for r in rules_for_family(family)}
    site = _span(report, fit.site.span)
    for f in report.findings:
        if f.rule in rules and f.span == site and (not f.fits or fit.id in f.fits):
            return f
    return None


def fit_status(report: FileReport, fit: Fit) -> FitStatus:
    """One line per check family for ``fit``: done (with which function and where), missing, waived."""
    facts = report.facts
    assert facts is not None
    members = facts.same_data(fit.id)
    inp = report.rule_input if isinstance(report.rule_input, RuleInput) else None
    settings = report.rule_input.settings if report.rule_input is not None else Settings()
    families: list[FamilyStatus] = []
    for label, family in FAMILY_LABELS.items():
        checks = [c for m in sorted(members) for c in facts.events_of("checks", m) if c.family == family]
        finding = _finding_for(report, family, fit)
        if checks:
            c = checks[0]
            families.append(FamilyStatus(label, "done", f"`{c.function}` ({_where(report, c.loc)})"))
        elif family == "variance" and fit.cov_type in ROBUST_COV:
            families.append(FamilyStatus(label, "done", f"robust covariance ({fit.cov_type.upper()})"))
        elif family == "serial" and fit.cov_type in HAC_COV:
            families.append(FamilyStatus(label, "done", "HAC covariance"))
        elif family == "serial" and not (fit.time_reason or facts.tsa_in_use):
            families.append(FamilyStatus(label, "not needed", "the data is not known to be time-ordered"))
        elif (
            family == "breaks"
            and finding is None
            and not break_question(fit, settings.break_candidates, settings.fixed_effects)
        ):
            why = (
                "fixed effects, not a break question"
                if fit.shift_groups
                else "no intercept-only group or configured break"
            )
            families.append(FamilyStatus(label, "not needed", why))
        elif finding is not None and finding.waived:
            families.append(FamilyStatus(label, "waived", finding.reason or ""))
        elif inp is not None and (other := robust_version(inp, fit, family)) is not None:
            cov = (other.cov_type or "robust").upper()
            families.append(
                FamilyStatus(
                    label,
                    "missing",
                    f"{'an' if cov.startswith('HC') else 'a'} {cov} version is reported ({_where(report, other.site)})",
                )
            )
        else:
            families.append(FamilyStatus(label, "missing"))
    families.append(_comparisons(report, fit))
    run = _run_line(report, fit)
    if run is not None:
        families.append(run)
    name = f"`{fit.result_name}`" if fit.result_name else "this fit"
    spec = specification(fit)
    what = f"formula `{fit.formula}`" if fit.formula else f"{fit.api} API" + (f", {spec}" if spec else "")
    cov = fit.cov_type or "covariance not a literal"
    return FitStatus(fit, _span(report, fit.site.span), f"{name} ({fit.estimator}, {what}, {cov})", tuple(families))


def hover_markdown(report: FileReport, fits: list[Fit], limit: int = 4) -> list[str]:
    """The hover's parts for the fits at a position: each fit's status; when one line makes several
    fits (a loop or comprehension), first a line naming how many and their specifications."""
    parts = []
    facts = report.facts
    roots: dict[int, Fit] = {}
    for f in fits:
        if facts is not None and fits and f.site == fits[0].site:
            roots.setdefault(facts.root(f.id), f)
    if len(roots) > 1:
        specs = site_labels(list(roots.values()))
        more = f" and {len(specs) - limit} more" if len(specs) > limit else ""
        parts.append(f"**regvet** · {len(roots)} fits from this line: {', '.join(specs[:limit])}{more}")
    parts.extend(fit_status(report, f).markdown() for f in fits[:limit])
    return parts


def _run_line(report: FileReport, fit: Fit) -> FamilyStatus | None:
    """The statistics of the last run, when there is one (runtime mode)."""
    inp = report.rule_input
    if not isinstance(inp, RuleInput) or inp.runtime is None:
        return None
    from regvet.rules.evidence import changed_coefficients, runs, summary

    stats = runs(inp, fit.id)
    if not stats:
        return FamilyStatus("last run", "not reached", "the run recorded no statistics for this fit")
    s = stats[0]
    detail = summary(s)
    changed = changed_coefficients(s)
    if changed:
        names = ", ".join(f"`{c['name']}`" for c in changed[:3])
        detail += f"; 5 % significance changes under {changed[0].get('robust_type')} for {names}"
    if len(stats) > 1:
        detail += f" (first of {len(stats)} runs)"
    return FamilyStatus("last run", "statistics", detail)


def _comparisons(report: FileReport, fit: Fit) -> FamilyStatus:
    facts = report.facts
    assert facts is not None
    roots = {facts.root(fit.id)}
    mine = [c for c in facts.comparisons if any(facts.root(fid) in roots for fid, _ in c.measures)]
    if not mine:
        return FamilyStatus("comparisons", "not needed", "its fit measures are not compared")
    bad_rules = {r.id for r in ALL_RULES if r.compares_fits}
    for comp in mine:
        span = _span(report, comp.loc.span) if comp.loc.path is None else None
        for f in report.findings:
            if f.rule in bad_rules and span is not None and f.span == span and not f.waived:
                return FamilyStatus("comparisons", "failed", f"`{f.rule}` at {span.describe()}")
    where = ", ".join(_where(report, c.loc) for c in mine[:3])
    return FamilyStatus("comparisons", "done", f"compared on a valid basis ({where})")
