"""Formulas built at run time from literal pieces, and patsy designs.

* ``"riders ~ " + rhs``, ``"%s ~ %s" % (y, x)``, ``"{} ~ {}".format(y, x)``, ``f"{y} ~ {x}"`` and
  ``" + ".join(regressors)``: when every piece is a literal (or a name bound to one) the result is
  the literal string itself, so the formula is read like a written one; otherwise the fixed start
  (a PREFIX tag) is kept, which still names the dependent variable. A piece that may hold several
  literals (a name joined over branches) gives one literal per combination, up to ``MAX_BUILT``.
* ``patsy.dmatrices(formula, data)``: two DESIGN values (the dependent variable and the design) that
  carry the data's own tags; ``sm.OLS(y, X)`` on them is read like ``smf.ols(formula, data)``
  (``regressions.new_model``).

The functions at module level are pure; :class:`BuiltFormulas` wires them into the collector.
"""

from __future__ import annotations

import ast
import re
import string
from itertools import product

from regvet.analysis import tags
from regvet.analysis.state import CollectorState, Frame, Node
from regvet.analysis.tags import Tag
from regvet.analysis.values import EMPTY, Value, flat, positions, sequence

#: Combinations one built string may stand for (as many as the formula literals of one constructor call).
MAX_BUILT = 24
#: The longest literal kept (as ``collect.eval_Constant``).
MAX_TEXT = 4000
#: What of the data a patsy design keeps: its identity (for attribution), time order and columns.
_DESIGN_KEEPS = frozenset({tags.DATA, tags.TIMED, tags.DATES, tags.DATE_COLUMN, tags.COLUMN_NAME, tags.COLUMN_VALUE})
_PERCENT = re.compile(r"%(?:\((\w+)\))?([sdr%])|%")


def pieces(value: Value, numbers: bool) -> list[str] | None:
    """The strings ``value`` may be when it is only literals (numbers as ``str`` gives them when
    ``numbers``), else None."""
    if not value.tags or value.elem is not None or value.keys is not None:
        return None
    out: list[str] = []
    for tag in value.tags:
        if tags.kind(tag) != tags.LITERAL:
            return None
        v = tags.literal_value(tag)
        if isinstance(v, str):
            out.append(v)
        elif numbers and isinstance(v, (int, float)) and not isinstance(v, bool):
            out.append(str(v))
        else:
            return None
    return sorted(out)


def _combine(parts: list[list[str]]) -> list[str] | None:
    count = 1
    for p in parts:
        count *= len(p)
        if count > MAX_BUILT:
            return None
    return ["".join(c) for c in product(*parts)]


def _literals(texts: list[str] | None) -> Value | None:
    kept = [t for t in texts or () if len(t) <= MAX_TEXT]
    return Value(frozenset(tags.literal(t) for t in kept)) if kept else None


def _prefixes(texts: list[str] | None) -> Value | None:
    kept = [t for t in texts or () if t and len(t) <= MAX_TEXT]
    return Value(frozenset(tags.fstring_prefix(t) for t in kept)) if kept else None


def _built(known: list[list[str]], complete: bool) -> Value | None:
    """The literals of a string whose pieces are all known, else the prefixes of its known start."""
    texts = _combine(known)
    return _literals(texts) if complete else _prefixes(texts)


def concatenation(left: Value, right: Value) -> Value | None:
    """``left + right`` of strings: literals when both are, the left's fixed start when only it is known."""
    lefts = pieces(left, numbers=False)
    if lefts is None:
        if left.tags and all(tags.kind(t) == tags.PREFIX for t in left.tags):
            return left  # the fixed start stays the fixed start
        return None
    rights = pieces(right, numbers=False)
    if rights is not None:
        return _built([lefts, rights], complete=True)
    starts = [tags.prefix_text(t) for t in right.tags_of(tags.PREFIX)] if right.tags else []
    if starts and len(starts) == len(right.tags):
        return _built([lefts, sorted(starts)], complete=False)
    return _built([lefts], complete=False)


def percent_format(template: str, right: Value) -> Value | None:
    """``template % right`` with ``%s``/``%d``/``%r`` placeholders (and ``%%``)."""
    items = positions(right) if right.keys is None and right.items is not None else (right,)
    if items is None:
        return None
    known: list[list[str]] = []
    i = 0
    pos = 0
    for m in _PERCENT.finditer(template):
        known.append([template[pos : m.start()]])
        pos = m.end()
        if m.group(2) == "%":
            known.append(["%"])
            continue
        if m.group(1) is not None or m.group(2) is None or i >= len(items):
            return None  # a mapping key, an unsupported conversion, or too few values
        texts = pieces(items[i], numbers=True)
        i += 1
        if texts is None:
            return _built(known, complete=False)
        known.append(texts if m.group(2) == "s" else [repr(t) for t in texts] if m.group(2) == "r" else texts)
    if i != len(items):
        return None
    known.append([template[pos:]])
    return _built(known, complete=True)


def str_format(template: str, args: list[Value], kwargs: dict[str, Value]) -> Value | None:
    """``template.format(*args, **kwargs)`` with plain fields (``{}``, ``{0}``, ``{name}``, ``!s``/``!r``)."""
    try:
        fields = list(string.Formatter().parse(template))
    except ValueError:
        return None
    known: list[list[str]] = []
    auto = 0
    for text, name, spec, conversion in fields:
        known.append([text])
        if name is None:
            continue
        if spec or conversion not in (None, "s", "r"):
            return _built(known, complete=False)
        if name == "":
            index: int | str = auto
            auto += 1
        elif name.isdigit():
            index = int(name)
        elif name.isidentifier():
            index = name
        else:
            return _built(known, complete=False)  # attribute or item access
        value = (
            args[index]
            if isinstance(index, int) and index < len(args)
            else (kwargs.get(index) if isinstance(index, str) else None)
        )
        texts = pieces(value, numbers=True) if value is not None else None
        if texts is None:
            return _built(known, complete=False)
        known.append([repr(t) for t in texts] if conversion == "r" else texts)
    return _built(known, complete=True)


def str_join(separator: str, iterable: Value) -> Value | None:
    """``separator.join(iterable)`` over a sequence of known length whose items are literal strings."""
    items = positions(iterable) if iterable.keys is None else None
    if items is None:
        return None
    known: list[list[str]] = []
    for i, item in enumerate(items):
        texts = pieces(item, numbers=False)
        if texts is None:
            return None
        if i:
            known.append([separator])
        known.append(texts)
    return _built(known, complete=True) if known else _literals([""])


def fstring(parts: list[tuple[str | None, Value | None, int]]) -> Value | None:
    """An f-string: ``(text, None, -1)`` for a fixed part, ``(None, value, conversion)`` for a placeholder
    (``value`` None when it has a format spec regvet does not apply)."""
    known: list[list[str]] = []
    for text, value, conversion in parts:
        if text is not None:
            known.append([text])
            continue
        texts = pieces(value, numbers=True) if value is not None and conversion in (-1, ord("s"), ord("r")) else None
        if texts is None:
            return _built(known, complete=False)
        known.append([repr(t) for t in texts] if conversion == ord("r") else texts)
    return _built(known, complete=True)


class BuiltFormulas(CollectorState):
    """Strings built from literal pieces, and ``patsy.dmatrices``."""

    def attribute_of_literal(self, tag: Tag, name: str, node: Node, frame: Frame, out: set[Tag]) -> Value | None:
        """``"{} ~ {}".format`` / ``" + ".join`` on a literal string."""
        text = tags.literal_value(tag)
        if isinstance(text, str) and name in ("format", "join"):
            out.add(tags.string_method(text, name))
        return None

    def call_string_method(
        self,
        tag: Tag,
        args: list[Value],
        kwargs: dict[str, Value],
        node: ast.Call,
        frame: Frame,
        receiver: Value | None,
    ) -> Value | None:
        """The built string when it is known (else None: the call stays opaque, as before)."""
        text, name = tags.string_method_text(tag), tags.string_method_name(tag)
        if name == "join":
            return str_join(text, args[0]) if len(args) == 1 and not kwargs else None
        if "**" in kwargs or any(isinstance(a, ast.Starred) for a in node.args):
            return None
        return str_format(text, args, kwargs)

    def string_operation(self, op: ast.operator, left: Value, right: Value) -> Value | None:
        """``+`` and ``%`` on strings (None: not a string operation regvet can build)."""
        if isinstance(op, ast.Add):
            return concatenation(left, right)
        if isinstance(op, ast.Mod):
            templates = pieces(left, numbers=False)
            if templates is not None and len(templates) == 1:
                return percent_format(templates[0], right)
        return None

    def design_matrices(self, args: list[Value], kwargs: dict[str, Value]) -> Value:
        """``patsy.dmatrices(formula, data)``: (y, X), each a DESIGN of the formula with the data's tags."""
        formula = args[0] if args else kwargs.get("formula_like", EMPTY)
        data = args[1] if len(args) > 1 else kwargs.get("data", EMPTY)
        kept = frozenset(t for t in flat(data).tags if tags.kind(t) in _DESIGN_KEEPS)
        texts = sorted(set(tags.literal_strings(formula.tags)))
        text = texts[0] if len(texts) == 1 else None
        sides = []
        for side in (tags.ENDOG, tags.EXOG):
            atoms = set(kept)
            if text is not None:
                atoms.add(tags.design(text, side))
            sides.append(Value(frozenset(atoms)))
        return sequence(tuple(sides))
