"""Exact recomputation (mpmath, 50 digits) of one disputed statistic of one fit, for the agreement harness.

The fit's whitened design X and outcome y (saved by ``agreement_hook.py`` as float arrays) are taken
as exact numbers; the least-squares fit and every auxiliary regression are done by modified
Gram-Schmidt (twice per column) with an exact-rank rule: a column whose remaining norm is below
1e-30 of its own is dependent. The statistic's definition is the textbook one, in the form regvet
documents (and statsmodels' function computes):

* Breusch-Pagan (Koenker): LM = n·R² of û² on [1, X], F from the same regression, df = rank - 1;
* White (full): the same on the products of the columns of [1, X]; special: on [1, ŷ, ŷ²];
* RESET: F of ŷ², ŷ³ added to X, (q, n - rank(X) - q) df;
* Jarque-Bera: n/6·(S² + (K - 3)²/4), biased moments;
* VIF_j: centred SS of x_j over the SSR of x_j on the other columns (the constant among them);
* condition index: largest over smallest singular value of X with unit-length columns;
* Durbin-Watson in time order; Breusch-Godfrey: n·R² of û on [1, X, lags] (zero-padded);
* coefficients: β, the usual SE and the HC0-HC3 SE from the exact residuals and leverages.

p-values of the exact statistics come from scipy's distributions (the statistic is what is exact).
"""

from __future__ import annotations

from typing import Any

import mpmath
import numpy as np
from scipy import stats

mp = mpmath.mp
DEPENDENT = mpmath.mpf("1e-30")
#: Work above this many (rows x columns²) is skipped (pure-Python 50-digit arithmetic).
BUDGET = 60_000_000


def _vec(values: Any) -> list[Any]:
    return [mpmath.mpf(float(v)) for v in np.asarray(values, dtype=float).reshape(-1)]


def _dot(a: list[Any], b: list[Any]) -> Any:
    return mpmath.fsum(x * y for x, y in zip(a, b, strict=True))


def _basis(columns: list[list[Any]]) -> list[list[Any]]:
    out: list[list[Any]] = []
    for col in columns:
        norm0 = mpmath.sqrt(_dot(col, col))
        if norm0 == 0:
            continue
        v = list(col)
        for _ in range(2):
            for q in out:
                d = _dot(q, v)
                v = [a - d * b for a, b in zip(v, q, strict=True)]
        norm = mpmath.sqrt(_dot(v, v))
        if norm > DEPENDENT * norm0:
            out.append([a / norm for a in v])
    return out


def _residual(y: list[Any], basis: list[list[Any]]) -> list[Any]:
    r = list(y)
    for _ in range(2):
        for q in basis:
            d = _dot(q, r)
            r = [a - d * b for a, b in zip(r, q, strict=True)]
    return r


def _centred(v: list[Any]) -> list[Any]:
    m = mpmath.fsum(v) / len(v)
    return [a - m for a in v]


def _lm(target: list[Any], columns: list[list[Any]], n: int) -> dict[str, float | None]:
    """n·R² (centred) of ``target`` on ``columns`` (which span the constant) and the regression's F."""
    basis = _basis(columns)
    tss = _dot(_centred(target), _centred(target))
    df = len(basis) - 1
    if tss == 0 or df <= 0 or n - len(basis) <= 0:
        return {"lm": None, "lm_pvalue": None, "f": None, "f_pvalue": None}
    r = _residual(target, basis)
    ssr = _dot(r, r)
    lm = n * (tss - ssr) / tss
    f = ((tss - ssr) / df) / (ssr / (n - len(basis))) if ssr > 0 else None
    return {
        "lm": float(lm),
        "lm_pvalue": float(stats.chi2.sf(float(lm), df)),
        "f": None if f is None else float(f),
        "f_pvalue": None if f is None else float(stats.f.sf(float(f), df, n - len(basis))),
    }


class ExactFit:
    """The exact least-squares fit of one saved design, and its statistics on demand."""

    def __init__(self, data: Any) -> None:
        mp.dps = 50
        self.X = np.asarray(data["X"], dtype=float)
        self.n, self.k = self.X.shape
        self.has_const = bool(data["has_const"])
        self.const_idx = int(data["const_idx"])
        self.order = np.asarray(data["order"], dtype=int)
        self.lags = int(data["lags"])
        self.hc = str(data["hc"])
        self.names = [str(x) for x in data["names"]]
        self.cols = [_vec(self.X[:, j]) for j in range(self.k)]
        self.y = _vec(data["y"])
        self.basis = _basis(self.cols)
        self.rank = len(self.basis)
        self.u = _residual(self.y, self.basis)
        self.yhat = [a - b for a, b in zip(self.y, self.u, strict=True)]
        self.one = [mpmath.mpf(1)] * self.n
        self.with_one = self.cols if self.has_const else [self.one, *self.cols]

    def too_large(self, columns: int) -> bool:
        return self.n * columns * columns > BUDGET

    def value(self, key: str) -> float | None:
        """The exact value of one flattened statistic key (as the harness names them)."""
        head, _, rest = key.partition(".")
        n = self.n
        if head == "breusch_pagan":
            return _lm([a * a for a in self.u], self.with_one, n)[rest]
        if head == "white":
            p = len(self.with_one)
            if p * (p + 1) // 2 <= 40:
                if self.too_large(p * (p + 1) // 2):
                    raise ValueError("too large for the exact reference")
                cols = [
                    [a * b for a, b in zip(self.with_one[i], self.with_one[j], strict=True)]
                    for i in range(p)
                    for j in range(i, p)
                ]
            else:
                t = _centred(self.yhat)
                cols = [self.one, t, [a * a for a in t]]
            return _lm([a * a for a in self.u], cols, n)[rest]
        if head == "reset" and rest in ("f", "pvalue"):
            t = _centred(self.yhat) if self.has_const else self.yhat
            s = mpmath.sqrt(_dot(t, t) / n)
            z = [a / s for a in t]
            aug = _basis([*self.cols, [a * a for a in z], [a * a * a for a in z]])
            q = len(aug) - self.rank
            r = _residual(self.y, aug)
            ssr_u, ssr_r = _dot(r, r), _dot(self.u, self.u)
            df = n - len(aug)
            if q <= 0 or df <= 0 or ssr_u <= 0:
                return None
            f = ((ssr_r - ssr_u) / q) / (ssr_u / df)
            return float(f) if rest == "f" else float(stats.f.sf(float(f), q, df))
        if head == "jarque_bera":
            d = _centred(self.u)
            m2 = mpmath.fsum(a**2 for a in d) / n
            m3 = mpmath.fsum(a**3 for a in d) / n
            m4 = mpmath.fsum(a**4 for a in d) / n
            skew, kurt = m3 / m2**1.5, m4 / m2**2
            jb = n / mpmath.mpf(6) * (skew**2 + (kurt - 3) ** 2 / 4)
            return {
                "statistic": float(jb),
                "pvalue": float(stats.chi2.sf(float(jb), 2)),
                "skew": float(skew),
                "kurtosis": float(kurt),
            }[rest]
        if head == "vif":
            name = rest[len("values.") :]
            j = self.names.index(name)
            others = [c for i, c in enumerate(self.cols) if i != j and i != self.const_idx]
            base = [self.cols[self.const_idx]] if self.const_idx >= 0 else [self.one]
            tss_r = _residual(self.cols[j], _basis(base))
            r = _residual(self.cols[j], _basis([*base, *others]))
            return float(_dot(tss_r, tss_r) / _dot(r, r))
        if head == "condition_index":
            unit = [[a / mpmath.sqrt(_dot(c, c)) for a in c] for c in self.cols]
            ortho = _basis(unit)
            if len(ortho) < self.k:
                return None
            r = mpmath.matrix([[_dot(ortho[i], unit[j]) for j in range(self.k)] for i in range(self.k)])
            s = mpmath.svd_r(r, compute_uv=False)
            vals = [abs(s[i]) for i in range(self.k)]
            return float(max(vals) / min(vals))
        if head == "durbin_watson":
            u = [self.u[i] for i in self.order] if self.order.size else self.u
            return float(mpmath.fsum((u[i] - u[i - 1]) ** 2 for i in range(1, n)) / _dot(u, u))
        if head == "breusch_godfrey":
            pos = list(self.order) if self.order.size else list(range(n))
            rank_of = {p: t for t, p in enumerate(pos)}
            u_time = [self.u[p] for p in pos]
            lag_cols = [
                [u_time[rank_of[i] - j] if rank_of[i] - j >= 0 else mpmath.mpf(0) for i in range(n)]
                for j in range(1, self.lags + 1)
            ]
            full = _basis([*self.with_one, *lag_cols])
            tss = _dot(_centred(self.u), _centred(self.u))
            r = _residual(self.u, full)
            ssr = _dot(r, r)
            lm = n * (tss - ssr) / tss
            p = self.lags
            df = n - len(full)
            r0 = _residual(self.u, _basis(self.with_one))
            f = ((_dot(r0, r0) - ssr) / p) / (ssr / df)
            return {
                "lm": float(lm),
                "lm_pvalue": float(stats.chi2.sf(float(lm), p)),
                "f": float(f),
                "f_pvalue": float(stats.f.sf(float(f), p, df)),
            }[rest]
        if head == "coef":
            name, _, what = rest.rpartition(".")
            return self._coef(self.names.index(name), what)
        raise KeyError(key)

    def _coef(self, j: int, what: str) -> float | None:
        if self.rank < self.k:
            return None
        n, k = self.n, self.k
        xtx = mpmath.matrix([[_dot(self.cols[a], self.cols[b]) for b in range(k)] for a in range(k)])
        inv = mpmath.inverse(xtx)
        xty = [_dot(c, self.y) for c in self.cols]
        beta = [mpmath.fsum(inv[j, b] * xty[b] for b in range(k)) for j in range(k)]
        df = n - k
        if what == "estimate":
            return float(beta[j])
        if what in ("se", "t", "p"):
            s2 = _dot(self.u, self.u) / df
            se = mpmath.sqrt(s2 * inv[j, j])
        else:
            # Sandwich: row j of (X'X)⁻¹X' is a_i = Σ_b inv[j, b] x_ib; leverages h_i = x_i'(X'X)⁻¹x_i.
            power = {"HC0": 0, "HC1": 0, "HC2": 1, "HC3": 2}[self.hc]
            total = mpmath.mpf(0)
            for i in range(n):
                xi = [self.cols[b][i] for b in range(k)]
                a = mpmath.fsum(inv[j, b] * xi[b] for b in range(k))
                w = self.u[i] ** 2
                if power:
                    h = mpmath.fsum(xi[a_] * mpmath.fsum(inv[a_, b] * xi[b] for b in range(k)) for a_ in range(k))
                    w = w / (1 - h) ** power
                total += a * a * w
            if self.hc == "HC1":
                total = total * n / df
            se = mpmath.sqrt(total)
        if what in ("se", "se_robust"):
            return float(se)
        t = beta[j] / se
        if what in ("t", "t_robust"):
            return float(t)
        return float(2 * stats.t.sf(abs(float(t)), df))
