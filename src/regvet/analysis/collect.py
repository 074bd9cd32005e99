"""One pass over a module's syntax tree that turns code into :class:`~regvet.model.facts.FileFacts`.

The collector is a small abstract interpreter. It walks statements in order,
keeps an environment from names to abstract values (:mod:`regvet.analysis.values`)
and records events as it meets them: a model built, a fit made, a member of a
results object read, a diagnostic applied, fit measures compared, a result
handed to code regvet cannot read. Branches are joined, loops run until their
values settle (at most twice), calls to functions defined in the file or in the
project's own modules are followed into the callee with the arguments bound, so
that a fit made inside a function and returned is a fit at each call site.

This is the only module where ``ast`` node positions become :class:`Span` values.
It does no I/O: other project modules come from a :class:`ModuleProvider` the
caller supplies.
"""

from __future__ import annotations

import ast
import builtins
import re
from dataclasses import dataclass, field
from typing import Callable, Iterable, Protocol

from regvet.analysis import catalog as cat
from regvet.analysis.formula import Formula, outcome_of_expr, parse_formula
from regvet.analysis.values import (
    EMPTY, V, container, dict_value, elements, flat, iterate, join, join_all, mapping, positions, sequence, tags,
)  # fmt: skip
from regvet.model.facts import (
    Check,
    Comparison,
    Escape,
    FileFacts,
    Fit,
    GroupTest,
    Loc,
    Mismatch,
    Outcome,
    Use,
)
from regvet.model.span import Span, code_point_col

MAX_CALL_DEPTH = 6
MAX_VARIANTS = 24  # distinct formula literals one constructor call may stand for
MAX_UNROLL = 12  # loops over literal sequences this short run once per element
MAX_UNROLL_NESTING = 2
_IDENT = re.compile(r"[A-Za-z_]\w*")


# --- interfaces ------------------------------------------------------------------------------
@dataclass(frozen=True)
class ModuleSource:
    """A project module as the provider found it."""

    key: str  # dotted module name, used for ``diagnostic_helpers`` matching
    path: str  # shown in related locations
    text: str


class ModuleProvider(Protocol):
    """Finds the project's own modules. ``importer`` is the path of the importing file (None: the analysed file)."""

    def find(self, name: str, level: int, importer: str | None) -> ModuleSource | None: ...


class NoModules:
    """A provider for single-file analysis: no project modules."""

    def find(self, name: str, level: int, importer: str | None) -> ModuleSource | None:
        return None


# --- internal records ------------------------------------------------------------------------
@dataclass(eq=False)
class _Module:
    key: str
    path: str | None  # None: the analysed file
    tree: ast.Module
    lines: list[str]
    globals: dict[str, V] = field(default_factory=dict)
    executed: bool = False


@dataclass(eq=False)
class _Func:
    key: int
    node: ast.FunctionDef | ast.AsyncFunctionDef | ast.Lambda
    module: _Module
    scope: "_Frame | None"
    qualname: str
    cls_attrs: dict[str, V] | None = None
    analyzed: bool = False


@dataclass(eq=False)
class _Frame:
    module: _Module
    locals: dict[str, V]
    parent: "_Frame | None"
    ctx: tuple[Loc, ...]
    func: _Func | None = None
    returns: V = EMPTY
    declared_global: set[str] = field(default_factory=set)
    cls_attrs: dict[str, V] | None = None  # attributes of ``self`` shared by a class's methods

    @property
    def is_module(self) -> bool:
        return self.func is None and self.parent is None


@dataclass(eq=False)
class _Model:
    id: int
    constructor: str
    estimator: str
    api: str
    formula: Formula | None
    formula_text: str | None
    outcome: Outcome | None
    n_regressors: int | None
    regressors: tuple[str, ...] | None
    data_name: str | None
    time_reason: str | None
    columns: frozenset[str]
    aux_for: dict[str, set[int]]  # family ("form", "variance", "other") -> fits it is auxiliary to
    data_tags: frozenset
    loc: Loc


@dataclass(eq=False)
class _FitB:
    id: int
    model: _Model
    fit_call: Loc
    ctx: tuple[Loc, ...]
    cov_type: str | None
    parent: int | None
    result_name: str | None
    statement: Span | None
    via: list[Loc] = field(default_factory=list)
    repeated: bool = False  # made in a loop that was not unrolled: one abstract fit for many


_BUILTIN_NAMES = frozenset(dir(builtins))
_PANDAS_ATTRS = frozenset(
    {"values", "index", "columns", "shape", "dtypes", "T", "loc", "iloc", "at", "iat", "size", "empty",
     "array", "name", "ndim", "str", "dt", "cat", "plot", "attrs", "flags", "axes", "style"}
)  # fmt: skip
_PASS_ATTRS = frozenset({"values", "array", "T", "loc", "iloc"})
_PASS_METHODS = frozenset({"to_numpy", "copy", "astype", "reset_index", "dropna", "squeeze", "ravel", "flatten"})
_CONTAINER_CALLS = frozenset({"list", "tuple", "set", "frozenset", "iter", "reversed", "sorted"})


class Collector:
    """Collects facts about one module. Use :func:`collect`."""

    def __init__(
        self,
        provider: ModuleProvider,
        helpers: dict[str, tuple[str, ...]],
        main_key: str,
        parse: Callable[[str, str], ast.Module | None],
        module_cache: dict | None = None,
    ) -> None:
        self.provider = provider
        self.helpers = helpers
        self.main_key = main_key
        self._parse = parse
        self.module_cache = module_cache if module_cache is not None else {}
        self.modules: dict[str, _Module | None] = {}
        self.sources: dict[str, ModuleSource] = {}
        self.found: dict[tuple, ModuleSource | None] = {}
        self.loading: set[str] = set()
        self.resolving: set[tuple[str, str]] = set()
        self.funcs: dict[int, _Func] = {}
        self.func_by_node: dict[int, _Func] = {}
        self.models: dict[int, _Model] = {}
        self.model_memo: dict[tuple, int] = {}
        self.model_fits: dict[int, list[int]] = {}
        self.data_models: dict[tuple, set[int]] = {}
        self.fits: dict[int, _FitB] = {}
        self.fit_memo: dict[tuple, int] = {}
        self.uses: dict[Use, None] = {}
        self.checks: dict[Check, None] = {}
        self.escapes: dict[Escape, None] = {}
        self.comparisons: dict[Comparison, None] = {}
        self.mismatches: dict[Mismatch, None] = {}
        self.group_tests: dict[GroupTest, None] = {}
        self.tsa_in_use = False
        self.call_stack: list[int] = []
        self.unroll: list[tuple[int, int]] = []  # (loop node, step) of the loops being unrolled
        self.repeating = 0  # inside a loop or comprehension that is not unrolled
        self.inline_memo: dict[tuple, V] = {}
        self.fit_making_memo: dict[int, bool] = {}
        self.touched_memo: dict[int, frozenset[str]] = {}
        self.stmt: ast.stmt | None = None
        self.stmt_module: _Module | None = None
        self._ids = 0

    # --- entry points ------------------------------------------------------------------------
    def run(self, tree: ast.Module, text: str) -> FileFacts:
        main = _Module(self.main_key, None, tree, text.split("\n"))
        self.modules[self.main_key] = main
        frame = _Frame(main, main.globals, None, ())
        main.executed = True
        self.exec_block(tree.body, frame)
        self._standalone(main)
        return self._facts()

    def _standalone(self, module: _Module) -> None:
        """Analyse functions never called in the file once, with unknown arguments."""
        while True:
            pending = [f for f in self.funcs.values() if not f.analyzed and f.module is module]
            if not pending:
                return
            for func in pending:
                func.analyzed = True
                if isinstance(func.node, ast.Lambda):
                    continue
                frame = _Frame(module, {}, func.scope, (), func, cls_attrs=func.cls_attrs)
                args = func.node.args
                for a in (*args.posonlyargs, *args.args, *args.kwonlyargs):
                    frame.locals[a.arg] = EMPTY
                self.call_stack.append(func.key)
                try:
                    self.exec_block(func.node.body, frame)
                finally:
                    self.call_stack.pop()

    # --- helpers -----------------------------------------------------------------------------
    def _new_id(self) -> int:
        self._ids += 1
        return self._ids

    def span(self, node: ast.AST, module: _Module) -> Span:
        lines = module.lines
        line = node.lineno  # type: ignore[attr-defined]
        end_line = getattr(node, "end_lineno", None) or line
        col = _cp(lines, line, node.col_offset)  # type: ignore[attr-defined]
        end_col = _cp(lines, end_line, getattr(node, "end_col_offset", None) or node.col_offset)  # type: ignore[attr-defined]
        return Span(line, col, end_line, end_col)

    def loc(self, node: ast.AST, frame: _Frame) -> Loc:
        return Loc(self.span(node, frame.module), frame.module.path)

    def fits_in(self, v: V) -> set[int]:
        return {t[1] for t in flat(v).tags if t[0] == "fit"}

    # --- statements --------------------------------------------------------------------------
    def exec_block(self, body: list[ast.stmt], frame: _Frame) -> None:
        for stmt in body:
            self.exec_stmt(stmt, frame)

    def exec_stmt(self, stmt: ast.stmt, frame: _Frame) -> None:
        if isinstance(stmt, _COMPOUND):
            self._exec(stmt, frame)
            return
        outer, outer_mod = self.stmt, self.stmt_module
        self.stmt, self.stmt_module = stmt, frame.module
        try:
            self._exec(stmt, frame)
        finally:
            self.stmt, self.stmt_module = outer, outer_mod

    def _exec(self, stmt: ast.stmt, frame: _Frame) -> None:
        if isinstance(stmt, ast.Expr):
            self.ev(stmt.value, frame)
        elif isinstance(stmt, ast.Assign):
            value = self.ev(stmt.value, frame)
            for target in stmt.targets:
                self.bind(target, value, frame)
        elif isinstance(stmt, ast.AnnAssign):
            if stmt.value is not None:
                self.bind(stmt.target, self.ev(stmt.value, frame), frame)
        elif isinstance(stmt, ast.AugAssign):
            value = self.ev(stmt.value, frame)
            current = self.ev(stmt.target, frame)
            self.bind(stmt.target, self._binop(stmt.op, current, value, stmt, frame), frame)
        elif isinstance(stmt, (ast.Import, ast.ImportFrom)):
            self.do_import(stmt, frame)
        elif isinstance(stmt, (ast.FunctionDef, ast.AsyncFunctionDef)):
            for d in stmt.decorator_list:
                self.ev(d, frame)
            self.set(frame, stmt.name, tags(("func", self.define(stmt, frame).key)))
        elif isinstance(stmt, ast.ClassDef):
            self.do_class(stmt, frame)
        elif isinstance(stmt, ast.Return):
            if stmt.value is not None:
                frame.returns = join(frame.returns, self.ev(stmt.value, frame))
        elif isinstance(stmt, ast.If):
            self.ev(stmt.test, frame)
            self.branches(stmt, [stmt.body, stmt.orelse], frame)
        elif isinstance(stmt, (ast.For, ast.AsyncFor)):
            iterable = self.ev(stmt.iter, frame)
            steps = self._unrollable(iterable)
            if steps is not None:
                for i, item in enumerate(steps):  # one pass per element: keeps pairs of fits apart
                    self.unroll.append((id(stmt), i))
                    try:
                        self.bind(stmt.target, item, frame)
                        self.exec_block(stmt.body, frame)
                    finally:
                        self.unroll.pop()
            else:
                self.repeating += 1  # a fit made here stands for one fit per step
                try:
                    self.loop(stmt, stmt.body, frame, lambda: self.bind(stmt.target, iterate(iterable), frame))
                finally:
                    self.repeating -= 1
            self.exec_block(stmt.orelse, frame)
        elif isinstance(stmt, ast.While):
            self.loop(stmt, stmt.body, frame, lambda: self.ev(stmt.test, frame))
            self.exec_block(stmt.orelse, frame)
        elif isinstance(stmt, (ast.With, ast.AsyncWith)):
            for item in stmt.items:
                value = self.ev(item.context_expr, frame)
                if item.optional_vars is not None:
                    self.bind(item.optional_vars, value, frame)
            self.exec_block(stmt.body, frame)
        elif isinstance(stmt, ast.Try) or type(stmt).__name__ == "TryStar":
            self.exec_block(stmt.body, frame)  # type: ignore[attr-defined]
            for handler in stmt.handlers:  # type: ignore[attr-defined]
                if handler.name:
                    self.set(frame, handler.name, EMPTY)
                self.exec_block(handler.body, frame)
            self.exec_block(stmt.orelse, frame)  # type: ignore[attr-defined]
            self.exec_block(stmt.finalbody, frame)  # type: ignore[attr-defined]
        elif type(stmt).__name__ == "Match":
            self.ev(stmt.subject, frame)  # type: ignore[attr-defined]
            self.branches(stmt, [c.body for c in stmt.cases], frame, exhaustive=False)  # type: ignore[attr-defined]
        elif isinstance(stmt, (ast.Global, ast.Nonlocal)):
            frame.declared_global.update(stmt.names)
        elif isinstance(stmt, ast.Delete):
            for target in stmt.targets:
                if not isinstance(target, ast.Name):
                    self.ev(target, frame)
        elif isinstance(stmt, (ast.Raise, ast.Assert)):
            for child in ast.iter_child_nodes(stmt):
                if isinstance(child, ast.expr):
                    self.ev(child, frame)

    def touched(self, stmt: ast.stmt) -> frozenset[str]:
        """Every name (and dotted attribute path) a compound statement mentions: all it can rebind.

        Branches and loops save and join only these, instead of copying the whole environment
        (module-level scripts have thousands of names). Callees that change globals are joined
        with a little less precision, never lost.
        """
        cached = self.touched_memo.get(id(stmt))
        if cached is not None:
            return cached
        names: set[str] = set()
        for node in ast.walk(stmt):
            if isinstance(node, ast.Name):
                names.add(node.id)
            elif isinstance(node, ast.Attribute):
                key = _dotted(node)
                if key is not None:
                    names.add(key)
            elif isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef)):
                names.add(node.name)
            elif isinstance(node, (ast.Import, ast.ImportFrom)):
                names.update((a.asname or a.name).split(".")[0] for a in node.names)
            elif isinstance(node, ast.ExceptHandler) and node.name:
                names.add(node.name)
        result = frozenset(names)
        self.touched_memo[id(stmt)] = result
        return result

    def branches(self, stmt: ast.stmt, bodies: list[list[ast.stmt]], frame: _Frame, exhaustive: bool = True) -> None:
        """Run each body from the same starting values and join what they leave behind."""
        env = frame.locals
        names = self.touched(stmt)
        before = {n: env[n] for n in names if n in env}
        results = [] if exhaustive else [before]
        for body in bodies:
            for n in names:
                if n in before:
                    env[n] = before[n]
                else:
                    env.pop(n, None)
            self.exec_block(body, frame)
            results.append({n: env[n] for n in names if n in env})
        merged: dict[str, V] = {}
        for result in results:
            for name, value in result.items():
                merged[name] = join(merged.get(name), value)
        env.update(merged)

    def _unrollable(self, iterable: V) -> tuple[V, ...] | None:
        steps = positions(iterable)
        if steps is None or not 1 <= len(steps) <= MAX_UNROLL or len(self.unroll) >= MAX_UNROLL_NESTING:
            return None
        return steps

    def loop(self, stmt: ast.stmt, body: list[ast.stmt], frame: _Frame, head: Callable[[], object]) -> None:
        env = frame.locals
        names = self.touched(stmt)
        before = {n: env[n] for n in names if n in env}
        for _ in range(2):
            start = {n: env.get(n) for n in names}
            head()
            self.exec_block(body, frame)
            if all(env.get(n) == v for n, v in start.items()):
                break
        for name, value in before.items():  # the loop may run zero times
            env[name] = join(env.get(name), value)

    # --- names ---------------------------------------------------------------------------------
    def lookup(self, name: str, frame: _Frame) -> V:
        f: _Frame | None = frame
        if name not in frame.declared_global:
            while f is not None:
                if name in f.locals:
                    value = f.locals[name]
                    if any(t[0] == "pattr" for t in value.tags):
                        value = f.locals[name] = self.resolve(value)
                    return value
                f = f.parent
        g = frame.module.globals
        if name in g:
            value = g[name]
            if any(t[0] == "pattr" for t in value.tags):
                value = g[name] = self.resolve(value)
            return value
        if name in _BUILTIN_NAMES:
            return tags(("q", "builtins." + name))
        return EMPTY

    def set(self, frame: _Frame, name: str, value: V) -> None:
        if name in frame.declared_global:
            target = frame
            while target.parent is not None:
                target = target.parent
            if name in frame.module.globals or target.is_module:
                frame.module.globals[name] = value
                return
        frame.locals[name] = value

    def weak_set(self, frame: _Frame, name: str, value: V) -> None:
        """Add ``value`` to what ``name`` holds, wherever it is bound (containers growing)."""
        f: _Frame | None = frame
        while f is not None:
            if name in f.locals:
                f.locals[name] = join(f.locals[name], value)
                return
            f = f.parent
        if name in frame.module.globals:
            frame.module.globals[name] = join(frame.module.globals[name], value)
        else:
            frame.locals[name] = value

    def bind(self, target: ast.expr, value: V, frame: _Frame) -> None:
        if isinstance(target, ast.Name):
            self.set(frame, target.id, value)
            self._note_result_name(target.id, value)
        elif isinstance(target, (ast.Tuple, ast.List)):
            elts = target.elts
            starred = [i for i, e in enumerate(elts) if isinstance(e, ast.Starred)]
            if value.items is not None and not starred and len(value.items) == len(elts):
                for e, v in zip(elts, value.items):
                    self.bind(e, v, frame)
            else:
                each = iterate(value) if (value.elem is not None or value.keys is not None) else EMPTY
                for e in elts:
                    if isinstance(e, ast.Starred):
                        self.bind(e.value, container(each), frame)
                    else:
                        self.bind(e, each, frame)
        elif isinstance(target, ast.Starred):
            self.bind(target.value, container(elements(value)), frame)
        elif isinstance(target, ast.Attribute):
            key = _dotted(target)
            if key is not None:
                if key.startswith("self.") and frame.cls_attrs is not None:
                    frame.cls_attrs[key] = join(frame.cls_attrs.get(key), value)
                else:
                    self.set(frame, key, value)
            base = target.value
            if isinstance(base, ast.Name) and value.has("timed"):
                self.weak_set(frame, base.id, V(frozenset(value.of("timed"))))
            elif not isinstance(base, ast.Name):
                self.ev(base, frame)
        elif isinstance(target, ast.Subscript):
            index = self.ev(target.slice, frame)
            base = target.value
            if isinstance(base, ast.Name):
                current = self.lookup(base.id, frame)
                key_lits = [t[1] for t in index.of("lit")]
                if current.keys is not None and current.items is not None and len(key_lits) == 1 and len(index.tags) == 1:
                    pairs = [(p.items[0], p.items[1]) for p in current.items if p.items and len(p.items) == 2]
                    pairs = [(k, v) for k, v in pairs if k.tags != index.tags] + [(index, value)]
                    self.set(frame, base.id, mapping(pairs))
                    return
                extra: set[tuple] = set(value.of("timed"))
                for lit in index.of("lit"):
                    if isinstance(lit[1], str):
                        extra.add(("colname", lit[1]))
                        for t in flat(value).tags:
                            if t[0] in ("part", "fit"):
                                extra.add(("colv", lit[1], t))
                grown = container(value, index)
                self.weak_set(frame, base.id, grown.with_tags(extra))
            else:
                self.ev(base, frame)

    def _note_result_name(self, name: str, value: V) -> None:
        if self.stmt is None or not isinstance(self.stmt, ast.Assign):
            return
        for t in value.tags:
            if t[0] == "fit":
                fit = self.fits.get(t[1])
                if fit is not None and fit.result_name is None and fit.statement is not None:
                    if self.stmt_module is not None and self.stmt_module.path is None:
                        if self.span(self.stmt, self.stmt_module) == fit.statement:
                            fit.result_name = name

    # --- definitions ---------------------------------------------------------------------------
    def define(self, node: ast.FunctionDef | ast.AsyncFunctionDef | ast.Lambda, frame: _Frame) -> _Func:
        existing = self.func_by_node.get(id(node))
        if existing is not None and existing.scope is (None if frame.is_module else frame):
            return existing
        name = getattr(node, "name", "<lambda>")
        prefix = frame.func.qualname + "." if frame.func is not None else ""
        func = _Func(
            self._new_id(),
            node,
            frame.module,
            None if frame.is_module else frame,
            prefix + name,
            frame.cls_attrs,
        )
        self.funcs[func.key] = func
        self.func_by_node[id(node)] = func
        return func

    def do_class(self, node: ast.ClassDef, frame: _Frame) -> None:
        for expr in (*node.bases, *node.decorator_list):
            self.ev(expr, frame)
        shared: dict[str, V] = {}
        inner = _Frame(frame.module, {}, None if frame.is_module else frame, frame.ctx, cls_attrs=shared)
        for stmt in node.body:
            if isinstance(stmt, (ast.FunctionDef, ast.AsyncFunctionDef)):
                func = self.define(stmt, inner)
                func.qualname = node.name + "." + stmt.name
                func.cls_attrs = shared
                func.scope = None if frame.is_module else frame
                inner.locals[stmt.name] = tags(("func", func.key))
            else:
                self.exec_stmt(stmt, inner)
        self.set(frame, node.name, tags(("data", ("class", id(node)))))

    # --- imports -------------------------------------------------------------------------------
    # Project modules are found at import time (a cheap lookup) but parsed and run only when a
    # name from them is first used: scripts import far more than they call.
    def do_import(self, stmt: ast.Import | ast.ImportFrom, frame: _Frame) -> None:
        if isinstance(stmt, ast.Import):
            for alias in stmt.names:
                name = alias.name
                if name.startswith("statsmodels.tsa"):
                    self.tsa_in_use = True
                if alias.asname:
                    found = self.find_module(name, 0, frame)
                    value = tags(("pmod", found.key)) if found else tags(("q", cat.canonical(name)))
                    self.set(frame, alias.asname, value)
                else:
                    top = name.split(".")[0]
                    found = self.find_module(top, 0, frame)
                    self.set(frame, top, tags(("pmod", found.key)) if found else tags(("q", top)))
            return
        modname = stmt.module or ""
        if modname.startswith("statsmodels.tsa") or (modname == "statsmodels" and any(a.name == "tsa" for a in stmt.names)):
            self.tsa_in_use = True
        found = self.find_module(modname, stmt.level, frame) if modname else None
        for alias in stmt.names:
            local = alias.asname or alias.name
            if alias.name == "*":
                module = self.load(found.key) if found else None
                if module is not None:
                    for k, v in module.globals.items():
                        if not k.startswith("_"):
                            self.set(frame, k, v)
                elif not stmt.level:
                    base = cat.canonical(modname)
                    for q in (*cat.CONSTRUCTORS, *cat.DIAGNOSTICS):
                        if q.rsplit(".", 1)[0] == base:
                            self.set(frame, q.rsplit(".", 1)[1], tags(("q", q)))
                continue
            if found is not None:
                sub = self.find_module(f"{modname}.{alias.name}", stmt.level, frame)
                self.set(frame, local, tags(("pattr", found.key, alias.name, sub.key if sub else None)))
            elif stmt.level:
                sub = self.find_module(f"{modname}.{alias.name}" if modname else alias.name, stmt.level, frame)
                self.set(frame, local, tags(("pmod", sub.key)) if sub else EMPTY)
            else:
                self.set(frame, local, tags(("q", cat.canonical(f"{modname}.{alias.name}"))))

    def find_module(self, name: str, level: int, frame: _Frame) -> ModuleSource | None:
        if not name and not level:
            return None
        if not level and (cat.is_statsmodels(name) or name.split(".")[0] in _WELL_KNOWN):
            return None
        key = (name, level, frame.module.path)
        if key in self.found:
            return self.found[key]
        try:
            found = self.provider.find(name, level, frame.module.path)
        except Exception:  # a provider failure must not stop the analysis
            found = None
        self.found[key] = found
        if found is not None:
            self.sources.setdefault(found.key, found)
        return found

    def load(self, key: str) -> _Module | None:
        """Parse and run a project module's top level (once), returning it."""
        if key in self.modules:
            return self.modules[key]
        found = self.sources.get(key)
        if found is None or key in self.loading:
            return None
        cached = self.module_cache.get((found.path, found.text))
        tree = cached if cached is not None else self._parse(found.text, found.path)
        if tree is None:
            self.modules[key] = None
            return None
        self.module_cache[(found.path, found.text)] = tree
        module = _Module(key, found.path, tree, found.text.split("\n"))
        self.loading.add(key)
        saved = self.stmt, self.stmt_module
        try:
            self.exec_block(tree.body, _Frame(module, module.globals, None, ()))
        finally:
            self.loading.discard(key)
            self.stmt, self.stmt_module = saved
        module.executed = True
        self.modules[key] = module
        return module

    def provider_sub(self, package: ModuleSource, name: str) -> ModuleSource | None:
        """``package.name`` as a submodule, found relative to the package's own file."""
        try:
            found = self.provider.find(name, 1, package.path)
        except Exception:
            found = None
        if found is not None and found.key != package.key:
            self.sources.setdefault(found.key, found)
            return found
        return None

    def resolve(self, value: V) -> V:
        """Replace lazy ``from module import name`` references by what the module binds."""
        if not any(t[0] == "pattr" for t in value.tags):
            return value
        out = V(frozenset(t for t in value.tags if t[0] != "pattr"), value.elem, value.keys, value.items, value.level)
        for t in value.of("pattr"):
            _, key, name, sub = t
            if (key, name) in self.resolving:  # modules importing names from each other
                continue
            self.resolving.add((key, name))
            try:
                module = self.load(key)
                if module is not None and name in module.globals:
                    out = join(out, self.resolve(module.globals[name]))
                elif sub is not None:
                    out = join(out, tags(("pmod", sub)))
            finally:
                self.resolving.discard((key, name))
        return out

    # --- expressions ---------------------------------------------------------------------------
    def ev(self, node: ast.expr | None, frame: _Frame) -> V:
        if node is None:
            return EMPTY
        method = _EV.get(type(node))
        if method is None:
            method = _EV[type(node)] = getattr(Collector, "ev_" + type(node).__name__, _ev_children)
        return method(self, node, frame)

    def ev_children(self, node: ast.expr, frame: _Frame) -> V:
        """Any other expression: evaluate its parts (for the uses inside), keep what flows out."""
        out = EMPTY
        for child in ast.iter_child_nodes(node):
            if isinstance(child, ast.expr):
                out = join(out, self.ev(child, frame))
        return flat(out) if out else EMPTY

    def ev_Constant(self, node: ast.Constant, frame: _Frame) -> V:
        value = node.value
        if isinstance(value, str) and len(value) <= 4000:
            return tags(("lit", value))
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            return tags(("lit", value))
        return EMPTY

    def ev_JoinedStr(self, node: ast.JoinedStr, frame: _Frame) -> V:
        prefix = []
        fixed = True
        for part in node.values:
            if isinstance(part, ast.Constant) and isinstance(part.value, str):
                if fixed:
                    prefix.append(part.value)
            else:
                fixed = False
                self.ev(part, frame)
        text = "".join(prefix)
        if fixed:
            return tags(("lit", text))
        return tags(("prefix", text)) if text else EMPTY

    def ev_FormattedValue(self, node: ast.FormattedValue, frame: _Frame) -> V:
        self.ev(node.value, frame)
        if node.format_spec is not None:
            self.ev(node.format_spec, frame)
        return EMPTY

    def ev_Name(self, node: ast.Name, frame: _Frame) -> V:
        return self.lookup(node.id, frame)

    def ev_Attribute(self, node: ast.Attribute, frame: _Frame) -> V:
        key = _dotted(node)
        if key is not None:
            if key.startswith("self.") and frame.cls_attrs is not None and key in frame.cls_attrs:
                return frame.cls_attrs[key]
            f: _Frame | None = frame
            while f is not None:
                if key in f.locals:
                    return f.locals[key]
                f = f.parent
        base = self.ev(node.value, frame)
        return self.attr(base, node.attr, node, frame)

    def attr(self, base: V, name: str, node: ast.AST, frame: _Frame) -> V:
        out: set[tuple] = set()
        for t in base.tags:
            kind = t[0]
            if kind == "q":
                q = cat.canonical(f"{t[1]}.{name}")
                if q.startswith("statsmodels.tsa"):
                    self.tsa_in_use = True
                out.add(("q", q))
            elif kind == "pmod":
                module = self.load(t[1])
                if module is not None and name in module.globals:
                    return join(V(frozenset(out)), self.resolve(module.globals[name]))
                source = self.sources.get(t[1])
                if source is not None:
                    sub = self.provider_sub(source, name)
                    if sub is not None:
                        out.add(("pmod", sub.key))
            elif kind == "fit":
                self.fit_member(t[1], name, node, frame, out)
            elif kind == "model":
                if name in ("fit",):
                    out.add(("mfit", t[1]))
                elif name in cat.MODEL_PART_MEMBERS:
                    out.add(("mpart", t[1], cat.MODEL_PART_MEMBERS[name]))
            elif kind == "part":
                fid, part = t[1], t[2]
                if part == "model" and name in cat.MODEL_PART_MEMBERS:
                    out.add(("part", fid, cat.MODEL_PART_MEMBERS[name]))
                elif part == "model" and name == "data":
                    out.add(("part", fid, "data"))
                elif part == "data" and name in cat.DATA_PART_MEMBERS:
                    out.add(("part", fid, cat.DATA_PART_MEMBERS[name]))
                elif name in _PASS_ATTRS:
                    out.add(t)
                elif name in _PASS_METHODS:
                    out.add(("passcall", t))
            elif kind == "mpart":
                if name in _PASS_ATTRS:
                    out.add(t)
                elif name in _PASS_METHODS:
                    out.add(("passcall", t))
            elif kind in ("data", "outcome", "cols"):
                if kind == "data":
                    if name in cat.TIME_METHODS:
                        out.add(("timecall", t))
                    elif name in _PASS_ATTRS:
                        out.add(t)
                    else:
                        out.add(("dmethod", t, name))
                        out.add(("data", ("attr", id(node))))  # an attribute of data is data
                    if name.isidentifier() and name not in _PANDAS_ATTRS and not name.startswith("_"):
                        out.add(("outcome", Outcome(name, None, name)))
                elif name in _PASS_ATTRS:
                    out.add(t)
                elif name in _PASS_METHODS:
                    out.add(("passcall", t))
                elif name in cat.TIME_METHODS:
                    out.add(("timecall", t))
            elif kind == "timed":
                out.add(t)
            elif kind == "colv" or kind == "colname":
                pass
        if base.elem is not None or base.keys is not None:
            if name in ("items", "values", "keys", "get", "pop", "copy", "setdefault"):
                out.add(("cmethod", name, base))
        return V(frozenset(out)) if out else EMPTY

    def fit_member(self, fid: int, name: str, node: ast.AST, frame: _Frame, out: set[tuple]) -> None:
        loc = self.loc(node, frame)
        if name in cat.INFERENCE_MEMBERS:
            self.uses[Use(fid, "inference", name, loc)] = None
            out.add(("fmethod", fid, name))
        elif name in cat.ESTIMATE_MEMBERS:
            self.uses[Use(fid, "estimate", name, loc)] = None
            out.add(("fmethod", fid, name))
        elif name in cat.ROBUST_MEMBERS:
            self.uses[Use(fid, "robust", name, loc)] = None
        elif name in cat.PART_MEMBERS:
            out.add(("part", fid, cat.PART_MEMBERS[name]))
        elif name in cat.COMPARED_MEASURES or name in cat.SSR_MEASURES:
            out.add(("measure", fid, name))
        elif name in cat.COLLINEARITY_MEMBERS:
            self.checks[Check(fid, "collinearity", name, loc)] = None
        elif name == "get_robustcov_results":
            out.add(("fmethod", fid, name))
        else:
            out.add(("part", fid, "other"))

    def ev_Subscript(self, node: ast.Subscript, frame: _Frame) -> V:
        base = self.ev(node.value, frame)
        index = self.ev(node.slice, frame)
        out = EMPTY
        lits = [t[1] for t in index.of("lit")]
        if base.keys is not None:  # a dict
            found = dict_value(base, lits[0]) if len(lits) == 1 and len(index.tags) == 1 else None
            out = found if found is not None else elements(base)
        elif base.items is not None:
            ints = [n for n in lits if isinstance(n, int)]
            if len(ints) == 1 and -len(base.items) <= ints[0] < len(base.items):
                out = base.items[ints[0]]
            else:
                out = elements(base)
        elif base.elem is not None:
            out = elements(base)
        extra: set[tuple] = set()
        for t in base.tags:
            if t[0] in ("data", "timed"):
                extra.add(t if t[0] == "timed" else ("data", ("sub", id(node))))
            if t[0] == "data":
                names = [x[1] for x in index.of("lit") if isinstance(x[1], str)]
                if len(names) == 1 and len(index.tags) == 1:
                    extra.add(("outcome", Outcome(names[0], None, names[0])))
                    for c in base.of("colv"):
                        if c[1] == names[0]:
                            extra.add(c[2])
                cols = _literal_strings(index)
                if cols is not None:
                    extra.add(("cols", cols))
            if t[0] in ("part", "mpart", "cols", "outcome"):
                extra.add(t)
            if t[0] == "measure":
                extra.add(t)
        if sum(1 for t in extra if t[0] == "outcome") > 1:
            # A column picked out of a frame is that column, whatever the frame was called.
            picked = {("outcome", Outcome(n, None, n)) for n in (x[1] for x in index.of("lit")) if isinstance(n, str)}
            extra = {t for t in extra if t[0] != "outcome" or t in picked}
        if extra:
            out = out.with_tags(extra)
        return out

    def ev_Slice(self, node: ast.Slice, frame: _Frame) -> V:
        for part in (node.lower, node.upper, node.step):
            self.ev(part, frame)
        return EMPTY

    def ev_Tuple(self, node: ast.Tuple | ast.List, frame: _Frame) -> V:
        values: list[V] = []
        star = False
        for e in node.elts:
            if isinstance(e, ast.Starred):
                star = True
                values.append(elements(self.ev(e.value, frame)))
            else:
                values.append(self.ev(e, frame))
        if star:
            return container(join_all(values))
        return sequence(tuple(values))

    ev_List = ev_Tuple

    def ev_Set(self, node: ast.Set, frame: _Frame) -> V:
        return container(join_all(self.ev(e, frame) for e in node.elts))

    def ev_Dict(self, node: ast.Dict, frame: _Frame) -> V:
        pairs: list[tuple[V, V]] = []
        splat = EMPTY
        for k, v in zip(node.keys, node.values):
            value = self.ev(v, frame)
            if k is None:  # **splat: its pairs are not known one by one
                splat = join(splat, value)
            else:
                pairs.append((self.ev(k, frame), value))
        literal_keys = all(len(k.tags) == 1 and k.has("lit") and not k.elem for k, _ in pairs)
        if not splat and literal_keys:
            return mapping(pairs)
        keys = join(join_all(k for k, _ in pairs), splat.keys)
        vals = join(join_all(v for _, v in pairs), elements(splat))
        return container(vals, keys if keys else EMPTY)

    def _comprehension(
        self, node: ast.expr, generators: list[ast.comprehension], frame: _Frame, body: Callable[[_Frame], V]
    ) -> tuple[V, tuple[V, ...] | None]:
        """The join of what ``body`` gives, and one value per element when the loop could be unrolled."""
        inner = _Frame(frame.module, {}, frame, frame.ctx, frame.func, cls_attrs=frame.cls_attrs)
        first = self.ev(generators[0].iter, frame)
        steps = self._unrollable(first) if len(generators) == 1 and not generators[0].ifs else None
        if steps is not None:
            results = []
            for i, item in enumerate(steps):
                self.unroll.append((id(node), i))
                try:
                    self.bind(generators[0].target, item, inner)
                    results.append(body(inner))
                finally:
                    self.unroll.pop()
            return join_all(results), tuple(results)
        self.repeating += 1
        try:
            for n, gen in enumerate(generators):
                it = first if n == 0 else self.ev(gen.iter, inner)
                self.bind(gen.target, iterate(it), inner)
                for cond in gen.ifs:
                    self.ev(cond, inner)
            return body(inner), None
        finally:
            self.repeating -= 1

    def ev_ListComp(self, node: ast.ListComp | ast.SetComp | ast.GeneratorExp, frame: _Frame) -> V:
        joined, each = self._comprehension(node, node.generators, frame, lambda f: self.ev(node.elt, f))
        return container(joined, None, each)

    ev_SetComp = ev_ListComp
    ev_GeneratorExp = ev_ListComp

    def ev_DictComp(self, node: ast.DictComp, frame: _Frame) -> V:
        pair: list[V] = []

        def body(f: _Frame) -> V:
            pair.append(self.ev(node.key, f))
            return self.ev(node.value, f)

        vals, _ = self._comprehension(node, node.generators, frame, body)
        return container(vals, join_all(pair) if pair else EMPTY)

    def ev_NamedExpr(self, node: ast.NamedExpr, frame: _Frame) -> V:
        value = self.ev(node.value, frame)
        self.bind(node.target, value, frame)
        return value

    def ev_Lambda(self, node: ast.Lambda, frame: _Frame) -> V:
        func = self.define(node, frame)
        func.analyzed = True
        return tags(("func", func.key))

    def ev_IfExp(self, node: ast.IfExp, frame: _Frame) -> V:
        self.ev(node.test, frame)
        return join(self.ev(node.body, frame), self.ev(node.orelse, frame))

    def ev_BoolOp(self, node: ast.BoolOp, frame: _Frame) -> V:
        return join_all(self.ev(v, frame) for v in node.values)

    def ev_UnaryOp(self, node: ast.UnaryOp, frame: _Frame) -> V:
        value = self.ev(node.operand, frame)
        return V(frozenset(t for t in value.tags if t[0] in _ARITH_KEEP))

    def ev_Await(self, node: ast.Await, frame: _Frame) -> V:
        return self.ev(node.value, frame)

    def ev_Yield(self, node: ast.Yield | ast.YieldFrom, frame: _Frame) -> V:
        value = self.ev(node.value, frame)
        frame.returns = join(frame.returns, container(value if isinstance(node, ast.Yield) else elements(value)))
        return EMPTY

    ev_YieldFrom = ev_Yield

    def ev_Starred(self, node: ast.Starred, frame: _Frame) -> V:
        return self.ev(node.value, frame)

    def ev_Compare(self, node: ast.Compare, frame: _Frame) -> V:
        operands = [self.ev(node.left, frame)] + [self.ev(c, frame) for c in node.comparators]
        self._comparison([_measures(v) for v in operands], node, frame, "compare")
        return EMPTY

    def ev_BinOp(self, node: ast.BinOp, frame: _Frame) -> V:
        # Left-nested chains (a + b + c + ...) are walked iteratively: long ones exist.
        chain = [node]
        while isinstance(chain[-1].left, ast.BinOp):
            chain.append(chain[-1].left)  # type: ignore[arg-type]
        value = self.ev(chain[-1].left, frame)
        for op_node in reversed(chain):
            right = self.ev(op_node.right, frame)
            value = self._binop(op_node.op, value, right, op_node, frame)
        return value

    def _binop(self, op: ast.operator, left: V, right: V, node: ast.AST, frame: _Frame) -> V:
        result: set[tuple] = set()
        lf, rf = flat(left), flat(right)
        if isinstance(op, ast.Pow):
            power = [t[1] for t in rf.of("lit") if isinstance(t[1], (int, float))]
            for t in lf.tags:
                if t[0] == "part" and power and power[0] >= 2:
                    if t[2] == "resid":
                        result.add(("part", t[1], "residsq"))
                    elif t[2] == "fitted":
                        result.add(("part", t[1], "fittedpow"))
        if isinstance(op, (ast.Sub, ast.Div)):
            if self._comparison([_measures(left), _measures(right)], node, frame,
                                "difference" if isinstance(op, ast.Sub) else "ratio"):  # fmt: skip
                lf = V(frozenset(t for t in lf.tags if not (t[0] == "measure" and t[2] in cat.COMPARED_MEASURES)))
                rf = V(frozenset(t for t in rf.tags if not (t[0] == "measure" and t[2] in cat.COMPARED_MEASURES)))
        self._ssr_arith(op, lf, rf, node, frame, result)
        for t in (*lf.tags, *rf.tags):
            if t[0] in _ARITH_KEEP:
                if t[0] == "outcome":
                    continue
                result.add(t)
        outcomes = [t[1] for t in (*lf.of("outcome"), *rf.of("outcome"))]
        if len({o.base for o in outcomes}) == 1 and isinstance(node, ast.BinOp):
            o = outcomes[0]
            result.add(("outcome", Outcome(o.base, "expr", _short(node))))
        return V(frozenset(result)) if result else EMPTY

    def _ssr_arith(self, op: ast.operator, left: V, right: V, node: ast.AST, frame: _Frame, result: set) -> None:
        lssr = {t[1] for t in left.of("measure") if t[2] == "ssr"}
        rssr = {t[1] for t in right.of("measure") if t[2] == "ssr"}
        lsum = set().union(*(t[1] for t in left.of("ssrsum")))
        rsum = set().union(*(t[1] for t in right.of("ssrsum")))
        if isinstance(op, ast.Add) and lssr and rssr and lssr != rssr:
            result.add(("ssrsum", frozenset(lssr | rssr | lsum | rsum)))
        for summed, other in ((lsum, rssr), (rsum, lssr)):
            pooled = other - summed
            if summed and pooled:
                loc = self.loc(node, frame)
                for fid in summed | pooled:
                    self.checks[Check(fid, "breaks", "Chow test from subsample SSRs", loc)] = None

    def _comparison(self, sides: list[set[tuple[int, str]]], node: ast.AST, frame: _Frame, how: str) -> bool:
        measures = set().union(*sides)
        if len({fid for fid, _ in measures}) < 2:
            return False
        if sum(1 for s in sides if s) < 2 and how in ("difference", "ratio", "compare"):
            return False
        self.comparisons[Comparison(self.loc(node, frame), tuple(sorted(measures)), how)] = None
        return True

    # --- calls ---------------------------------------------------------------------------------
    def ev_Call(self, node: ast.Call, frame: _Frame) -> V:
        func_node = node.func
        receiver: V | None = None
        if isinstance(func_node, ast.Attribute):
            receiver = self.ev(func_node.value, frame)
            grown = self._container_method(func_node, receiver, node, frame)
            if grown is not None:
                return grown
            callee = self.attr(receiver, func_node.attr, func_node, frame)
            key = _dotted(func_node)
            if key is not None:
                found = self.lookup(key, frame) if "." in key else EMPTY
                if found:
                    callee = join(callee, found)
        else:
            callee = self.ev(func_node, frame)
        args = [self.ev(a, frame) for a in node.args]
        kwargs: dict[str, V] = {}
        for kw in node.keywords:
            value = self.ev(kw.value, frame)
            if kw.arg is None:
                kwargs.setdefault("**", EMPTY)
                kwargs["**"] = join(kwargs["**"], value)
            else:
                kwargs[kw.arg] = value
        return self.call(callee, args, kwargs, node, frame, receiver)

    def _container_method(self, func_node: ast.Attribute, receiver: V, node: ast.Call, frame: _Frame) -> V | None:
        name = func_node.attr
        target = func_node.value
        if name not in ("append", "extend", "insert", "add", "update", "setdefault", "appendleft"):
            return None
        if receiver.has("data") and name not in ("append", "add"):
            return None
        if receiver.has("fit") or receiver.has("q"):
            return None
        args = [self.ev(a, frame) for a in node.args]
        kw = [self.ev(k.value, frame) for k in node.keywords]
        key = target.id if isinstance(target, ast.Name) else _dotted(target)
        if key is None:
            return EMPTY
        if name in ("append", "add", "appendleft"):
            added = container(args[0]) if args else None
        elif name == "insert":
            added = container(args[1]) if len(args) > 1 else None
        elif name == "extend":
            added = container(elements(args[0])) if args else None
        elif name == "setdefault":
            added = container(args[1], args[0]) if len(args) > 1 else None
        else:  # update
            src = args[0] if args else EMPTY
            added = container(join(elements(src), join_all(kw)), src.keys)
        if added is not None:
            self.weak_set(frame, key, added)
        return EMPTY

    def call(
        self, callee: V, args: list[V], kwargs: dict[str, V], node: ast.Call, frame: _Frame, receiver: V | None
    ) -> V:
        out = EMPTY
        handled = False
        for t in callee.tags:
            kind = t[0]
            result: V | None = None
            if kind == "q":
                result = self.call_qualified(t[1], args, kwargs, node, frame)
            elif kind == "func":
                result = self.call_user(self.funcs[t[1]], args, kwargs, node, frame)
            elif kind == "mfit":
                result = self.make_fits(t[1], kwargs, node, frame)
            elif kind == "fmethod":
                result = self.fit_method(t[1], t[2], args, kwargs, node, frame)
            elif kind == "passcall":
                result = tags(t[1])
            elif kind == "timecall":
                result = tags(("data", ("call", id(node))), ("timed", f"`.{_attr_name(node)}()` makes lags or differences"))
            elif kind == "dmethod":
                result = self.data_method(t[1], t[2], args, kwargs, node, frame, receiver)
            elif kind == "cmethod":
                result = self.container_call(t[1], t[2], args)
            elif kind == "getter":
                result = join_all(self.attr(a, t[1], node, frame) for a in args[:1])
            if result is not None:
                handled = True
                out = join(out, result)
        if not handled:
            self.escape_args(args, kwargs, _short(node.func), node, frame)
            out = tags(("data", ("call", id(node))), *_timed_of(args, kwargs, receiver))
        return out

    def escape_args(self, args: list[V], kwargs: dict[str, V], name: str, node: ast.AST, frame: _Frame) -> None:
        fits: set[int] = set()
        for v in (*args, *kwargs.values()):
            fits |= self.fits_in(v)
        if fits:
            loc = self.loc(node, frame)
            for fid in fits:
                self.escapes[Escape(fid, name, loc)] = None

    def credit(self, family: str, function: str, args: list[V], node: ast.AST, frame: _Frame) -> None:
        """A diagnostic call: credit it to the fit its inputs come from, or report a mix."""
        loc = self.loc(node, frame)
        sets: list[set[int]] = []
        for v in args:
            s = self.attribution(v)
            if s:
                sets.append(s)
        if not sets:
            return
        roots = [{self.root(f) for f in s} for s in sets]
        for i in range(len(roots)):
            for j in range(i + 1, len(roots)):
                if roots[i].isdisjoint(roots[j]):
                    involved = tuple(sorted(set().union(*sets)))
                    self.mismatches[Mismatch(loc, function, involved)] = None
                    return
        common = set.intersection(*roots) if len(roots) > 1 else roots[0]
        for s in sets:
            for fid in s:
                if self.root(fid) in common:
                    self.checks[Check(fid, family, function, loc)] = None

    def attribution(self, v: V) -> set[int]:
        """Which fits a diagnostic input may come from: parts and results first, then shared data."""
        out: set[int] = set()
        data: set[tuple] = set()
        for t in flat(v).tags:
            if t[0] == "fit" or t[0] == "part":
                out.add(t[1])
            elif t[0] == "mpart":
                out.update(self.model_fits.get(t[1], ()))
            elif t[0] == "data":
                data.add(t)
        if out:
            return out
        for d in data:
            for mid in self.data_models.get(d, ()):
                out.update(self.model_fits.get(mid, ()))
        return out

    def root(self, fid: int) -> int:
        seen: set[int] = set()
        while fid not in seen:
            seen.add(fid)
            parent = self.fits[fid].parent if fid in self.fits else None
            if parent is None:
                return fid
            fid = parent
        return fid

    def call_qualified(self, q: str, args: list[V], kwargs: dict[str, V], node: ast.Call, frame: _Frame) -> V | None:
        q = cat.canonical(q)
        if q in cat.CONSTRUCTORS:
            return self.make_models(q, cat.CONSTRUCTORS[q], args, kwargs, node, frame)
        if q in cat.DIAGNOSTICS:
            family, fname = cat.DIAGNOSTICS[q]
            self.credit(family, fname, [*args, *kwargs.values()], node, frame)
            return tags(("data", ("call", id(node))))
        helper = self._helper(q)
        if helper is not None:
            for family in helper:
                self.credit(family, q, [*args, *kwargs.values()], node, frame)
            return tags(("data", ("call", id(node))))
        if q in cat.SUMMARY_TABLES:
            loc = self.loc(node, frame)
            for v in (*args, *kwargs.values()):
                for fid in self.fits_in(v):
                    self.uses[Use(fid, "inference", q.rsplit(".", 1)[1], loc)] = None
            return tags(("data", ("call", id(node))))
        if q in cat.ANOVA:
            fits = sorted(set().union(*(self.fits_in(v) for v in args))) if args else []
            loc = self.loc(node, frame)
            for fid in fits:
                self.uses[Use(fid, "inference", "anova_lm", loc)] = None
            self.group_test(fits, node, frame)
            return tags(("data", ("call", id(node))))
        if q in cat.ADD_CONSTANT:
            base = args[0] if args else kwargs.get("data", EMPTY)
            keep = [t for t in base.tags if t[0] in ("cols", "timed", "part", "mpart", "outcome")]
            return tags(("data", ("call", id(node))), *keep)
        if q in cat.TIME_FUNCTIONS:
            return tags(("data", ("call", id(node))), ("timed", f"`{q.replace('pandas.', 'pd.')}` makes a date index"))
        if q.startswith("pandas.read_"):
            extra: list[tuple] = []
            if any(k in kwargs for k in cat.TIME_READ_KEYWORDS):
                extra.append(("timed", "the data is read with `parse_dates`"))
            return tags(("data", ("call", id(node))), *extra)
        if q.startswith("numpy.") or q.startswith("scipy.special."):
            return self.numpy_call(q.rsplit(".", 1)[1], args, kwargs, node)
        if q.startswith("builtins."):
            return self.builtin(q[len("builtins.") :], args, kwargs, node, frame)
        if q == "operator.attrgetter":
            names = [t[1] for a in args for t in a.of("lit") if isinstance(t[1], str)]
            return tags(*(("getter", n) for n in names)) if names else EMPTY
        if q.startswith("IPython.display.display"):
            return EMPTY
        if cat.is_statsmodels(q):
            return tags(("data", ("call", id(node))), *_timed_of(args, kwargs, None))
        return None

    def _helper(self, qualname: str) -> tuple[str, ...] | None:
        for name, families in self.helpers.items():
            if qualname == name or qualname.endswith("." + name):
                return families
        return None

    def numpy_call(self, fname: str, args: list[V], kwargs: dict[str, V], node: ast.Call) -> V:
        first = args[0] if args else EMPTY
        out: set[tuple] = {("data", ("call", id(node)))}
        ff = flat(first)
        for t in ff.tags:
            if t[0] == "outcome" and fname in _NP_TRANSFORMS:
                o = t[1]
                out.add(("outcome", Outcome(o.base, _NP_TRANSFORMS[fname], f"{fname}({o.text})")))
            elif t[0] == "part":
                if fname == "square" and t[2] == "resid":
                    out.add(("part", t[1], "residsq"))
                elif fname == "square" and t[2] == "fitted":
                    out.add(("part", t[1], "fittedpow"))
                elif fname == "power" and len(args) > 1:
                    p = [x[1] for x in args[1].of("lit") if isinstance(x[1], (int, float))]
                    if p and p[0] >= 2:
                        out.add(("part", t[1], "residsq" if t[2] == "resid" else "fittedpow" if t[2] == "fitted" else t[2]))
                else:
                    out.add(t)
            elif t[0] in ("timed", "mpart", "cols", "measure"):
                out.add(t)
        for v in (*args[1:], *kwargs.values()):
            for t in flat(v).tags:
                if t[0] in ("part", "mpart", "timed", "measure"):
                    out.add(t)
        return V(frozenset(out))

    def builtin(self, name: str, args: list[V], kwargs: dict[str, V], node: ast.Call, frame: _Frame) -> V | None:
        first = args[0] if args else EMPTY
        if name in _CONTAINER_CALLS:
            if name == "sorted" and "key" in kwargs:
                self._keyed(first, kwargs["key"], node, frame, "sorted")
            if not args:
                return container(EMPTY)
            steps = positions(first) if name in ("list", "tuple", "iter") else None
            return container(iterate(first), None, steps)
        if name in ("max", "min"):
            pool_v = first if len(args) == 1 else sequence(tuple(args))
            if "key" in kwargs:
                self._keyed(pool_v, kwargs["key"], node, frame, name)
                return iterate(pool_v)
            pool = iterate(pool_v)
            self._comparison([_measures(pool)], node, frame, name)
            return pool
        if name == "sum":
            pool = flat(iterate(first))
            fits_ssr = {t[1] for t in pool.of("measure") if t[2] == "ssr"}
            if len(fits_ssr) >= 2 or any(self.fits[f].repeated for f in fits_ssr if f in self.fits):
                return tags(("ssrsum", frozenset(fits_ssr)))
            return V(frozenset(t for t in pool.tags if t[0] in _ARITH_KEEP))
        if name == "zip":
            steps_each = [positions(a) for a in args]
            items = None
            if args and all(st is not None for st in steps_each) and len({len(st) for st in steps_each}) == 1:
                items = tuple(sequence(group) for group in zip(*steps_each))  # type: ignore[misc]
            return container(sequence(tuple(iterate(a) for a in args)), None, items)
        if name == "enumerate":
            steps = positions(first)
            items = tuple(sequence((tags(("lit", i)), v)) for i, v in enumerate(steps)) if steps else None
            return container(sequence((EMPTY, iterate(first))), None, items)
        if name == "dict":
            if args:
                pairs = iterate(first)
                if pairs.items is not None and len(pairs.items) == 2:
                    return container(join(pairs.items[1], join_all(kwargs.values())), pairs.items[0])
                return container(join(elements(first), join_all(kwargs.values())), first.keys or EMPTY)
            return mapping([(tags(("lit", k)), v) for k, v in kwargs.items() if k != "**"])
        if name == "next":
            return iterate(first)
        if name in ("map", "filter") and len(args) >= 2:
            if name == "filter":
                return container(iterate(args[1]))
            result = self.call(args[0], [iterate(a) for a in args[1:]], {}, node, frame, None)
            return container(result)
        if name == "getattr" and len(args) >= 2:
            names = [t[1] for t in args[1].of("lit") if isinstance(t[1], str)]
            return join_all(self.attr(first, n, node, frame) for n in names)
        return tags(("data", ("call", id(node))))

    def _keyed(self, pool: V, key: V, node: ast.Call, frame: _Frame, how: str) -> None:
        picked = self.call(key, [iterate(pool)], {}, node, frame, None)
        self._comparison([_measures(picked)], node, frame, how)

    def container_call(self, method: str, base: V, args: list[V]) -> V:
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
            lits = [t[1] for t in args[0].of("lit")]
            found = dict_value(base, lits[0]) if len(lits) == 1 else None
            if found is not None:
                return found
        return vals  # get, pop, setdefault

    def data_method(self, data: tuple, name: str, args: list[V], kwargs: dict[str, V], node: ast.Call,
                    frame: _Frame, receiver: V | None) -> V:  # fmt: skip
        # A results object handed to a method of some object regvet knows nothing of is out of sight.
        self.escape_args(args, kwargs, _short(node.func), node, frame)
        out: set[tuple] = {("data", ("call", id(node)))}
        if receiver is not None:
            for t in receiver.tags:
                if t[0] in ("timed", "colv", "colname"):
                    out.add(t)
        if name == "set_index" and any(a.has("timed") for a in (*args, *kwargs.values())):
            out.add(("timed", "the data gets a date index"))
        if name == "assign":
            for col, v in kwargs.items():
                out.add(("colname", col))
                for t in flat(v).tags:
                    if t[0] in ("part", "fit"):
                        out.add(("colv", col, t))
                    if t[0] == "timed":
                        out.add(t)
        return V(frozenset(out))

    # --- user functions ------------------------------------------------------------------------
    def call_user(self, func: _Func, args: list[V], kwargs: dict[str, V], node: ast.Call, frame: _Frame) -> V | None:
        helper = self._helper(self._func_qualname(func))
        if helper is not None:
            for family in helper:
                self.credit(family, func.qualname, [*args, *kwargs.values()], node, frame)
        if func.key in self.call_stack or len(frame.ctx) >= MAX_CALL_DEPTH:
            self.escape_args(args, kwargs, func.qualname, node, frame)
            return tags(("data", ("call", id(node))))
        if not self.interesting(func, args, kwargs):
            return tags(("data", ("call", id(node))))
        site = self.loc(node, frame)
        memo_key = (func.key, id(node), frame.ctx, tuple(self.unroll), tuple(args), tuple(sorted(kwargs.items(), key=lambda kv: kv[0])))
        if memo_key in self.inline_memo:
            return self.inline_memo[memo_key]
        func.analyzed = True
        callee = _Frame(func.module, {}, func.scope, frame.ctx + (site,), func, cls_attrs=func.cls_attrs)
        self.bind_params(func, callee, args, kwargs, frame)
        self.call_stack.append(func.key)
        saved = self.stmt, self.stmt_module
        try:
            if isinstance(func.node, ast.Lambda):
                result = self.ev(func.node.body, callee)
            else:
                self.exec_block(func.node.body, callee)
                result = callee.returns
        finally:
            self.call_stack.pop()
            self.stmt, self.stmt_module = saved
        self.surface(result, callee.ctx, site)
        self.inline_memo[memo_key] = result
        return result

    def _func_qualname(self, func: _Func) -> str:
        return f"{func.module.key}.{func.qualname}" if func.module.key else func.qualname

    def bind_params(self, func: _Func, callee: _Frame, args: list[V], kwargs: dict[str, V], frame: _Frame) -> None:
        a = func.node.args
        positional = [*a.posonlyargs, *a.args]
        defaults = [None] * (len(positional) - len(a.defaults)) + list(a.defaults)
        for i, param in enumerate(positional):
            if i < len(args):
                value = args[i]
            elif param.arg in kwargs:
                value = kwargs[param.arg]
            elif defaults[i] is not None:
                value = self.ev(defaults[i], frame if func.scope is None else func.scope)
            else:
                value = kwargs.get("**", EMPTY)
            callee.locals[param.arg] = value
        for param, default in zip(a.kwonlyargs, a.kw_defaults):
            if param.arg in kwargs:
                callee.locals[param.arg] = kwargs[param.arg]
            elif default is not None:
                callee.locals[param.arg] = self.ev(default, frame)
            else:
                callee.locals[param.arg] = EMPTY
        if a.vararg is not None:
            callee.locals[a.vararg.arg] = container(join_all(args[len(positional) :]))
        if a.kwarg is not None:
            names = {p.arg for p in (*positional, *a.kwonlyargs)}
            callee.locals[a.kwarg.arg] = container(join_all(v for k, v in kwargs.items() if k not in names))

    def interesting(self, func: _Func, args: list[V], kwargs: dict[str, V]) -> bool:
        for v in (*args, *kwargs.values()):
            for t in flat(v).tags:
                if t[0] in _INTERESTING:
                    return True
        if self.fit_making(func):
            return True
        return False

    def fit_making(self, func: _Func) -> bool:
        """Does the function (or one it calls by name) make fits, read global fits, or run diagnostics?"""
        memo = self.fit_making_memo.get(func.key)
        if memo is not None:
            return memo
        self.fit_making_memo[func.key] = False  # recursion guard
        result = False
        for sub in ast.walk(func.node):
            if isinstance(sub, ast.Attribute) and sub.attr in ("fit", "get_robustcov_results", "from_formula"):
                result = True
                break
            if isinstance(sub, ast.Name) and isinstance(sub.ctx, ast.Load):
                value = func.module.globals.get(sub.id)
                if value is None and func.scope is not None:
                    value = func.scope.locals.get(sub.id)
                if value is None:
                    continue
                for t in flat(value).tags:
                    if t[0] in _RESULT_TAGS or (t[0] == "q" and t[1] in cat.CONSTRUCTORS):
                        result = True
                        break
                    if t[0] == "func" and t[1] != func.key and self.fit_making(self.funcs[t[1]]):
                        result = True
                        break
                if result:
                    break
        self.fit_making_memo[func.key] = result
        return result

    def surface(self, value: V, callee_ctx: tuple[Loc, ...], site: Loc) -> None:
        for t in flat(value).tags:
            if t[0] == "fit":
                fit = self.fits.get(t[1])
                if fit is not None and fit.ctx[: len(callee_ctx)] == callee_ctx:
                    if not fit.via or fit.via[-1] != site:
                        fit.via.append(site)

    # --- models and fits -----------------------------------------------------------------------
    def make_models(self, q: str, ctor: cat.Constructor, args: list[V], kwargs: dict[str, V], node: ast.Call,
                    frame: _Frame) -> V:  # fmt: skip
        def arg(i: int, *names: str) -> tuple[V, ast.expr | None]:
            if i < len(args):
                return args[i], node.args[i] if i < len(node.args) else None
            for n in names:
                if n in kwargs:
                    kwnode = next((k.value for k in node.keywords if k.arg == n), None)
                    return kwargs[n], kwnode
            return EMPTY, None

        loc = self.loc(node, frame)
        variants: list[tuple] = []
        if ctor.api == "formula":
            fv, _ = arg(0, "formula")
            dv, dnode = arg(1, "data", "df")
            lits = sorted({t[1] for t in fv.of("lit") if isinstance(t[1], str)})[:MAX_VARIANTS]
            prefixes = sorted({t[1] for t in fv.of("prefix")})
            if lits:
                variants = [("lit", s) for s in lits]
            elif prefixes:
                variants = [("prefix", p) for p in prefixes[:MAX_VARIANTS]]
            else:
                variants = [("unknown", None)]
            data_values = [dv]
            data_name = _short(dnode) if dnode is not None else None
        else:
            yv, _ = arg(0, "endog")
            xv, _ = arg(1, "exog")
            dv = join(yv, xv)
            data_values = [yv, xv]
            variants = [("array", None)]
            data_name = None
        out: set[tuple] = set()
        for variant in variants:
            memo = (id(node), variant, frame.ctx, tuple(self.unroll))
            mid = self.model_memo.get(memo)
            if mid is None:
                mid = self._new_model(q, ctor, variant, data_values, data_name, loc, frame)
                self.model_memo[memo] = mid
            out.add(("model", mid))
        return V(frozenset(out))

    def _new_model(self, q: str, ctor: cat.Constructor, variant: tuple, data_values: list[V], data_name: str | None,
                   loc: Loc, frame: _Frame) -> int:  # fmt: skip
        mid = self._new_id()
        formula: Formula | None = None
        text: str | None = None
        outcome: Outcome | None = None
        n_reg: int | None = None
        regs: tuple[str, ...] | None = None
        aux: dict[str, set[int]] = {}
        all_data = flat(join_all(data_values))
        colv: dict[str, set[tuple]] = {}
        colnames: set[str] = set()
        for t in all_data.tags:
            if t[0] == "colv":
                colv.setdefault(t[1], set()).add(t[2])
            elif t[0] == "colname":
                colnames.add(t[1])
        time_reason = next((t[1] for t in sorted(all_data.of("timed"), key=str)), None)
        if variant[0] == "lit":
            text = variant[1]
            formula = parse_formula(text)
        elif variant[0] == "prefix":
            text = None
            lhs = variant[1].split("~", 1)[0] if "~" in variant[1] else None
            if lhs is not None and lhs.strip():
                try:
                    outcome = outcome_of_expr(ast.parse(lhs.strip(), mode="eval").body)
                except SyntaxError:
                    outcome = None
        columns: set[str] = set(colnames)
        if formula is not None:
            outcome = formula.outcome
            n_reg = formula.n_regressors
            regs = tuple(":".join(t) for t in formula.terms)
            columns |= formula.variables
            if formula.lagged and time_reason is None:
                time_reason = "the formula uses lags or differences"
            lhs_text = text.split("~", 1)[0] if text else ""
            for var in formula.variables:
                for part in colv.get(var, ()):
                    if part[0] != "part":
                        continue
                    on_left = re.search(rf"(?<![\w.]){re.escape(var)}(?!\w)", lhs_text) is not None
                    squared = _squared_in(text or "", var)
                    if not on_left and part[2] == "resid" and any(
                        p[0] == "part" and p[2] == "resid" and p[1] == part[1]
                        for v in formula.variables
                        if re.search(rf"(?<![\w.]){re.escape(v)}(?!\w)", lhs_text)
                        for p in colv.get(v, ())
                    ):
                        aux.setdefault("serial", set()).add(part[1])
                    elif on_left and (part[2] == "residsq" or (part[2] == "resid" and squared)):
                        aux.setdefault("variance", set()).add(part[1])
                    elif not on_left and (part[2] == "fittedpow" or (part[2] == "fitted" and squared)):
                        aux.setdefault("form", set()).add(part[1])
                    else:
                        aux.setdefault("other", set()).add(part[1])
        elif ctor.api == "array":
            yv, xv = data_values
            outs = {t[1] for t in flat(yv).of("outcome")}
            if len(outs) == 1:
                outcome = next(iter(outs))
            cols = {t[1] for t in flat(xv).of("cols")}
            if len(cols) == 1:
                regs = next(iter(cols))
                n_reg = len(regs)
                columns |= set(regs)
            if outcome is not None:
                columns.add(outcome.base)
            y_resid = {t[1] for t in flat(yv).of("part") if t[2] == "resid"}
            for t in flat(yv).tags:
                if t[0] == "part":
                    aux.setdefault("variance" if t[2] == "residsq" else "other", set()).add(t[1])
            for t in flat(xv).tags:
                if t[0] == "part":
                    if t[2] == "resid" and t[1] in y_resid:
                        family = "serial"  # residuals regressed on their own lags
                    else:
                        family = "form" if t[2] == "fittedpow" else "other"
                    aux.setdefault(family, set()).add(t[1])
        data_tags = frozenset(t for v in data_values for t in v.tags if t[0] == "data")
        model = _Model(
            mid, q, ctor.estimator, ctor.api, formula, text, outcome, n_reg, regs, data_name, time_reason,
            frozenset(columns), aux, data_tags, loc,
        )  # fmt: skip
        self.models[mid] = model
        for d in data_tags:
            self.data_models.setdefault(d, set()).add(mid)
        for family, fits in aux.items():
            label = _AUX_LABELS.get(family)
            if label is not None:
                for fid in fits:
                    self.checks[Check(fid, family, label, loc)] = None
        return mid

    def make_fits(self, mid: int, kwargs: dict[str, V], node: ast.Call, frame: _Frame) -> V:
        model = self.models[mid]
        cov = _cov_literal(kwargs.get("cov_type"))
        memo = (id(node), mid, frame.ctx, tuple(self.unroll))
        fid = self.fit_memo.get(memo)
        if fid is None:
            fid = self._new_fit(model, self.loc(node, frame), frame, cov, None)
            self.fit_memo[memo] = fid
        return tags(("fit", fid))

    def _new_fit(self, model: _Model, loc: Loc, frame: _Frame, cov: str | None, parent: int | None) -> int:
        fid = self._new_id()
        statement = None
        if self.stmt is not None and self.stmt_module is not None and self.stmt_module.path is None:
            statement = self.span(self.stmt, self.stmt_module)
        self.fits[fid] = _FitB(fid, model, loc, frame.ctx, cov, parent, None, statement, repeated=self.repeating > 0)
        self.model_fits.setdefault(model.id, []).append(fid)
        return fid

    def fit_method(self, fid: int, name: str, args: list[V], kwargs: dict[str, V], node: ast.Call,
                   frame: _Frame) -> V:  # fmt: skip
        if name == "get_robustcov_results":
            cov = _cov_literal(kwargs.get("cov_type", args[0] if args else None)) if (args or "cov_type" in kwargs) else "hc1"
            memo = (id(node), fid, frame.ctx, tuple(self.unroll))
            child = self.fit_memo.get(memo)
            if child is None:
                child = self._new_fit(self.fits[fid].model, self.loc(node, frame), frame, cov, fid)
                self.fit_memo[memo] = child
            return tags(("fit", child))
        if name in ("compare_f_test", "compare_lr_test", "compare_lm_test"):
            others = set().union(*(self.fits_in(a) for a in args)) if args else set()
            self.group_test(sorted({fid} | others), node, frame)
            loc = self.loc(node, frame)
            for other in others:
                self.uses[Use(other, "inference", name, loc)] = None
        elif name in ("f_test", "wald_test", "wald_test_terms", "t_test"):
            self.group_test([fid], node, frame)
        return tags(("data", ("call", id(node))))

    def group_test(self, fits: list[int], node: ast.AST, frame: _Frame) -> None:
        groups: set[str] = set()
        for fid in fits:
            f = self.fits.get(fid)
            if f is not None and f.model.formula is not None:
                groups |= f.model.formula.interacted_groups
        if groups:
            self.group_tests[GroupTest(tuple(sorted(fits)), frozenset(groups), self.loc(node, frame))] = None

    # --- results -------------------------------------------------------------------------------
    def _facts(self) -> FileFacts:
        fits: list[Fit] = []
        for b in self.fits.values():
            m = b.model
            site = b.via[-1] if b.via else b.fit_call
            model_span = m.loc.span if m.loc.path is None else None
            fits.append(
                Fit(
                    id=b.id,
                    site=site,
                    fit_call=b.fit_call,
                    via=tuple(b.via),
                    estimator=m.estimator,
                    api=m.api,
                    constructor=m.constructor,
                    formula=m.formula_text,
                    outcome=m.outcome,
                    n_regressors=m.n_regressors,
                    regressors=m.regressors,
                    cov_type=b.cov_type,
                    data_name=m.data_name,
                    time_reason=m.time_reason,
                    shift_groups=m.formula.shift_groups if m.formula else frozenset(),
                    interacted_groups=m.formula.interacted_groups if m.formula else frozenset(),
                    columns=m.columns,
                    auxiliary=bool(m.aux_for),
                    parent=b.parent,
                    result_name=b.result_name,
                    statement=b.statement,
                    model_span=model_span,
                )
            )
        return FileFacts(
            fits=tuple(fits),
            uses=tuple(self.uses),
            checks=tuple(self.checks),
            escapes=tuple(self.escapes),
            comparisons=tuple(self.comparisons),
            mismatches=tuple(self.mismatches),
            group_tests=tuple(self.group_tests),
            tsa_in_use=self.tsa_in_use,
            dependencies=tuple(sorted({src.path for src in self.sources.values()})),
        )


# --- small pure helpers --------------------------------------------------------------------------
_COMPOUND = (ast.If, ast.For, ast.AsyncFor, ast.While, ast.With, ast.AsyncWith, ast.Try, ast.FunctionDef,
             ast.AsyncFunctionDef, ast.ClassDef) + ((ast.Match,) if hasattr(ast, "Match") else ()) + (
             (ast.TryStar,) if hasattr(ast, "TryStar") else ())  # fmt: skip
_AUX_LABELS = {
    "form": "auxiliary regression on powers of fitted values",
    "variance": "auxiliary regression of squared residuals",
    "serial": "auxiliary regression of residuals on their lag",
}
_ARITH_KEEP = frozenset({"part", "mpart", "measure", "timed", "outcome", "ssrsum"})
_RESULT_TAGS = frozenset({"fit", "model", "part", "mpart", "measure"})
_INTERESTING = _RESULT_TAGS | {"func"}  # a callback may make or check fits
_NP_TRANSFORMS = {"log": "log", "log1p": "log1p", "log10": "log10", "log2": "log2", "sqrt": "sqrt", "exp": "exp",
                  "square": "square", "abs": "abs", "arcsinh": "asinh"}  # fmt: skip
_WELL_KNOWN = frozenset(
    {"numpy", "pandas", "scipy", "matplotlib", "seaborn", "sklearn", "linearmodels", "patsy", "IPython", "os",
     "sys", "pathlib", "json", "math", "re", "itertools", "functools", "collections", "operator", "typing",
     "warnings", "datetime", "random", "statistics", "csv", "pickle", "logging", "dataclasses", "abc"}
)  # fmt: skip


_EV: dict[type, Callable] = {}


def _ev_children(collector: Collector, node: ast.expr, frame: _Frame) -> V:
    return collector.ev_children(node, frame)


def _cp(lines: list[str], line: int, byte_col: int) -> int:
    """UTF-8 byte column (what ``ast`` gives) to a code-point column."""
    if line - 1 >= len(lines) or line < 1:
        return byte_col
    return code_point_col(lines[line - 1], byte_col)


def _dotted(node: ast.expr) -> str | None:
    parts: list[str] = []
    while isinstance(node, ast.Attribute):
        parts.append(node.attr)
        node = node.value
    if isinstance(node, ast.Name) and parts:
        parts.append(node.id)
        return ".".join(reversed(parts))
    return None


def _short(node: ast.AST | None, limit: int = 60) -> str:
    if node is None:
        return "?"
    try:
        text = ast.unparse(node)
    except Exception:  # unparse can fail on odd trees
        return "?"
    return text if len(text) <= limit else text[: limit - 1] + "…"


def _attr_name(node: ast.Call) -> str:
    f = node.func
    return f.attr if isinstance(f, ast.Attribute) else _short(f)


def _measures(v: V) -> set[tuple[int, str]]:
    return {(t[1], t[2]) for t in flat(v).of("measure") if t[2] in cat.COMPARED_MEASURES}


def _literal_strings(v: V) -> tuple[str, ...] | None:
    if v.items is None or not v.items:
        return None
    out = []
    for item in v.items:
        lits = [t[1] for t in item.of("lit") if isinstance(t[1], str)]
        if len(lits) != 1:
            return None
        out.append(lits[0])
    return tuple(out)


def _timed_of(args: Iterable[V], kwargs: dict[str, V], receiver: V | None) -> list[tuple]:
    out: list[tuple] = []
    for v in (*args, *kwargs.values(), *(() if receiver is None else (receiver,))):
        out.extend(v.of("timed"))
    return out[:2]


def _cov_literal(v: V | None) -> str | None:
    if v is None:
        return "nonrobust"
    lits = {t[1] for t in v.of("lit") if isinstance(t[1], str)}
    if len(lits) == 1:
        return next(iter(lits)).lower()
    return None


def _squared_in(text: str, var: str) -> bool:
    v = re.escape(var)
    return bool(re.search(rf"(?<![\w.]){v}\s*\*\*\s*[2-9]|power\(\s*{v}\s*,\s*[2-9]|square\(\s*{v}\s*\)", text))


def collect(
    tree: ast.Module,
    text: str,
    *,
    provider: ModuleProvider | None = None,
    helpers: dict[str, tuple[str, ...]] | None = None,
    module_key: str = "",
    parse: Callable[[str, str], ast.Module | None] | None = None,
    module_cache: dict | None = None,
) -> FileFacts:
    """Collect the facts of one parsed module. ``parse`` parses other project modules (None on failure)."""

    def default_parse(src: str, path: str) -> ast.Module | None:
        try:
            return ast.parse(src, filename=path)
        except (SyntaxError, ValueError, RecursionError):
            return None

    collector = Collector(provider or NoModules(), helpers or {}, module_key, parse or default_parse, module_cache)
    return collector.run(tree, text)
