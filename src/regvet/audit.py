"""The specification audit: what ``regvet report`` shows, as values, computed from the file reports.

Pure: :class:`~regvet.model.report.FileReport` values in (static, or judged with a run's
statistics), an :class:`Audit` out; no I/O, no rendering. ``output/report_html.py`` and
``output/report_md.py`` render it, ``plots.py`` draws its residual plots.

Per fit, one row per check family with its state:

* ``done, passed`` / ``done, rejected``: the code runs the check (or uses a covariance that deals
  with it: robust for heteroskedasticity, HAC for serial correlation) and a run judged it: rejected
  when a rule that judges that family's statistic (``Rule.rejects``) reports the fit;
* ``done``: the code runs the check; without a run its result is not known;
* ``missing``: a rule reports the check missing (``Rule.family``), or a run shows a problem the
  code never checked;
* ``waived``: the finding that says so is waived, with its reason;
* ``not applicable``: nothing requires it for this fit (with the reason).

Fits are ranked by how much their reported conclusions are at risk: first the number of
coefficients whose 5 % significance changes under robust standard errors while the fit reports
the usual ones, then the number of rejected tests (and invalid comparisons), then the number of
missing checks.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING, Any

from regvet.analysis.catalog import HAC_COV, ROBUST_COV
from regvet.model.facts import Fit
from regvet.model.finding import Finding, Severity
from regvet.model.report import FileReport
from regvet.model.span import Span
from regvet.rules import ALL_RULES, RULES_BY_ID, RuleInput, rules_for_family
from regvet.rules.collinearity import collinearity_cell
from regvet.rules.evidence import comparison_rows, judged_reset, num, p, runs
from regvet.rules.texts import CAUTION

if TYPE_CHECKING:
    from regvet.model.stats_schema import ComparisonRow, FitStatistics, NestedFTest, PlotPoints

PASSED, REJECTED, DONE = "done, passed", "done, rejected", "done"
MISSING, WAIVED, NOT_APPLICABLE = "missing", "waived", "not applicable"
STATES = (PASSED, REJECTED, DONE, MISSING, WAIVED, NOT_APPLICABLE)

#: The check families of the checks table, in order: (key, label). All but the last are the keys of
#: ``model.settings.FAMILIES``.
CHECK_FAMILIES: tuple[tuple[str, str], ...] = (
    ("form", "functional form"),
    ("variance", "heteroskedasticity and covariance"),
    ("normality", "normality"),
    ("serial", "serial correlation"),
    ("breaks", "structural breaks"),
    ("collinearity", "collinearity"),
    ("comparison", "model comparison"),
)


@dataclass(frozen=True)
class CheckRow:
    family: str
    label: str
    state: str
    how: str  # which function at which line, the covariance, the waiver's reason, why not applicable
    statistic: str | None = None  # with a run: the statistic, e.g. "F(2, 538) = 11.00"
    form: str | None = None  # which form of the test
    pvalue: str | None = None  # "p = 0.012", "p < 0.001"


@dataclass(frozen=True)
class CoefficientRow:
    name: str
    estimate: str
    se: str
    p: str
    se_robust: str
    p_robust: str
    changes: bool
    note: str  # the change in words ("significant at 5 % with the usual standard errors only")


@dataclass(frozen=True)
class ComparisonEntry:
    where: str
    how: str
    fits: tuple[str, ...]  # the compared fits with their measure, e.g. "`loglog` (rsquared)"
    valid: bool
    problem: str  # the finding's message when the comparison is not valid
    table: tuple[ComparisonRow, ...] = ()  # with a run: the comparable measures of each fit
    nested: tuple[NestedFTest, ...] = ()


@dataclass(frozen=True)
class Risk:
    significance_changes: int
    rejected: int
    missing: int

    @property
    def key(self) -> tuple[int, int, int]:
        return (-self.significance_changes, -self.rejected, -self.missing)

    def describe(self) -> str:
        parts = []
        if self.significance_changes:
            n = self.significance_changes
            parts.append(
                f"{n} coefficient{'s' if n != 1 else ''} change{'s' if n == 1 else ''} 5 % significance "
                "under robust standard errors"
            )
        if self.rejected:
            parts.append(f"{self.rejected} rejected (tests or comparisons)")
        if self.missing:
            parts.append(f"{self.missing} missing check{'s' if self.missing != 1 else ''}")
        return "; ".join(parts) if parts else "no missing or failed check found"


@dataclass(frozen=True)
class FitAudit:
    anchor: str  # a stable id for links: "f<file index>-<fit id>"
    path: str
    name: str  # the result's variable, else the formula, else the estimator
    where: str  # "line 12" or "cell 3, line 2" (the report's coordinates)
    span: Span
    estimator: str
    specification: str  # the formula, or the outcome and regressors regvet read
    outcome: str | None
    nobs: int | None
    cov_type: str
    checks: tuple[CheckRow, ...]
    findings: tuple[Finding, ...]
    comparisons: tuple[ComparisonEntry, ...]
    risk: Risk
    ran: bool = False
    runs: int = 0
    coefficients: tuple[CoefficientRow, ...] = ()
    robust_type: str | None = None
    time_ordered: str | None = None
    points: PlotPoints | None = None
    points_error: str | None = None
    #: How many fits regvet follows at this place (a copy of whichever of several fits reaches it).
    alternatives: int = 1


@dataclass(frozen=True)
class FileAudit:
    path: str
    fits: tuple[FitAudit, ...]
    other_findings: tuple[Finding, ...]  # findings about no single fit of this file
    skipped: bool = False  # nothing regression-related in the file
    run_failure: str | None = None


@dataclass(frozen=True)
class Waived:
    path: str
    where: str
    rule: str
    reason: str


@dataclass(frozen=True)
class Audit:
    files: tuple[FileAudit, ...]
    ranked: tuple[FitAudit, ...]
    counts: dict[str, int]  # open findings by severity label, most severe first
    waivers: tuple[Waived, ...]
    ran: bool
    fits_ran: int
    failed: tuple[tuple[str, str], ...]  # (path, why) of files whose run failed
    caution: str = CAUTION
    alpha: float = 0.05
    fit_count: int = field(default=0)


# --- building ------------------------------------------------------------------------------------
def _span(report: FileReport, span: Span) -> Span:
    return report.cell_map.span(span) if report.cell_map is not None else span


def _where(inp: RuleInput, loc: Any) -> str:
    return inp.where(loc)


def fit_name(fit: Fit) -> str:
    if fit.result_name:
        return fit.result_name
    if fit.formula:
        return fit.formula
    return f"{fit.estimator} fit"


def _specification(fit: Fit, stats: FitStatistics | None) -> str:
    if fit.formula:
        return fit.formula
    outcome = (fit.outcome.text if fit.outcome else None) or (stats.get("endog_name") if stats else None) or "y"
    names = list(fit.regressors or ())
    if not names and stats is not None:
        names = list(stats.get("param_names") or [])
    if names:
        return f"{outcome} on {', '.join(names)}"
    return f"{outcome} on a design regvet could not read"


def _statistic(family: str, stats: FitStatistics | None) -> tuple[str | None, str | None, str | None]:
    """(statistic, form, p-value) of the run's test for ``family``."""
    if stats is None:
        return None, None, None
    if family == "form":
        judged = judged_reset(stats)  # the robust Wald form for a fit with HC covariance
        if judged is None or judged[1].get("f") is None:
            return None, None, None
        label, r = judged
        text = f"F({r.get('df_num')}, {r.get('df_denom')}) = {num(r.get('f'))}"
        classical = stats.get("reset")
        if label and classical is not None:
            text += f"; classical F = {num(classical.get('f'))}, {p(classical.get('pvalue'))}"
        return text, r.get("form"), p(r.get("pvalue"))
    if family == "variance":
        bp = stats.get("breusch_pagan")
        if bp is None or bp.get("lm") is None:
            return None, None, None
        return f"LM = {num(bp.get('lm'))} ({bp.get('df')} df)", bp.get("form"), p(bp.get("lm_pvalue"))
    if family == "normality":
        jb = stats.get("jarque_bera")
        if jb is None or jb.get("statistic") is None:
            return None, None, None
        text = f"JB = {num(jb.get('statistic'))}; skewness {num(jb.get('skew'))}, kurtosis {num(jb.get('kurtosis'))}"
        return text, jb.get("form"), p(jb.get("pvalue"))
    if family == "serial":
        bg = stats.get("breusch_godfrey")
        within = stats.get("serial_within_units")
        if (bg is None or bg.get("lm") is None) and within is not None and within.get("t") is not None:
            text = f"rho = {num(within.get('rho'))}, t = {num(within.get('t'))} within {within.get('units')} units"
            return text, within.get("form"), p(within.get("pvalue"))
        if bg is None or bg.get("lm") is None:
            return None, None, None
        dw = stats.get("durbin_watson")
        text = f"LM = {num(bg.get('lm'))} ({bg.get('lags')} lags)" + (
            f"; Durbin-Watson {num(dw)}" if dw is not None else ""
        )
        return text, bg.get("form"), p(bg.get("lm_pvalue"))
    if family == "breaks":
        tests = [c for c in stats.get("chow") or [] if c.get("f") is not None]
        if not tests:
            return None, None, None
        worst = min(tests, key=lambda c: _or_one(c.get("pvalue")))
        text = f"F({worst.get('df_num')}, {worst.get('df_denom')}) = {num(worst.get('f'))} at {worst.get('candidate')}"
        more = f" (smallest p of {len(tests)} candidates)" if len(tests) > 1 else ""
        return text, "Chow test" + more, p(worst.get("pvalue"))
    if family == "collinearity":
        return collinearity_cell(stats)
    return None, None, None


def _or_one(pvalue: float | None) -> float:
    """A p-value for ordering, 1 when there is none."""
    return 1.0 if pvalue is None else pvalue


def _rejects(family: str, stats: FitStatistics | None, alpha: float) -> bool:
    """Does the run's own test of ``family`` reject at ``alpha`` (only to say so in words)?"""
    if stats is None:
        return False
    reset, bp = judged_reset(stats), stats.get("breusch_pagan")
    jb, bg = stats.get("jarque_bera"), stats.get("breusch_godfrey")
    value = {
        "form": reset[1].get("pvalue") if reset else None,
        "variance": bp.get("lm_pvalue") if bp else None,
        "normality": jb.get("pvalue") if jb else None,
        "serial": bg.get("lm_pvalue") if bg else None,
    }.get(family)
    return value is not None and value < alpha


_NOT_APPLICABLE = {
    "form": "its estimates are not used",
    "variance": "its inference is not used",
    "normality": "no rule requires it for this fit",
    "serial": "its inference is not used",
    "breaks": "no intercept-only group or configured break candidate",
    "collinearity": "no rule requires it for this fit",
}


def _family_row(
    inp: RuleInput,
    report: FileReport,
    fit: Fit,
    family: str,
    label: str,
    mine: list[Finding],
    stats: FitStatistics | None,
) -> CheckRow:
    checks = inp.checks(fit.id, family)
    missing_rules = {r.id for r in rules_for_family(family)}
    missing = next((f for f in mine if f.rule in missing_rules), None)
    rejecting = next(
        (f for f in mine if (RULES_BY_ID.get(f.rule) is not None and RULES_BY_ID[f.rule].rejects == family)), None
    )
    statistic, form, pvalue = _statistic(family, stats)
    ran = stats is not None
    how = ""
    covered = False
    if checks:
        c = checks[0]
        how = f"`{c.function}` at {_where(inp, c.loc)}"
        if len(checks) > 1:
            how += f" (and {len(checks) - 1} more)"
    elif family == "variance" and fit.cov_type in ROBUST_COV:
        covered, how = True, f"robust covariance ({fit.cov_type.upper()})"
    elif family == "serial" and fit.cov_type in HAC_COV:
        covered, how = True, "HAC covariance"
    if checks or covered:
        if rejecting is not None and rejecting.waived:
            return CheckRow(family, label, WAIVED, f"{how}; waived: {rejecting.reason}", statistic, form, pvalue)
        if not ran:
            state = DONE
        else:
            state = REJECTED if rejecting is not None else PASSED
            if state == PASSED and _rejects(family, stats, inp.settings.alpha):
                cover = (fit.cov_type or "").upper()
                if family == "variance" and fit.cov_type in ROBUST_COV:
                    how += f"; the test rejects, and the fit's robust covariance ({cover}) allows for that"
                elif family == "serial" and fit.cov_type in HAC_COV:
                    how += "; the test rejects, and the fit's HAC covariance allows for that"
                else:
                    how += "; the test rejects, but no rule judges it a problem for this fit"
        return CheckRow(family, label, state, how, statistic, form, pvalue)
    for f in (missing, rejecting):
        if f is not None and f.waived:
            return CheckRow(family, label, WAIVED, f.reason or "", statistic, form, pvalue)
    if missing is not None:
        return CheckRow(family, label, MISSING, f"no {label} check (`{missing.rule}`)", statistic, form, pvalue)
    if rejecting is not None:
        return CheckRow(
            family,
            label,
            MISSING,
            f"not checked in the code, and the run shows a problem (`{rejecting.rule}`)",
            statistic,
            form,
            pvalue,
        )
    rules = list(rules_for_family(family))
    off = [r.id for r in rules if not inp.settings.enabled(r.id)]
    if off:
        why = f"not judged: `{off[0]}` is turned off in the configuration"
    elif (
        family == "serial"
        and not (fit.time_reason or inp.facts.tsa_in_use)
        and not (stats and stats.get("time_ordered"))
    ):
        why = "the data is not known to be time-ordered"
    else:
        why = _NOT_APPLICABLE[family]
    return CheckRow(family, label, NOT_APPLICABLE, why, statistic, form, pvalue)


def _comparisons(inp: RuleInput, report: FileReport, fit: Fit) -> tuple[list[ComparisonEntry], int]:
    facts = inp.facts
    root = facts.root(fit.id)
    comparing = {r.id for r in ALL_RULES if r.compares_fits}
    out: list[ComparisonEntry] = []
    invalid = 0
    for comp in facts.comparisons:
        if not any(facts.root(fid) == root for fid, _ in comp.measures):
            continue
        span = _span(report, comp.loc.span) if comp.loc.path is None else None
        problems = [f for f in report.findings if f.rule in comparing and span is not None and f.span == span]
        open_problems = [f for f in problems if not f.waived]
        if open_problems:
            invalid += 1
        names = tuple(f"`{fit_name(facts.fit(fid))}` ({measure})" for fid, measure in comp.measures)
        table: tuple[ComparisonRow, ...] = ()
        nested: tuple[NestedFTest, ...] = ()
        measured = next((c for f in problems if f.stats and (c := f.stats.get("comparison"))), None)
        if measured is not None:
            table = tuple(measured["fits"])
            nested = tuple(measured.get("nested_f_tests", ()))
        elif inp.runtime is not None:
            table = tuple(comparison_rows(inp, [fid for fid, _ in comp.measures]))
        out.append(
            ComparisonEntry(
                where=_where(inp, comp.loc),
                how=comp.how,
                fits=names,
                valid=not open_problems,
                problem=" ".join(f.message for f in open_problems),
                table=table,
                nested=nested,
            )
        )
    return out, invalid


def _coefficients(stats: FitStatistics | None) -> tuple[tuple[CoefficientRow, ...], str | None]:
    if stats is None or not stats.get("coefficients"):
        return (), None
    rows = []
    kind = None
    for c in stats.get("coefficients") or []:
        kind = c.get("robust_type") or kind
        changes = bool(c.get("significance_changes"))
        note = ""
        if changes:
            usual = (c.get("p") or 1.0) < 0.05
            note = (
                f"significant at 5 % with the usual standard errors only, not with {c.get('robust_type')}"
                if usual
                else f"significant at 5 % with {c.get('robust_type')} only, not with the usual standard errors"
            )
        rows.append(
            CoefficientRow(
                c["name"],
                num(c.get("estimate")),
                num(c.get("se")),
                p(c.get("p")).replace("p ", "").replace("= ", ""),
                num(c.get("se_robust")),
                p(c.get("p_robust")).replace("p ", "").replace("= ", ""),
                changes,
                note,
            )
        )
    return tuple(rows), kind


def audit_file(report: FileReport, index: int) -> FileAudit:
    """The audit of one file's report (``index`` makes the anchors unique across files)."""
    inp = report.rule_input
    failure = None
    if isinstance(inp, RuleInput) and inp.runtime is not None and inp.runtime.failure is not None:
        failure = inp.runtime.failure.reason
    if report.skipped or not isinstance(inp, RuleInput):
        return FileAudit(report.path, (), tuple(f for f in report.findings), report.skipped, failure)
    fits = list(inp.judged_fits())
    fit_ids = {f.id for f in fits}
    out = []
    for fit in sorted(fits, key=lambda f: (_span(report, f.site.span).sort_key(), f.id)):
        mine = [f for f in report.findings if fit.id in f.fits]
        stats_runs = runs(inp, fit.id)
        stats = stats_runs[0] if stats_runs else None
        rows = [_family_row(inp, report, fit, key, label, mine, stats) for key, label in CHECK_FAMILIES[:-1]]
        comps, invalid = _comparisons(inp, report, fit)
        if comps:
            bad = [c for c in comps if not c.valid]
            state = (REJECTED if bad else PASSED) if inp.runtime is not None else (REJECTED if bad else DONE)
            how = f"{len(comps)} comparison{'s' if len(comps) != 1 else ''} ({', '.join(c.where for c in comps[:3])})"
            if bad:
                how += f"; not valid: {', '.join(c.where for c in bad[:3])}"
            rows.append(CheckRow("comparison", "model comparison", state, how))
        else:
            rows.append(CheckRow("comparison", "model comparison", NOT_APPLICABLE, "its fit measures are not compared"))
        coefficients, robust_type = _coefficients(stats)
        changes = sum(1 for c in coefficients if c.changes) if fit.cov_type == "nonrobust" else 0
        rejected = (
            sum(
                1
                for f in mine
                if not f.waived and RULES_BY_ID.get(f.rule) is not None and RULES_BY_ID[f.rule].rejects is not None
            )
            + invalid
        )
        missing = sum(1 for r in rows if r.state == MISSING)
        records = inp.runtime.stats(fit.id) if inp.runtime is not None else ()
        first = records[0] if records else {}
        span = _span(report, fit.site.span)
        out.append(
            FitAudit(
                anchor=f"f{index}-{fit.id}",
                path=report.path,
                name=fit_name(fit),
                where=span.describe(),
                span=span,
                estimator=fit.estimator,
                specification=_specification(fit, stats),
                outcome=fit.outcome.text if fit.outcome else (stats.get("endog_name") if stats else None),
                nobs=stats.get("nobs") if stats else None,
                cov_type=(stats.get("cov_type") if stats else None) or fit.cov_type or "not a literal regvet can read",
                checks=tuple(rows),
                findings=tuple(mine),
                comparisons=tuple(comps),
                risk=Risk(changes, rejected, missing),
                ran=stats is not None,
                runs=len(stats_runs),
                coefficients=coefficients,
                robust_type=robust_type,
                time_ordered=(stats.get("time_ordered") if stats else None) or fit.time_reason,
                points=first.get("points"),
                points_error=first.get("points_error"),
            )
        )
    other = tuple(f for f in report.findings if not (set(f.fits) & fit_ids))
    return FileAudit(report.path, tuple(_merge_alternatives(out)), other, False, failure)


def _merge_alternatives(fits: list[FitAudit]) -> list[FitAudit]:
    """One entry per place: fits regvet follows at the same site under the same name (a robust copy of
    whichever of several candidates reached it) are shown once, the riskiest, with their number."""
    groups: dict[tuple, list[FitAudit]] = {}
    for fit in fits:
        groups.setdefault((fit.span, fit.name), []).append(fit)
    out = []
    for fit in fits:
        group = groups[(fit.span, fit.name)]
        if group[0] is not fit:
            continue
        best = min(group, key=lambda f: f.risk.key)
        out.append(replace(best, alternatives=len(group)) if len(group) > 1 else best)
    return out


def build(reports: list[FileReport], *, ran: bool = False) -> Audit:
    """The whole audit of a scan: files in the order given, fits in source order, and the ranking."""
    files = tuple(audit_file(r, i) for i, r in enumerate(reports))
    all_fits = [fit for f in files for fit in f.fits]
    order = {fit.anchor: i for i, fit in enumerate(all_fits)}
    ranked = tuple(sorted(all_fits, key=lambda fit: (fit.risk.key, order[fit.anchor])))
    counts = {s.label: 0 for s in sorted(Severity, reverse=True)}
    waivers = []
    for report in reports:
        for f in report.findings:
            if f.waived:
                waivers.append(Waived(report.path, f.span.describe(), f.rule, f.reason or ""))
            else:
                counts[f.severity.label] += 1
    failed = [(f.path, f.run_failure) for f in files if f.run_failure is not None]
    settings = next((r.rule_input.settings for r in reports if r.rule_input is not None), None)
    return Audit(
        files=files,
        ranked=ranked,
        counts=counts,
        waivers=tuple(waivers),
        ran=ran,
        fits_ran=sum(1 for fit in all_fits if fit.ran),
        failed=tuple(failed),
        alpha=settings.alpha if settings is not None else 0.05,
        fit_count=len(all_fits),
    )
