"""Residual points for the report's plots, computed in the child from the fit's own arrays.

Runs inside the user's interpreter (standard library and numpy only; never imports regvet). Asked
for with the probe option ``plot_points`` (the largest number of points per plot); the result is
``FitRecord.points`` (``regvet.model.stats_schema.PlotPoints``).

What is drawn, in the whitened model's terms (for OLS the usual residuals and fitted values):

* residuals against fitted values;
* a normal Q-Q plot of the internally studentized residuals r_i = u_i / (s * sqrt(1 - h_ii)),
  h_ii the leverage (the diagonal of the hat matrix, from ``normalized_cov_params``), against
  normal quantiles at the plotting positions (i - a) / (n + 1 - 2a), a = 3/8 for n <= 10 and
  1/2 above (the convention of R's ``ppoints``);
* scale-location: sqrt(|r_i|) against fitted values;
* residuals in time order when the data is time-ordered (a date or period index, or the
  configured ``time_column``).

A fit with more rows than ``plot_points`` is downsampled deterministically: the scatter plots
use a random subset drawn with a fixed seed (0), the Q-Q plot and the time-order plot use evenly
spaced ranks of the sorted (or time-ordered) values, so they keep their shape.
"""

from __future__ import annotations

import math
from statistics import NormalDist
from typing import Any

import numpy as np

SEED = 0
CHUNK = 65536


def _round(values: Any) -> list[float]:
    return [float(f"{float(v):.6g}") for v in values]


def _leverage(X: np.ndarray, cov: np.ndarray) -> np.ndarray:
    out = np.empty(X.shape[0])
    for s in range(0, X.shape[0], CHUNK):
        block = X[s : s + CHUNK]
        out[s : s + CHUNK] = np.einsum("ij,jk,ik->i", block, cov, block)
    return out


def _time_keys(res: Any, n: int, time_column: str | None) -> tuple[Any, str] | None:
    """Values that order the fit's rows in time, and what they are; None when there are none."""
    try:
        import pandas as pd
    except ImportError:  # pragma: no cover - a time order needs pandas data anyway
        return None
    data = res.model.data
    labels = getattr(data, "row_labels", None)
    if isinstance(labels, (pd.DatetimeIndex, pd.PeriodIndex)) and len(labels) == n:
        return labels, "the row index"
    frame = getattr(data, "frame", None)
    if time_column and frame is not None and time_column in frame.columns:
        column = frame[time_column]
        if len(column) != n and labels is not None:
            try:
                column = column.loc[labels]
            except (KeyError, TypeError, ValueError):
                return None
        if len(column) == n:
            return column, f"`{time_column}`"
    return None


def residual_points(res: Any, limit: int, time_ordered: bool, time_column: str | None) -> dict[str, Any]:
    """The points of the four residual plots of one OLS/WLS results object (see the module docstring)."""
    model = res.model
    X = np.asarray(model.wexog, dtype=float)
    u = np.asarray(res.wresid, dtype=float).reshape(-1)
    y = np.asarray(model.wendog, dtype=float).reshape(-1)
    n = u.shape[0]
    fitted = y - u
    if not (np.all(np.isfinite(u)) and np.all(np.isfinite(fitted))):
        raise ValueError("the residuals or fitted values contain NaN or infinite values")
    df = float(res.df_resid)
    ssr = float(u @ u)
    if df <= 0 or ssr <= 1e-20 * max(float(y @ y), 1e-300):
        raise ValueError("the residuals are numerically zero or there are no residual degrees of freedom")
    scale = math.sqrt(ssr / df)
    cov = np.asarray(res.normalized_cov_params, dtype=float)
    h = np.clip(_leverage(X, cov), 0.0, 1.0)
    room = 1.0 - h
    r = np.where(room > 1e-12, u / (scale * np.sqrt(np.where(room > 1e-12, room, 1.0))), 0.0)
    limit = max(int(limit), 10)
    if n > limit:
        pick = np.sort(np.random.default_rng(SEED).choice(n, size=limit, replace=False))
    else:
        pick = np.arange(n)
    ranks = np.unique(np.round(np.linspace(0, n - 1, min(n, limit))).astype(np.intp))
    a = 0.375 if n <= 10 else 0.5
    normal = NormalDist()
    theoretical = [normal.inv_cdf((i + 1 - a) / (n + 1 - 2 * a)) for i in ranks]
    points: dict[str, Any] = {
        "nobs": int(n),
        "drawn": int(pick.shape[0]),
        "seed": SEED,
        "fitted": _round(fitted[pick]),
        "resid": _round(u[pick]),
        "sqrt_abs_studentized": _round(np.sqrt(np.abs(r[pick]))),
        "qq_theoretical": _round(theoretical),
        "qq_sample": _round(np.sort(r)[ranks]),
        "time": None,
    }
    if time_ordered:
        keys = _time_keys(res, n, time_column)
        if keys is not None:
            values, what = keys
            order = np.argsort(np.asarray(values), kind="stable")
            ordered = np.asarray(values)[order]
            points["time"] = {
                "order_by": what,
                "position": [int(i) + 1 for i in ranks],
                "resid": _round(u[order][ranks]),
                "first": str(ordered[0])[:32],
                "last": str(ordered[-1])[:32],
            }
    return points
