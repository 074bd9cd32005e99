"""One pass over a module's syntax tree that turns code into :class:`~regvet.model.facts.FileFacts`.

The collector is a small abstract interpreter. It walks statements in order,
keeps an environment from names to abstract values (:mod:`regvet.analysis.values`)
and records events as it meets them: a model built, a fit made, a member of a
results object read, a diagnostic applied, fit measures compared, a result
handed to code regvet cannot read. Branches are joined, loops run until their
values settle (at most twice), calls to functions defined in the file or in the
project's own modules are followed into the callee with the arguments bound, so
that a fit made inside a function and returned is a fit at each call site.

This module is the interpreter core: statements, names, expressions, the dispatch of attribute
reads and calls, and user functions. An expression node reaches ``eval_<NodeType>`` (through
``_EVALUATORS``); ``.name`` read on a value and a call of a value go, tag by tag, to
``ATTRIBUTE_HANDLERS[kind]`` and ``CALL_HANDLERS[kind]``, most of them in ``libraries``
(builtins, numpy, pandas, containers), ``regressions`` (statsmodels) and ``modules`` (imports).
The tags are listed in :mod:`~regvet.analysis.tags`. This package is the only place where
``ast`` positions become :class:`Span` values; it does no I/O (project modules come from a
:class:`ModuleProvider` the caller supplies).
"""

from __future__ import annotations

import ast
import builtins
from collections.abc import Callable
from typing import Any, cast

from regvet.analysis import built, catalog, tags, timeorder
from regvet.analysis.built import BuiltFormulas
from regvet.analysis.calls import UserCalls
from regvet.analysis.folding import known_comparison
from regvet.analysis.libraries import (
    ARITHMETIC_KEEPS,
    LibrarySemantics,
    assigned_column_tags,
    subscript_tags,
    time_order_of,
)
from regvet.analysis.mentions import COMPOUND_STATEMENTS, touched_names
from regvet.analysis.modules import ModuleLoading, ModuleProvider, NoModules
from regvet.analysis.regressions import RegressionSemantics
from regvet.analysis.state import (
    Frame,
    FunctionRecord,
    ModuleCache,
    ModuleRecord,
    Node,
    Parser,
    dotted_name,
    short_text,
)
from regvet.analysis.tags import Tag
from regvet.analysis.uncalled import UncalledFunctions
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
from regvet.model.facts import FileFacts

MAX_UNROLL = 12  # loops over literal sequences this short run once per element
MAX_UNROLL_NESTING = 2

_BUILTIN_NAMES = frozenset(dir(builtins))
_TRY_STATEMENTS: tuple[type[ast.stmt], ...] = (ast.Try,) + ((ast.TryStar,) if hasattr(ast, "TryStar") else ())
_MATCH_STATEMENTS: tuple[type[ast.stmt], ...] = (ast.Match,) if hasattr(ast, "Match") else ()


class Collector(UserCalls, UncalledFunctions, RegressionSemantics, LibrarySemantics, ModuleLoading, BuiltFormulas):
    """Collects facts about one module. Use :func:`collect`."""

    # --- entry points ------------------------------------------------------------------------
    def run(self, tree: ast.Module, text: str) -> FileFacts:
        main = ModuleRecord(self.main_key, None, tree, text.split("\n"))
        self.modules[self.main_key] = main
        frame = Frame(main, main.globals, None, ())
        main.executed = True
        self.exec_block(tree.body, frame)
        self.analyse_uncalled(main)
        return self.build_facts()

    # --- statements --------------------------------------------------------------------------
    def exec_block(self, body: list[ast.stmt], frame: Frame) -> None:
        for stmt in body:
            self.exec_stmt(stmt, frame)

    def exec_stmt(self, stmt: ast.stmt, frame: Frame) -> None:
        if isinstance(stmt, COMPOUND_STATEMENTS):
            self._exec(stmt, frame)
            return
        outer, outer_mod = self.stmt, self.stmt_module
        self.stmt, self.stmt_module = stmt, frame.module
        try:
            self._exec(stmt, frame)
        finally:
            self.stmt, self.stmt_module = outer, outer_mod

    def _exec(self, stmt: ast.stmt, frame: Frame) -> None:
        if isinstance(stmt, ast.Expr):
            self.evaluate(stmt.value, frame)
        elif isinstance(stmt, ast.Assign):
            value = self.evaluate(stmt.value, frame)
            for target in stmt.targets:
                self.bind(target, value, frame)
        elif isinstance(stmt, ast.AnnAssign):
            if stmt.value is not None:
                self.bind(stmt.target, self.evaluate(stmt.value, frame), frame)
        elif isinstance(stmt, ast.AugAssign):
            value = self.evaluate(stmt.value, frame)
            current = self.evaluate(stmt.target, frame)
            self.bind(stmt.target, self.binary_operation(stmt.op, current, value, stmt, frame), frame)
        elif isinstance(stmt, (ast.Import, ast.ImportFrom)):
            self.import_names(stmt, frame)
        elif isinstance(stmt, (ast.FunctionDef, ast.AsyncFunctionDef)):
            for d in stmt.decorator_list:
                self.evaluate(d, frame)
            self.assign(frame, stmt.name, tagged(tags.function(self.define_function(stmt, frame).key)))
        elif isinstance(stmt, ast.ClassDef):
            self.define_class(stmt, frame)
        elif isinstance(stmt, ast.Return):
            if stmt.value is not None:
                frame.returns = join(frame.returns, self.evaluate(stmt.value, frame))
        elif isinstance(stmt, ast.If):
            self.evaluate(stmt.test, frame)
            truth = self.known_truth(stmt.test, frame)
            if truth is None:
                self.run_branches(stmt, [stmt.body, stmt.orelse], frame)
            else:
                self.exec_block(stmt.body if truth else stmt.orelse, frame)
        elif isinstance(stmt, (ast.For, ast.AsyncFor)):
            iterable = self.evaluate(stmt.iter, frame)
            steps = self.unrollable_steps(iterable)
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
                    self.run_loop(stmt, stmt.body, frame, lambda: self.bind(stmt.target, iterate(iterable), frame))
                finally:
                    self.repeating -= 1
            self.exec_block(stmt.orelse, frame)
        elif isinstance(stmt, ast.While):
            self.run_loop(stmt, stmt.body, frame, lambda: self.evaluate(stmt.test, frame))
            self.exec_block(stmt.orelse, frame)
        elif isinstance(stmt, (ast.With, ast.AsyncWith)):
            for with_item in stmt.items:
                value = self.evaluate(with_item.context_expr, frame)
                if with_item.optional_vars is not None:
                    self.bind(with_item.optional_vars, value, frame)
            self.exec_block(stmt.body, frame)
        elif isinstance(stmt, _TRY_STATEMENTS):
            try_stmt = cast(ast.Try, stmt)  # ast.TryStar (3.11+) has the same fields
            self.exec_block(try_stmt.body, frame)
            for handler in try_stmt.handlers:
                if handler.name:
                    self.assign(frame, handler.name, EMPTY)
                self.exec_block(handler.body, frame)
            self.exec_block(try_stmt.orelse, frame)
            self.exec_block(try_stmt.finalbody, frame)
        elif isinstance(stmt, _MATCH_STATEMENTS):
            match_stmt = cast(ast.Match, stmt)
            self.evaluate(match_stmt.subject, frame)
            self.run_branches(stmt, [c.body for c in match_stmt.cases], frame, exhaustive=False)
        elif isinstance(stmt, ast.Global):
            frame.declared_global.update(stmt.names)
        elif isinstance(stmt, ast.Nonlocal):
            frame.declared_nonlocal.update(stmt.names)
        elif isinstance(stmt, ast.Delete):
            for target in stmt.targets:
                if not isinstance(target, ast.Name):
                    self.evaluate(target, frame)
        elif isinstance(stmt, (ast.Raise, ast.Assert)):
            for child in ast.iter_child_nodes(stmt):
                if isinstance(child, ast.expr):
                    self.evaluate(child, frame)

    def known_truth(self, test: ast.expr, frame: Frame) -> bool | None:
        """The outcome of an ``if`` test comparing names and constants whose values are single literals
        (a loop unrolled over literals), else None: then both branches run."""
        if not isinstance(test, ast.Compare) or len(test.ops) != 1:
            return None
        sides = (test.left, test.comparators[0])
        if not all(isinstance(n, (ast.Name, ast.Constant)) for n in sides):
            return None
        return known_comparison(test.ops[0], self.evaluate(sides[0], frame), self.evaluate(sides[1], frame))

    def touched(self, stmt: ast.stmt) -> frozenset[str]:
        """Every name (and dotted attribute path) a compound statement mentions: all it can rebind.

        Branches and loops save and join only these, instead of copying the whole environment
        (module-level scripts have thousands of names). Callees that change globals are joined
        with a little less precision, never lost. The compound statements nested inside get their
        own sets on the way (each node is read once, however deep the nesting).
        """
        cached = self.touched_memo.get(id(stmt))
        if cached is not None:
            return cached
        return touched_names(stmt, self.touched_memo)

    def run_branches(self, stmt: ast.stmt, bodies: list[list[ast.stmt]], frame: Frame, exhaustive: bool = True) -> None:
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
        merged: dict[str, Value] = {}
        for result in results:
            for name, value in result.items():
                merged[name] = join(merged.get(name), value)
        env.update(merged)

    def unrollable_steps(self, iterable: Value) -> tuple[Value, ...] | None:
        """The elements to run a loop body once each with, when the sequence is short and known."""
        steps = positions(iterable)
        if steps is None or not 1 <= len(steps) <= MAX_UNROLL or len(self.unroll) >= MAX_UNROLL_NESTING:
            return None
        return steps

    def run_loop(self, stmt: ast.stmt, body: list[ast.stmt], frame: Frame, head: Callable[[], object]) -> None:
        """Run a loop body until the names it touches settle (at most twice); it may also run zero times."""
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
    def lookup(self, name: str, frame: Frame) -> Value:
        f: Frame | None = frame
        if name not in frame.declared_global:
            while f is not None:
                if name in f.locals:
                    value = f.locals[name]
                    if tags.has_kind(value.tags, tags.LAZY_IMPORT):
                        value = f.locals[name] = self.resolve_lazy(value)
                    return value
                f = f.parent
        module_globals = frame.module.globals
        if name in module_globals:
            value = module_globals[name]
            if tags.has_kind(value.tags, tags.LAZY_IMPORT):
                value = module_globals[name] = self.resolve_lazy(value)
            return value
        if name in _BUILTIN_NAMES:
            return tagged(tags.qualified("builtins." + name))
        return EMPTY

    def assign(self, frame: Frame, name: str, value: Value) -> None:
        """Bind ``name`` in ``frame``: in the module's globals when declared ``global`` there (a fit so
        bound inside a function is the module's, used after the call like any other), in the
        enclosing function's frame when declared ``nonlocal``."""
        if name in frame.declared_global:
            frame.module.globals[name] = value
            return
        if name in frame.declared_nonlocal:
            f = frame.parent
            while f is not None and not f.is_module:
                if name in f.locals:
                    f.locals[name] = value
                    return
                f = f.parent
        frame.locals[name] = value

    def join_into(self, frame: Frame, name: str, value: Value) -> None:
        """Add ``value`` to what ``name`` holds, wherever it is bound (containers growing)."""
        f: Frame | None = frame
        while f is not None:
            if name in f.locals:
                f.locals[name] = join(f.locals[name], value)
                return
            f = f.parent
        if name in frame.module.globals:
            frame.module.globals[name] = join(frame.module.globals[name], value)
        else:
            frame.locals[name] = value

    def bind(self, target: ast.expr, value: Value, frame: Frame) -> None:
        """An assignment to ``target``: names, unpacking, attributes and subscripts (containers grow)."""
        if isinstance(target, ast.Name):
            self.assign(frame, target.id, value)
            self.note_result_name(target.id, value)
        elif isinstance(target, (ast.Tuple, ast.List)):
            elts = target.elts
            starred = [i for i, e in enumerate(elts) if isinstance(e, ast.Starred)]
            if value.items is not None and not starred and len(value.items) == len(elts):
                for e, item in zip(elts, value.items, strict=False):
                    self.bind(e, item, frame)
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
            key = dotted_name(target)
            if key is not None:
                if key.startswith("self.") and frame.cls_attrs is not None:
                    frame.cls_attrs[key] = join(frame.cls_attrs.get(key), value)
                else:
                    self.assign(frame, key, value)
            base = target.value
            timed = value.tags_of(tags.TIMED)
            if target.attr == "index" and isinstance(base, ast.Name):  # ``df.index = pd.to_datetime(...)``
                timed = timeorder.index_order(value, None, short_text(target, 40) + " = ...", self.loc(target, frame))
            if isinstance(base, ast.Name) and timed:
                self.join_into(frame, base.id, Value(frozenset(timed)))
            elif not isinstance(base, ast.Name):
                self.evaluate(base, frame)
        elif isinstance(target, ast.Subscript):
            self._bind_subscript(target, value, frame)

    def _bind_subscript(self, target: ast.Subscript, value: Value, frame: Frame) -> None:
        index = self.evaluate(target.slice, frame)
        base = target.value
        if not isinstance(base, ast.Name):
            self.evaluate(base, frame)
            return
        current = self.lookup(base.id, frame)
        key_lits = tags.literal_values(index.tags)
        if current.keys is not None and current.items is not None and len(key_lits) == 1 and len(index.tags) == 1:
            pairs = [(p.items[0], p.items[1]) for p in current.items if p.items and len(p.items) == 2]
            pairs = [(k, v) for k, v in pairs if k.tags != index.tags] + [(index, value)]
            self.assign(frame, base.id, mapping(pairs))
            return
        grown = container(value, index)
        self.join_into(frame, base.id, grown.with_tags(assigned_column_tags(value, index)))

    # --- definitions ---------------------------------------------------------------------------
    def define_function(
        self, node: ast.FunctionDef | ast.AsyncFunctionDef | ast.Lambda, frame: Frame
    ) -> FunctionRecord:
        existing = self.func_by_node.get(id(node))
        if existing is not None and existing.scope is (None if frame.is_module else frame):
            return existing
        name = getattr(node, "name", "<lambda>")
        prefix = frame.func.qualname + "." if frame.func is not None else ""
        func = FunctionRecord(
            self.new_id(), node, frame.module, None if frame.is_module else frame, prefix + name, frame.cls_attrs
        )
        self.funcs[func.key] = func
        self.func_by_node[id(node)] = func
        return func

    def define_class(self, node: ast.ClassDef, frame: Frame) -> None:
        for expr in (*node.bases, *node.decorator_list):
            self.evaluate(expr, frame)
        shared: dict[str, Value] = {}
        inner = Frame(frame.module, {}, None if frame.is_module else frame, frame.ctx, cls_attrs=shared)
        for stmt in node.body:
            if isinstance(stmt, (ast.FunctionDef, ast.AsyncFunctionDef)):
                func = self.define_function(stmt, inner)
                func.qualname = node.name + "." + stmt.name
                func.cls_attrs = shared
                func.scope = None if frame.is_module else frame
                inner.locals[stmt.name] = tagged(tags.function(func.key))
            else:
                self.exec_stmt(stmt, inner)
        self.assign(frame, node.name, tagged(tags.opaque_class(node)))

    # --- expressions ---------------------------------------------------------------------------
    def evaluate(self, node: ast.expr | None, frame: Frame) -> Value:
        """The value of an expression (recording the events inside it)."""
        if node is None:
            return EMPTY
        method = _EVALUATORS.get(type(node))
        if method is None:
            name = "eval_" + type(node).__name__
            method = _EVALUATORS[type(node)] = getattr(Collector, name, Collector.eval_children)
        return method(self, node, frame)

    def eval_children(self, node: ast.expr, frame: Frame) -> Value:
        """Any other expression: evaluate its parts (for the uses inside), keep what flows out."""
        out = EMPTY
        for child in ast.iter_child_nodes(node):
            if isinstance(child, ast.expr):
                out = join(out, self.evaluate(child, frame))
        return flat(out) if out else EMPTY

    def eval_Constant(self, node: ast.Constant, frame: Frame) -> Value:
        value = node.value
        kind = type(value)
        if kind is str or kind is int or kind is float:
            known = _LITERALS.get((kind, value))
            if known is not None:
                return known
        if isinstance(value, str) and len(value) <= 4000:
            return _literal_value(kind, value)
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            return _literal_value(kind, value)
        return EMPTY

    def eval_JoinedStr(self, node: ast.JoinedStr, frame: Frame) -> Value:
        """An f-string: a literal when every placeholder holds literals, else its known start (``built``)."""
        parts: list[tuple[str | None, Value | None, int]] = []
        for part in node.values:
            if isinstance(part, ast.Constant) and isinstance(part.value, str):
                parts.append((part.value, None, -1))
            elif isinstance(part, ast.FormattedValue):
                value = self.evaluate(part.value, frame)
                if part.format_spec is not None:
                    self.evaluate(part.format_spec, frame)
                parts.append((None, None if part.format_spec is not None else value, part.conversion))
            else:
                parts.append((None, self.evaluate(part, frame), -1))
        return built.fstring(parts) or EMPTY

    def eval_Name(self, node: ast.Name, frame: Frame) -> Value:
        return self.lookup(node.id, frame)

    def eval_Attribute(self, node: ast.Attribute, frame: Frame) -> Value:
        key = dotted_name(node)
        if key is not None:
            if key.startswith("self.") and frame.cls_attrs is not None and key in frame.cls_attrs:
                return frame.cls_attrs[key]
            f: Frame | None = frame
            while f is not None:
                if key in f.locals:
                    return f.locals[key]
                f = f.parent
        base = self.evaluate(node.value, frame)
        return self.attribute(base, node.attr, node, frame)

    def attribute(self, base: Value, name: str, node: Node, frame: Frame) -> Value:
        """``base.name``: each tag of ``base`` goes to its kind's handler in ``ATTRIBUTE_HANDLERS``.

        A handler adds the tags of the result to ``out``; one that returns a value ends the read
        with it (a project module's member is whatever the module binds).
        """
        out: set[Tag] = set()
        for tag in base.tags:
            handler = ATTRIBUTE_HANDLERS.get(tags.kind(tag))
            if handler is not None:
                ended = handler(self, tag, name, node, frame, out)
                if ended is not None:
                    return join(Value(frozenset(out)), ended)
        if base.elem is not None or base.keys is not None:
            self.container_attribute(base, name, out)
        return Value(frozenset(out)) if out else EMPTY

    def eval_Subscript(self, node: ast.Subscript, frame: Frame) -> Value:
        base = self.evaluate(node.value, frame)
        index = self.evaluate(node.slice, frame)
        out = EMPTY
        lits = tags.literal_values(index.tags)
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
        extra = subscript_tags(base, index, node)
        if extra:
            out = out.with_tags(extra)
        return out

    def eval_Slice(self, node: ast.Slice, frame: Frame) -> Value:
        for part in (node.lower, node.upper, node.step):
            self.evaluate(part, frame)
        return EMPTY

    def eval_Tuple(self, node: ast.Tuple | ast.List, frame: Frame) -> Value:
        values: list[Value] = []
        star = False
        for e in node.elts:
            if isinstance(e, ast.Starred):
                star = True
                values.append(elements(self.evaluate(e.value, frame)))
            else:
                values.append(self.evaluate(e, frame))
        if star:
            return container(join_all(values))
        return sequence(tuple(values))

    eval_List = eval_Tuple

    def eval_Set(self, node: ast.Set, frame: Frame) -> Value:
        return container(join_all(self.evaluate(e, frame) for e in node.elts))

    def eval_Dict(self, node: ast.Dict, frame: Frame) -> Value:
        pairs: list[tuple[Value, Value]] = []
        splat = EMPTY
        for k, v in zip(node.keys, node.values, strict=False):
            value = self.evaluate(v, frame)
            if k is None:  # **splat: its pairs are not known one by one
                splat = join(splat, value)
            else:
                pairs.append((self.evaluate(k, frame), value))
        literal_keys = all(len(k.tags) == 1 and k.has(tags.LITERAL) and not k.elem for k, _ in pairs)
        if not splat and literal_keys:
            return mapping(pairs)
        keys = join(join_all(k for k, _ in pairs), splat.keys)
        vals = join(join_all(v for _, v in pairs), elements(splat))
        return container(vals, keys if keys else EMPTY)

    def _comprehension(
        self, node: ast.expr, generators: list[ast.comprehension], frame: Frame, body: Callable[[Frame], Value]
    ) -> tuple[Value, tuple[Value, ...] | None]:
        """The join of what ``body`` gives, and one value per element when the loop could be unrolled."""
        inner = Frame(frame.module, {}, frame, frame.ctx, frame.func, cls_attrs=frame.cls_attrs)
        first = self.evaluate(generators[0].iter, frame)
        steps = self.unrollable_steps(first) if len(generators) == 1 and not generators[0].ifs else None
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
                iterated = first if n == 0 else self.evaluate(gen.iter, inner)
                self.bind(gen.target, iterate(iterated), inner)
                for cond in gen.ifs:
                    self.evaluate(cond, inner)
            return body(inner), None
        finally:
            self.repeating -= 1

    def eval_ListComp(self, node: ast.ListComp | ast.SetComp | ast.GeneratorExp, frame: Frame) -> Value:
        joined, each = self._comprehension(node, node.generators, frame, lambda f: self.evaluate(node.elt, f))
        return container(joined, None, each)

    eval_SetComp = eval_ListComp
    eval_GeneratorExp = eval_ListComp

    def eval_DictComp(self, node: ast.DictComp, frame: Frame) -> Value:
        pair: list[Value] = []

        def body(f: Frame) -> Value:
            pair.append(self.evaluate(node.key, f))
            return self.evaluate(node.value, f)

        vals, _ = self._comprehension(node, node.generators, frame, body)
        return container(vals, join_all(pair) if pair else EMPTY)

    def eval_NamedExpr(self, node: ast.NamedExpr, frame: Frame) -> Value:
        value = self.evaluate(node.value, frame)
        self.bind(node.target, value, frame)
        return value

    def eval_Lambda(self, node: ast.Lambda, frame: Frame) -> Value:
        func = self.define_function(node, frame)
        func.analyzed = True
        return tagged(tags.function(func.key))

    def eval_IfExp(self, node: ast.IfExp, frame: Frame) -> Value:
        self.evaluate(node.test, frame)
        return join(self.evaluate(node.body, frame), self.evaluate(node.orelse, frame))

    def eval_BoolOp(self, node: ast.BoolOp, frame: Frame) -> Value:
        return join_all(self.evaluate(v, frame) for v in node.values)

    def eval_UnaryOp(self, node: ast.UnaryOp, frame: Frame) -> Value:
        value = self.evaluate(node.operand, frame)
        return Value(tags.only_kinds(value.tags, ARITHMETIC_KEEPS))

    def eval_Await(self, node: ast.Await, frame: Frame) -> Value:
        return self.evaluate(node.value, frame)

    def eval_Yield(self, node: ast.Yield | ast.YieldFrom, frame: Frame) -> Value:
        value = self.evaluate(node.value, frame)
        frame.returns = join(frame.returns, container(value if isinstance(node, ast.Yield) else elements(value)))
        return EMPTY

    eval_YieldFrom = eval_Yield

    def eval_Starred(self, node: ast.Starred, frame: Frame) -> Value:
        return self.evaluate(node.value, frame)

    def eval_Compare(self, node: ast.Compare, frame: Frame) -> Value:
        operands = [self.evaluate(node.left, frame)] + [self.evaluate(c, frame) for c in node.comparators]
        self.compare_measures(operands, node, frame, "compare")
        return EMPTY

    def eval_BinOp(self, node: ast.BinOp, frame: Frame) -> Value:
        # Left-nested chains (a + b + c + ...) are walked iteratively: long ones exist.
        chain = [node]
        leftmost = node.left
        while isinstance(leftmost, ast.BinOp):
            chain.append(leftmost)
            leftmost = leftmost.left
        value = self.evaluate(leftmost, frame)
        for op_node in reversed(chain):
            right = self.evaluate(op_node.right, frame)
            value = self.binary_operation(op_node.op, value, right, op_node, frame)
        return value

    # --- calls ---------------------------------------------------------------------------------
    def eval_Call(self, node: ast.Call, frame: Frame) -> Value:
        func_node = node.func
        receiver: Value | None = None
        if isinstance(func_node, ast.Attribute):
            receiver = self.evaluate(func_node.value, frame)
            grown = self.grow_container(func_node, receiver, node, frame)
            if grown is not None:
                return grown
            callee = self.attribute(receiver, func_node.attr, func_node, frame)
            key = dotted_name(func_node)
            if key is not None:
                found = self.lookup(key, frame) if "." in key else EMPTY
                if found:
                    callee = join(callee, found)
        else:
            callee = self.evaluate(func_node, frame)
        args = [self.evaluate(a, frame) for a in node.args]
        kwargs: dict[str, Value] = {}
        for kw in node.keywords:
            value = self.evaluate(kw.value, frame)
            if kw.arg is None:
                kwargs.setdefault("**", EMPTY)
                kwargs["**"] = join(kwargs["**"], value)
            else:
                kwargs[kw.arg] = value
        return self.call(callee, args, kwargs, node, frame, receiver)

    def call(
        self,
        callee: Value,
        args: list[Value],
        kwargs: dict[str, Value],
        node: ast.Call,
        frame: Frame,
        receiver: Value | None,
    ) -> Value:
        """Call ``callee``: each of its tags goes to its kind's handler in ``CALL_HANDLERS``.

        A handler returns the call's value, or None when it does not take the call. When none
        takes it, the call is opaque: its result is data and the fits passed to it escape.
        """
        out = EMPTY
        handled = False
        for tag in callee.tags:
            handler = CALL_HANDLERS.get(tags.kind(tag))
            if handler is None:
                continue
            result = handler(self, tag, args, kwargs, node, frame, receiver)
            if result is not None:
                handled = True
                out = join(out, result)
        if not handled:
            self.escape_args(args, kwargs, node.func, node, frame)
            out = tagged(tags.opaque_call(node), *time_order_of(args, kwargs, receiver))
        return out

    def call_qualified(
        self,
        tag: Tag,
        args: list[Value],
        kwargs: dict[str, Value],
        node: ast.Call,
        frame: Frame,
        receiver: Value | None,
    ) -> Value | None:
        """A call of a library name: statsmodels' constructors, diagnostics and tables first, then
        builtins, numpy and pandas, then any other statsmodels callable (None: not taken)."""
        qualname = catalog.canonical(tags.qualname(tag))
        result = self.call_statsmodels_name(qualname, args, kwargs, node, frame)
        if result is None:
            result = self.call_library_name(qualname, args, kwargs, node, frame)
        if result is None:
            result = self.call_other_statsmodels_name(qualname, args, kwargs, node, frame)
        return result


#: The value of each literal met (values are immutable, the same literal recurs constantly); bounded.
_LITERALS: dict[tuple[type, object], Value] = {}
_MAX_LITERALS = 50_000


def _literal_value(kind: type, value: object) -> Value:
    out = tagged(tags.literal(value))
    if kind is str or kind is int or kind is float:
        if len(_LITERALS) >= _MAX_LITERALS:
            _LITERALS.clear()
        _LITERALS[(kind, value)] = out
    return out


# --- dispatch tables -------------------------------------------------------------------------------
#: ``attribute`` handlers by tag kind: ``(collector, tag, name, node, frame, out) -> Value | None``.
AttributeHandler = Callable[[Collector, Tag, str, Node, Frame, set[Tag]], Value | None]
ATTRIBUTE_HANDLERS: dict[str, AttributeHandler] = {
    tags.QUALIFIED: Collector.attribute_of_qualified,
    tags.PROJECT_MODULE: Collector.attribute_of_project_module,
    tags.FIT: Collector.attribute_of_fit,
    tags.MODEL: Collector.attribute_of_model,
    tags.PART: Collector.attribute_of_result_part,
    tags.MODEL_PART: Collector.attribute_of_model_part,
    tags.DATA: Collector.attribute_of_data,
    tags.OUTCOME: Collector.attribute_of_columns,
    tags.COLUMNS: Collector.attribute_of_columns,
    tags.TIMED: Collector.attribute_of_timed,
    tags.DATE_COLUMN: Collector.attribute_of_frame_column,
    tags.CATEGORY_COLUMN: Collector.attribute_of_frame_column,
    tags.LITERAL: Collector.attribute_of_literal,
}
#: ``call`` handlers by tag kind: ``(collector, tag, args, kwargs, node, frame, receiver) -> Value | None``.
CallHandler = Callable[[Collector, Tag, list[Value], dict[str, Value], ast.Call, Frame, Value | None], Value | None]
CALL_HANDLERS: dict[str, CallHandler] = {
    tags.QUALIFIED: Collector.call_qualified,
    tags.FUNCTION: Collector.call_function,
    tags.MODEL_FIT: Collector.call_model_fit,
    tags.FIT_METHOD: Collector.call_fit_method,
    tags.PASSING_METHOD: Collector.call_passing_method,
    tags.TIME_METHOD: Collector.call_time_method,
    tags.DATA_METHOD: Collector.call_data_method,
    tags.CONTAINER_METHOD: Collector.call_container_method,
    tags.GETTER: Collector.call_getter,
    tags.STRING_METHOD: Collector.call_string_method,
}
#: ``eval_<NodeType>`` by node type, filled on first use.
_EVALUATORS: dict[type, Callable[[Collector, Any, Frame], Value]] = {}


def collect(
    tree: ast.Module,
    text: str,
    *,
    provider: ModuleProvider | None = None,
    helpers: dict[str, tuple[str, ...]] | None = None,
    module_key: str = "",
    parse: Parser | None = None,
    module_cache: ModuleCache | None = None,
) -> FileFacts:
    """Collect the facts of one parsed module. ``parse`` parses other project modules (None on failure)."""

    def default_parse(src: str, path: str) -> ast.Module | None:
        try:
            return ast.parse(src, filename=path)
        except (SyntaxError, ValueError, RecursionError):
            return None

    collector = Collector(provider or NoModules(), helpers or {}, module_key, parse or default_parse, module_cache)
    return collector.run(tree, text)
