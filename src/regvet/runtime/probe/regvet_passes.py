"""The shared row passes behind the probe's statistics: one fit's design read in blocks of rows.

Runs inside the user's interpreter beside ``regvet_stats`` (same import rules). :class:`RowPasses`
holds the state of one statistics run (output, errors, failed passes) and the shared computations:
``prepare`` (n-vectors and choices), ``pass_one`` (cross-products), ``solve`` (generalised
inverses), ``pass_two`` (leverages, residualised auxiliary columns, the full White regression).
``regvet_stats._Stats`` builds every statistic on top of them.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import numpy as np

# Siblings in this folder (the probe's own modules, never regvet itself).
from regvet_align import lags_for
from regvet_fit import FitInputs, StatisticError, error_message
from regvet_linalg import Basis, Consumer, GInverse, TallQR, gram_with_constant, leverages, sweep


class RowPasses:
    """One statistics run's state and its shared row passes (see the module docstring)."""

    def __init__(self, fit: FitInputs) -> None:
        self.fit = fit
        self.opts = fit.opts
        self.out: dict[str, Any] = {}
        self.errors: dict[str, str] = {}
        #: Row passes (and shared steps) that failed, by name; the statistics that need them say so.
        self.failed: dict[str, BaseException] = {}
        # Defaults for everything prepare() sets, so that a failure there leaves a consistent state.
        self.reset_z: np.ndarray | None = None
        self.yhat_varies = False
        # Robust SE type (the large-sample type from robust_se_large_n rows on).
        large = fit.n >= self.opts["robust_se_large_n"]
        self.hc: str = self.opts["robust_se_large"] if large else self.opts["robust_se"]
        self.time_reason: str | None = None
        self.time_rank: np.ndarray | None = None  # each row's place in time order (None: rows are in it)
        self.u_time: np.ndarray | None = None  # the residuals in time order
        self.stacked_panel = False  # time values repeat: several units per period
        self.panel: tuple[np.ndarray, np.ndarray, str] | None = None  # (unit codes, time keys, where from)
        self.lags = 0
        self.white_columns = 0
        self.white_full = False

    # -- helpers ------------------------------------------------------------------------------

    def put(self, key: str, compute: Callable[[], Any]) -> None:
        """Store compute() under ``key``; on failure store None and record why under errors[key]."""
        try:
            self.out[key] = compute()
        except Exception as exc:
            self.out[key] = None
            self.errors[key] = error_message(exc)

    def need(self, *names: str) -> None:
        """Raise the failure of a row pass that a statistic depends on."""
        for name in names:
            if name in self.failed:
                raise StatisticError(f"{name} pass failed: {error_message(self.failed[name])}")

    # -- shared computations -------------------------------------------------------------------

    def prepare(self) -> None:
        """n-vectors and choices shared by several statistics (cheap: no n x k work)."""
        fit = self.fit
        u = fit.u
        self.g = u * u
        self.g_mean = float(self.g.mean()) if fit.n else 0.0
        self.g_c = self.g - self.g_mean
        self.u_mean = float(u.mean()) if fit.n else 0.0
        # RESET columns: powers of the (whitened) fitted values, centred and scaled when the constant is
        # in the design's column space (the span of [X, ŷ², ŷ³] is then unchanged).
        if fit.n:
            a = float(fit.yhat.mean()) if fit.one_in_span else 0.0
            z = fit.yhat - a
            b = math.sqrt(float(z @ z) / fit.n)
            # Fitted values equal up to rounding (a model with only a constant) carry no information;
            # "rounding" is relative to what double precision resolves for this design (FitInputs).
            self.yhat_varies = fit.yhat_varies
            if b > 0 and self.yhat_varies:
                self.reset_z = z / b
        # Time order and BG lags.
        try:
            timed = fit.time_order()  # restricted to the fit's observations
        except Exception as exc:
            self.errors["time_ordered"] = error_message(exc)
            timed = None
        if timed is not None and timed.reason is not None:
            self.time_reason = timed.reason
            if timed.repeats:
                self.stacked_panel = True
                if timed.units is not None and timed.keys is not None:
                    self.panel = (timed.units, timed.keys, timed.unit_name or "the units")
            self.lags = int(self.opts["serial_lags"] or lags_for(timed.freq))
            # Residuals in time order, zero-padded in front; lag_block maps each row to its place.
            u_time = u if timed.order is None else u[timed.order]
            self.u_time = u_time
            self.u_padded = np.concatenate([np.zeros(self.lags), u_time])
            if timed.order is not None:
                self.time_rank = np.empty(fit.n, dtype=np.intp)
                self.time_rank[timed.order] = np.arange(fit.n)
        # White: which form.
        p_plus = fit.k + (0 if fit.one_in_span else 1)
        self.white_columns = p_plus * (p_plus + 1) // 2
        self.white_full = self.white_columns <= self.opts["white_max_columns"]
        # Cross-validation folds.
        if self.opts["cv"]:
            folds = self.opts["cv_folds"]
            if folds > fit.n:
                self.failed["cv"] = StatisticError(f"cv_folds ({folds}) is larger than nobs ({fit.n})")
            else:
                perm = np.random.default_rng(self.opts["cv_seed"]).permutation(fit.n)
                self.fold_of = np.empty(fit.n, dtype=np.intp)
                for j, part in enumerate(np.array_split(perm, folds)):
                    self.fold_of[part] = j

    def lag_block(self, s: int, e: int) -> np.ndarray:
        """Rows s..e of the zero-padded lagged residuals û_{t-1}..û_{t-p}."""
        p, u = self.lags, self.u_padded
        assert u is not None, "only for time-ordered data"
        if self.time_rank is None:  # rows already in time order
            return np.column_stack([u[s + p - j : e + p - j] for j in range(1, p + 1)])
        at = self.time_rank[s:e] + p  # each row's place in time order, in the padded residuals
        return np.column_stack([u[at - j] for j in range(1, p + 1)])

    def reset_block(self, s: int, e: int) -> np.ndarray:
        assert self.reset_z is not None, "only when RESET can be computed"
        z = self.reset_z[s:e]
        z2 = z * z
        return np.column_stack([z2, z2 * z])

    def pass_one(self) -> None:
        """Row pass 1: V'V, V'1, V'[û, û² − mean, RESET columns, lags], HC0 meat, CV fold sums."""
        fit = self.fit
        try:
            self.basis = Basis(fit.X, fit.const_idx, fit.chunk, fit.one_in_span and fit.estimator == "OLS")
        except Exception as exc:
            self.failed["design"] = exc
            for name in ("gram", "reset_cross", "lags", "meat", "cv"):
                self.failed.setdefault(name, exc)
            return
        k = fit.k
        self.G = np.zeros((k, k))
        self.sums = np.zeros(k)
        self.cross = np.zeros((k, 2))  # columns: û, û² − mean
        self.cross_reset = np.zeros((k, 2))
        u, gc = fit.u, self.g_c

        def gram(s: int, e: int, v: np.ndarray) -> None:
            self.G += v.T @ v
            self.sums += v.sum(axis=0)
            self.cross += v.T @ np.column_stack([u[s:e], gc[s:e]])

        consumers: dict[str, Consumer] = {"gram": gram}
        if self.reset_z is not None:

            def reset(s: int, e: int, v: np.ndarray) -> None:
                self.cross_reset += v.T @ self.reset_block(s, e)

            consumers["reset_cross"] = reset
        else:
            self.failed["reset_cross"] = StatisticError("the fitted values are constant")
        if self.lags:
            self.cross_lags = np.zeros((k, self.lags))
            self.sum_lags = np.zeros(self.lags)

            def lags(s: int, e: int, v: np.ndarray) -> None:
                block = self.lag_block(s, e)
                self.cross_lags += v.T @ block
                self.sum_lags += block.sum(axis=0)

            consumers["lags"] = lags
        if self.hc in ("HC0", "HC1"):
            self.meat = np.zeros((k, k))

            absu = np.abs(u)

            def meat(s: int, e: int, v: np.ndarray) -> None:
                w = v * absu[s:e, None]
                self.meat += w.T @ w

            consumers["meat"] = meat
        if self.opts["cv"] and "cv" not in self.failed:
            folds = self.opts["cv_folds"]
            self.fold_gram = np.zeros((folds, k, k))
            self.fold_cross = np.zeros((folds, k))

            def cv(s: int, e: int, v: np.ndarray) -> None:
                which = self.fold_of[s:e]
                us = u[s:e]
                for j in range(folds):
                    sel = which == j
                    if sel.any():
                        vj = v[sel]
                        self.fold_gram[j] += vj.T @ vj
                        self.fold_cross[j] += vj.T @ us[sel]

            consumers["cv"] = cv
        sweep(self.basis, consumers, self.failed)

    def solve(self) -> None:
        """Generalised inverses of V'V and of [1, V]'[1, V] (the auxiliary regressions' design)."""
        if "gram" in self.failed:
            return
        fit = self.fit
        if not (np.isfinite(self.G).all() and np.isfinite(self.sums).all()):
            self.failed["gram"] = StatisticError("the design contains NaN or infinite values")
            return
        try:
            self.Ginv = GInverse(self.G, rank=fit.rank)
            if fit.one_in_span:
                self.Gpinv = self.Ginv
            else:
                self.Gpinv = GInverse(gram_with_constant(self.G, self.sums, fit.n), rank=fit.rank + 1)
        except Exception as exc:
            self.failed["gram"] = exc

    def plus_cross(self, cross_v: np.ndarray, sums: np.ndarray) -> np.ndarray:
        """[1, V]'R (or V'R when 1 is already in the design's span) from V'R and 1'R."""
        if self.fit.one_in_span:
            return cross_v
        return np.vstack([sums[None, :], cross_v])

    def pass_two(self) -> None:
        """Row pass 2 (needs the inverses): leverages and HC2/HC3 meat, residualised RESET columns and
        lags, CV predictions, and the full White auxiliary regression."""
        if "gram" in self.failed:
            for name in ("meat", "reset", "bg", "cv", "white_full"):
                self.failed.setdefault(name, self.failed["gram"])
            return
        fit = self.fit
        k = fit.k
        u = fit.u
        consumers: dict[str, Consumer] = {}
        Ginv = self.Ginv.inv

        if self.hc in ("HC2", "HC3"):
            self.meat = np.zeros((k, k))
            self.max_leverage = 0.0
            power = 1 if self.hc == "HC2" else 2

            def meat(s: int, e: int, v: np.ndarray) -> None:
                h = leverages(v, Ginv)
                self.max_leverage = max(self.max_leverage, float(h.max(initial=0.0)))
                w = self.g[s:e] / (1.0 - h) ** power
                self.meat += (v * w[:, None]).T @ v

            consumers["meat"] = meat

        if "reset_cross" not in self.failed:
            b_reset = Ginv @ self.cross_reset
            self.reset_rr = np.zeros((2, 2))
            self.reset_ru = np.zeros(2)

            def reset(s: int, e: int, v: np.ndarray) -> None:
                r = self.reset_block(s, e) - v @ b_reset
                self.reset_rr += r.T @ r
                self.reset_ru += r.T @ u[s:e]

            consumers["reset"] = reset
        else:
            self.failed["reset"] = self.failed["reset_cross"]

        if self.lags and "lags" not in self.failed:
            b_lags = self.Gpinv.inv @ self.plus_cross(self.cross_lags, self.sum_lags)
            p = self.lags
            self.bg_rr = np.zeros((p, p))
            self.bg_ru = np.zeros(p)
            one = not fit.one_in_span

            def bg(s: int, e: int, v: np.ndarray) -> None:
                fitted = v @ b_lags[1:] + b_lags[0] if one else v @ b_lags
                r = self.lag_block(s, e) - fitted
                self.bg_rr += r.T @ r
                self.bg_ru += r.T @ u[s:e]

            consumers["bg"] = bg
        elif self.lags:
            self.failed["bg"] = self.failed["lags"]

        if self.opts["cv"] and "cv" not in self.failed:
            folds = self.opts["cv_folds"]
            total_cross = self.cross[:, 0]
            deltas = []
            for j in range(folds):
                train = GInverse(self.G - self.fold_gram[j], rank=fit.rank)
                deltas.append(train.inv @ (total_cross - self.fold_cross[j]))
            self.cv_sse = 0.0
            self.cv_sae = 0.0

            def cv(s: int, e: int, v: np.ndarray) -> None:
                which = self.fold_of[s:e]
                err = u[s:e].copy()
                for j in range(folds):
                    sel = which == j
                    if sel.any():
                        err[sel] -= v[sel] @ deltas[j]
                self.cv_sse += float(err @ err)
                self.cv_sae += float(np.abs(err).sum())

            consumers["cv_predict"] = cv

        if self.white_full:
            # Products of the (RMS-scaled) columns of [1, V]: the same span as het_white's products.
            scale = np.sqrt(np.diag(self.G) / max(fit.n, 1))
            scale[~(scale > 0)] = 1.0
            one = not fit.one_in_span
            p_plus = k + (1 if one else 0)
            i0, i1 = np.triu_indices(p_plus)
            self.white_qr = TallQR()
            g = self.g

            # Sub-blocks of rows keep the product block no larger than a block of the design.
            sub = max(1, (self.basis.chunk * k) // (i0.size + 1))

            def white(s: int, e: int, v: np.ndarray) -> None:
                for t in range(0, e - s, sub):
                    w = v[t : t + sub] / scale
                    if one:
                        w = np.column_stack([np.ones(w.shape[0]), w])
                    self.white_qr.add(np.column_stack([w[:, i0] * w[:, i1], g[s + t : s + t + w.shape[0]]]))

            consumers["white_full"] = white

        sweep(self.basis, consumers, self.failed)
