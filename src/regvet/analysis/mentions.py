"""What a statement's syntax mentions: the names a compound statement can rebind.

Branches and loops of the collector save and join only these names (``Collector.touched``).
"""

from __future__ import annotations

import ast

from regvet.analysis.state import dotted_name

COMPOUND_STATEMENTS = (
    (
        ast.If,
        ast.For,
        ast.AsyncFor,
        ast.While,
        ast.With,
        ast.AsyncWith,
        ast.Try,
        ast.FunctionDef,
        ast.AsyncFunctionDef,
        ast.ClassDef,
    )
    + ((ast.Match,) if hasattr(ast, "Match") else ())
    + ((ast.TryStar,) if hasattr(ast, "TryStar") else ())
)


def touched_names(stmt: ast.stmt, memo: dict[int, frozenset[str]]) -> frozenset[str]:
    """``Collector.touched`` of ``stmt``, filling ``memo`` for it and every compound statement inside."""
    names: set[str] = set()
    stack: list[ast.AST] = [stmt]
    while stack:
        node = stack.pop()
        kind = type(node)
        if kind is ast.Name:
            names.add(node.id)  # type: ignore[attr-defined]
            continue
        if kind is ast.Attribute:
            key = dotted_name(node)  # type: ignore[arg-type]
            if key is not None:
                names.add(key)
        elif node is not stmt and isinstance(node, COMPOUND_STATEMENTS):
            inner = memo.get(id(node))
            names.update(inner if inner is not None else touched_names(node, memo))
            if isinstance(node, (ast.ClassDef, ast.FunctionDef, ast.AsyncFunctionDef)):
                names.add(node.name)
            continue
        elif kind is ast.FunctionDef or kind is ast.AsyncFunctionDef or kind is ast.ClassDef:
            names.add(node.name)  # type: ignore[attr-defined]
        elif kind is ast.Import or kind is ast.ImportFrom:
            names.update((a.asname or a.name).split(".")[0] for a in node.names)  # type: ignore[attr-defined]
        elif kind is ast.ExceptHandler and node.name:  # type: ignore[attr-defined]
            names.add(node.name)  # type: ignore[attr-defined]
        for field in node._fields:
            child = getattr(node, field, None)
            if type(child) is list:
                stack.extend(c for c in child if isinstance(c, ast.AST))
            elif isinstance(child, ast.AST):
                stack.append(child)
    result = frozenset(names)
    memo[id(stmt)] = result
    return result
