"""Calls of the analysed code's own functions: followed into the callee with the arguments bound.

Part of the collector (see ``collect.py``): a call is followed when it is worth it (results or
callbacks passed in, a function that makes or checks fits, or one that gives data a time order or
is handed time-ordered data), memoised per calling context and argument values, and bounded by the
call depth (``MAX_CALL_DEPTH``) and recursion (a function already on the call stack).
"""

from __future__ import annotations

import ast

from regvet.analysis import tags, timeorder
from regvet.analysis.regressions import RESULT_KINDS
from regvet.analysis.state import CollectorState, Frame, FunctionRecord
from regvet.analysis.tags import Tag
from regvet.analysis.values import EMPTY, Value, container, flat, join_all, tagged

MAX_CALL_DEPTH = 6
#: Kinds that make a value worth following into a function it is passed to.
INTERESTING = RESULT_KINDS | {tags.FUNCTION}  # a callback may make or check fits
#: Kinds that make a value worth following for the time order a function's result keeps.
TIME_KINDS = frozenset({tags.TIMED, tags.DATE_COLUMN, tags.DATES})


class UserCalls(CollectorState):
    """Following calls into user functions (mixed into ``Collector``)."""

    def call_function(
        self,
        tag: Tag,
        args: list[Value],
        kwargs: dict[str, Value],
        node: ast.Call,
        frame: Frame,
        receiver: Value | None,
    ) -> Value | None:
        return self.call_user(self.funcs[tags.function_key(tag)], args, kwargs, node, frame)

    def call_user(
        self, func: FunctionRecord, args: list[Value], kwargs: dict[str, Value], node: ast.Call, frame: Frame
    ) -> Value:
        """Follow a call into a function of the analysed code, arguments bound (memoised per context)."""
        helper = self.helper_families(self._qualified_name(func))
        if helper is not None:
            for family in helper:
                self.credit(family, func.qualname, [*args, *kwargs.values()], node, frame)
        if func.key in self.call_stack or len(frame.ctx) >= MAX_CALL_DEPTH:
            self.escape_args(args, kwargs, func.qualname, node, frame)
            return tagged(tags.opaque_call(node))
        if not self.interesting(func, args, kwargs):
            return tagged(tags.opaque_call(node))
        site = self.loc(node, frame)
        memo_key = (
            func.key,
            id(node),
            frame.ctx,
            tuple(self.unroll),
            tuple(args),
            tuple(sorted(kwargs.items(), key=lambda kv: kv[0])),
        )
        if memo_key in self.inline_memo:
            return self.inline_memo[memo_key]
        func.analyzed = True
        callee = Frame(func.module, {}, func.scope, (*frame.ctx, site), func, cls_attrs=func.cls_attrs)
        self.bind_params(func, callee, args, kwargs, frame)
        self.call_stack.append(func.key)
        saved = self.stmt, self.stmt_module
        try:
            if isinstance(func.node, ast.Lambda):
                result = self.evaluate(func.node.body, callee)
            else:
                self.exec_block(func.node.body, callee)
                result = callee.returns
        finally:
            self.call_stack.pop()
            self.stmt, self.stmt_module = saved
        self.surface(result, callee.ctx, site)
        self.inline_memo[memo_key] = result
        return result

    def _qualified_name(self, func: FunctionRecord) -> str:
        return f"{func.module.key}.{func.qualname}" if func.module.key else func.qualname

    def bind_params(
        self, func: FunctionRecord, callee: Frame, args: list[Value], kwargs: dict[str, Value], frame: Frame
    ) -> None:
        params = func.node.args
        positional = [*params.posonlyargs, *params.args]
        defaults: list[ast.expr | None] = [None] * (len(positional) - len(params.defaults)) + list(params.defaults)
        for i, param in enumerate(positional):
            default = defaults[i]
            if i < len(args):
                value = args[i]
            elif param.arg in kwargs:
                value = kwargs[param.arg]
            elif default is not None:
                value = self.evaluate(default, frame if func.scope is None else func.scope)
            else:
                value = kwargs.get("**", EMPTY)
            callee.locals[param.arg] = value
        for param, kw_default in zip(params.kwonlyargs, params.kw_defaults, strict=False):
            if param.arg in kwargs:
                callee.locals[param.arg] = kwargs[param.arg]
            elif kw_default is not None:
                callee.locals[param.arg] = self.evaluate(kw_default, frame)
            else:
                callee.locals[param.arg] = EMPTY
        if params.vararg is not None:
            callee.locals[params.vararg.arg] = container(join_all(args[len(positional) :]))
        if params.kwarg is not None:
            names = {p.arg for p in (*positional, *params.kwonlyargs)}
            callee.locals[params.kwarg.arg] = container(join_all(v for k, v in kwargs.items() if k not in names))

    def interesting(self, func: FunctionRecord, args: list[Value], kwargs: dict[str, Value]) -> bool:
        """Is the call worth following: results passed in, or a function that makes or checks fits?"""
        for value in (*args, *kwargs.values()):
            if tags.has_any_kind(flat(value).tags, INTERESTING):
                return True
        if self.fit_making(func):
            return True
        # A helper that gives data a time order, or is handed time-ordered data, returns it.
        for value in (*args, *kwargs.values()):
            if tags.has_any_kind(flat(value).tags, TIME_KINDS):
                return True
        memo = self.time_making_memo.get(func.key)
        if memo is None:
            memo = self.time_making_memo[func.key] = timeorder.mentions_time_order(func.node)
        return memo
