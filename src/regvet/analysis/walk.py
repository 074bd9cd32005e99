"""A faster ``ast.walk`` for the collector's syntax scans.

``ast.walk`` yields every node, the ``Load``/``Store`` context objects included, through two
generic generators per node. The scans of whole function bodies (``uncalled.function_mentions``,
``timeorder.mentions_time_order``) are a large part of the analysis of library code, so this walk
visits the same nodes without the contexts (read them as ``node.ctx``), from one stack, depth
first. Use it where only the set of nodes matters, not their order.
"""

from __future__ import annotations

import ast
from collections.abc import Iterator

_AST = ast.AST
#: Per node class, its fields that can hold nodes (``ctx`` left out).
_FIELDS: dict[type, tuple[str, ...]] = {}


def _fields(cls: type) -> tuple[str, ...]:
    names = _FIELDS[cls] = tuple(n for n in getattr(cls, "_fields", ()) if n != "ctx")
    return names


def walk(node: ast.AST) -> Iterator[ast.AST]:
    """Every node under ``node`` (itself included) but the expression contexts, in no promised order."""
    stack: list = [node]
    pop, push, extend = stack.pop, stack.append, stack.extend
    while stack:
        current = pop()
        if current is None:  # the holes of Dict.keys and arguments.kw_defaults
            continue
        yield current
        cls = type(current)
        for name in _FIELDS.get(cls) or _fields(cls):
            value = getattr(current, name, None)
            if type(value) is list:
                if value and type(value[0]) is not str:  # Global.names and Nonlocal.names hold strings
                    extend(value)
            elif isinstance(value, _AST):
                push(value)
