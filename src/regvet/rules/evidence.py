"""Reading a run's statistics: shared by the rules that judge numbers and by the engine, which
attaches the statistics of each fit to every finding about it.

Statistics are the JSON-safe dicts the probe computed in the child process, typed by
``regvet.model.stats_schema`` (``FitStatistics``); nothing here computes a statistic.
"""

from __future__ import annotations

import math
from collections.abc import Collection, Iterable
from typing import TYPE_CHECKING

from regvet.model.facts import Fit
from regvet.model.finding import Finding
from regvet.model.runtime import Pairing
from regvet.rules.base import RuleInput
from regvet.rules.collinearity import judged_dimension
from regvet.rules.numbers import num, p

if TYPE_CHECKING:
    from regvet.model.stats_schema import (
        Coefficient,
        ComparisonRow,
        ComparisonTable,
        FindingStats,
        FitEvidence,
        FitStatistics,
        LevelErrors,
        NestedFTest,
        ResetTest,
        RobustReset,
    )


def runs(inp: RuleInput, fid: int) -> list[FitStatistics]:
    """The statistics of every run of the fit (a fit in a loop runs several times)."""
    if inp.runtime is None:
        return []
    out = []
    for record in inp.runtime.stats(fid):
        stats = record.get("stats")
        if isinstance(stats, dict):
            out.append(stats)
    return out


def fingerprint(stats: FitStatistics) -> str | None:
    """The digest of the rows a run's fit used (equal for fits on the same observations)."""
    rows = stats.get("rows")
    return rows.get("fingerprint") if rows is not None else None


def in_runs(count: int, total: int) -> str:
    return "" if total <= 1 else f" (in {count} of {total} runs of this fit)"


def changed_coefficients(stats: FitStatistics) -> list[Coefficient]:
    return [c for c in stats.get("coefficients") or [] if c.get("significance_changes")]


def coefficient_clause(stats: FitStatistics, limit: int = 3) -> str:
    """``with HC3, `fare` goes from p = 0.012 to 0.094`` for coefficients whose 5 % significance changes."""
    changed = changed_coefficients(stats)
    if not changed:
        return "no coefficient changes significance at 5 % under robust standard errors, but the usual ones are still wrong"
    kind = changed[0].get("robust_type") or "robust"
    parts = [
        f"`{c['name']}` goes from {p(c.get('p'))} to {p(c.get('p_robust')).replace('p = ', '')}"
        for c in changed[:limit]
    ]
    more = f" and {len(changed) - limit} more" if len(changed) > limit else ""
    return f"with {kind}, " + ", ".join(parts) + more


def summary(stats: FitStatistics, level_cv: LevelErrors | None | bool = False) -> str:
    """A short clause for a text line: the headline numbers of one run.

    ``level_cv``: for a compared fit of a transformed outcome, its CV errors on the level scale (None:
    there are none, so no CV clause; False, the default: the fit's own)."""
    bits = [f"n = {stats.get('nobs')}"]
    bp = stats.get("breusch_pagan")
    if bp is not None and bp.get("lm_pvalue") is not None:
        bits.append(f"Breusch-Pagan {p(bp.get('lm_pvalue'))}")
    reset = stats.get("reset")
    robust = reset.get("robust") if reset is not None else None
    if robust is not None and robust.get("pvalue") is not None:
        bits.append(f"{robust.get('cov_type')} RESET {p(robust.get('pvalue'))}")
    elif reset is not None and reset.get("pvalue") is not None:
        bits.append(f"RESET {p(reset.get('pvalue'))}")
    bg = stats.get("breusch_godfrey")
    if bg is not None and bg.get("lm_pvalue") is not None:
        bits.append(f"Breusch-Godfrey {p(bg.get('lm_pvalue'))}")
    within = stats.get("serial_within_units")
    if within is not None and within.get("pvalue") is not None:
        bits.append(f"serial within units {p(within.get('pvalue'))}")
    ci = stats.get("condition_index")
    if ci is not None and ci.get("value") is not None:
        # The index collinear-design judges (above 30 and carrying two slopes), not the largest, which
        # may sit on the constant and would contradict the finding below it; runs from before the
        # proportions were recorded show the largest.
        if ci.get("dimensions") is None:
            bits.append(f"condition index {num(ci.get('value'))}")
        else:
            judged = judged_dimension(stats)
            if judged is not None:
                bits.append(f"condition index {num(judged.index)}")
    cv = stats.get("cv")
    if level_cv is False:
        if cv is not None and cv.get("rmse") is not None:
            bits.append(f"{cv.get('folds')}-fold CV RMSE {num(cv.get('rmse'))}")
    elif isinstance(level_cv, dict) and cv is not None and level_cv.get("rmse") is not None:
        bits.append(f"{cv.get('folds')}-fold CV RMSE {num(level_cv.get('rmse'))} on the level scale")
    return ", ".join(bits)


def comparison_row(fit: Fit, stats: FitStatistics) -> ComparisonRow:
    cv = stats.get("cv")
    return {
        "fit": fit.result_name or fit.formula or f"fit {fit.id}",
        "outcome": fit.outcome.key if fit.outcome else stats.get("endog_name"),
        "nobs": stats.get("nobs"),
        "rsquared": stats.get("rsquared"),
        "rsquared_adj": stats.get("rsquared_adj"),
        "aic": stats.get("aic"),
        "bic": stats.get("bic"),
        "cv_rmse": cv.get("rmse") if cv is not None else None,
        "cv_mae": cv.get("mae") if cv is not None else None,
        "cv_folds": cv.get("folds") if cv is not None else None,
        "log_level_r2": stats.get("log_level_r2"),
    }


LEVEL_CV = "level scale (Duan's smearing)"


def level_scale(inp: RuleInput, fids: Iterable[int]) -> list[Pairing]:
    """The run's pairings among these fits: one outcome is a transform of another (``regvet_pairs``)."""
    if inp.runtime is None:
        return []
    return inp.runtime.pairing(set(fids))


def level_rmse(inp: RuleInput, pairing: Pairing) -> tuple[float | None, float | None]:
    """(transformed model, level model) k-fold CV RMSE on the level scale, or None where there is none.

    An OLS level model's own cross-validation is on the level scale (the pair record leaves it out)."""
    cv = pairing.record.get("cv")
    if cv is None:
        return None, None
    level = cv.get("level")
    if level is None:
        own = runs(inp, pairing.level)
        own_cv = own[0].get("cv") if own else None
        return cv["transformed"].get("rmse"), own_cv.get("rmse") if own_cv is not None else None
    return cv["transformed"].get("rmse"), level.get("rmse")


def comparison_rows(inp: RuleInput, fids: Iterable[int]) -> list[ComparisonRow]:
    """The compared fits' rows; measures of a transformed outcome on the level scale, or None.

    A fit whose outcome the run showed to be a transform of a compared level model's outcome gets
    the level-scale R² (``log_level_r2``) and its CV errors retransformed with Duan's smearing, the
    level model its corr(y, ŷ)² (``level_r2``) and, for WLS, its plain (not whitened) CV errors. A fit of
    a log outcome (by name) compared with a level model without that pairing shows no CV errors at
    all: never errors in mixed units."""
    fids = list(dict.fromkeys(fids))
    rows: dict[int, ComparisonRow] = {}
    for fid in fids:
        stats = runs(inp, fid)
        if stats:
            rows[fid] = comparison_row(inp.facts.fit(fid), stats[0])
    paired: set[int] = set()
    for pairing in level_scale(inp, rows):
        t, level, record = rows[pairing.transformed], rows[pairing.level], pairing.record
        paired.add(pairing.transformed)
        t["level_transform"] = record.get("transform") or "?"
        t["log_level_r2"] = record.get("level_r2")
        level["level_r2"] = record.get("level_model_r2")
        cv = record.get("cv")
        if cv is not None and t.get("cv_folds") is not None:
            t["cv_rmse"], t["cv_mae"] = cv["transformed"].get("rmse"), cv["transformed"].get("mae")
            t["cv_scale"] = LEVEL_CV
            own = cv.get("level")
            if own is not None:  # a WLS level model: its plain errors, not the whitened ones of its own ``cv``
                level["cv_rmse"], level["cv_mae"] = own.get("rmse"), own.get("mae")
        else:
            t["cv_rmse"] = t["cv_mae"] = None
    levels = [r for fid, r in rows.items() if r.get("log_level_r2") is None and fid not in paired]
    for fid, row in rows.items():
        if fid not in paired and row.get("log_level_r2") is not None and levels:
            row["cv_rmse"] = row["cv_mae"] = None
    return [rows[fid] for fid in fids if fid in rows]


def nested_f_test(small: FitStatistics, large: FitStatistics) -> NestedFTest | None:
    """F test of the extra regressors when one fit's regressors are a subset of the other's (same rows)."""
    names_s, names_l = set(small.get("param_names") or []), set(large.get("param_names") or [])
    if not names_s or not names_s < names_l:
        return None
    if fingerprint(small) != fingerprint(large):
        return None
    q = len(names_l) - len(names_s)
    ssr_s, ssr_l, df = small.get("ssr"), large.get("ssr"), large.get("df_resid")
    if ssr_s is None or ssr_l is None or df is None or df <= 0 or ssr_l <= 0:
        return None
    f = ((ssr_s - ssr_l) / q) / (ssr_l / df)
    return {
        "f": f,
        "df_num": q,
        "df_denom": df,
        "pvalue": f_pvalue(f, q, df),
        "restricted": sorted(names_s),
        "extra": sorted(names_l - names_s),
    }


def f_pvalue(f: float, d1: float, d2: float) -> float | None:
    """Upper tail of the F(d1, d2) distribution: I_{d2/(d2+d1 f)}(d2/2, d1/2), the regularized
    incomplete beta function (continued fraction, modified Lentz method). The core has no scipy;
    ``tests/test_evidence.py`` checks this against ``scipy.stats.f.sf``."""
    if f is None or not math.isfinite(f) or d1 <= 0 or d2 <= 0:
        return None
    if f <= 0:
        return 1.0
    return _betainc(d2 / 2.0, d1 / 2.0, d2 / (d2 + d1 * f))


def _betainc(a: float, b: float, x: float) -> float:
    if x <= 0.0:
        return 0.0
    if x >= 1.0:
        return 1.0
    front = math.exp(math.lgamma(a + b) - math.lgamma(a) - math.lgamma(b) + a * math.log(x) + b * math.log1p(-x))
    if x < (a + 1.0) / (a + b + 2.0):
        return front * _betacf(a, b, x) / a
    return 1.0 - front * _betacf(b, a, 1.0 - x) / b


def _betacf(a: float, b: float, x: float) -> float:
    tiny, eps = 1e-300, 1e-15
    c, d = 1.0, 1.0 - (a + b) * x / (a + 1.0)
    d = 1.0 / (d if abs(d) > tiny else tiny)
    h = d
    for m in range(1, 1000):
        m2 = 2 * m
        for num_ in (
            m * (b - m) * x / ((a + m2 - 1.0) * (a + m2)),
            -(a + m) * (a + b + m) * x / ((a + m2) * (a + m2 + 1.0)),
        ):
            d = 1.0 + num_ * d
            d = 1.0 / (d if abs(d) > tiny else tiny)
            c = 1.0 + num_ / c
            c = c if abs(c) > tiny else tiny
            h *= d * c
        if abs(d * c - 1.0) < eps:
            break
    return h


def attach(findings: Iterable[Finding], inp: RuleInput, comparing: Collection[str] = ()) -> list[Finding]:
    """Every finding about a fit that ran gets that fit's statistics (``Finding.stats``).

    Findings of the rules in ``comparing`` (those with ``Rule.compares_fits``) also get the
    compared fits' table and the F tests between nested ones.
    """
    out = []
    for f in findings:
        if not f.fits or inp.runtime is None or f.stats is not None:
            out.append(f)
            continue
        per_fit: list[FitEvidence] = []
        transformed = {}
        if f.rule in comparing:  # a transformed outcome's CV errors: on the level scale, or none
            for pairing in level_scale(inp, f.fits):
                cv = pairing.record.get("cv")
                transformed[pairing.transformed] = cv["transformed"] if cv is not None else None
        for fid in f.fits:
            stats = runs(inp, fid)
            if stats:
                fit = inp.facts.fit(fid)
                per_fit.append(
                    {
                        "fit": fit.result_name or fit.formula or f"fit {fid}",
                        "runs": len(stats),
                        "statistics": stats[0],
                        "summary": summary(stats[0], transformed.get(fid, False)),
                    }
                )
        if not per_fit:
            out.append(f)
            continue
        payload: FindingStats = {"summary": "; ".join(x["summary"] for x in per_fit[:2]), "fits": per_fit}
        if f.rule in comparing:
            payload["comparison"] = _comparison(inp, f.fits)
        out.append(f.with_(stats=payload))
    return out


def _comparison(inp: RuleInput, fids: tuple[int, ...]) -> ComparisonTable:
    rows = comparison_rows(inp, fids)
    table: list[FitStatistics] = []
    for fid in fids:
        stats = runs(inp, fid)
        if stats:
            table.append(stats[0])
    result: ComparisonTable = {"fits": rows}
    tests: list[NestedFTest] = []
    for i, a in enumerate(table):
        for b in table[i + 1 :]:
            for small, large in ((a, b), (b, a)):
                test = nested_f_test(small, large)
                if test is not None:
                    tests.append(test)
    if tests:
        result["nested_f_tests"] = tests
    return result


def judged_reset(stats: FitStatistics) -> tuple[str, ResetTest | RobustReset] | None:
    """The RESET a run's fit is judged by, with its label: the robust Wald form when the fit has HC
    covariance (the probe computes it with the fit's own HC type), else the classical F."""
    reset = stats.get("reset")
    if reset is None:
        return None
    robust = reset.get("robust")
    if robust is not None:
        return f"with {robust.get('cov_type')} covariance", robust
    return "", reset
