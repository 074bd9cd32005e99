"""Ramsey's RESET for one fit: the classical F test and, for a fit with HC covariance, the robust Wald test.

Runs inside the user's interpreter beside ``regvet_stats`` (same import rules: standard library,
numpy, scipy and statsmodels only, never regvet). It builds on the shared row passes of
``regvet_passes.RowPasses``: ``reset_rr`` and ``reset_ru`` are the cross-products of the powers
ŷ², ŷ³ of the (standardised) fitted values after residualising them on the design, and of those
with the residuals (Frisch-Waugh-Lovell).

* **Identification.** The powers are judged against their size *before* residualising: a direction
  whose residualised length is below what double precision resolves for this design (its condition
  and the offset of the fitted values) lies in the span of the regressors. When no direction is
  left, RESET is not identified (fitted values that take only two values, a saturated design of
  dummies: every function of ŷ is then a combination of the regressors) and no p-value is given.
* **Robust form.** For a fit whose covariance is HC0-HC3, the Wald test of the added powers in the
  augmented regression with the same HC covariance (= ``linear_reset(res, power=3, use_f=True,
  cov_type=...)``): by FWL the powers' block of the sandwich is (R'R)⁻ R'ΩR (R'R)⁻ with the
  augmented regression's residuals and leverages h_i + r_i'(R'R)⁻r_i. It takes one more row pass,
  only for such fits. The classical F stays beside it.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

# Siblings in this folder (the probe's own modules, never regvet itself).
from regvet_fit import HC_TYPES, StatisticError, as_count, as_float
from regvet_linalg import EPS, leverages, sweep
from regvet_passes import RowPasses
from scipy import stats

FORM_RESET = "F test of powers 2 and 3 of the fitted values"
FORM_ROBUST = "Wald test of powers 2 and 3 of the fitted values with the fit's {hc} covariance, F form"

#: Leverages this close to 1 make HC2/HC3 undefined (the same guard as the robust standard errors).
_LEVERAGE_ONE = 1.0 - 1e-10


class _Powers:
    """The identified directions of the residualised powers: R·B has cross-product diag(w)."""

    def __init__(self, passes: RowPasses) -> None:
        fit = passes.fit
        z = passes.reset_z
        assert z is not None
        z2 = z * z
        # Squared lengths of ŷ², ŷ³ (standardised) before residualising on the design.
        size = np.sqrt(np.array([float(z2 @ z2), float((z2 * z) @ (z2 * z))]))
        size[~(size > 0)] = 1.0
        rr = (passes.reset_rr + passes.reset_rr.T) / 2.0
        w, q = np.linalg.eigh(rr / np.outer(size, size))
        # What a residualised direction of relative length below `resolved` is: rounding, the design's
        # noise floor (eps times its scaled condition) and that of ŷ = y − û relative to its spread.
        y_rms = math.sqrt(float(fit.y @ fit.y) / fit.n) if fit.n else 0.0
        spread = math.sqrt(max(float(fit.yhat @ fit.yhat) / fit.n - float(fit.yhat.mean()) ** 2, 0.0)) if fit.n else 0.0
        offset = y_rms / spread if spread > 0 else math.inf
        self.resolved = fit.noise * (1.0 + offset)
        keep = w > self.resolved**2
        self.q = int(keep.sum())
        self.w = w[keep]
        self.b = q[:, keep] / size[:, None]  # columns of R·b: the identified directions
        self.gamma = (self.b.T @ passes.reset_ru) / self.w if self.q else np.zeros(0)


def reset(passes: RowPasses) -> dict[str, Any]:
    """RESET with ŷ², ŷ³: the F test of the powers added to the model (= linear_reset(power=3, use_f=True)),
    and for a fit with HC covariance the robust Wald test under ``"robust"``."""
    fit = passes.fit
    fit.require_residuals()
    passes.need("gram", "reset")
    powers = _Powers(passes)
    if powers.q == 0:
        raise StatisticError(_not_identified(passes))
    q = powers.q
    ess = float(powers.gamma @ (powers.w * powers.gamma))
    df_denom = float(fit.df_resid) - q
    ssr_u = fit.ssr - ess
    if df_denom <= 0:
        raise StatisticError("too few residual degrees of freedom for the RESET regression")
    f = (ess / q) / (ssr_u / df_denom) if ssr_u > 0 else math.inf
    out: dict[str, Any] = {
        "form": FORM_RESET,
        "f": as_float(f),
        "pvalue": as_float(stats.f.sf(f, q, df_denom)) if math.isfinite(f) else as_float(0.0),
        "df_num": int(q),
        "df_denom": as_count(df_denom),
        "dummies_only": dummies_only(fit.select(np.asarray(fit.model.exog)), fit.chunk),
        "robust": None,
    }
    cov = str(getattr(fit.res, "cov_type", "nonrobust"))
    if cov.upper() in HC_TYPES:
        try:
            out["robust"] = _robust(passes, powers, cov.upper(), df_denom)
        except Exception as exc:
            passes.errors["reset_robust"] = f"robust RESET: {exc}"
    elif cov != "nonrobust":
        passes.errors["reset_robust"] = (
            f"robust RESET: the fit's covariance {cov} is not an HC type; only the classical F is computed"
        )
    return out


def _robust(passes: RowPasses, powers: _Powers, hc: str, df_denom: float) -> dict[str, Any]:
    fit = passes.fit
    q, b, w, gamma = powers.q, powers.b, powers.w, powers.gamma
    ginv = passes.Ginv.inv
    b_reset = ginv @ passes.cross_reset
    u = fit.u
    meat = np.zeros((q, q))
    top = [0.0]
    power = {"HC2": 1, "HC3": 2}.get(hc, 0)

    def consume(s: int, e: int, v: np.ndarray) -> None:
        a = (passes.reset_block(s, e) - v @ b_reset) @ b  # the identified residualised powers
        resid = u[s:e] - a @ gamma  # residuals of the augmented regression
        weight = resid * resid
        if power:
            h = leverages(v, ginv) + np.einsum("ij,ij->i", a / w, a)
            top[0] = max(top[0], float(h.max(initial=0.0)))
            weight = weight / (1.0 - h) ** power
        meat[...] += (a * weight[:, None]).T @ a

    failed: dict[str, BaseException] = {}
    sweep(passes.basis, {"reset_robust": consume}, failed)
    if failed:
        raise failed["reset_robust"]
    if power and top[0] >= _LEVERAGE_ONE:
        raise StatisticError(f"an observation has leverage 1 in the augmented regression: {hc} is undefined")
    cov = meat / np.outer(w, w)
    if hc == "HC1":
        cov = cov * (fit.n / df_denom)
    try:
        wald = float(gamma @ np.linalg.solve(cov, gamma))
    except np.linalg.LinAlgError as exc:
        raise StatisticError("the robust covariance of the added powers is singular") from exc
    f = wald / q
    if not (math.isfinite(f) and f >= 0):
        raise StatisticError("the robust covariance of the added powers is not positive definite")
    return {
        "cov_type": hc,
        "form": FORM_ROBUST.format(hc=hc),
        "f": as_float(f),
        "pvalue": as_float(stats.f.sf(f, q, df_denom)),
        "df_num": int(q),
        "df_denom": as_count(df_denom),
    }


def _not_identified(passes: RowPasses) -> str:
    """Why no power of the fitted values adds a direction to the design."""
    fit = passes.fit
    values = _distinct(fit.yhat)
    if values <= 2:
        why = (
            "the fitted values take only two values, so their squares and cubes are linear in them and lie in "
            "the span of the regressors"
        )
    elif dummies_only(fit.select(np.asarray(fit.model.exog)), fit.chunk):
        why = (
            f"the regressors are dummies that give every cell its own mean ({values} fitted values), so every "
            "function of the fitted values lies in the span of the regressors"
        )
    else:
        why = "the squares and cubes of the fitted values lie in the span of the regressors"
    return f"not identified: {why}; RESET has nothing to test"


def _distinct(yhat: np.ndarray) -> int:
    """Distinct fitted values, equal up to rounding (relative 1e-9 of their range) counted once."""
    if yhat.size == 0:
        return 0
    s = np.sort(yhat)
    tol = 1e-9 * max(float(s[-1] - s[0]), float(np.max(np.abs(s))) * EPS)
    return int(1 + np.count_nonzero(np.diff(s) > tol))


def dummies_only(x: np.ndarray, chunk: int = 65_536) -> bool:
    """Every column of the design that is not constant takes exactly two values (and there is one).

    The first block of rows rules out almost every continuous column (a third value); only a design
    that passes it is read in full, once for the extremes and once to see no other value occurs.
    """
    n = x.shape[0] if x.ndim == 2 else 0
    if n == 0:
        return False
    first = np.asarray(x[: min(n, 4096)], dtype=float)
    if not bool(np.all((first == first.min(axis=0)) | (first == first.max(axis=0)))):
        return False
    lo, hi = first.min(axis=0), first.max(axis=0)
    for s in range(first.shape[0], n, chunk):
        block = np.asarray(x[s : s + chunk], dtype=float)
        lo, hi = np.minimum(lo, block.min(axis=0)), np.maximum(hi, block.max(axis=0))
    for s in range(0, n, chunk):
        block = np.asarray(x[s : s + chunk], dtype=float)
        if not bool(np.all((block == lo) | (block == hi))):
            return False
    return bool(np.any(lo != hi))
