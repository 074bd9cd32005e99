"""Diagnostic statistics for one statsmodels OLS or WLS fit, computed inside the user's interpreter.

regvet's runtime mode puts this directory on ``PYTHONPATH`` of the child process that runs the
user's script, so this module is imported by the *user's* Python. At import time it uses only the
standard library, numpy, scipy (a statsmodels dependency) and statsmodels; it never imports regvet,
and pandas only lazily, when the results object already holds pandas objects (an index, a data
frame). The one public function is :func:`fit_statistics`. Its helpers sit beside it and follow
the same import rules: ``regvet_fit`` (the fit's design, residuals and options), ``regvet_passes``
(the shared row passes every statistic builds on), ``regvet_linalg`` (the design's basis, row
passes, QR, generalised inverses) and ``regvet_align`` (row fingerprint, time order and frequency,
frame columns aligned with the fit's rows, break-candidate groups).

How the numbers are computed (and why), in short:

* Everything is computed from the fit's own design, residuals and normalised covariance, without
  refitting from scratch: no statistic allocates an n x k temporary; row-wise work is done in
  blocks of ``chunk_rows`` rows.
* The design is used in a better-conditioned basis with the same column space: when the model has an
  explicit constant column c, every other column x_j is replaced by x_j - m_j c with
  m_j = c'x_j / c'c (for OLS: the column mean). Projections, leverages and all auxiliary regressions
  are invariant under this change of basis; coefficient covariances are mapped back exactly.
  Cross-product matrices are equilibrated (scaled to unit diagonal) before they are inverted, so the
  relative accuracy is about eps times the squared condition number of the *centred, unit-scaled*
  design (Longley: 110, against 4.9e9 for the raw design), not of the raw one.
* Auxiliary regressions are done by partitioned (Frisch-Waugh-Lovell) regression: RESET regresses
  the residuals on the powers of the fitted values after residualising those on the design;
  Breusch-Godfrey does the same with the lagged residuals; Breusch-Pagan needs only X'(u^2).
  The full White test and the Chow test are done with a blocked (tall-skinny) QR decomposition and a
  rank-revealing SVD of its small triangular factor, because their designs are often rank-deficient
  by construction (a dummy's square equals the dummy; a dummy that is constant within a group).
* WLS: every statistic is computed on the WLS-transformed (whitened) model: ``wendog`` = sqrt(w) y,
  ``wexog`` = sqrt(w) X, ``wresid`` = sqrt(w) u (the output's ``"weights"`` note says so).

Each statistic that cannot be computed is None in the output and its reason is recorded under
``"errors"``; one failing statistic never stops the others.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable, Mapping
from functools import partial
from typing import Any

import numpy as np

# Siblings in this folder (the probe's own modules, never regvet itself).
from regvet_align import fingerprint
from regvet_fit import (
    DEFAULT_OPTIONS,
    FitInputs,
    StatisticError,
    as_count,
    as_float,
    error_message,
    float_attribute,
    log_base,
    read_options,
)
from regvet_linalg import (
    EPS,
    GInverse,
    TallQR,
    ssr_on_columns,
)
from regvet_passes import RowPasses
from scipy import stats

__all__ = ["DEFAULT_OPTIONS", "fit_statistics"]

_SIGNIFICANCE = 0.05

FORM_BREUSCH_PAGAN = "Koenker studentized LM = n·R² of û² on the regressors; F from the same auxiliary regression"
FORM_WHITE_FULL = "full"
FORM_WHITE_SPECIAL = "special (ŷ, ŷ²)"
FORM_RESET = "F test of powers 2 and 3 of the fitted values"
FORM_JARQUE_BERA = "kurtosis is not excess kurtosis"
FORM_CONDITION_INDEX = "Belsley-Kuh-Welsch: columns incl. the constant scaled to unit length, not centred"
FORM_WITHIN_UNITS = "û_it on û_i,t-1 with an intercept, rows sorted by unit and time; cluster-robust by unit, t(G-1)"
FORM_BREUSCH_GODFREY = "n·R² of û on the regressors and its lags (zero-padded, all n observations)"
COEFFICIENT_TESTS = "t distribution with df_resid for both"
WEIGHTS_NOTE = (
    "WLS: all statistics use the whitened (WLS-transformed) model: wendog = √w·y, wexog = √w·X, "
    "wresid = √w·û. Auxiliary regressions add an intercept when the whitened design has none; VIFs "
    "are weighted (the regressors centred on their weighted means); the condition index is that of "
    "the whitened design; cross-validation refits WLS and reports whitened prediction errors; "
    "log_level_r2 uses the unweighted endog and fitted values."
)


class _Stats(RowPasses):
    """Runs every statistic for one fit; see :func:`fit_statistics` for the output contract."""

    # -- the whole run -------------------------------------------------------------------------

    def phase(self, step: Callable[[], None]) -> None:
        """Run a shared step; if it fails, every statistic that depends on a row pass reports why."""
        try:
            step()
        except Exception as exc:
            for name in (
                "design",
                "gram",
                "reset_cross",
                "reset",
                "lags",
                "bg",
                "meat",
                "cv",
                "cv_predict",
                "white_full",
            ):
                self.failed.setdefault(name, exc)

    def run(self) -> dict[str, Any]:
        """Compute every statistic; the output dict of :func:`fit_statistics`."""
        fit = self.fit
        self.basic()
        self.put("rows", lambda: {"count": fit.n, "fingerprint": fingerprint(fit.row_labels(), fit.n)})
        self.out["scaled_refit"] = scaled_refit(fit)
        self.out["zero_weight_rows"] = fit.zero_weight_rows if fit.estimator == "WLS" else None
        self.put("log_level_r2", self.log_level_r2)
        self.out["weights"] = WEIGHTS_NOTE if fit.estimator == "WLS" else None

        self.phase(self.prepare)
        self.phase(self.pass_one)
        self.phase(self.solve)
        self.phase(self.pass_two)

        self.put("breusch_pagan", self.breusch_pagan)
        self.put("white", self.white)
        self.put("reset", self.reset)
        self.put("jarque_bera", self.jarque_bera)
        self.put("condition_index", self.condition_index)
        self.put("vif", self.vif)
        self.time_series()
        self.out["chow"] = self.chow()
        self.out["coefficient_tests"] = COEFFICIENT_TESTS
        self.put("coefficients", self.coefficients)
        if self.opts["cv"]:
            self.put("cv", self.cross_validation)
        self.out["errors"] = self.errors
        return self.out

    def basic(self) -> None:
        fit, res, model = self.fit, self.fit.res, self.fit.model
        self.out["estimator"] = fit.estimator
        self.out["nobs"] = fit.n
        self.out["k"] = fit.k
        self.out["n_regressors"] = fit.k - (1 if fit.const_idx is not None else 0)
        self.put("df_resid", lambda: as_count(fit.df_resid))
        for key in ("rsquared", "rsquared_adj", "aic", "bic", "llf", "ssr"):
            self.put(key, partial(float_attribute, res, key))
        self.put("resid_sd", lambda: as_float(math.sqrt(float(res.scale))) if float(res.scale) >= 0 else None)
        self.put("cov_type", lambda: str(res.cov_type))
        self.put("use_t", lambda: bool(res.use_t))
        self.out["has_constant"] = bool(fit.k_constant)
        self.out["param_names"] = list(fit.names)
        self.put("endog_name", lambda: str(model.endog_names))

    def log_level_r2(self) -> float | None:
        """corr(exp(endog), exp(fitted))² when the endog's name shows a log transform, else None."""
        fit = self.fit
        base = log_base(str(fit.model.endog_names))
        if base is None:
            return None
        endog, fitted = fit.endog_fitted()
        # corr is invariant to scaling each variable, so exp(v - max v) avoids overflow.
        a = np.power(base, endog - np.max(endog))
        b = np.power(base, fitted - np.max(fitted))
        a = a - a.mean()
        b = b - b.mean()
        den = float(a @ a) * float(b @ b)
        if not den > 0:
            raise StatisticError("exp(endog) or exp(fitted values) is constant")
        return as_float(float(a @ b) ** 2 / den)

    # -- statistics ----------------------------------------------------------------------------

    def _aux_result(self, ess: float, tss: float, df_model: int, df_resid: float) -> dict[str, Any]:
        n = self.fit.n
        if not tss > 0:
            raise StatisticError("the dependent variable of the auxiliary regression is constant")
        if df_model <= 0 or df_resid <= 0:
            raise StatisticError("the auxiliary regression has no degrees of freedom")
        ess = min(max(ess, 0.0), tss)
        lm = n * ess / tss
        ssr = tss - ess
        f = (ess / df_model) / (ssr / df_resid) if ssr > 0 else math.inf
        return {
            "lm": as_float(lm),
            "lm_pvalue": as_float(stats.chi2.sf(lm, df_model)),
            "f": as_float(f),
            "f_pvalue": as_float(stats.f.sf(f, df_model, df_resid)) if math.isfinite(f) else as_float(0.0),
            "df": int(df_model),
        }

    def breusch_pagan(self) -> dict[str, Any]:
        """Koenker's studentized BP: n·R² of û² on the design (with an intercept); = het_breuschpagan."""
        self.fit.require_residuals()
        self.need("gram")
        fit = self.fit
        c = self.plus_cross(self.cross[:, 1:2], np.array([0.0]))[:, 0]
        ess = self.Gpinv.quad(c)
        tss = float(self.g_c @ self.g_c)
        rank = self.Gpinv.rank
        out = {"form": FORM_BREUSCH_PAGAN}
        out.update(self._aux_result(ess, tss, rank - 1, fit.n - rank))
        return out

    def white(self) -> dict[str, Any]:
        """White's test: full (û² on levels, squares, cross-products) or special (û² on ŷ, ŷ²)."""
        fit = self.fit
        fit.require_residuals()
        tss = float(self.g_c @ self.g_c)
        if self.white_full:
            self.need("gram", "white_full")
            qr = self.white_qr
            if qr.r is None:
                raise StatisticError("no observations")
            p = qr.r.shape[1] - 1
            ssr, rank = ssr_on_columns(qr.r, qr.rows, p)
            out: dict[str, Any] = {"form": FORM_WHITE_FULL}
            out.update(self._aux_result(tss - ssr, tss, rank - 1, fit.n - rank))
            out["columns"] = int(p)
            return out
        # Special form: û² on [1, ŷ, ŷ²], with ŷ standardised (same span).
        yhat = fit.yhat
        t = yhat - yhat.mean()
        sd = math.sqrt(float(t @ t) / fit.n) if fit.n else 0.0
        if not (sd > 0 and self.yhat_varies):
            raise StatisticError("the fitted values are constant")
        t = t / sd
        t2 = t * t
        t2 = t2 - t2.mean()
        z = np.column_stack([t, t2])
        gi = GInverse(z.T @ z)
        c = z.T @ self.g_c
        ess = gi.quad(c)
        out = {"form": FORM_WHITE_SPECIAL}
        out.update(self._aux_result(ess, tss, gi.rank, fit.n - gi.rank - 1))
        out["columns"] = 3
        return out

    def reset(self) -> dict[str, Any]:
        """RESET with ŷ², ŷ³: F of the powers added to the model (= linear_reset(power=3, use_f=True))."""
        fit = self.fit
        fit.require_residuals()
        self.need("gram", "reset")
        gi = GInverse(self.reset_rr)
        q = gi.rank
        if q == 0:
            raise StatisticError("the powers of the fitted values lie in the span of the regressors")
        ess = gi.quad(self.reset_ru)
        df_denom = fit.df_resid - q
        ssr_u = fit.ssr - ess
        if df_denom <= 0:
            raise StatisticError("too few residual degrees of freedom for the RESET regression")
        f = (ess / q) / (ssr_u / df_denom) if ssr_u > 0 else math.inf
        return {
            "form": FORM_RESET,
            "f": as_float(f),
            "pvalue": as_float(stats.f.sf(f, q, df_denom)) if math.isfinite(f) else as_float(0.0),
            "df_num": int(q),
            "df_denom": as_count(df_denom),
        }

    def jarque_bera(self) -> dict[str, Any]:
        """JB = n/6·(S² + (K − 3)²/4) with biased moments; K is not excess kurtosis (= stattools.jarque_bera)."""
        fit = self.fit
        fit.require_residuals()
        if fit.n < 2:
            raise StatisticError("fewer than two residuals")
        d = fit.u - self.u_mean
        d2 = d * d
        m2 = float(d2.mean())
        if not m2 > 0:
            raise StatisticError("the residuals are constant")
        m3 = float((d2 * d).mean())
        m4 = float((d2 * d2).mean())
        skew = m3 / m2**1.5
        kurt = m4 / m2**2
        jb = fit.n / 6.0 * (skew**2 + (kurt - 3.0) ** 2 / 4.0)
        return {
            "statistic": as_float(jb),
            "pvalue": as_float(stats.chi2.sf(jb, 2)),
            "skew": as_float(skew),
            "kurtosis": as_float(kurt),
            "form": FORM_JARQUE_BERA,
        }

    def _full_rank(self, what: str) -> None:
        fit = self.fit
        if fit.rank < fit.k:
            raise StatisticError(
                f"the design is rank-deficient (rank {fit.rank} < {fit.k} columns: perfectly collinear "
                f"regressors), so {what}"
            )

    def condition_index(self) -> dict[str, Any]:
        """Belsley-Kuh-Welsch condition number: columns (incl. the constant) scaled to unit length."""
        self.need("gram")
        self._full_rank("the condition index is infinite")
        xtx = self.basis.to_raw_gram(self.G)
        d = np.sqrt(np.diag(xtx))
        if not np.all(d > 0):
            raise StatisticError("a column of the design is all zeros")
        lam = np.linalg.eigvalsh(xtx / np.outer(d, d))
        if not lam[0] > 0:
            raise StatisticError("the scaled design is numerically singular: the condition index is infinite")
        return {"value": as_float(math.sqrt(lam[-1] / lam[0])), "form": FORM_CONDITION_INDEX}

    def vif(self) -> dict[str, Any]:
        """Centred VIFs of the non-constant regressors: diag of the inverse correlation matrix."""
        self.need("gram")
        self._full_rank("the VIFs are infinite")
        fit = self.fit
        if fit.const_idx is not None:
            idx = [j for j in range(fit.k) if j != fit.const_idx]
            centred = self.G[np.ix_(idx, idx)]  # V's columns are already centred on the constant
        else:
            idx = list(range(fit.k))
            centred = self.G - np.outer(self.sums, self.sums) / fit.n
        if not idx:
            return {"max": None, "variable": None, "values": {}}
        d = np.sqrt(np.diag(centred))
        if not np.all(d > 0):
            bad = [fit.names[idx[i]] for i in np.flatnonzero(~(d > 0))]
            raise StatisticError(f"regressor(s) without variation: {', '.join(bad)}")
        corr = centred / np.outer(d, d)
        w = np.linalg.eigvalsh(corr)
        if not w[0] > w[-1] * len(idx) * EPS * 10:
            raise StatisticError(
                "the centred regressors are perfectly collinear (e.g. a full set of dummies without a "
                "constant column), so the VIFs are infinite"
            )
        values = np.diag(np.linalg.inv(corr))
        names = [fit.names[j] for j in idx]
        top = int(np.argmax(values))
        return {
            "max": as_float(values[top]),
            "variable": names[top],
            "values": {name: as_float(v) for name, v in zip(names, values)},
        }

    def time_series(self) -> None:
        self.out["time_ordered"] = self.time_reason
        self.out["serial_within_units"] = None
        if self.time_reason is None:
            self.out["durbin_watson"] = None
            self.out["breusch_godfrey"] = None
            return
        self.put("durbin_watson", self.durbin_watson)
        self.put("breusch_godfrey", self.breusch_godfrey)
        if self.panel is not None:
            self.put("serial_within_units", self.serial_within_units)

    def _one_series(self) -> None:
        if self.stacked_panel:
            advice = (
                "see serial_within_units"
                if self.panel is not None
                else "name the unit column (`unit_column`) to test within units"
            )
            raise StatisticError(
                "not run: the time values repeat (several rows per period, a stacked panel), so a serial "
                f"test over the stacked rows would mix units; {advice}"
            )

    def serial_within_units(self) -> dict[str, Any]:
        """First-order serial correlation within the units of a panel: û_it regressed on û_i,t-1 (an
        intercept included), rows sorted by unit and time, the slope tested with cluster-robust
        standard errors by unit (statsmodels' cluster correction, t with G - 1 df).

        The test for AR(1) errors in panel data of Wooldridge's panel-data textbook, chapter 10
        (cited from memory); the tests check it against statsmodels' OLS with ``cov_type="cluster"``.
        """
        fit = self.fit
        fit.require_residuals()
        assert self.panel is not None
        units, keys, where = self.panel
        order = np.lexsort((keys, units))
        u, g = fit.u[order], units[order]
        same = g[1:] == g[:-1]
        y, x, groups = u[1:][same], u[:-1][same], g[1:][same]
        pairs = int(y.size)
        _, groups = np.unique(groups, return_inverse=True)
        G = int(groups.max()) + 1 if pairs else 0
        if pairs < 3 or G < 2:
            raise StatisticError("too few consecutive pairs of rows within units (or fewer than two units)")
        X = np.column_stack([np.ones(pairs), x])
        xtx = X.T @ X
        try:
            inv = np.linalg.inv(xtx)
        except np.linalg.LinAlgError as exc:
            raise StatisticError("the lagged residuals are constant") from exc
        beta = inv @ (X.T @ y)
        e = y - X @ beta
        scores = np.zeros((G, 2))
        np.add.at(scores, groups, X * e[:, None])
        correction = G / (G - 1) * (pairs - 1) / (pairs - 2)
        cov = correction * inv @ (scores.T @ scores) @ inv
        se = math.sqrt(cov[1, 1]) if cov[1, 1] > 0 else None
        if se is None:
            raise StatisticError("the cluster-robust variance of the slope is zero")
        t = float(beta[1]) / se
        return {
            "rho": as_float(beta[1]),
            "se": as_float(se),
            "t": as_float(t),
            "pvalue": as_float(2 * stats.t.sf(abs(t), G - 1)),
            "df": G - 1,
            "units": G,
            "pairs": pairs,
            "units_from": where,
            "form": FORM_WITHIN_UNITS,
        }

    def durbin_watson(self) -> float | None:
        """Σ(Δû)² / Σû² with the residuals in time order (= statsmodels' durbin_watson on sorted rows)."""
        fit = self.fit
        fit.require_residuals()
        self._one_series()
        u = fit.u if self.u_time is None else self.u_time
        diff = np.diff(u)
        return as_float(float(diff @ diff) / fit.ssr)

    def breusch_godfrey(self) -> dict[str, Any]:
        """BG LM = n·R² of û on [design, intercept if none, lags 1..p zero-padded] (= acorr_breusch_godfrey)."""
        fit = self.fit
        fit.require_residuals()
        self._one_series()
        self.need("gram", "lags", "bg")
        n, p = fit.n, self.lags
        d = fit.u - self.u_mean
        tss = float(d @ d)
        # ESS of the centred residuals on the design (zero for OLS with a constant) plus, by FWL, the
        # ESS of the residuals on the lags after residualising the lags on the design.
        c_design = self.plus_cross(self.cross[:, 0:1] - self.u_mean * self.sums[:, None], np.array([0.0]))[:, 0]
        ess_design = self.Gpinv.quad(c_design)
        gi = GInverse(self.bg_rr)
        ess_lags = gi.quad(self.bg_ru)
        df_resid = n - self.Gpinv.rank - p
        if not tss > 0:
            raise StatisticError("the residuals are constant")
        if df_resid <= 0:
            raise StatisticError(f"too few observations for {p} lags")
        ess = min(ess_design + ess_lags, tss)
        lm = n * ess / tss
        ssr = tss - ess
        f = (ess_lags / p) / (ssr / df_resid) if ssr > 0 else math.inf
        return {
            "lm": as_float(lm),
            "lm_pvalue": as_float(stats.chi2.sf(lm, p)),
            "f": as_float(f),
            "f_pvalue": as_float(stats.f.sf(f, p, df_resid)) if math.isfinite(f) else as_float(0.0),
            "lags": int(p),
            "form": FORM_BREUSCH_GODFREY,
        }

    def chow(self) -> list[dict[str, Any]]:
        """One Chow F test per break candidate, from the pooled and the per-group SSRs."""
        out = []
        for candidate in self.opts["break_candidates"]:
            entry: dict[str, Any] = {
                "candidate": candidate,
                "groups": None,
                "group_sizes": None,
                "f": None,
                "pvalue": None,
                "df_num": None,
                "df_denom": None,
            }
            try:
                entry.update(self._chow_one(candidate))
            except Exception as exc:
                self.errors[f"chow:{candidate}"] = error_message(exc)
            out.append(entry)
        return out

    def _chow_one(self, candidate: str) -> dict[str, Any]:
        fit = self.fit
        fit.require_residuals()
        self.need("design")
        codes, labels = fit.candidate_groups(candidate)
        counts = np.bincount(codes, minlength=len(labels))
        present = np.flatnonzero(counts)
        sizes = [{"label": labels[j], "nobs": int(counts[j])} for j in present]
        if len(present) < 2:
            raise StatisticError(f"{candidate!r} does not split the fit's rows into two or more groups")
        order = np.argsort(codes, kind="stable")
        bounds = np.concatenate([[0], np.cumsum(counts)])
        k, n, u = fit.k, fit.n, fit.u
        ssr_groups, rank_groups = 0.0, 0
        for j in present:
            positions = order[bounds[j] : bounds[j + 1]]
            qr = TallQR()
            for s in range(0, positions.size, fit.chunk):
                pos = positions[s : s + fit.chunk]
                qr.add(np.column_stack([self.basis.take(pos), u[pos]]))
            ssr_j, rank_j = ssr_on_columns(qr.r, qr.rows, k)
            ssr_groups += ssr_j
            rank_groups += rank_j
        df_num = rank_groups - fit.rank
        df_denom = n - rank_groups
        result: dict[str, Any] = {
            "groups": len(sizes),
            "group_sizes": sizes,
            "df_num": int(df_num),
            "df_denom": int(df_denom),
        }
        if df_num <= 0:
            raise StatisticError("the group-wise regressions add no parameters")
        if df_denom <= 0:
            raise StatisticError("too few observations per group for separate regressions")
        if not ssr_groups > 0:
            raise StatisticError("the group-wise regressions fit perfectly: F is infinite")
        f = ((fit.ssr - ssr_groups) / df_num) / (ssr_groups / df_denom)
        result["f"] = as_float(f)
        result["pvalue"] = as_float(stats.f.sf(f, df_num, df_denom))
        return result

    def coefficients(self) -> list[dict[str, Any]]:
        """Estimates with the usual and the heteroskedasticity-robust (HC) standard errors."""
        fit = self.fit
        est = fit.params  # statsmodels' unless the probe refitted in the scaled basis (scaled_refit)
        df = fit.df_resid  # zero-weight WLS rows are no observations
        scale = fit.scale
        se = np.sqrt(scale * np.clip(np.diag(fit.normalized_cov), 0.0, None))
        se_r: np.ndarray | None = None
        try:
            fit.require_residuals()
            self.need("gram", "meat")
            self._full_rank("the coefficients are not identified and robust standard errors are not computed")
            if self.hc in ("HC2", "HC3") and 1.0 - self.max_leverage <= fit.noise:
                raise StatisticError(
                    f"an observation has leverage 1 (e.g. a dummy for a single row): {self.hc} is undefined"
                )
            cov_v = self.Ginv.inv @ self.meat @ self.Ginv.inv
            if self.hc == "HC1":
                cov_v = cov_v * (fit.n / df)
            se_r = np.sqrt(np.clip(np.diag(self.basis.to_params(cov_v)), 0.0, None))
        except Exception as exc:
            self.errors["coefficients"] = f"robust standard errors: {error_message(exc)}"

        def test(b: float, s: float | None) -> tuple[float | None, float | None]:
            if fit.perfect or s is None or not s > 0 or not math.isfinite(s) or df <= 0:
                return None, None
            t = b / s
            return as_float(t), as_float(2.0 * stats.t.sf(abs(t), df))

        out = []
        for j, name in enumerate(fit.names):
            t, p = test(est[j], float(se[j]))
            s_r = float(se_r[j]) if se_r is not None else None
            t_r, p_r = test(est[j], s_r)
            change = None if p is None or p_r is None else bool((p < _SIGNIFICANCE) != (p_r < _SIGNIFICANCE))
            out.append(
                {
                    "name": name,
                    "estimate": as_float(est[j]),
                    "se": as_float(se[j]),
                    "t": t,
                    "p": p,
                    "se_robust": as_float(s_r),
                    "t_robust": t_r,
                    "p_robust": p_r,
                    "robust_type": self.hc,
                    "significance_changes": change,
                }
            )
        return out

    def cross_validation(self) -> dict[str, Any]:
        """k-fold CV: refit on each training fold (by updating the full fit), predict the held-out fold."""
        self.need("gram", "cv", "cv_predict")
        if not self.fit.finite:
            raise StatisticError("the endog or the residuals contain NaN or infinite values")
        n = self.fit.n
        return {
            "folds": int(self.opts["cv_folds"]),
            "seed": int(self.opts["cv_seed"]),
            "rmse": as_float(math.sqrt(self.cv_sse / n)),
            "mae": as_float(self.cv_sae / n),
        }


REFIT_NOTE = (
    "statsmodels decided the design's rank on the raw columns and dropped a direction that the centred, "
    "unit-scaled design has; every statistic and the coefficients here come from the least-squares fit "
    "in that scaled basis (its own residuals), not from the fit statsmodels reported"
)


def scaled_refit(fit: FitInputs) -> dict[str, Any] | None:
    """The ``scaled_refit`` entry: None unless the probe refitted in the scaled basis (see regvet_rank)."""
    if fit.refit is None:
        return None
    return {
        "statsmodels_rank": int(fit.statsmodels_rank),
        "rank": int(fit.rank),
        "condition": as_float(fit.condition),
        "ssr": as_float(fit.refit.ssr),
        "statsmodels_ssr": as_float(float(np.asarray(fit.res.wresid, dtype=float) @ np.asarray(fit.res.wresid))),
        "note": REFIT_NOTE,
    }


def fit_statistics(res: Any, options: Mapping[str, Any] | None = None) -> dict[str, Any]:
    """Diagnostic statistics for one statsmodels OLS or WLS results object, as a JSON-safe dict.

    ``res`` is a ``RegressionResults`` (or its wrapper) of an ``OLS`` or ``WLS`` model, possibly from
    ``get_robustcov_results`` or fitted with ``cov_type=...``; anything else raises TypeError. It is
    read, never modified. ``options`` override :data:`DEFAULT_OPTIONS`; an unknown key or a bad
    value raises ValueError.

    The result holds only str, int, float, bool, None, lists and dicts (no NaN or infinities: None
    instead, no numpy scalars), so ``json.dumps(result, allow_nan=False)`` always works. A statistic
    that cannot be computed is None and ``result["errors"][name]`` says why (Chow candidates are
    recorded as ``"chow:<candidate>"``; a failure of the robust standard errors alone under
    ``"coefficients"``). Keys:

    * ``estimator`` ("OLS"/"WLS"), ``nobs``, ``k`` (parameters incl. the constant), ``n_regressors``
      (excl. an explicit constant column), ``df_resid``, ``rsquared``, ``rsquared_adj``, ``aic``,
      ``bic``, ``llf``, ``ssr``, ``resid_sd`` (sqrt of scale), ``cov_type``, ``use_t``,
      ``has_constant``, ``param_names``, ``endog_name``: as statsmodels reports them.
    * ``rows``: ``{"count", "fingerprint"}``, see :func:`regvet_align.fingerprint`.
    * ``log_level_r2``: for an endog named like a log transform (``np.log(y)``, ``log10(y)``,
      ``log_y``), the squared correlation of exp(endog) and exp(fitted values) (in the log's base);
      else None.
    * ``breusch_pagan``: ``{"form", "lm", "lm_pvalue", "f", "f_pvalue", "df"}``, Koenker's form,
      = ``het_breuschpagan(resid, exog)`` (default robust=True).
    * ``white``: ``{"form", "lm", "lm_pvalue", "f", "f_pvalue", "df", "columns"}``: "full"
      (= ``het_white(resid, exog)``, df from the rank) while the auxiliary regression has at most
      ``white_max_columns`` columns, else "special (ŷ, ŷ²)" (= ``het_breuschpagan(resid, [1, ŷ, ŷ²])``).
    * ``reset``: ``{"form", "f", "pvalue", "df_num", "df_denom"}`` = ``linear_reset(res, power=3, use_f=True)``.
    * ``jarque_bera``: ``{"statistic", "pvalue", "skew", "kurtosis", "form"}`` = ``stattools.jarque_bera``.
    * ``condition_index``: ``{"value", "form"}``, Belsley-Kuh-Welsch (unit-length columns incl. the
      constant, not centred; not statsmodels' raw ``condition_number``).
    * ``vif``: ``{"max", "variable", "values": {name: vif}}``, centred VIFs of the non-constant
      regressors (= ``variance_inflation_factor(exog, i)``, standardize=True).
    * ``time_ordered``: why the data is time-ordered (DatetimeIndex/PeriodIndex rows, or
      ``time_column`` in the model's data frame), else None; then ``durbin_watson`` (float) and
      ``breusch_godfrey`` ``{"lm", "lm_pvalue", "f", "f_pvalue", "lags", "form"}``
      (= ``acorr_breusch_godfrey(res, nlags=lags)``), both None when not time-ordered.
    * ``chow``: one ``{"candidate", "groups" (how many), "group_sizes": [{"label", "nobs"}], "f",
      "pvalue", "df_num", "df_denom"}`` per break candidate (in the order given; the values are None
      and ``errors["chow:<candidate>"]`` says why when it cannot be computed), F = ((SSR_pooled − Σ SSR_g)/df_num)/(Σ SSR_g/df_denom) with
      df_num = Σ rank_g − rank and df_denom = n − Σ rank_g ((G−1)k and n − Gk at full rank); equal
      to the F test of all group interactions.
    * ``coefficient_tests``: "t distribution with df_resid for both".
    * ``coefficients``: per parameter ``{"name", "estimate", "se", "t", "p", "se_robust",
      "t_robust", "p_robust", "robust_type", "significance_changes"}``; ``se`` is the usual SE,
      the robust one is ``robust_se`` (``robust_se_large`` when nobs >= ``robust_se_large_n``);
      significance_changes = (p < 0.05) != (p_robust < 0.05).
    * ``cv`` (only with ``cv=True``): ``{"folds", "seed", "rmse", "mae"}``: row positions shuffled by
      ``numpy.random.default_rng(seed).permutation(n)``, split by ``numpy.array_split`` into folds;
      the model refitted on each training part, prediction errors of the held-out part pooled.
    * ``weights``: None for OLS; for WLS a note that every statistic uses the whitened model.
    * ``errors``: ``{name: message}`` for every statistic that could not be computed.
    """
    opts = read_options(options)
    with warnings.catch_warnings(), np.errstate(all="ignore"):
        warnings.simplefilter("ignore")
        fit = FitInputs(res, opts)
        return _Stats(fit).run()
