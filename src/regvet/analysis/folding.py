"""Tests of an ``if`` whose outcome is known: a comparison of two literals.

In a loop regvet unrolls over literal values (``for formula in ["a ~ b", "a ~ b + c"]``), each
pass knows the loop variable, so ``if formula == "a ~ b":`` or ``if "temp" in formula:`` takes
one branch there; a check applied only in some passes is then credited only to those fits.
Anything else (a name with several possible values, data, a call) is unknown and both branches
are run and joined, as before.
"""

from __future__ import annotations

import ast
import operator
from collections.abc import Callable
from typing import Any

from regvet.analysis import tags
from regvet.analysis.values import Value

_OPS: dict[type, Callable[[Any, Any], Any]] = {
    ast.Eq: operator.eq,
    ast.NotEq: operator.ne,
    ast.Lt: operator.lt,
    ast.LtE: operator.le,
    ast.Gt: operator.gt,
    ast.GtE: operator.ge,
    ast.In: lambda a, b: operator.contains(b, a),
    ast.NotIn: lambda a, b: not operator.contains(b, a),
}


def literal_of(value: Value) -> tuple[bool, Any]:
    """(True, the literal) when ``value`` is exactly one literal string or number, else (False, None)."""
    if value.elem is not None or value.keys is not None or value.items is not None or len(value.tags) != 1:
        return False, None
    (tag,) = value.tags
    if tags.kind(tag) != tags.LITERAL:
        return False, None
    found = tags.literal_values([tag])
    return (True, found[0]) if found else (False, None)


def known_comparison(op: ast.cmpop, left: Value, right: Value) -> bool | None:
    """The outcome of ``left op right`` when both are single literals, else None."""
    fn = _OPS.get(type(op))
    ok_left, a = literal_of(left)
    ok_right, b = literal_of(right)
    if fn is None or not ok_left or not ok_right:
        return None
    try:
        return bool(fn(a, b))
    except TypeError:
        return None
