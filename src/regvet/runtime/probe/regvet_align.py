"""Row labels, time order and groups of a fit's rows: the pandas side of the runtime probe's statistics.

Imported by ``regvet_stats`` inside the user's interpreter (this folder is on the child process's
``PYTHONPATH``): standard library and numpy at import time, pandas only inside the functions that
meet pandas objects the fit already holds (an index, a data frame); never regvet.

* :func:`fingerprint`: a digest identifying the rows a fit used.
* :func:`time_order` and :func:`lags_for`: whether the data is time-ordered, its frequency, and the
  Breusch-Godfrey lags for that frequency.
* :func:`model_frame`, :func:`aligned`, :func:`candidate_groups`: the model's data frame, a frame
  column in the fit's row order, and the groups a break candidate splits the rows into.

A problem with the data (rows that cannot be aligned, a candidate that is no column and no
condition) raises :class:`RowDataError`, whose message says why.
"""

from __future__ import annotations

import hashlib
from typing import Any, NamedTuple

import numpy as np

__all__ = [
    "CandidateAbsent",
    "RowDataError",
    "TimeOrder",
    "aligned",
    "candidate_groups",
    "fingerprint",
    "lags_for",
    "model_frame",
    "time_order",
]


class RowDataError(Exception):
    """The fit's row data cannot serve a statistic (alignment, a break candidate); the message says why."""


class CandidateAbsent(RowDataError):
    """A break candidate names data the fit does not have (a column of another data frame): no Chow entry."""


def _describe(exc: BaseException) -> str:
    text = str(exc)
    return f"{type(exc).__name__}: {text}" if text else type(exc).__name__


def is_pandas(obj: Any) -> bool:
    return type(obj).__module__.split(".")[0] == "pandas"


def fingerprint(labels: Any, n: int) -> str:
    """SHA-1 hex digest identifying a fit's rows.

    Integer labels (and ``range(n)`` when the fit has none) hash as ``b"int64:"`` + their
    little-endian int64 bytes; datetime labels as ``b"datetime64[ns]:"`` + int64 nanoseconds;
    period labels as ``b"period[FREQ]:"`` + int64 ordinals; any other labels as ``b"str:"`` + the
    UTF-8 of their ``str()`` joined by U+001F. Two fits on the same observations get the same digest.
    """
    h = hashlib.sha1()
    if labels is None:
        h.update(b"int64:")
        h.update(np.arange(n, dtype="<i8").tobytes())
        return h.hexdigest()
    if is_pandas(labels):
        import pandas as pd

        if isinstance(labels, pd.PeriodIndex):
            h.update(f"period[{labels.freqstr}]:".encode())
            h.update(np.asarray(labels.asi8, dtype="<i8").tobytes())
            return h.hexdigest()
        if isinstance(labels, pd.DatetimeIndex):
            values = np.asarray(labels.tz_localize(None) if labels.tz is not None else labels)
            h.update(b"datetime64[ns]:")
            h.update(values.astype("datetime64[ns]").view("<i8").tobytes())
            return h.hexdigest()
    arr = np.asarray(labels)
    if arr.dtype.kind in "iu" and arr.ndim == 1:
        h.update(b"int64:")
        h.update(arr.astype("<i8").tobytes())
        return h.hexdigest()
    h.update(b"str:")
    h.update("\x1f".join(str(x) for x in arr.tolist()).encode("utf-8", "surrogatepass"))
    return h.hexdigest()


def model_frame(model: Any) -> Any:
    """The model's data frame (formula fits), as a pandas DataFrame, or None."""
    frame = getattr(model.data, "frame", None)
    if frame is None:
        return None
    if hasattr(frame, "columns"):
        return frame
    import pandas as pd

    return pd.DataFrame(frame)


def aligned(values: Any, frame: Any, labels: Any, n: int) -> np.ndarray:
    """The entries of a frame-aligned Series for the fit's rows, in the fit's row order.

    ``labels``: the row labels of the fit (``model.data.row_labels``, None without any); ``n``: its rows.
    """
    if len(frame) == n and (labels is None or frame.index.equals(labels)):
        return np.asarray(values)
    if labels is not None and frame.index.is_unique:
        try:
            return np.asarray(values.loc[labels])
        except KeyError:
            pass
    raise RowDataError("cannot align the data frame's rows with the rows the fit used")


def _periods_per_year(offset: Any) -> float | None:
    code = str(getattr(offset, "rule_code", "") or "").split("-")[0]
    mult = int(getattr(offset, "n", 1) or 1)
    code = code[2:] if code.startswith("CB") else code[1:] if code.startswith("B") else code
    if code in ("Q", "QE", "QS"):
        return 4.0 / mult
    if code in ("M", "ME", "MS"):
        return 12.0 / mult
    return None


def lags_for(offset: Any) -> int:
    """Breusch-Godfrey lags by data frequency: 4 quarterly, 12 monthly, 1 otherwise (common practice)."""
    per_year = _periods_per_year(offset) if offset is not None else None
    if per_year == 4.0:
        return 4
    if per_year == 12.0:
        return 12
    return 1


class TimeOrder(NamedTuple):
    """Whether and how a fit's rows are ordered in time (see :func:`time_order`)."""

    reason: str | None  # why the data is time-ordered, or None when it is not
    freq: Any  # the data frequency as a pandas offset, inferred from the sorted times, or None
    order: np.ndarray | None  # the rows' positions in time order when the rows are not in it, else None
    repeats: bool  # some time value is on several rows: a stacked panel, not one series
    keys: np.ndarray | None = None  # a sortable time key per fit row (int64), when known
    units: np.ndarray | None = None  # the unit code per fit row, for a panel whose unit is known
    unit_name: str | None = None  # where the units come from (the column, or the index level)


_NOT_TIMED = TimeOrder(None, None, None, False)


def _infer_freq(values: Any) -> Any:
    """The frequency of sorted, distinct times (a pandas index), or None."""
    import pandas as pd

    if len(values) < 3:
        return None
    try:
        inferred = pd.infer_freq(values)
        return pd.tseries.frequencies.to_offset(inferred) if inferred else None
    except (TypeError, ValueError):
        return None


def _sorting(keys: Any, monotonic: bool) -> tuple[np.ndarray | None, str]:
    """(positions in time order or None, what the reason adds) for the time values ``keys``."""
    if monotonic:
        return None, ""
    try:
        order = np.argsort(np.asarray(keys), kind="stable")
    except TypeError:
        return None, " (rows are not in time order and could not be sorted; the serial tests use the row order)"
    return order, " (rows are not in time order; the serial tests sort them by time)"


def _time_keys(values: Any) -> tuple[np.ndarray | None, Any]:
    """(int64 keys, frequency) of date or period values (an index or a series), or (None, None)."""
    import pandas as pd

    if isinstance(values, pd.PeriodIndex) or isinstance(getattr(values, "dtype", None), pd.PeriodDtype):
        index = pd.PeriodIndex(values)
        return np.asarray(index.asi8), index.freq
    if isinstance(values, pd.DatetimeIndex) or pd.api.types.is_datetime64_any_dtype(getattr(values, "dtype", None)):
        index = pd.DatetimeIndex(values)
        return np.asarray(index.asi8), index.freq or _infer_freq(index.dropna().unique().sort_values())
    return None, None


def _codes(values: Any) -> np.ndarray:
    import pandas as pd

    try:
        codes, _ = pd.factorize(values, sort=True, use_na_sentinel=False)
    except TypeError:
        codes, _ = pd.factorize(values, sort=False, use_na_sentinel=False)
    return np.asarray(codes)


def time_order(model: Any, column: str | None, unit_column: str | None = None) -> TimeOrder:
    """Whether the fit's rows are ordered in time, their frequency, how to put them in time order,
    and, for a stacked panel, each row's unit.

    The data is time-ordered when the fit's rows have a DatetimeIndex or PeriodIndex, a two-level
    index whose second level holds dates or periods (unit, time), or when ``column`` (the
    ``time_column`` option) is a column of the model's data frame. The frequency is inferred from the
    distinct times in sorted order, so rows out of order do not hide it. The units of a panel come
    from ``unit_column`` (a column of the data frame) or the first level of a two-level index.
    """
    import pandas as pd

    labels = model.data.row_labels
    n = int(model.endog.shape[0])
    frame = model_frame(model) if (column is not None or unit_column is not None) else None
    reason: str | None = None
    keys: Any = None
    freq: Any = None
    monotonic = True
    units: np.ndarray | None = None
    unit_name: str | None = None
    if labels is not None and is_pandas(labels):
        if isinstance(labels, (pd.DatetimeIndex, pd.PeriodIndex)):
            kind = "DatetimeIndex" if isinstance(labels, pd.DatetimeIndex) else "PeriodIndex"
            keys, freq = _time_keys(labels)
            reason, monotonic = f"the fit's rows have a {kind}", bool(labels.is_monotonic_increasing)
        elif isinstance(labels, pd.MultiIndex) and labels.nlevels == 2:
            level_keys, level_freq = _time_keys(labels.get_level_values(1))
            if level_keys is not None:
                keys, freq = level_keys, level_freq
                reason, monotonic = "the fit's rows have a (unit, time) index", False
                units, unit_name = _codes(labels.get_level_values(0)), f"index level {labels.names[0] or 0!r}"
    if reason is None and frame is not None and column in frame.columns:
        series = pd.Series(aligned(frame[column], frame, labels, n))
        keys, freq = _time_keys(series)
        if keys is None:
            keys = series.to_numpy()
        try:
            monotonic = bool(series.is_monotonic_increasing)
        except TypeError:
            monotonic = False
        reason = f"time_column {column!r} is in the model's data frame"
    if reason is None:
        return _NOT_TIMED
    order, note = _sorting(keys, monotonic)
    repeats = bool(pd.Series(keys).duplicated().any()) if keys is not None else False
    if frame is not None and unit_column is not None and unit_column in frame.columns:
        units, unit_name = _codes(aligned(frame[unit_column], frame, labels, n)), f"unit_column {unit_column!r}"
    if units is not None:
        note = ""  # within units the rows are sorted by unit and time
    return TimeOrder(
        reason + note, freq, order, repeats, np.asarray(keys) if keys is not None else None, units, unit_name
    )


def _names_in(candidate: str) -> set[str]:
    """The names a candidate refers to: itself when it is a name, else the names of the expression."""
    import ast

    if candidate.isidentifier():
        return {candidate}
    try:
        tree = ast.parse(candidate, mode="eval")
    except SyntaxError:
        return set()
    return {node.id for node in ast.walk(tree) if isinstance(node, ast.Name)}


def candidate_groups(model: Any, n: int, names: list[str], candidate: str) -> tuple[np.ndarray, list[str]]:
    """(group code of every row used by the fit, group labels) for one break candidate.

    ``candidate`` is a column of the model's data frame, else a column of the design (``names``:
    the parameter names), else a pandas query expression on the frame (two groups: where it holds
    and where it does not). ``n``: the fit's rows. Raises :class:`CandidateAbsent` when the candidate
    refers to data the fit does not have (a name that is neither a frame nor a design column).
    """
    labels = model.data.row_labels
    frame = model_frame(model)
    if frame is not None and candidate in frame.columns:
        import pandas as pd

        values = aligned(frame[candidate], frame, labels, n)
        try:
            codes, uniques = pd.factorize(values, sort=True, use_na_sentinel=False)
        except TypeError:
            codes, uniques = pd.factorize(values, sort=False, use_na_sentinel=False)
        return np.asarray(codes), [str(x) for x in list(uniques)]
    if candidate in names:
        column = np.asarray(model.exog[:, names.index(candidate)])
        uniques, codes = np.unique(column, return_inverse=True)
        return codes.reshape(-1), [str(x) for x in uniques.tolist()]
    if frame is None:
        if not (_names_in(candidate) & set(names)):
            raise CandidateAbsent(f"{candidate!r} is not in the fit's data")
        raise RowDataError(
            f"{candidate!r} is not a column of the design and the fit has no data frame "
            "(not a formula fit), so a query expression cannot be evaluated"
        )
    try:
        result = frame.eval(candidate)
    except NameError as exc:  # pandas' UndefinedVariableError: a name the frame does not hold
        raise CandidateAbsent(f"{candidate!r} is not in the fit's data ({_describe(exc)})") from exc
    except Exception as exc:
        raise RowDataError(
            f"{candidate!r} is neither a column of the data frame nor a query expression it can evaluate "
            f"({_describe(exc)})"
        ) from exc
    if not hasattr(result, "__len__") or len(result) != len(frame):
        raise RowDataError(f"the query expression {candidate!r} does not give one value per row")
    import pandas as pd

    result = pd.Series(np.asarray(result), index=frame.index)
    if result.dtype != bool:
        if not pd.api.types.is_bool_dtype(result.dtype) and result.dtype != object:
            raise RowDataError(f"the query expression {candidate!r} is not a true/false condition")
        result = result.fillna(False).astype(bool)
    holds = aligned(result, frame, labels, n).astype(bool)
    return np.where(holds, 0, 1), ["holds", "does not hold"]
