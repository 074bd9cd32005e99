"""Uncalled functions that can be skipped: the reachability test behind ``analyse_uncalled``.

A function the file never calls is still run once with unknown arguments (a fit made inside it is a
fit). Most functions of library code cannot record anything, though: :meth:`UncalledFunctions.quiet`
decides that from the function's syntax (:func:`function_mentions`) and from what the names it
mentions stand for, so the collector can skip them. Part of the collector (see ``collect.py``).
"""

from __future__ import annotations

import ast

from regvet.analysis import catalog, tags
from regvet.analysis.libraries import GROWING_METHODS
from regvet.analysis.modules import WELL_KNOWN_LIBRARIES
from regvet.analysis.state import CollectorState, Frame, FunctionRecord, ModuleRecord, dotted_name
from regvet.analysis.values import EMPTY, Value
from regvet.analysis.walk import walk


class UncalledFunctions(CollectorState):
    """The collector's handling of functions nobody calls (mixed into ``Collector``)."""

    def analyse_uncalled(self, module: ModuleRecord) -> None:
        """Analyse functions never called in the file once, with unknown arguments."""
        while True:
            pending = [f for f in self.funcs.values() if not f.analyzed and f.module is module]
            if not pending:
                return
            for func in pending:
                func.analyzed = True
                if isinstance(func.node, ast.Lambda) or self.quiet(func, set()):
                    continue
                frame = Frame(module, {}, func.scope, (), func, cls_attrs=func.cls_attrs)
                args = func.node.args
                for a in (*args.posonlyargs, *args.args, *args.kwonlyargs):
                    frame.locals[a.arg] = EMPTY
                self.call_stack.append(func.key)
                try:
                    self.exec_block(func.node.body, frame)
                finally:
                    self.call_stack.pop()

    def quiet(self, func: FunctionRecord, seen: set[int]) -> bool:
        """Can running ``func`` with unknown arguments record nothing and change nothing outside it?

        True when its body imports no project module, declares no ``global``/``nonlocal``, stores no
        attribute of ``self``, and every name it mentions is, where the function would find it
        (enclosing frames, the module's globals, builtins), a value that cannot lead to a fact
        (:func:`_quiet_value`: no statsmodels name, no model, fit or part of one, no function that
        is not quiet itself), while every name it grows or stores into (``xs.append``, ``d[k] =``,
        ``obj.a =``) is one the function would bind for itself. Such a function is skipped among the
        uncalled ones: running it could only allocate ids. Library code is mostly such functions.
        """
        if func.key in seen:  # recursion: quiet unless something else in the cycle is not
            return True
        seen.add(func.key)
        if self.helpers and self.helper_families(self._qualified_name(func)) is not None:
            return False
        if id(func.node) not in self.quiet_memo:
            self.quiet_memo[id(func.node)] = function_mentions(func.node)
        shape = self.quiet_memo[id(func.node)]
        if shape is None:
            return False
        names, dotted, stored, imported = shape
        for qualname in imported:
            if reaches_facts(qualname, self.helpers, self.tsa_in_use):
                return False
        scopes: list[dict[str, Value]] = []
        f = func.scope
        while f is not None:
            scopes.append(f.locals)
            f = f.parent
        module_globals = func.module.globals
        for name in stored:
            if name in module_globals or any(name in env for env in scopes):
                return False
        for name in names:
            value = next((env[name] for env in scopes if name in env), None)
            if value is None:
                value = module_globals.get(name)
            if value is not None and not self._quiet_value(value, seen):
                return False
        for key in dotted:
            for env in scopes:
                if key in env and not self._quiet_value(env[key], seen):
                    return False
        if func.cls_attrs:
            for value in func.cls_attrs.values():
                if not self._quiet_value(value, seen):
                    return False
        return True

    def _quiet_value(self, value: Value, seen: set[int]) -> bool:
        for tag in value.deep_tags():
            kind = tags.kind(tag)
            if kind in _QUIET_KINDS:
                continue
            if kind == tags.QUALIFIED:
                if reaches_facts(tags.qualname(tag), self.helpers, self.tsa_in_use):
                    return False
            elif kind == tags.FUNCTION:
                callee = self.funcs.get(tags.function_key(tag))
                if callee is None or isinstance(callee.node, ast.Lambda) or not self.quiet(callee, seen):
                    return False
            else:
                return False
        return True


#: Tag kinds that cannot lead to a fact by themselves (see ``Collector.quiet``).
_QUIET_KINDS = frozenset(
    {tags.LITERAL, tags.PREFIX, tags.DATA, tags.TIMED, tags.OUTCOME, tags.COLUMNS, tags.COLUMN_NAME, tags.GETTER}
)
#: Every library name the collector gives a meaning to (models, diagnostics, tables) and every dotted
#: prefix of one: a name outside this set reaches none of them through its attributes.
_SPECIAL_PREFIXES = frozenset(
    ".".join(name.split(".")[:i])
    for name in (*catalog.CONSTRUCTORS, *catalog.DIAGNOSTICS, *catalog.SUMMARY_TABLES, *catalog.ANOVA)
    for i in range(1, name.count(".") + 2)
)
_TSA = "statsmodels.tsa"


def reaches_facts(qualname: str, helpers: dict[str, tuple[str, ...]], tsa_known: bool) -> bool:
    """Can this library name, or an attribute of it, be a name the collector records something for: a model
    constructor, a diagnostic, a summary table, a configured helper (any name may end like one), or,
    while no use of ``statsmodels.tsa`` is known, that namespace?"""
    if helpers:
        return True
    name = catalog.canonical(qualname)
    if name in _SPECIAL_PREFIXES:
        return True
    if not tsa_known and catalog.is_statsmodels(name):
        return (
            _TSA.startswith(name)
            or name.startswith(_TSA)
            or any(
                alias.startswith(name) and target.startswith(_TSA)
                for alias, target in catalog.NAMESPACE_ALIASES.items()
            )
        )
    return False


def function_mentions(node: ast.AST) -> tuple[frozenset[str], frozenset[str], frozenset[str], frozenset[str]] | None:
    """What ``Collector.quiet`` reads of a function's syntax: None when the body declares
    ``global``/``nonlocal``, stores into ``self`` or imports anything but statsmodels and well-known
    libraries; else (every name mentioned, every dotted name, the names it stores into or grows,
    the library names its imports bind)."""
    names: set[str] = set()
    dotted: set[str] = set()
    stored: set[str] = set()
    imported: set[str] = set()
    for sub in walk(node):
        kind = type(sub)
        if kind is ast.Name:
            names.add(sub.id)  # type: ignore[attr-defined]
        elif kind is ast.Attribute or kind is ast.Subscript:
            if kind is ast.Attribute:
                key = dotted_name(sub)  # type: ignore[arg-type]
                if key is not None:
                    dotted.add(key)
            if isinstance(sub.ctx, ast.Store):  # type: ignore[attr-defined]
                root = root_name(sub)  # type: ignore[arg-type]
                if root is None:
                    continue
                if root == "self" and kind is ast.Attribute:
                    return None
                stored.add(root)
                if kind is ast.Attribute:
                    stored.add(dotted_name(sub) or root)  # type: ignore[arg-type]
        elif kind is ast.Call:
            callee = sub.func  # type: ignore[attr-defined]
            if isinstance(callee, ast.Attribute) and callee.attr in GROWING_METHODS:
                root = root_name(callee.value)
                if root is not None:
                    stored.add(root)
                    stored.add(dotted_name(callee.value) or root)
        elif kind is ast.Import or kind is ast.ImportFrom:
            bound = _library_import(sub)  # type: ignore[arg-type]
            if bound is None:
                return None
            imported.update(bound)
        elif kind is ast.Global or kind is ast.Nonlocal:
            return None
    if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):  # its own parameters are bound first
        a = node.args
        own = {p.arg for p in (*a.posonlyargs, *a.args, *a.kwonlyargs)}
        names -= own
        stored -= own
    return frozenset(names), frozenset(dotted), frozenset(stored), frozenset(imported)


def _library_import(node: ast.Import | ast.ImportFrom) -> list[str] | None:
    """The library names an import inside a function binds (each is then judged by ``reaches_facts``),
    or None when it could be a project module (a lookup is a fact: the file's dependencies) or is ``*``."""
    if isinstance(node, ast.Import):
        out = []
        for alias in node.names:
            if not _known_library(alias.name):
                return None
            out.append(alias.name)  # also ``import a.b`` (binds ``a``): judged by its full name
            out.append(catalog.canonical(alias.name) if alias.asname else alias.name.split(".")[0])
        return out
    if node.level or not node.module or not _known_library(node.module):
        return None
    if any(alias.name == "*" for alias in node.names):
        return None
    return [node.module, *(catalog.canonical(f"{node.module}.{alias.name}") for alias in node.names)]


def _known_library(module: str) -> bool:
    return catalog.is_statsmodels(module) or module.split(".")[0] in WELL_KNOWN_LIBRARIES


def root_name(node: ast.expr) -> str | None:
    while isinstance(node, (ast.Attribute, ast.Subscript)):
        node = node.value
    return node.id if isinstance(node, ast.Name) else None
