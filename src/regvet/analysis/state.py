"""The fact collector's records and shared state.

:class:`CollectorState` holds everything one analysis accumulates (modules, functions, models,
fits and the events recorded about them) and the few helpers every part of the collector uses.
The collector is assembled from it in :mod:`regvet.analysis.collect`:

``Collector(RegressionSemantics, LibrarySemantics, ModuleLoading)``, each a ``CollectorState``:
``regressions`` (statsmodels), ``libraries`` (builtins, numpy, pandas, containers), ``modules``
(imports and project modules), and the interpreter core in ``collect`` itself. The methods one
part calls on another are declared at the end of :class:`CollectorState` for the type checker.
"""

from __future__ import annotations

import ast
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from regvet.analysis import tags
from regvet.analysis.formula import Formula
from regvet.analysis.providers import ModuleProvider, ModuleSource
from regvet.analysis.values import EMPTY, Value, flat
from regvet.model.facts import Check, Comparison, Escape, GroupTest, Loc, Mismatch, Outcome, Use
from regvet.model.span import Span, code_point_col

#: Parses a project module's text (``text, path``); None when it cannot be parsed.
Parser = Callable[[str, str], "ast.Module | None"]
#: Parsed project modules kept across analyses, by ``(path, text)``.
ModuleCache = dict[tuple[str, str], ast.Module]
#: A node whose position the collector records (an expression, or a statement such as ``x += y``).
Node = ast.expr | ast.stmt


class OverBudget(BaseException):
    """The analysis ran past its deadline (``CollectorState.tick``).

    A ``BaseException``, like ``KeyboardInterrupt``, so that no ``except Exception`` inside the
    collector (a provider's failure, an odd tree) stops it on the way out to the engine.
    """


#: Statements between two looks at the clock.
_TICKS = 256


# --- records -------------------------------------------------------------------------------------
@dataclass(eq=False)
class ModuleRecord:
    """A module being analysed: the analysed file (``path`` None) or a project module."""

    key: str
    path: str | None  # None: the analysed file
    tree: ast.Module
    lines: list[str]
    globals: dict[str, Value] = field(default_factory=dict)
    executed: bool = False


@dataclass(eq=False)
class FunctionRecord:
    """A function or lambda defined in analysed code (a FUNCTION tag names it by ``key``)."""

    key: int
    node: ast.FunctionDef | ast.AsyncFunctionDef | ast.Lambda
    module: ModuleRecord
    scope: Frame | None  # the enclosing function's frame (None: module level)
    qualname: str
    cls_attrs: dict[str, Value] | None = None
    analyzed: bool = False


@dataclass(eq=False)
class Frame:
    """One activation: a module's top level, a function call, a class body or a comprehension."""

    module: ModuleRecord
    locals: dict[str, Value]
    parent: Frame | None
    ctx: tuple[Loc, ...]  # the call sites that led here, outermost first
    func: FunctionRecord | None = None
    returns: Value = EMPTY
    declared_global: set[str] = field(default_factory=set)  # names a ``global`` statement declares
    declared_nonlocal: set[str] = field(default_factory=set)  # names a ``nonlocal`` statement declares
    cls_attrs: dict[str, Value] | None = None  # attributes of ``self`` shared by a class's methods

    @property
    def is_module(self) -> bool:
        return self.func is None and self.parent is None


@dataclass(eq=False)
class ModelRecord:
    """An OLS/WLS model built by one constructor call in one context (a MODEL tag names it by ``id``)."""

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
    time_where: Loc | None
    categorical_columns: frozenset[str]  # columns of its data that hold categories (pd.Categorical)
    columns: frozenset[str]
    aux_for: dict[str, set[int]]  # family ("form", "variance", "serial", "other") -> fits it is auxiliary to
    data_tags: frozenset[tags.Tag]
    loc: Loc
    #: What makes two models the same specification on the same data (estimator, formula or arrays,
    #: the data's values, the other arguments, the calling context and loop step); None when unknown.
    spec: tuple | None = None


@dataclass(eq=False)
class FitRecord:
    """A results object being collected (a FIT tag names it by ``id``); becomes a :class:`Fit`."""

    id: int
    model: ModelRecord
    fit_call: Loc
    ctx: tuple[Loc, ...]
    cov_type: str | None
    parent: int | None
    result_name: str | None
    statement: Span | None
    via: list[Loc] = field(default_factory=list)
    repeated: bool = False  # made in a loop that was not unrolled: one abstract fit for many


# --- shared state ----------------------------------------------------------------------------------
class CollectorState:
    """Everything one analysis accumulates, and the helpers all parts of the collector share."""

    def __init__(
        self,
        provider: ModuleProvider,
        helpers: dict[str, tuple[str, ...]],
        main_key: str,
        parse: Parser,
        module_cache: ModuleCache | None = None,
    ) -> None:
        self.provider = provider
        self.helpers = helpers  # user-named diagnostic helpers -> the check families they run
        self.main_key = main_key
        self.parse_module = parse
        self.module_cache: ModuleCache = module_cache if module_cache is not None else {}
        # modules
        self.modules: dict[str, ModuleRecord | None] = {}
        self.sources: dict[str, ModuleSource] = {}
        self.found: dict[tuple[str, int, str | None], ModuleSource | None] = {}
        self.loading: set[str] = set()
        self.resolving: set[tuple[str, str]] = set()
        # functions
        self.funcs: dict[int, FunctionRecord] = {}
        self.func_by_node: dict[int, FunctionRecord] = {}
        # models and fits
        self.models: dict[int, ModelRecord] = {}
        self.model_memo: dict[tuple[object, ...], int] = {}
        self.model_fits: dict[int, list[int]] = {}
        self.data_models: dict[tags.Tag, set[int]] = {}  # DATA tag -> models built on that data
        self.fits: dict[int, FitRecord] = {}
        self.fit_memo: dict[tuple[object, ...], int] = {}
        # events (dicts as ordered sets)
        self.uses: dict[Use, None] = {}
        self.checks: dict[Check, None] = {}
        self.escapes: dict[Escape, None] = {}
        self.comparisons: dict[Comparison, None] = {}
        self.mismatches: dict[Mismatch, None] = {}
        self.group_tests: dict[GroupTest, None] = {}
        self.tsa_in_use = False
        # the walk
        self.call_stack: list[int] = []
        self.unroll: list[tuple[int, int]] = []  # (loop node, step) of the loops being unrolled
        self.repeating = 0  # inside a loop or comprehension that is not unrolled
        self.inline_memo: dict[tuple[object, ...], Value] = {}
        self.fit_making_memo: dict[int, bool] = {}
        self.time_making_memo: dict[int, bool] = {}
        self.touched_memo: dict[int, frozenset[str]] = {}
        self.quiet_memo: dict[int, tuple[frozenset[str], frozenset[str], frozenset[str], frozenset[str]] | None] = {}
        self.stmt: ast.stmt | None = None  # the simple statement being run
        self.stmt_module: ModuleRecord | None = None
        self._ids = 0
        #: ``time.monotonic()`` after which the analysis stops (None: no budget).
        self.deadline: float | None = None
        self._ticks = 0

    def tick(self) -> None:
        """Count one statement run; every few hundred, raise :class:`OverBudget` past the deadline."""
        self._ticks += 1
        if self._ticks % _TICKS == 0 and self.deadline is not None and time.monotonic() > self.deadline:
            raise OverBudget

    def new_id(self) -> int:
        """A fresh id for a function, model or fit (one counter: ids never collide)."""
        self._ids += 1
        return self._ids

    def span(self, node: Node, module: ModuleRecord) -> Span:
        lines = module.lines
        line = node.lineno
        end_line = node.end_lineno or line
        col = _code_point_column(lines, line, node.col_offset)
        end_col = _code_point_column(lines, end_line, node.end_col_offset or node.col_offset)
        return Span(line, col, end_line, end_col)

    def loc(self, node: Node, frame: Frame) -> Loc:
        return Loc(self.span(node, frame.module), frame.module.path)

    def fits_in(self, value: Value) -> set[int]:
        """The fits anywhere in ``value`` (elements included)."""
        return tags.fit_ids(flat(value).tags)

    if TYPE_CHECKING:  # implemented by the parts of the collector (see the module docstring)
        # collect
        def exec_block(self, body: list[ast.stmt], frame: Frame) -> None: ...
        def evaluate(self, node: ast.expr | None, frame: Frame) -> Value: ...
        def attribute(self, base: Value, name: str, node: Node, frame: Frame) -> Value: ...
        def call(
            self,
            callee: Value,
            args: list[Value],
            kwargs: dict[str, Value],
            node: ast.Call,
            frame: Frame,
            receiver: Value | None,
        ) -> Value: ...
        def assign(self, frame: Frame, name: str, value: Value) -> None: ...
        def join_into(self, frame: Frame, name: str, value: Value) -> None: ...
        def _qualified_name(self, func: FunctionRecord) -> str: ...
        # regressions
        def escape_args(
            self, args: list[Value], kwargs: dict[str, Value], name: str | ast.expr, node: ast.expr, frame: Frame
        ) -> None: ...
        def helper_families(self, qualname: str) -> tuple[str, ...] | None: ...
        def surface(self, value: Value, callee_ctx: tuple[Loc, ...], site: Loc) -> None: ...
        def fit_making(self, func: FunctionRecord) -> bool: ...
        def credit(self, family: str, function: str, args: list[Value], node: ast.expr, frame: Frame) -> None: ...
        def compare_measures(self, values: list[Value], node: Node, frame: Frame, how: str) -> bool: ...
        # built
        def string_operation(self, op: ast.operator, left: Value, right: Value) -> Value | None: ...
        def design_matrices(self, args: list[Value], kwargs: dict[str, Value]) -> Value: ...


def _code_point_column(lines: list[str], line: int, byte_col: int) -> int:
    """UTF-8 byte column (what ``ast`` gives) to a code-point column."""
    if line - 1 >= len(lines) or line < 1:
        return byte_col
    return code_point_col(lines[line - 1], byte_col)


def dotted_name(node: ast.expr) -> str | None:
    """``a.b.c`` for an attribute chain on a name, else None."""
    parts: list[str] = []
    while isinstance(node, ast.Attribute):
        parts.append(node.attr)
        node = node.value
    if isinstance(node, ast.Name) and parts:
        parts.append(node.id)
        return ".".join(reversed(parts))
    return None


def short_text(node: ast.AST | None, limit: int = 60) -> str:
    """The source of ``node``, cut to ``limit`` characters (for messages)."""
    if node is None:
        return "?"
    try:
        text = ast.unparse(node)
    except Exception:  # unparse can fail on odd trees
        return "?"
    return text if len(text) <= limit else text[: limit - 1] + "…"
