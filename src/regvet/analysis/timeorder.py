"""Time order: which data a fit is on is ordered in time, and the evidence for it.

A fit is on time-ordered data when the frame or arrays it is fitted on carry time order
(``tags.TIMED``), attached to the value it comes from and followed with it. This module turns the
calls that give data a time order into tags; :mod:`regvet.analysis.libraries` calls it.

Evidence:

* a date or period index: ``set_index`` of dates (``pd.to_datetime(...)``, ``pd.date_range(...)``,
  ``PeriodIndex``), of a column that holds dates, or of a date-like column name; ``index=`` of dates
  in ``pd.DataFrame``/``pd.Series``; ``df.index = dates``; ``read_*`` with an ``index_col`` that is
  parsed as dates or has a date-like name;
* lags, leads and differences (``shift``, ``diff``, ``pct_change``), ``asfreq``/``resample``;
* rows sorted by a date column (``sort_values("week")``).

Not evidence: dates by themselves (``tags.DATES``: a result of ``pd.to_datetime`` used in
arithmetic or kept as an ordinary column), ``statsmodels.tsa`` used elsewhere in the file.

Date-like names (``date``, ``month``, ``quarter``, ``year``, ``week``, ``time``, ``period``, in any
letter case) are common practice, not a standard.
"""

from __future__ import annotations

import ast
from collections.abc import Iterable

from regvet.analysis import tags
from regvet.analysis.tags import Tag
from regvet.analysis.values import Value, flat
from regvet.analysis.walk import walk
from regvet.model.facts import Loc

#: Column names that read as time (common practice).
DATE_LIKE_NAMES = frozenset({"date", "month", "quarter", "year", "week", "time", "period"})
#: Methods that set a time frequency (the rest of ``catalog.TIME_METHODS`` make lags or differences).
FREQUENCY_METHODS = frozenset({"asfreq", "resample", "to_period"})
#: ``statsmodels.tsa`` helpers whose arrays are lags or trends of time-ordered data.
TSA_ARRAY_HELPERS = frozenset({"lagmat", "lagmat2ds", "add_trend"})
#: Methods that keep a frame's date columns (most methods of a frame return a frame).
_DROPS_DATE_COLUMNS = frozenset({"groupby", "mean", "sum", "count", "describe", "corr", "cov", "agg", "apply"})


def evidence_order(tag: Tag) -> tuple:
    """A TIMED, DATES or DATE_COLUMN tag's place in a stable order: evidence at a known place first, by
    file and position, then by its text. Sets of tags iterate in an order that changes with the hash
    seed; whatever is kept of them is chosen in this order, so findings do not change from run to run."""
    kind = tags.kind(tag)
    if kind == tags.TIMED:
        where, text = tags.time_where(tag), tags.time_reason(tag)
    elif kind == tags.DATES:
        where, text = tags.dates_where(tag), tags.dates_what(tag)
    else:
        where, text = tags.date_column_where(tag), tags.date_column_name(tag)
    if where is None:
        return (1, "", (), text)
    return (0, where.path or "", where.span.sort_key(), text)


def earliest(found: Iterable[Tag], n: int = 2) -> list[Tag]:
    """The first ``n`` of ``found`` in :func:`evidence_order`."""
    return sorted(found, key=evidence_order)[:n]


def date_like(name: object) -> bool:
    return isinstance(name, str) and name.strip().lower() in DATE_LIKE_NAMES


def _code(text: str) -> str:
    return f"`{text}`"


def literal_names(value: Value) -> list[object]:
    """The literal strings or ints of ``value`` or of its items (``"week"``, ``["route", "week"]``)."""
    out: list[object] = list(tags.literal_values(value.tags))
    for item in value.items or ():
        out.extend(tags.literal_values(item.tags))
    return [v for v in out if isinstance(v, (str, int)) and not isinstance(v, bool)]


def date_columns(value: Value) -> dict[str, Tag]:
    """The DATE_COLUMN tags of a frame, by column name."""
    ordered = sorted(value.tags_of(tags.DATE_COLUMN), key=evidence_order, reverse=True)
    return {tags.date_column_name(t): t for t in ordered}  # the earliest evidence per column wins


def index_order(key: Value, frame_value: Value | None, code: str, where: Loc) -> list[Tag]:
    """The time order a frame gets from ``key`` as its index (``set_index(key)``, ``index=key``,
    ``df.index = key``): dates, a date column of the frame, a date-like column name."""
    out: list[Tag] = earliest(flat(key).tags_of(tags.TIMED))
    for d in earliest(flat(key).tags_of(tags.DATES)):
        out.append(tags.time_order(f"the data gets a date index from {tags.dates_what(d)} in {_code(code)}", where))
    known = date_columns(frame_value) if frame_value is not None else {}
    for name in literal_names(key):
        if isinstance(name, str) and name in known:
            how = tags.date_column_what(known[name])
            out.append(tags.time_order(f"the data gets a date index in {_code(code)}, its dates from {how}", where))
        elif date_like(name):
            out.append(tags.time_order(f"the data gets a date-like index in {_code(code)}", where))
    return earliest(out)


def sort_order(by: Value, frame_value: Value, code: str, where: Loc) -> list[Tag]:
    """``sort_values(by)`` on a frame: sorted by one of its date columns, the rows are in time order."""
    known = date_columns(frame_value)
    for name in sorted(set(literal_names(by)), key=str):
        if isinstance(name, str) and name in known:
            return [tags.time_order(f"the rows are sorted by the date column {name!r} in {_code(code)}", where)]
    return []


def read_order(kwargs: dict[str, Value], code: str, where: Loc) -> list[Tag]:
    """``pd.read_*(..., parse_dates=..., index_col=...)``: a date index, and the columns parsed as dates."""
    out: list[Tag] = []
    parse = kwargs.get("parse_dates")
    parsed = literal_names(parse) if parse is not None else []
    parse_all = parse is not None and True in tags.literal_values(parse.tags)
    parse_unknown = parse is not None and not parsed and not parse_all
    index = kwargs.get("index_col")
    if index is not None:
        names = literal_names(index)
        dated = parse_all or parse_unknown or "date_format" in kwargs or any(n in parsed for n in names)
        if dated or any(date_like(n) for n in names):
            out.append(tags.time_order(f"the data is read with a date index in {_code(code)}", where))
    for name in parsed:
        if isinstance(name, str):
            out.append(tags.date_column(name, "`parse_dates`", where))
    return out


def assigned_dates(column: object, value: Value) -> list[Tag]:
    """``df[column] = value``, ``df.assign(column=value)``: a column that holds dates."""
    if not isinstance(column, str):
        return []
    return [
        tags.date_column(column, tags.dates_what(d), tags.dates_where(d))
        for d in earliest(value.tags_of(tags.DATES), 1)
    ]


def keeps_date_columns(method: str) -> bool:
    return method not in _DROPS_DATE_COLUMNS


_TIME_ATTRIBUTES = frozenset(
    {"set_index", "shift", "diff", "pct_change", "asfreq", "resample", "to_period", "tshift", "lag", "sort_values"}
)
_TIME_NAMES = frozenset(
    {"to_datetime", "date_range", "period_range", "PeriodIndex", "DatetimeIndex", "bdate_range", *TSA_ARRAY_HELPERS}
)
_TIME_KEYWORDS = frozenset({"parse_dates", "index_col", "date_format"})


def mentions_time_order(node: ast.AST) -> bool:
    """Could running this function's body give data a time order (so a call of it is worth following
    for the frame it returns)? A look at its syntax: the methods, functions and keywords above, or a
    store into ``.index``."""
    for sub in walk(node):
        kind = type(sub)
        if kind is ast.Attribute:
            attr = sub.attr  # type: ignore[attr-defined]
            if attr in _TIME_ATTRIBUTES or attr in _TIME_NAMES:
                return True
            if attr == "index" and isinstance(sub.ctx, ast.Store):  # type: ignore[attr-defined]
                return True
        elif kind is ast.Name:
            if sub.id in _TIME_NAMES:  # type: ignore[attr-defined]
                return True
        elif kind is ast.keyword and sub.arg in _TIME_KEYWORDS:  # type: ignore[attr-defined]
            return True
    return False
