"""Compared fits whose outcomes are one transform of the other, and their measures on the level scale.

Runs inside the user's interpreter beside ``regvet_stats`` (same import rules: standard library,
numpy, scipy and statsmodels only, pandas lazily, never regvet). The static analysis knows which
fits are compared; the parent passes their call sites as ``compare_groups`` (one list of members
per comparison, each member the end positions of one fit's call). :class:`CompareGroups` keeps the
latest results object of each member (the recorder keeps them alive anyway: nothing is copied) and,
when a fit of one member is recorded, pairs it with the latest fit of every other member:
:func:`pair_record`.

A pair is recognised when one outcome IS ``log``, ``log10``, ``log2``, ``log1p`` or ``sqrt`` of the
other, numerically, on the rows both fits used (aligned on their row labels; positions when neither
has labels): first on a few evenly spaced rows, then, only when those agree, on every common row in
blocks. Agreement is judged on the level scale, |g⁻¹(y_t) − y| <= 1e-9·|y|, so a column the data
holds (``df["log_riders"] = np.log(df.riders)``) is recognised as well as ``np.log(riders)`` in a
formula. For a recognised pair the record holds

* ``level_r2``: corr(y, g⁻¹(ŷ_t))², the squared correlation of the level outcome with the
  back-transformed fitted values of the transformed model (a positive factor such as Duan's smearing
  does not change it), and ``level_model_r2``: corr(y, ŷ)² of the level model, both unweighted;
* ``cv``: both models' k-fold prediction errors on the level scale, the same folds as the fits' own
  cross-validation: the level model's plain errors (for WLS: the whitened errors divided by √w; for
  OLS they are its own ``cv`` and not computed again: ``cv["level"]`` is None), the
  transformed model's retransformed with Duan's (1983) smearing estimate from each training fold's
  residuals e: g⁻¹ = exp gives exp(x'b)·mean(exp(e)) (base b: b^(x'b)·mean(b^e); log1p: that minus
  1), sqrt gives mean((x'b + e)²) = (x'b)² + 2·x'b·mean(e) + mean(e²). A transformed WLS fit gets
  no level-scale errors (smearing assumes one error distribution for all rows): ``cv`` is None and
  ``errors["cv"]`` says why, so errors are never shown in mixed units.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable
from typing import Any

import numpy as np

# Siblings in this folder (the probe's own modules, never regvet itself).
from regvet_fit import FitInputs, StatisticError, as_float, error_message, read_options
from regvet_linalg import Basis, GInverse

__all__ = ["CompareGroups", "pair_record", "recognise"]

#: Relative agreement, on the level scale, for one outcome to be a transform of the other.
RELATIVE = 1e-9
#: Rows compared before the exact check over every common row.
SAMPLE_ROWS = 32

FORM_LEVEL_CV = (
    "level scale: the level model's prediction errors; the transformed model's predictions "
    "retransformed with Duan's (1983) smearing estimate from each training fold's residuals"
)

#: name -> (inverse, base of the exponential or None, forward-domain check on the transformed values)
_INVERSE: dict[str, Callable[[np.ndarray], np.ndarray]] = {
    "log": np.exp,
    "log10": lambda z: np.power(10.0, z),
    "log2": np.exp2,
    "log1p": np.expm1,
    "sqrt": np.square,
}
_BASE = {"log": math.e, "log10": 10.0, "log2": 2.0, "log1p": math.e}


def _endog(res: Any) -> np.ndarray:
    return np.asarray(res.model.endog, dtype=float).reshape(-1)  # a view when statsmodels holds float64


def _values(values: Any) -> np.ndarray:
    return np.asarray(values, dtype=float).reshape(-1)


def _labels(res: Any) -> Any:
    return getattr(res.model.data, "row_labels", None)


def _index(labels: Any, n: int) -> Any:
    if labels is not None:
        return labels
    import pandas as pd  # only reached when the other fit has pandas labels

    return pd.RangeIndex(n)


def _agree(t: np.ndarray, level: np.ndarray, name: str) -> tuple[bool, bool]:
    """(every row agrees, some row differs from the identity) for y_t = transform(level)."""
    if name == "sqrt" and not bool(np.all(t >= 0)):
        return False, False
    back = _INVERSE[name](t)
    tol = RELATIVE * np.abs(level)
    same = bool(np.all(np.abs(back - level) <= tol))
    moved = bool(np.any(np.abs(t - level) > tol))
    return same, moved


class _Common:
    """The rows two fits share: positions in each, by row label (or by position without labels)."""

    def __init__(self, a: Any, b: Any) -> None:
        self.na, self.nb = a.model.endog.shape[0], b.model.endog.shape[0]
        la, lb = _labels(a), _labels(b)
        self.la, self.lb = la, lb
        self.identical = (la is None and lb is None and self.na == self.nb) or (
            la is not None and lb is not None and (la is lb or (len(la) == len(lb) and bool(la.equals(lb))))
        )

    def sample(self, rows: int) -> tuple[np.ndarray, np.ndarray]:
        pa = np.unique(np.linspace(0, max(self.na - 1, 0), min(self.na, rows)).astype(np.intp))
        return self._locate(pa)

    def _locate(self, pa: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        if self.identical:
            return pa, pa
        if self.la is None and self.lb is None:
            keep = pa[pa < self.nb]
            return keep, keep
        la, lb = _index(self.la, self.na), _index(self.lb, self.nb)
        if not (la.is_unique and lb.is_unique):
            raise StatisticError("the row labels repeat, so the two fits' rows cannot be aligned")
        pb = np.asarray(lb.get_indexer(la.take(pa)), dtype=np.intp)
        found = pb >= 0
        return pa[found], pb[found]

    def all(self) -> tuple[np.ndarray, np.ndarray] | None:
        """Positions of every common row (None: the same rows in the same order)."""
        if self.identical:
            return None
        return self._locate(np.arange(self.na, dtype=np.intp))


def recognise(a: Any, b: Any, chunk: int = 65_536) -> tuple[int, str, int] | None:
    """(0 if a's outcome is the transform of b's, else 1; the transform's name; common rows), or None."""
    common = _Common(a, b)
    ya, yb = _endog(a), _endog(b)
    pa, pb = common.sample(SAMPLE_ROWS)
    if pa.size == 0:
        return None
    candidates = []
    for which, (t, level) in enumerate(((ya[pa], yb[pb]), (yb[pb], ya[pa]))):
        for name in _INVERSE:
            same, moved = _agree(t, level, name)
            if same and moved:
                candidates.append((which, name))
    if not candidates:
        return None
    rows = common.all()
    count = ya.size if rows is None else int(rows[0].size)
    for which, name in candidates:
        ok = True
        for s in range(0, count, chunk):
            e = min(count, s + chunk)
            sa, sb = (slice(s, e), slice(s, e)) if rows is None else (rows[0][s:e], rows[1][s:e])
            t, level = (ya[sa], yb[sb]) if which == 0 else (yb[sb], ya[sa])
            if not _agree(t, level, name)[0]:
                ok = False
                break
        if ok:
            return which, name, count
    return None


def _squared_correlation(a: np.ndarray, b: np.ndarray) -> float | None:
    a = a - a.mean()
    b = b - b.mean()
    den = float(a @ a) * float(b @ b)
    if not den > 0:
        raise StatisticError("the outcome or the predictions are constant on the level scale")
    return as_float(float(a @ b) ** 2 / den)


def level_r2(fit: FitInputs, name: str) -> float | None:
    """corr(g⁻¹(y_t), g⁻¹(ŷ_t))²: the level outcome against the back-transformed fitted values."""
    y, f = fit.endog_fitted()
    if name in _BASE:  # exp(v − max v): the same correlation, no overflow (log1p: a shift of exp)
        base = _BASE[name]
        return _squared_correlation(np.power(base, y - np.max(y)), np.power(base, f - np.max(f)))
    return _squared_correlation(np.square(y), np.square(f))


def level_cv(fit: FitInputs, name: str | None, opts: dict[str, Any]) -> dict[str, Any]:
    """k-fold prediction errors on the level scale (see the module docstring), the fits' own folds."""
    if name is not None and fit.estimator != "OLS":
        raise StatisticError(
            "not computed for a transformed WLS fit: Duan's smearing assumes one error distribution for all rows"
        )
    if not fit.finite:
        raise StatisticError("the endog or the residuals contain NaN or infinite values")
    n, folds = fit.n, int(opts["cv_folds"])
    if folds > n:
        raise StatisticError(f"cv_folds ({folds}) is larger than nobs ({n})")
    fold_of = np.empty(n, dtype=np.intp)
    for j, part in enumerate(np.array_split(np.random.default_rng(opts["cv_seed"]).permutation(n), folds)):
        fold_of[part] = j
    basis = Basis(fit.X, fit.const_idx, fit.chunk, fit.one_in_span and fit.estimator == "OLS")
    k, u = fit.k, fit.u
    G, cross = np.zeros((k, k)), np.zeros(k)
    fold_gram, fold_cross = np.zeros((folds, k, k)), np.zeros((folds, k))
    for s, e in basis.spans():
        v = basis.rows(s, e)
        G += v.T @ v
        cross += v.T @ u[s:e]
        which = fold_of[s:e]
        for j in range(folds):
            sel = which == j
            if sel.any():
                fold_gram[j] += v[sel].T @ v[sel]
                fold_cross[j] += v[sel].T @ u[s:e][sel]
    # The training fit of fold j moves the full fit's coefficients (in the basis V) by delta_j.
    deltas = np.column_stack(
        [GInverse(G - fold_gram[j], rank=fit.rank).inv @ (cross - fold_cross[j]) for j in range(folds)]
    )
    sqrt_w = None if fit.weights is None else np.sqrt(fit.weights)
    held = np.empty(n)  # held-out prediction errors on the model's own (whitened) scale
    train_count = np.zeros(folds)
    s1, s2 = np.zeros(folds), np.zeros(folds)  # smearing sums over each training fold's residuals
    c = math.log(_BASE[name]) if name in _BASE else None
    for s, e in basis.spans():
        v = basis.rows(s, e)
        err = u[s:e, None] - v @ deltas  # column j: residuals of the fold-j training fit
        which = fold_of[s:e]
        held[s:e] = err[np.arange(e - s), which]
        if name is None:
            continue
        train = which[:, None] != np.arange(folds)[None, :]
        train_count += train.sum(axis=0)
        if c is not None:
            s1 += np.where(train, np.exp(c * err), 0.0).sum(axis=0)
        else:
            s1 += np.where(train, err, 0.0).sum(axis=0)
            s2 += np.where(train, err * err, 0.0).sum(axis=0)
    out: dict[str, Any] = {"smearing": None}
    if name is None:
        level_err = held if sqrt_w is None else held / sqrt_w  # FitInputs keeps only positive weights
    else:
        y = fit.y
        pred = y - held  # held-out predictions on the transformed scale
        m1, m2 = s1[fold_of] / train_count[fold_of], s2[fold_of] / train_count[fold_of]
        if c is not None:
            level_pred = np.exp(c * pred) * m1
            if name == "log1p":
                level_pred = level_pred - 1.0
        else:
            level_pred = pred * pred + 2.0 * pred * m1 + m2
        level_err = _INVERSE[name](y) - level_pred
        if c is not None:
            out["smearing"] = as_float(float(np.mean(np.exp(c * u))))
    count = int(level_err.size)
    if not count or not bool(np.all(np.isfinite(level_err))):
        raise StatisticError("the level-scale prediction errors are not finite")
    out["rmse"] = as_float(math.sqrt(float(level_err @ level_err) / count))
    out["mae"] = as_float(float(np.abs(level_err).sum()) / count)
    return out


def pair_record(a: Any, b: Any, seq_a: int, seq_b: int, options: dict[str, Any]) -> dict[str, Any] | None:
    """The ``"pair"`` line for two compared fits when one outcome is a transform of the other, else None."""
    with warnings.catch_warnings(), np.errstate(all="ignore"):  # nothing on the user's output
        warnings.simplefilter("ignore")
        return _pair_record(a, b, seq_a, seq_b, read_options(options))


def _pair_record(a: Any, b: Any, seq_a: int, seq_b: int, opts: dict[str, Any]) -> dict[str, Any] | None:
    found = recognise(a, b, opts["chunk_rows"])
    if found is None:
        return None
    which, name, common = found
    (t, seq_t), (level, seq_l) = ((a, seq_a), (b, seq_b)) if which == 0 else ((b, seq_b), (a, seq_a))
    out: dict[str, Any] = {
        "type": "pair",
        "transformed": seq_t,
        "level": seq_l,
        "transform": name,
        "common_rows": common,
        "level_r2": None,
        "level_model_r2": None,
        "cv": None,
    }
    errors: dict[str, str] = {}

    def put(key: str, compute: Callable[[], Any]) -> None:
        try:
            out[key] = compute()
        except Exception as exc:
            errors[key] = error_message(exc)

    inputs_t = FitInputs(t, opts)
    # An OLS level model's own cross-validation (``fit_statistics``' ``cv``, the same folds) is already
    # on the level scale: it is not computed twice (``cv["level"]`` is None).
    inputs_l = FitInputs(level, opts) if type(level.model).__name__ != "OLS" else None
    put("level_r2", lambda: level_r2(inputs_t, name))
    if inputs_l is None:
        put("level_model_r2", lambda: _squared_correlation(_endog(level), _values(level.fittedvalues)))
    else:
        put("level_model_r2", lambda: _squared_correlation(*inputs_l.endog_fitted()))

    def cv() -> dict[str, Any]:
        return {
            "folds": int(opts["cv_folds"]),
            "seed": int(opts["cv_seed"]),
            "transformed": level_cv(inputs_t, name, opts),
            "level": level_cv(inputs_l, None, opts) if inputs_l is not None else None,
            "form": FORM_LEVEL_CV,
        }

    put("cv", cv)
    out["errors"] = errors
    return out


class CompareGroups:
    """Which recorded fits are compared (by call site), and the latest fit of each compared site."""

    def __init__(self, groups: list[list[list[list[Any]]]]) -> None:
        #: per comparison, per member: the (file, end line, end column) of its fit's calls
        self.groups = [[{tuple(site) for site in member} for member in group] for group in groups]
        self.latest: dict[tuple[int, int], tuple[int, Any]] = {}
        self.done: set[tuple[int, int]] = set()

    def __bool__(self) -> bool:
        return bool(self.groups)

    def pairs(self, seq: int, frames: list[list[Any]], res: Any, options: dict[str, Any]) -> list[dict[str, Any]]:
        """The pair lines for a fit just recorded (with the latest fit of every other compared site)."""
        ends = {(f[0], f[3], f[4]) for f in frames}
        mine = [(g, m) for g, group in enumerate(self.groups) for m, sites in enumerate(group) if ends & sites]
        out = []
        for g, m in mine:
            for other in range(len(self.groups[g])):
                if other == m or (g, other) not in self.latest:
                    continue
                seq_o, res_o = self.latest[(g, other)]
                key = (min(seq, seq_o), max(seq, seq_o))
                if seq_o == seq or key in self.done:
                    continue
                self.done.add(key)
                record = pair_record(res_o, res, seq_o, seq, options)
                if record is not None:
                    out.append(record)
        for g, m in mine:
            self.latest[(g, m)] = (seq, res)
        return out
