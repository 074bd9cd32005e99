"""The parts of one statsmodels OLS or WLS fit that the probe's statistics read, and its options.

Runs inside the user's interpreter beside ``regvet_stats`` (same import rules: standard library,
numpy, scipy and statsmodels only, pandas lazily, never regvet). :class:`FitInputs` gathers the
design, residuals and fitted values (whitened for WLS) once; :func:`read_options` checks the
options of ``fit_statistics`` against :data:`DEFAULT_OPTIONS`; the ``as_*`` helpers make values
JSON-safe.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from typing import Any

import numpy as np

# Siblings in this folder (the probe's own modules, never regvet itself).
from regvet_align import RowDataError, TimeOrder, candidate_groups, time_order
from regvet_linalg import Basis, constant_columns
from regvet_rank import Refit, noise_floor, resolve
from statsmodels.regression.linear_model import OLS, WLS

#: Options of :func:`fit_statistics` and their defaults.
DEFAULT_OPTIONS: dict[str, Any] = {
    # Full White test while its auxiliary regression has at most this many columns (incl. the
    # constant), else the special form on the fitted values and their squares.
    "white_max_columns": 40,
    # Breusch-Godfrey lags; None: 4 for quarterly, 12 for monthly data, 1 otherwise (common practice).
    "serial_lags": None,
    # A column of the model's data frame that makes the data time-ordered.
    "time_column": None,
    # A column of the model's data frame naming the unit of a panel (serial tests within units).
    "unit_column": None,
    # Column names (split the sample by its values) or pandas query expressions (split into the rows
    # where it holds and where it does not).
    "break_candidates": [],
    # Heteroskedasticity-robust standard errors: this type, or robust_se_large when nobs >= robust_se_large_n.
    "robust_se": "HC3",
    "robust_se_large": "HC1",
    "robust_se_large_n": 100_000,
    # Deterministic k-fold cross-validation (off by default).
    "cv": False,
    "cv_folds": 5,
    "cv_seed": 0,
    # Rows per block in the row-wise passes.
    "chunk_rows": 65_536,
}

HC_TYPES = ("HC0", "HC1", "HC2", "HC3")


class StatisticError(Exception):
    """A statistic is undefined or cannot be computed for this fit; the message says why."""


# --------------------------------------------------------------------------------------------
# JSON-safe conversion


def float_attribute(obj: Any, name: str) -> float | None:
    """``obj.name`` as a finite number, or None."""
    return as_float(getattr(obj, name))


def as_float(value: Any) -> float | None:
    """A finite Python float, or None for NaN, infinities, None and anything not numeric."""
    if value is None:
        return None
    try:
        out = float(np.asarray(value, dtype=float).reshape(()))
    except (TypeError, ValueError):
        return None
    return out if math.isfinite(out) else None


def as_count(value: Any) -> int | float | None:
    """An int when ``value`` is integral (statsmodels keeps df as floats), else a finite float or None."""
    out = as_float(value)
    if out is None:
        return None
    return int(out) if out.is_integer() else out


def error_message(exc: BaseException) -> str:
    if isinstance(exc, (StatisticError, RowDataError)):
        return str(exc)
    text = str(exc)
    return f"{type(exc).__name__}: {text}" if text else type(exc).__name__


# --------------------------------------------------------------------------------------------
# Options


def read_options(options: Mapping[str, Any] | None) -> dict[str, Any]:
    """Merge ``options`` over the defaults; raise ValueError on unknown keys or bad values."""
    opts = dict(DEFAULT_OPTIONS)
    opts["break_candidates"] = []
    if options:
        unknown = sorted(set(options) - set(DEFAULT_OPTIONS))
        if unknown:
            raise ValueError(f"unknown fit_statistics option(s): {', '.join(unknown)}")
        opts.update(options)
    for key in ("white_max_columns", "robust_se_large_n", "cv_folds", "cv_seed", "chunk_rows"):
        if isinstance(opts[key], bool) or not isinstance(opts[key], (int, np.integer)):
            raise ValueError(f"option {key} must be an integer, not {opts[key]!r}")
        opts[key] = int(opts[key])
    if opts["chunk_rows"] < 1:
        raise ValueError("option chunk_rows must be at least 1")
    if opts["cv_folds"] < 2:
        raise ValueError("option cv_folds must be at least 2")
    lags = opts["serial_lags"]
    if lags is not None and (isinstance(lags, bool) or not isinstance(lags, (int, np.integer)) or lags < 1):
        raise ValueError(f"option serial_lags must be None or a positive integer, not {lags!r}")
    for key in ("robust_se", "robust_se_large"):
        if not isinstance(opts[key], str) or opts[key].upper() not in HC_TYPES:
            raise ValueError(f"option {key} must be one of {', '.join(HC_TYPES)}, not {opts[key]!r}")
        opts[key] = opts[key].upper()
    cands = opts["break_candidates"]
    if isinstance(cands, str) or not all(isinstance(c, str) for c in cands):
        raise ValueError("option break_candidates must be a list of strings")
    opts["break_candidates"] = list(cands)
    for key in ("time_column", "unit_column"):
        if opts[key] is not None and not isinstance(opts[key], str):
            raise ValueError(f"option {key} must be None or a column name")
    opts["cv"] = bool(opts["cv"])
    return opts


# --------------------------------------------------------------------------------------------
# The fit


class FitInputs:
    """The quantities of one fitted model that every statistic reads (nothing here copies n x k data)."""

    def __init__(self, res: Any, opts: dict[str, Any]) -> None:
        model = getattr(res, "model", None)
        if isinstance(model, OLS):
            self.estimator = "OLS"
        elif isinstance(model, WLS):
            self.estimator = "WLS"
        else:
            what = f"{type(model).__name__} results" if model is not None else type(res).__name__
            raise TypeError(f"fit_statistics needs statsmodels OLS or WLS results, not {what}")
        self.res = res
        self.model = model
        self.opts = opts
        self.X = np.asarray(model.wexog)
        if self.X.ndim != 2:
            raise TypeError("the model's design must be two-dimensional")
        self.n, self.k = self.X.shape
        #: Rows of the model's data (its endog, exog, index, frame) that the fit has.
        self.n_model = self.n
        self.y = np.asarray(model.wendog, dtype=float).reshape(-1)
        self.u = np.asarray(res.wresid, dtype=float).reshape(-1)
        self.chunk = opts["chunk_rows"]
        data = model.data
        self.const_idx: int | None = getattr(data, "const_idx", None)
        self.k_constant = int(getattr(model, "k_constant", 0) or 0)
        self.weights: np.ndarray | None = None
        #: The model rows that are observations (None: all). WLS rows with weight zero are not: they
        #: are left out here, once, and every statistic (time order, groups, folds) sees only these.
        self.kept: np.ndarray | None = None
        if self.estimator == "WLS":
            self.weights = np.broadcast_to(np.asarray(model.weights, dtype=float), (self.n,))
            zero = self.weights == 0
            if zero.any():
                self.kept = np.flatnonzero(~zero)
                self.X = self.X[self.kept]
                self.y, self.u, self.weights = self.y[self.kept], self.u[self.kept], self.weights[self.kept]
                self.n = int(self.kept.size)
        self.zero_weight_rows = self.n_model - self.n
        weights_constant = self.weights is None or self.n == 0 or bool(np.ptp(self.weights) == 0)
        # Does the whitened design contain the constant 1 in its column space?
        self.one_in_span = bool(self.k_constant) and weights_constant
        rank = getattr(model, "rank", None)
        self.statsmodels_rank = int(rank) if rank is not None else int(np.linalg.matrix_rank(self.X))
        self.names = parameter_names(model, self.X)
        # The coefficients and their unscaled covariance as statsmodels has them.
        self.params = np.asarray(res.params, dtype=float).reshape(-1)
        self.normalized_cov = np.asarray(res.normalized_cov_params, dtype=float)
        # The rank and condition of the centred, unit-scaled design; a correct least-squares fit there
        # when statsmodels, deciding on the raw columns, dropped a direction the design has.
        self.rank = self.statsmodels_rank
        self.condition = 1.0
        self.refit: Refit | None = None
        self._resolve()
        self.yhat = self.y - self.u  # whitened fitted values, wexog @ params
        self.df_resid = float(self.n - self.rank)
        self.ssr = float(self.u @ self.u)
        yy = float(self.y @ self.y)
        self.finite = math.isfinite(self.ssr) and math.isfinite(yy)
        #: Relative size below which a computed residual (or spread of fitted values, or 1 - leverage)
        #: is rounding noise for this design: a multiple of eps times its scaled condition number.
        self.noise = noise_floor(self.condition)
        self.perfect = self.finite and (self.ssr <= self.noise**2 * yy or yy == 0.0)
        rms = math.sqrt(yy / self.n) if self.n else 0.0
        spread = float(np.ptp(self.yhat)) if self.n else 0.0
        #: The fitted values differ by more than rounding (not a model with only a constant).
        self.yhat_varies = self.finite and spread > self.noise * rms
        self.scale = self.ssr / self.df_resid if self.df_resid > 0 else math.nan

    def _resolve(self) -> None:
        if not (np.isfinite(self.y).all() and self.n > 0):
            return
        shift = self.one_in_span and self.estimator == "OLS"
        try:
            found = resolve(Basis(self.X, self.const_idx, self.chunk, shift), self.y, self.statsmodels_rank)
        except (ValueError, np.linalg.LinAlgError):
            return
        self.condition = found.condition
        if found.refit is None:
            return
        self.refit = found.refit
        self.rank = found.rank
        self.u = found.refit.u
        self.params = found.refit.params
        self.normalized_cov = found.refit.normalized_cov

    # -- the model's row data, restricted to the fit's observations --------------------------------

    def select(self, values: Any) -> Any:
        """An array with one entry per model row, restricted to the observations (``kept``)."""
        return values if self.kept is None else np.asarray(values)[self.kept]

    def row_labels(self) -> Any:
        """The observations' row labels (None: the model has none and every row is kept)."""
        labels = self.model.data.row_labels
        if self.kept is None:
            return labels
        return self.kept if labels is None else labels[self.kept]

    def time_order(self) -> TimeOrder:
        """:func:`regvet_align.time_order` of the model, restricted to the observations."""
        timed = time_order(self.model, self.opts["time_column"], self.opts["unit_column"])
        if self.kept is None or timed.reason is None:
            return timed
        order = timed.order
        if order is not None:
            place = np.full(self.n_model, -1, dtype=np.intp)
            place[self.kept] = np.arange(self.n)
            order = place[order]
            order = order[order >= 0]
        keys = self.select(timed.keys) if timed.keys is not None else None
        units = self.select(timed.units) if timed.units is not None else None
        import pandas as pd  # time_order needed it already

        repeats = bool(pd.Series(keys).duplicated().any()) if keys is not None else False
        return timed._replace(order=order, keys=keys, units=units, repeats=repeats)

    def candidate_groups(self, candidate: str) -> tuple[np.ndarray, list[str]]:
        """:func:`regvet_align.candidate_groups` for the observations."""
        codes, labels = candidate_groups(self.model, self.n_model, self.names, candidate)
        return self.select(codes), labels

    def endog_fitted(self) -> tuple[np.ndarray, np.ndarray]:
        """The unweighted endog and fitted values of the observations (the probe's refit's when it refitted)."""
        endog = self.select(np.asarray(self.model.endog, dtype=float).reshape(-1))
        if self.refit is None:
            fitted = self.select(np.asarray(self.res.fittedvalues, dtype=float).reshape(-1))
        else:
            exog = self.select(np.asarray(self.model.exog, dtype=float))
            fitted = exog @ self.params
        return endog, fitted

    def require_residuals(self) -> None:
        """Raise when the residuals carry no information (non-finite values, or a perfect fit)."""
        if not self.finite:
            raise StatisticError(
                "the endog or the residuals contain NaN or infinite values (missing values not dropped?)"
            )
        if self.perfect:
            raise StatisticError("the residuals are numerically zero (a perfect fit): the statistic is undefined")


def parameter_names(model: Any, X: np.ndarray) -> list[str]:
    """The model's ``exog_names``, without statsmodels' n x k temporary for plain-array designs.

    For an ndarray design statsmodels recomputes the names on every access from ``exog.var(0)``
    (``statsmodels.base.data._make_exog_names``); the same rule is applied here with ``ptp``, which
    needs no temporary: the first column without variation is "const", the others x1, x2, ...
    """
    data = model.data
    if type(getattr(data, "orig_exog", None)) is not np.ndarray or getattr(data, "_param_names", None):
        return [str(x) for x in model.exog_names]
    k = X.shape[1]
    flat = constant_columns(X)
    if flat.size:
        names = [f"x{i:d}" for i in range(1, k)]
        names.insert(int(flat[0]), "const")
        return names
    return [f"x{i:d}" for i in range(1, k + 1)]


# --------------------------------------------------------------------------------------------
# The computation


_LOG_CALL = re.compile(r"^(?:[A-Za-z_][A-Za-z_0-9]*\.)*(log|log10|log2|log1p|ln)\((.*)\)$")
_LOG_NAME = re.compile(r"^(?:log|ln)_[A-Za-z_0-9]")
_BASES = {"log": math.e, "ln": math.e, "log1p": math.e, "log10": 10.0, "log2": 2.0}


def log_base(name: str) -> float | None:
    """The base of the log transform that an endog name shows (np.log(x), log10(x), log_x), or None."""
    text = name.strip()
    while text.startswith("I(") and text.endswith(")") and balanced(text[2:-1]):
        text = text[2:-1].strip()
    match = _LOG_CALL.match(text)
    if match and balanced(match.group(2)):
        return _BASES[match.group(1)]
    if _LOG_NAME.match(text):
        return math.e
    return None


def balanced(text: str) -> bool:
    depth = 0
    for ch in text:
        depth += ch == "("
        depth -= ch == ")"
        if depth < 0:
            return False
    return depth == 0
