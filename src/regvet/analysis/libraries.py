"""What builtins, numpy, pandas and containers do to values (where most new spellings land).

regvet does not model these libraries; it models what their calls do to the tags that matter:
a conversion (``.to_numpy()``, ``np.asarray``) passes a fit's residuals through, ``np.square`` of
residuals gives squared residuals, ``df.shift()`` and ``pd.to_datetime`` make data time-ordered,
``df.assign(e=res.resid)`` records which column holds what, ``list.append`` grows a container,
``max(fits, key=...)`` compares fit measures. Anything else a library call returns is opaque
data (``tags.opaque_call``).

Handlers here are reached from the dispatch tables in :mod:`regvet.analysis.collect`: attribute
reads by the kind of the tag they are read on (``attribute_of_*``), calls by the kind of the
callee's tag (``call_*``), and calls of library functions by qualified name
(:meth:`LibrarySemantics.call_library_name`).
"""

from __future__ import annotations

import ast
from collections.abc import Iterable

from regvet.analysis import catalog, tags, timeorder
from regvet.analysis.formula import TRANSFORMS
from regvet.analysis.state import CollectorState, Frame, Node, dotted_name, short_text
from regvet.analysis.tags import Tag
from regvet.analysis.values import (
    EMPTY,
    Value,
    container,
    dict_value,
    elements,
    flat,
    iterate,
    join,
    join_all,
    mapping,
    positions,
    sequence,
    tagged,
)
from regvet.model.facts import Outcome

#: Attributes of a pandas object that are not columns (``df.index`` is no variable called index).
PANDAS_ATTRIBUTES = frozenset(
    {
        "values",
        "index",
        "columns",
        "shape",
        "dtypes",
        "T",
        "loc",
        "iloc",
        "at",
        "iat",
        "size",
        "empty",
        "array",
        "name",
        "ndim",
        "str",
        "dt",
        "cat",
        "plot",
        "attrs",
        "flags",
        "axes",
        "style",
    }
)
#: Attributes that hold the same data (``res.resid.values`` is still the residuals).
PASSING_ATTRIBUTES = frozenset({"values", "array", "T", "loc", "iloc"})
#: Methods whose result holds the same data (``res.resid.to_numpy()``).
PASSING_METHODS = frozenset({"to_numpy", "copy", "astype", "reset_index", "dropna", "squeeze", "ravel", "flatten"})
#: Tag kinds arithmetic keeps (``2 * res.resid`` is still about the residuals).
ARITHMETIC_KEEPS = frozenset({tags.PART, tags.MODEL_PART, tags.MEASURE, tags.TIMED, tags.OUTCOME, tags.SSR_SUM})

_CONTAINER_CALLS = frozenset({"list", "tuple", "set", "frozenset", "iter", "reversed", "sorted"})
_POSITIONAL_CALLS = frozenset({"list", "tuple", "iter"})  # keep known positions
GROWING_METHODS = frozenset({"append", "extend", "insert", "add", "update", "setdefault", "appendleft"})
_GROWING_DATA_METHODS = frozenset({"append", "add"})  # the only growing methods followed on opaque data
_ONE_ITEM_METHODS = frozenset({"append", "add", "appendleft"})
_CONTAINER_VIEW_METHODS = frozenset({"items", "values", "keys", "get", "pop", "copy", "setdefault"})
_NOT_GROWN = frozenset({tags.FIT, tags.QUALIFIED})  # ``res.append(...)``, ``np.append(...)``: not containers
_KEPT_BY_NUMPY = frozenset({tags.TIMED, tags.MODEL_PART, tags.COLUMNS, tags.MEASURE})
_KEPT_FROM_OTHER_ARGUMENTS = frozenset({tags.PART, tags.MODEL_PART, tags.TIMED, tags.MEASURE})
_KEPT_BY_DATA_METHODS = frozenset(
    {tags.TIMED, tags.COLUMN_VALUE, tags.COLUMN_NAME, tags.DATE_COLUMN, tags.CATEGORY_COLUMN}
)
_ASSIGNED_SOURCES = frozenset({tags.PART, tags.FIT})  # what a column is recorded to hold
_SUBSCRIPT_KEEPS = frozenset({tags.PART, tags.MODEL_PART, tags.COLUMNS, tags.OUTCOME, tags.MEASURE})
_OPAQUE_SUBSCRIPTED = frozenset({tags.DATA, tags.TIMED})
#: Tags about a frame's columns, kept by a selection of its rows or columns.
_FRAME_COLUMNS = frozenset({tags.DATE_COLUMN, tags.CATEGORY_COLUMN})


def time_order_of(args: Iterable[Value], kwargs: dict[str, Value], receiver: Value | None) -> list[Tag]:
    """The TIMED tags of a call's inputs (at most two): a call on time-ordered data stays time-ordered."""
    out: list[Tag] = []
    for value in (*args, *kwargs.values(), *(() if receiver is None else (receiver,))):
        if value.elem is not None or value.items is not None:  # ``pd.concat([north, south])``
            value = flat(value)
        out.extend(value.tags_of(tags.TIMED))
    return timeorder.earliest(out)


def subscript_tags(base: Value, index: Value, node: ast.Subscript) -> set[Tag]:
    """The tags ``base[index]`` has beyond a container's element: a subscript of data is data (and
    ``df["riders"]`` a candidate outcome, or the part assigned to that column; ``df[["a", "b"]]``
    a frame of literal columns); pieces of fits, measures and time order are kept."""
    extra: set[Tag] = set()
    for tag in base.tags:
        kind = tags.kind(tag)
        if kind in _OPAQUE_SUBSCRIPTED:
            extra.add(tag if kind == tags.TIMED else tags.opaque_subscript(node))
        if kind == tags.DATA:
            names = tags.literal_strings(index.tags)
            if len(names) == 1 and len(index.tags) == 1:
                extra.add(tags.outcome(Outcome(names[0], None, names[0])))
                for held in base.tags_of(tags.COLUMN_VALUE):
                    if tags.column(held) == names[0]:
                        extra.add(tags.column_source(held))
            cols = _literal_strings(index)
            if cols is not None:
                extra.add(tags.columns(cols))
        if kind in _SUBSCRIPT_KEEPS:
            extra.add(tag)
        elif kind in _FRAME_COLUMNS and not (len(index.tags) == 1 and tags.literal_strings(index.tags)):
            extra.add(tag)  # a selection of rows or columns of a frame keeps its date columns
    if sum(1 for t in extra if tags.kind(t) == tags.OUTCOME) > 1:
        # A column picked out of a frame is that column, whatever the frame was called.
        picked = {tags.outcome(Outcome(n, None, n)) for n in tags.literal_strings(index.tags)}
        extra = {t for t in extra if tags.kind(t) != tags.OUTCOME or t in picked}
    return extra


def assigned_column_tags(value: Value, index: Value) -> set[Tag]:
    """What ``frame[index] = value`` adds to the frame: the column's name and what it holds
    (``df["e"] = res.resid``: a column of residuals), and time order."""
    extra: set[Tag] = set(value.tags_of(tags.TIMED))
    for lit in index.tags_of(tags.LITERAL):
        col = tags.literal_value(lit)
        if isinstance(col, str):
            extra.add(tags.holds_column(col))
            extra.update(timeorder.assigned_dates(col, value))
            if value.has(tags.CATEGORIES):
                extra.add(tags.category_column(col))
            for held in flat(value).tags:
                if tags.kind(held) in _ASSIGNED_SOURCES:
                    extra.add(tags.column_value(col, held))
    return extra


def _literal_strings(value: Value) -> tuple[str, ...] | None:
    """The strings of a literal list or tuple of strings (``["fare", "wind"]``), else None."""
    if value.items is None or not value.items:
        return None
    out = []
    for item in value.items:
        lits = tags.literal_strings(item.tags)
        if len(lits) != 1:
            return None
        out.append(lits[0])
    return tuple(out)


def _method_name(node: ast.Call) -> str:
    func = node.func
    return func.attr if isinstance(func, ast.Attribute) else short_text(func)


class LibrarySemantics(CollectorState):
    """Builtins, numpy, pandas and containers."""

    # --- attribute handlers (see ``collect.ATTRIBUTE_HANDLERS``) ---------------------------------
    def attribute_of_data(self, tag: Tag, name: str, node: Node, frame: Frame, out: set[Tag]) -> Value | None:
        """``df.shift`` (a lag method), ``df.values`` (the same data), ``df.riders`` (a column: a candidate outcome)."""
        if name in catalog.TIME_METHODS:
            out.add(tags.time_method(tag))
        elif name in PASSING_ATTRIBUTES:
            out.add(tag)
        else:
            out.add(tags.data_method(tag, name))
            out.add(tags.opaque_attribute(node))  # an attribute of data is data
        if name.isidentifier() and name not in PANDAS_ATTRIBUTES and not name.startswith("_"):
            out.add(tags.outcome(Outcome(name, None, name)))
        return None

    def attribute_of_columns(self, tag: Tag, name: str, node: Node, frame: Frame, out: set[Tag]) -> Value | None:
        """Attributes of a named column (OUTCOME) or of a frame of literal columns (COLUMNS)."""
        if name in PASSING_ATTRIBUTES:
            out.add(tag)
        elif name in PASSING_METHODS:
            out.add(tags.passing_method(tag))
        elif name in catalog.TIME_METHODS:
            out.add(tags.time_method(tag))
        return None

    def attribute_of_timed(self, tag: Tag, name: str, node: Node, frame: Frame, out: set[Tag]) -> Value | None:
        """Whatever is read on time-ordered data is time-ordered."""
        out.add(tag)
        return None

    def attribute_of_frame_column(self, tag: Tag, name: str, node: Node, frame: Frame, out: set[Tag]) -> Value | None:
        """``df.loc``, ``df.values``: the same frame, with its date and category columns."""
        if name in PASSING_ATTRIBUTES:
            out.add(tag)
        return None

    def container_attribute(self, base: Value, name: str, out: set[Tag]) -> None:
        """``d.items``, ``d.get``, ...: a bound method of a container value."""
        if name in _CONTAINER_VIEW_METHODS:
            out.add(tags.container_method(name, base))

    # --- call handlers (see ``collect.CALL_HANDLERS``) -------------------------------------------
    def call_passing_method(
        self,
        tag: Tag,
        args: list[Value],
        kwargs: dict[str, Value],
        node: ast.Call,
        frame: Frame,
        receiver: Value | None,
    ) -> Value | None:
        return tagged(tags.receiver(tag))

    def call_time_method(
        self,
        tag: Tag,
        args: list[Value],
        kwargs: dict[str, Value],
        node: ast.Call,
        frame: Frame,
        receiver: Value | None,
    ) -> Value | None:
        method = _method_name(node)
        what = "sets a time frequency" if method in timeorder.FREQUENCY_METHODS else "makes lags or differences"
        return tagged(tags.opaque_call(node), tags.time_order(f"`.{method}()` {what}", self.loc(node, frame)))

    def call_container_method(
        self,
        tag: Tag,
        args: list[Value],
        kwargs: dict[str, Value],
        node: ast.Call,
        frame: Frame,
        receiver: Value | None,
    ) -> Value | None:
        method, base = tags.container_method_name(tag), tags.container_method_base(tag)
        keys = base.keys if base.keys is not None else EMPTY
        vals = elements(base)
        pairs = base.items if base.keys is not None else None
        if method == "items":
            return container(sequence((keys, vals)), None, pairs)
        if method == "values":
            return container(vals, None, tuple(p.items[1] for p in pairs if p.items) if pairs else None)
        if method == "keys":
            return container(keys, None, tuple(p.items[0] for p in pairs if p.items) if pairs else None)
        if method == "copy":
            return base
        if method in ("get", "pop") and args:
            lits = tags.literal_values(args[0].tags)
            found = dict_value(base, lits[0]) if len(lits) == 1 else None
            if found is not None:
                return found
        return vals  # get, pop, setdefault

    def call_getter(
        self,
        tag: Tag,
        args: list[Value],
        kwargs: dict[str, Value],
        node: ast.Call,
        frame: Frame,
        receiver: Value | None,
    ) -> Value | None:
        return join_all(self.attribute(a, tags.getter_name(tag), node, frame) for a in args[:1])

    def call_data_method(
        self,
        tag: Tag,
        args: list[Value],
        kwargs: dict[str, Value],
        node: ast.Call,
        frame: Frame,
        receiver: Value | None,
    ) -> Value | None:
        """A method of opaque data: ``df.assign(e=res.resid)`` records the column, ``set_index`` may add dates."""
        name = tags.method_name(tag)
        # A results object handed to a method of some object regvet knows nothing of is out of sight.
        self.escape_args(args, kwargs, node.func, node, frame)
        out: set[Tag] = {tags.opaque_call(node)}
        if receiver is not None:
            keep_dates = timeorder.keeps_date_columns(name)
            for kept in receiver.tags:
                kept_kind = tags.kind(kept)
                if kept_kind in _KEPT_BY_DATA_METHODS and (keep_dates or kept_kind != tags.DATE_COLUMN):
                    out.add(kept)
        if name in ("set_index", "sort_values"):
            key = args[0] if args else kwargs.get("keys" if name == "set_index" else "by")
            if key is not None:
                how = timeorder.index_order if name == "set_index" else timeorder.sort_order
                out.update(how(key, receiver or EMPTY, short_text(node, 50), self.loc(node, frame)))
        if name == "astype" and any("category" in tags.literal_strings(a.tags) for a in (*args, *kwargs.values())):
            out.add(tags.categories('`.astype("category")`'))
        if name == "assign":
            for col, value in kwargs.items():
                out.add(tags.holds_column(col))
                out.update(timeorder.assigned_dates(col, value))
                if value.has(tags.CATEGORIES):
                    out.add(tags.category_column(col))
                for held in flat(value).tags:
                    held_kind = tags.kind(held)
                    if held_kind in _ASSIGNED_SOURCES:
                        out.add(tags.column_value(col, held))
                    if held_kind == tags.TIMED:
                        out.add(held)
        return Value(frozenset(out))

    # --- library functions by qualified name ------------------------------------------------------
    def call_library_name(
        self, qualname: str, args: list[Value], kwargs: dict[str, Value], node: ast.Call, frame: Frame
    ) -> Value | None:
        """pandas date functions and readers, numpy, builtins, ``operator.attrgetter``, IPython's display."""
        if qualname in catalog.TIME_FUNCTIONS:
            what = f"`{qualname.replace('pandas.', 'pd.')}`"
            return tagged(tags.opaque_call(node), tags.dates(what, self.loc(node, frame)))
        if qualname.startswith("pandas.read_"):
            found = timeorder.read_order(kwargs, short_text(node, 50), self.loc(node, frame))
            return tagged(tags.opaque_call(node), *found)
        if qualname == "pandas.Categorical":
            return tagged(tags.opaque_call(node), tags.categories("`pd.Categorical`"))
        if qualname in ("pandas.DataFrame", "pandas.Series"):
            return self.call_frame_constructor(args, kwargs, node, frame)
        if qualname.startswith(("numpy.", "scipy.special.")):
            return self.call_numpy(qualname.rsplit(".", 1)[1], args, kwargs, node)
        if qualname.startswith("builtins."):
            return self.call_builtin(qualname[len("builtins.") :], args, kwargs, node, frame)
        if qualname == "operator.attrgetter":
            names = [n for a in args for n in tags.literal_strings(a.tags)]
            return tagged(*(tags.attr_getter(n) for n in names)) if names else EMPTY
        if qualname.startswith("IPython.display.display"):
            return EMPTY
        return None

    def call_frame_constructor(
        self, args: list[Value], kwargs: dict[str, Value], node: ast.Call, frame: Frame
    ) -> Value | None:
        """``pd.DataFrame({...}, index=...)``: time order from an index of dates or from time-ordered
        columns, and the columns that hold dates; None (an ordinary opaque call) when there is none."""
        found: list[Tag] = []
        index = kwargs.get("index")
        if index is not None:
            found.extend(timeorder.index_order(index, None, short_text(node, 50), self.loc(node, frame)))
        data = args[0] if args else kwargs.get("data")
        if data is not None:
            found.extend(timeorder.earliest(flat(data).tags_of(tags.TIMED)))
            for pair in (data.items or ()) if data.keys is not None else ():
                if pair.items and len(pair.items) == 2:
                    for col in tags.literal_strings(pair.items[0].tags):
                        found.extend(timeorder.assigned_dates(col, pair.items[1]))
        if not found:
            return None
        self.escape_args(args, kwargs, node.func, node, frame)
        return tagged(tags.opaque_call(node), *found, *time_order_of(args, kwargs, None))

    def call_numpy(self, fname: str, args: list[Value], kwargs: dict[str, Value], node: ast.Call) -> Value:
        first = args[0] if args else EMPTY
        out: set[Tag] = {tags.opaque_call(node)}
        for tag in flat(first).tags:
            kind = tags.kind(tag)
            if kind == tags.OUTCOME and fname in TRANSFORMS:
                old = tags.outcome_of(tag)
                out.add(tags.outcome(Outcome(old.base, TRANSFORMS[fname], f"{fname}({old.text})")))
            elif kind == tags.PART:
                fid, part = tags.fit_id(tag), tags.part_name(tag)
                if fname == "square" and part == tags.RESID:
                    out.add(tags.result_part(fid, tags.RESID_SQUARED))
                elif fname == "square" and part == tags.FITTED:
                    out.add(tags.result_part(fid, tags.FITTED_POWER))
                elif fname == "power" and len(args) > 1:
                    powers = [p for p in tags.literal_values(args[1].tags) if isinstance(p, (int, float))]
                    if powers and powers[0] >= 2:
                        raised = (
                            tags.RESID_SQUARED
                            if part == tags.RESID
                            else tags.FITTED_POWER
                            if part == tags.FITTED
                            else part
                        )
                        out.add(tags.result_part(fid, raised))
                else:
                    out.add(tag)
            elif kind in _KEPT_BY_NUMPY:
                out.add(tag)
        for value in (*args[1:], *kwargs.values()):
            for tag in flat(value).tags:
                if tags.kind(tag) in _KEPT_FROM_OTHER_ARGUMENTS:
                    out.add(tag)
        return Value(frozenset(out))

    def call_builtin(
        self, name: str, args: list[Value], kwargs: dict[str, Value], node: ast.Call, frame: Frame
    ) -> Value:
        first = args[0] if args else EMPTY
        if name in _CONTAINER_CALLS:
            if name == "sorted" and "key" in kwargs:
                self.compare_by_key(first, kwargs["key"], node, frame, "sorted")
            if not args:
                return container(EMPTY)
            steps = positions(first) if name in _POSITIONAL_CALLS else None
            return container(iterate(first), None, steps)
        if name in ("max", "min"):
            pool_value = first if len(args) == 1 else sequence(tuple(args))
            if "key" in kwargs:
                self.compare_by_key(pool_value, kwargs["key"], node, frame, name)
                return iterate(pool_value)
            pool = iterate(pool_value)
            self.compare_measures([pool], node, frame, name)
            return pool
        if name == "sum":
            pool = flat(iterate(first))
            ssr_fits = {tags.fit_id(t) for t in pool.tags_of(tags.MEASURE) if tags.measure_name(t) == "ssr"}
            if len(ssr_fits) >= 2 or any(self.fits[f].repeated for f in ssr_fits if f in self.fits):
                return tagged(tags.ssr_sum(frozenset(ssr_fits)))
            return Value(tags.only_kinds(pool.tags, ARITHMETIC_KEEPS))
        if name == "zip":
            steps_each = [positions(a) for a in args]
            known = [steps for steps in steps_each if steps is not None]
            items = None
            if args and len(known) == len(args) and len({len(steps) for steps in known}) == 1:
                items = tuple(sequence(group) for group in zip(*known, strict=False))
            return container(sequence(tuple(iterate(a) for a in args)), None, items)
        if name == "enumerate":
            steps = positions(first)
            items = tuple(sequence((tagged(tags.literal(i)), v)) for i, v in enumerate(steps)) if steps else None
            return container(sequence((EMPTY, iterate(first))), None, items)
        if name == "dict":
            if args:
                pairs = iterate(first)
                if pairs.items is not None and len(pairs.items) == 2:
                    return container(join(pairs.items[1], join_all(kwargs.values())), pairs.items[0])
                return container(join(elements(first), join_all(kwargs.values())), first.keys or EMPTY)
            return mapping([(tagged(tags.literal(k)), v) for k, v in kwargs.items() if k != "**"])
        if name == "next":
            return iterate(first)
        if name in ("map", "filter") and len(args) >= 2:
            if name == "filter":
                return container(iterate(args[1]))
            result = self.call(args[0], [iterate(a) for a in args[1:]], {}, node, frame, None)
            return container(result)
        if name == "getattr" and len(args) >= 2:
            names = tags.literal_strings(args[1].tags)
            return join_all(self.attribute(first, n, node, frame) for n in names)
        return tagged(tags.opaque_call(node))

    def compare_by_key(self, pool: Value, key: Value, node: ast.Call, frame: Frame, how: str) -> None:
        """``max(fits, key=lambda r: r.aic)``: the key function compares the fits' measures."""
        picked = self.call(key, [iterate(pool)], {}, node, frame, None)
        self.compare_measures([picked], node, frame, how)

    # --- containers growing ------------------------------------------------------------------------
    def grow_container(self, func_node: ast.Attribute, receiver: Value, node: ast.Call, frame: Frame) -> Value | None:
        """``xs.append(v)``, ``d.update(...)``, ...: add to what the receiver's name holds (None: not such a call)."""
        name = func_node.attr
        target = func_node.value
        if name not in GROWING_METHODS:
            return None
        if receiver.has(tags.DATA) and name not in _GROWING_DATA_METHODS:
            return None
        if tags.has_any_kind(receiver.tags, _NOT_GROWN):
            return None
        args = [self.evaluate(a, frame) for a in node.args]
        keyword_values = [self.evaluate(k.value, frame) for k in node.keywords]
        key = target.id if isinstance(target, ast.Name) else dotted_name(target)
        if key is None:
            return EMPTY
        added: Value | None
        if name in _ONE_ITEM_METHODS:
            added = container(args[0]) if args else None
        elif name == "insert":
            added = container(args[1]) if len(args) > 1 else None
        elif name == "extend":
            added = container(elements(args[0])) if args else None
        elif name == "setdefault":
            added = container(args[1], args[0]) if len(args) > 1 else None
        else:  # update
            source = args[0] if args else EMPTY
            added = container(join(elements(source), join_all(keyword_values)), source.keys)
        if added is not None:
            self.join_into(frame, key, added)
        return EMPTY
