"""What statsmodels calls mean: models built, fits made, results read, checks credited to fits.

* ``smf.ols("y ~ x", data=df)`` / ``sm.OLS(y, X)`` -> :meth:`RegressionSemantics.make_models`: one
  :class:`ModelRecord` per formula the call may stand for (a MODEL tag), with its outcome,
  regressors, time order and whether it is an auxiliary regression of another fit
  (:mod:`regvet.analysis.auxiliary`).
* ``model.fit(...)`` -> :meth:`call_model_fit`: a :class:`FitRecord` (a FIT tag) per model and context.
* ``res.params`` / ``res.resid`` / ``res.aic`` -> :meth:`attribute_of_fit`: a use, a PART, a MEASURE.
* ``het_breuschpagan(res.resid, X)`` -> :meth:`credit`: a check of the diagnostic's family for the
  fit its inputs come from, or a mismatch when they come from unrelated fits.
* ``res.f_test(...)``, ``anova_lm(a, b)``, ``a.compare_f_test(b)`` -> group tests (break tests
  over interacted categorical groups).
* comparisons and arithmetic on measures (``a.aic < b.aic``, a Chow test from subsample SSRs).
* :meth:`build_facts` turns the records into :class:`~regvet.model.facts.FileFacts`.

Which statsmodels names mean what is data in :mod:`regvet.analysis.catalog`.
"""

from __future__ import annotations

import ast
from typing import NamedTuple

from regvet.analysis import catalog, tags, timeorder
from regvet.analysis.auxiliary import CHECK_LABELS, Auxiliary, classify_arrays, classify_formula
from regvet.analysis.formula import Formula, outcome_of_expr, parse_formula
from regvet.analysis.libraries import ARITHMETIC_KEEPS, PASSING_ATTRIBUTES, PASSING_METHODS, time_order_of
from regvet.analysis.state import CollectorState, FitRecord, Frame, FunctionRecord, ModelRecord, Node, short_text
from regvet.analysis.tags import Tag
from regvet.analysis.values import EMPTY, Value, flat, join_all, tagged
from regvet.analysis.walk import walk
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
    root_fit,
)

MAX_VARIANTS = 24  # distinct formula literals one constructor call may stand for
_SSR = "ssr"
_KEPT_BY_ADD_CONSTANT = frozenset({tags.COLUMNS, tags.TIMED, tags.PART, tags.MODEL_PART, tags.OUTCOME})
_GROUP_TEST_METHODS = frozenset({"f_test", "wald_test", "wald_test_terms", "t_test"})
_COMPARE_METHODS = frozenset({"compare_f_test", "compare_lr_test", "compare_lm_test"})
#: Kinds of the values statsmodels gives: models, results and their pieces.
RESULT_KINDS = frozenset({tags.FIT, tags.MODEL, tags.PART, tags.MODEL_PART, tags.MEASURE})
_FIT_MAKING_ATTRIBUTES = frozenset({"fit", "get_robustcov_results", "from_formula"})


class ModelSource(NamedTuple):
    """What one model of a constructor call is built from: a literal formula, the fixed start of an
    f-string formula, a formula regvet cannot read, or arrays."""

    how: str  # one of the constants below
    text: str | None = None


FORMULA_LITERAL = "literal"
FORMULA_PREFIX = "prefix"
FORMULA_UNKNOWN = "unknown"
ARRAYS = "arrays"


def cov_literal(value: Value | None) -> str | None:
    """A ``cov_type`` argument: lower-cased when it is one literal, "nonrobust" when absent, else None."""
    if value is None:
        return "nonrobust"
    lits = set(tags.literal_strings(value.tags))
    if len(lits) == 1:
        return next(iter(lits)).lower()
    return None


def compared_measures(value: Value) -> set[tuple[int, str]]:
    """``(fit id, measure)`` of the comparable measures anywhere in ``value``."""
    return {
        (tags.fit_id(t), tags.measure_name(t))
        for t in flat(value).tags_of(tags.MEASURE)
        if tags.measure_name(t) in catalog.COMPARED_MEASURES
    }


def _without_compared(value: Value) -> Value:
    return Value(
        frozenset(
            t
            for t in value.tags
            if not (tags.kind(t) == tags.MEASURE and tags.measure_name(t) in catalog.COMPARED_MEASURES)
        )
    )


class RegressionSemantics(CollectorState):
    """statsmodels models, fits, results, diagnostics, comparisons and the facts they become."""

    # --- names ---------------------------------------------------------------------------------
    def call_statsmodels_name(
        self, qualname: str, args: list[Value], kwargs: dict[str, Value], node: ast.Call, frame: Frame
    ) -> Value | None:
        """Constructors, diagnostics (catalogued or named as helpers), summary tables, anova, add_constant."""
        if qualname in catalog.CONSTRUCTORS:
            return self.make_models(qualname, catalog.CONSTRUCTORS[qualname], args, kwargs, node, frame)
        if qualname in catalog.DESIGN_MATRICES:
            return self.design_matrices(args, kwargs)
        if qualname in catalog.DIAGNOSTICS:
            family, fname = catalog.DIAGNOSTICS[qualname]
            self.credit(family, fname, [*args, *kwargs.values()], node, frame)
            return tagged(tags.opaque_call(node))
        helper = self.helper_families(qualname)
        if helper is not None:
            for family in helper:
                self.credit(family, qualname, [*args, *kwargs.values()], node, frame)
            return tagged(tags.opaque_call(node))
        if qualname in catalog.SUMMARY_TABLES:
            loc = self.loc(node, frame)
            for value in (*args, *kwargs.values()):
                for fid in self.fits_in(value):
                    self.uses[Use(fid, "inference", qualname.rsplit(".", 1)[1], loc)] = None
            return tagged(tags.opaque_call(node))
        if qualname in catalog.ANOVA:
            fits = sorted(set().union(*(self.fits_in(a) for a in args))) if args else []
            loc = self.loc(node, frame)
            for fid in fits:
                self.uses[Use(fid, "inference", "anova_lm", loc)] = None
            self.group_test(fits, node, frame)
            return tagged(tags.opaque_call(node))
        if qualname in catalog.ADD_CONSTANT:
            base = args[0] if args else kwargs.get("data", EMPTY)
            keep = [t for t in base.tags if tags.kind(t) in _KEPT_BY_ADD_CONSTANT]
            return tagged(tags.opaque_call(node), *keep)
        return None

    def call_other_statsmodels_name(
        self, qualname: str, args: list[Value], kwargs: dict[str, Value], node: ast.Call, frame: Frame
    ) -> Value | None:
        """Any other statsmodels callable: opaque data (time order kept; ``statsmodels.tsa``'s lag and
        trend helpers make it); its arguments do not escape."""
        if catalog.is_statsmodels(qualname):
            found = time_order_of(args, kwargs, None)
            name = qualname.rsplit(".", 1)[-1]
            if qualname.startswith("statsmodels.tsa") and name in timeorder.TSA_ARRAY_HELPERS:
                found.append(tags.time_order(f"`{name}` makes lags or trends of the data", self.loc(node, frame)))
            return tagged(tags.opaque_call(node), *found)
        return None

    def helper_families(self, qualname: str) -> tuple[str, ...] | None:
        """The check families of a diagnostic helper named in the configuration (``diagnostic_helpers``)."""
        for name, families in self.helpers.items():
            if qualname == name or qualname.endswith("." + name):
                return families
        return None

    # --- attribute handlers (see ``collect.ATTRIBUTE_HANDLERS``) ---------------------------------
    def attribute_of_fit(self, tag: Tag, name: str, node: Node, frame: Frame, out: set[Tag]) -> Value | None:
        """A member of a results object: a use, a piece, a measure, a collinearity check or a method."""
        fid = tags.fit_id(tag)
        loc = self.loc(node, frame)
        if name in catalog.INFERENCE_MEMBERS:
            self.uses[Use(fid, "inference", name, loc)] = None
            out.add(tags.result_method(fid, name))
        elif name in catalog.ESTIMATE_MEMBERS:
            self.uses[Use(fid, "estimate", name, loc)] = None
            out.add(tags.result_method(fid, name))
        elif name in catalog.ROBUST_MEMBERS:
            self.uses[Use(fid, "robust", name, loc)] = None
        elif name in catalog.PART_MEMBERS:
            out.add(tags.result_part(fid, catalog.PART_MEMBERS[name]))
        elif name in catalog.COMPARED_MEASURES or name in catalog.SSR_MEASURES:
            out.add(tags.measure(fid, name))
        elif name in catalog.COLLINEARITY_MEMBERS:
            self.checks[Check(fid, "collinearity", name, loc)] = None
        elif name == "get_robustcov_results":
            out.add(tags.result_method(fid, name))
        else:
            out.add(tags.result_part(fid, tags.OTHER_PART))
        return None

    def attribute_of_model(self, tag: Tag, name: str, node: Node, frame: Frame, out: set[Tag]) -> Value | None:
        mid = tags.model_id(tag)
        if name == "fit":
            out.add(tags.model_fit(mid))
        elif name in catalog.MODEL_PART_MEMBERS:
            out.add(tags.model_part(mid, catalog.MODEL_PART_MEMBERS[name]))
        return None

    def attribute_of_result_part(self, tag: Tag, name: str, node: Node, frame: Frame, out: set[Tag]) -> Value | None:
        """``res.model.exog``, ``res.resid.values``, ``res.resid.to_numpy``: still pieces of the fit."""
        fid, part = tags.fit_id(tag), tags.part_name(tag)
        if part == tags.MODEL_OF_FIT and name in catalog.MODEL_PART_MEMBERS:
            out.add(tags.result_part(fid, catalog.MODEL_PART_MEMBERS[name]))
        elif part == tags.MODEL_OF_FIT and name == "data":
            out.add(tags.result_part(fid, tags.DATA_OF_MODEL))
        elif part == tags.DATA_OF_MODEL and name in catalog.DATA_PART_MEMBERS:
            out.add(tags.result_part(fid, catalog.DATA_PART_MEMBERS[name]))
        elif name in PASSING_ATTRIBUTES:
            out.add(tag)
        elif name in PASSING_METHODS:
            out.add(tags.passing_method(tag))
        return None

    def attribute_of_model_part(self, tag: Tag, name: str, node: Node, frame: Frame, out: set[Tag]) -> Value | None:
        if name in PASSING_ATTRIBUTES:
            out.add(tag)
        elif name in PASSING_METHODS:
            out.add(tags.passing_method(tag))
        return None

    # --- models ----------------------------------------------------------------------------------
    def make_models(
        self,
        qualname: str,
        ctor: catalog.Constructor,
        args: list[Value],
        kwargs: dict[str, Value],
        node: ast.Call,
        frame: Frame,
    ) -> Value:
        """A constructor call: one model per formula literal it may be given (or one for arrays)."""

        def arg(i: int, *names: str) -> tuple[Value, ast.expr | None]:
            if i < len(args):
                return args[i], node.args[i] if i < len(node.args) else None
            for n in names:
                if n in kwargs:
                    kwnode = next((k.value for k in node.keywords if k.arg == n), None)
                    return kwargs[n], kwnode
            return EMPTY, None

        loc = self.loc(node, frame)
        sources: list[ModelSource]
        if ctor.api == "formula":
            formula_value, _ = arg(0, "formula")
            data_value, data_node = arg(1, "data", "df")
            lits = sorted(set(tags.literal_strings(formula_value.tags)))[:MAX_VARIANTS]
            prefixes = sorted({tags.prefix_text(t) for t in formula_value.tags_of(tags.PREFIX)})
            if lits:
                sources = [ModelSource(FORMULA_LITERAL, s) for s in lits]
            elif prefixes:
                sources = [ModelSource(FORMULA_PREFIX, p) for p in prefixes[:MAX_VARIANTS]]
            else:
                sources = [ModelSource(FORMULA_UNKNOWN)]
            data_values = [data_value]
            data_nodes = [data_node]
            data_name = short_text(data_node) if data_node is not None else None
        else:
            endog, endog_node = arg(0, "endog")
            exog, exog_node = arg(1, "exog")
            data_values = [endog, exog]
            data_nodes = [endog_node, exog_node]
            sources = [ModelSource(ARRAYS)]
            data_name = None
        taken = {"formula", "data", "df"} if ctor.api == "formula" else {"endog", "exog"}
        others = (
            tuple(self.same_data_key(a, None, frame) for a in node.args[2:]),
            tuple(
                sorted(
                    (k.arg or "**", self.same_data_key(k.value, None, frame))
                    for k in node.keywords
                    if k.arg not in taken
                )
            ),
        )
        data_keys = tuple(self.same_data_key(n, v, frame) for n, v in zip(data_nodes, data_values, strict=True))
        out: set[Tag] = set()
        for source in sources:
            memo = (id(node), source, frame.ctx, tuple(self.unroll))
            mid = self.model_memo.get(memo)
            if mid is None:
                mid = self.new_model(qualname, ctor, source, data_values, data_name, loc)
                if all(data_values):
                    self.models[mid].spec = _spec_key(ctor, source, data_keys, others, frame, tuple(self.unroll))
                self.model_memo[memo] = mid
            out.add(tags.model(mid))
        return Value(frozenset(out))

    def new_model(
        self,
        qualname: str,
        ctor: catalog.Constructor,
        source: ModelSource,
        data_values: list[Value],
        data_name: str | None,
        loc: Loc,
    ) -> int:
        mid = self.new_id()
        formula: Formula | None = None
        text: str | None = None
        outcome: Outcome | None = None
        n_regressors: int | None = None
        regressors: tuple[str, ...] | None = None
        aux: Auxiliary = {}
        all_data = flat(join_all(data_values))
        column_sources: dict[str, set[Tag]] = {}
        column_names: set[str] = set()
        categorical: set[str] = set()
        for tag in all_data.tags:
            kind = tags.kind(tag)
            if kind == tags.COLUMN_VALUE:
                column_sources.setdefault(tags.column(tag), set()).add(tags.column_source(tag))
            elif kind == tags.COLUMN_NAME:
                column_names.add(tags.column(tag))
            elif kind == tags.DATE_COLUMN:
                column_names.add(tags.date_column_name(tag))
            elif kind == tags.CATEGORY_COLUMN:
                categorical.add(tags.category_column_name(tag))
        timed = min(all_data.tags_of(tags.TIMED), key=timeorder.evidence_order, default=None)
        time_reason = tags.time_reason(timed) if timed is not None else None
        time_where = tags.time_where(timed) if timed is not None else None
        if source.how == FORMULA_LITERAL:
            text = source.text
            formula = parse_formula(text or "")
        elif source.how == FORMULA_PREFIX and source.text is not None:
            lhs = source.text.split("~", 1)[0] if "~" in source.text else None
            if lhs is not None and lhs.strip():
                try:
                    outcome = outcome_of_expr(ast.parse(lhs.strip(), mode="eval").body)
                except (SyntaxError, ValueError, RecursionError, MemoryError):  # NUL bytes, absurd nesting
                    outcome = None
        elif source.how == ARRAYS:
            text = design_formula(data_values)  # sm.OLS(y, X) on patsy.dmatrices(formula, data)
            formula = parse_formula(text) if text is not None else None
        columns: set[str] = set(column_names)
        if formula is not None:
            outcome = formula.outcome
            if not formula.too_large:  # too large to expand: the terms are not known
                n_regressors = formula.n_regressors
                regressors = tuple(":".join(t) for t in formula.terms)
            columns |= formula.variables
            if formula.lagged and time_reason is None:
                time_reason = f"the formula uses lags or differences (`{text}`)"
            aux = classify_formula(formula, text or "", column_sources)
        elif ctor.api == "array":
            endog, exog = flat(data_values[0]), flat(data_values[1])
            outcomes = {tags.outcome_of(t) for t in endog.tags_of(tags.OUTCOME)}
            if len(outcomes) == 1:
                outcome = next(iter(outcomes))
            selections = {tags.column_names(t) for t in exog.tags_of(tags.COLUMNS)}
            if len(selections) == 1:
                regressors = next(iter(selections))
                n_regressors = len(regressors)
                columns |= set(regressors)
            if outcome is not None:
                columns.add(outcome.base)
            aux = classify_arrays(endog.tags, exog.tags)
        data_tags = frozenset(t for value in data_values for t in value.tags_of(tags.DATA))
        model = ModelRecord(
            mid,
            qualname,
            ctor.estimator,
            ctor.api,
            formula,
            text,
            outcome,
            n_regressors,
            regressors,
            data_name,
            time_reason,
            time_where,
            frozenset(categorical),
            frozenset(columns),
            aux,
            data_tags,
            loc,
        )
        self.models[mid] = model
        for data in data_tags:
            self.data_models.setdefault(data, set()).add(mid)
        for family, fits in aux.items():
            label = CHECK_LABELS.get(family)
            if label is not None:
                for fid in fits:
                    self.checks[Check(fid, family, label, loc)] = None
        return mid

    def same_data_key(self, node: ast.expr | None, value: Value | None, frame: Frame) -> tuple:
        """An argument as two model calls must share it to be given the same data: the expression, with
        the value every name in it holds now (``ferries["riders"]`` twice over one frame is the same
        data; after ``ferries`` is rebound it is not). Without a node, its value. The expression is
        kept as its node here; ``_spec_numbers`` compares its text only between models that agree
        on everything else."""
        if node is None:
            return ("value", value)
        names = sorted({n.id for n in walk(node) if isinstance(n, ast.Name)})
        return ("expr", node, tuple((n, _bound(n, frame)) for n in names))

    # --- fits ------------------------------------------------------------------------------------
    def call_model_fit(
        self,
        tag: Tag,
        args: list[Value],
        kwargs: dict[str, Value],
        node: ast.Call,
        frame: Frame,
        receiver: Value | None,
    ) -> Value | None:
        """``model.fit(...)``: one fit per model, call and context."""
        mid = tags.model_id(tag)
        model = self.models[mid]
        cov = cov_literal(kwargs.get("cov_type"))
        memo = (id(node), mid, frame.ctx, tuple(self.unroll))
        fid = self.fit_memo.get(memo)
        if fid is None:
            fid = self.new_fit(model, self.loc(node, frame), frame, cov, None)
            self.fit_memo[memo] = fid
        return tagged(tags.fit(fid))

    def new_fit(self, model: ModelRecord, loc: Loc, frame: Frame, cov: str | None, parent: int | None) -> int:
        fid = self.new_id()
        statement = None
        if self.stmt is not None and self.stmt_module is not None and self.stmt_module.path is None:
            statement = self.span(self.stmt, self.stmt_module)
        self.fits[fid] = FitRecord(
            fid, model, loc, frame.ctx, cov, parent, None, statement, repeated=self.repeating > 0
        )
        self.model_fits.setdefault(model.id, []).append(fid)
        return fid

    def call_fit_method(
        self,
        tag: Tag,
        args: list[Value],
        kwargs: dict[str, Value],
        node: ast.Call,
        frame: Frame,
        receiver: Value | None,
    ) -> Value | None:
        """``res.get_robustcov_results(...)`` (a robust copy of the fit), comparisons and F tests."""
        fid, name = tags.fit_id(tag), tags.method_name(tag)
        if name == "get_robustcov_results":
            given = bool(args) or "cov_type" in kwargs
            cov = cov_literal(kwargs.get("cov_type", args[0] if args else None)) if given else "hc1"
            memo = (id(node), fid, frame.ctx, tuple(self.unroll))
            child = self.fit_memo.get(memo)
            if child is None:
                child = self.new_fit(self.fits[fid].model, self.loc(node, frame), frame, cov, fid)
                self.fit_memo[memo] = child
            return tagged(tags.fit(child))
        if name in _COMPARE_METHODS:
            others = set().union(*(self.fits_in(a) for a in args)) if args else set()
            self.group_test(sorted({fid} | others), node, frame)
            loc = self.loc(node, frame)
            for other in others:
                self.uses[Use(other, "inference", name, loc)] = None
        elif name in _GROUP_TEST_METHODS:
            self.group_test([fid], node, frame)
        return tagged(tags.opaque_call(node))

    def group_test(self, fits: list[int], node: ast.expr, frame: Frame) -> None:
        groups: set[str] = set()
        for fid in fits:
            record = self.fits.get(fid)
            if record is not None and record.model.formula is not None:
                groups |= record.model.formula.interacted_groups
        if groups:
            self.group_tests[GroupTest(tuple(sorted(fits)), frozenset(groups), self.loc(node, frame))] = None

    # --- fits through names and function calls ---------------------------------------------------
    def note_result_name(self, name: str, value: Value) -> None:
        """``res = model.fit()`` in the analysed file: the fit is called ``res`` in messages."""
        if self.stmt is None or not isinstance(self.stmt, ast.Assign):
            return
        for tag in value.tags_of(tags.FIT):
            fit = self.fits.get(tags.fit_id(tag))
            if fit is not None and fit.result_name is None and fit.statement is not None:
                if self.stmt_module is not None and self.stmt_module.path is None:
                    if self.span(self.stmt, self.stmt_module) == fit.statement:
                        fit.result_name = name

    def surface(self, value: Value, callee_ctx: tuple[Loc, ...], site: Loc) -> None:
        """Fits made in a callee and returned: note the call site they came through."""
        for tag in flat(value).tags_of(tags.FIT):
            fit = self.fits.get(tags.fit_id(tag))
            if fit is not None and fit.ctx[: len(callee_ctx)] == callee_ctx:
                if not fit.via or fit.via[-1] != site:
                    fit.via.append(site)

    def fit_making(self, func: FunctionRecord) -> bool:
        """Does the function (or one it calls by name) make fits, read global fits, or run diagnostics?"""
        memo = self.fit_making_memo.get(func.key)
        if memo is not None:
            return memo
        self.fit_making_memo[func.key] = False  # recursion guard
        result = False
        for sub in ast.walk(func.node):
            if isinstance(sub, ast.Attribute) and sub.attr in _FIT_MAKING_ATTRIBUTES:
                result = True
                break
            if isinstance(sub, ast.Name) and isinstance(sub.ctx, ast.Load):
                value = func.module.globals.get(sub.id)
                if value is None and func.scope is not None:
                    value = func.scope.locals.get(sub.id)
                if value is None:
                    continue
                for tag in flat(value).tags:
                    kind = tags.kind(tag)
                    if kind in RESULT_KINDS or (kind == tags.QUALIFIED and tags.qualname(tag) in catalog.CONSTRUCTORS):
                        result = True
                        break
                    if kind == tags.FUNCTION:
                        key = tags.function_key(tag)
                        if key != func.key and self.fit_making(self.funcs[key]):
                            result = True
                            break
                if result:
                    break
        self.fit_making_memo[func.key] = result
        return result

    # --- crediting diagnostics -------------------------------------------------------------------
    def credit(self, family: str, function: str, args: list[Value], node: ast.expr, frame: Frame) -> None:
        """A diagnostic call: credit it to the fit its inputs come from, or report a mix."""
        loc = self.loc(node, frame)
        sets: list[set[int]] = []
        for value in args:
            found = self.attribution(value)
            if found:
                sets.append(found)
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

    def attribution(self, value: Value) -> set[int]:
        """Which fits a diagnostic input may come from: parts and results first, then shared data."""
        out: set[int] = set()
        data: set[Tag] = set()
        for tag in flat(value).tags:
            kind = tags.kind(tag)
            if kind == tags.FIT or kind == tags.PART:
                out.add(tags.fit_id(tag))
            elif kind == tags.MODEL_PART:
                out.update(self.model_fits.get(tags.model_id(tag), ()))
            elif kind == tags.DATA:
                data.add(tag)
        if out:
            return out
        for d in data:
            for mid in self.data_models.get(d, ()):
                out.update(self.model_fits.get(mid, ()))
        return out

    def root(self, fid: int) -> int:
        """The fit a robust-covariance copy was derived from (itself otherwise)."""
        return root_fit(fid, self.fits)

    def escape_args(
        self, args: list[Value], kwargs: dict[str, Value], name: str | ast.expr, node: ast.expr, frame: Frame
    ) -> None:
        """Results handed to code regvet cannot read (``name``, or the callee's node, spelt only when
        a fit escapes): an escape for each fit."""
        fits: set[int] = set()
        for value in (*args, *kwargs.values()):
            fits |= self.fits_in(value)
        if fits:
            loc = self.loc(node, frame)
            label = name if isinstance(name, str) else short_text(name)
            for fid in fits:
                self.escapes[Escape(fid, label, loc)] = None

    # --- arithmetic and comparisons of results ---------------------------------------------------
    def binary_operation(self, op: ast.operator, left: Value, right: Value, node: Node, frame: Frame) -> Value:
        """``a op b``: strings built from literals, powers of residuals and fitted values, differences and
        ratios of measures, SSR sums."""
        text = self.string_operation(op, left, right) if isinstance(op, (ast.Add, ast.Mod)) else None
        if text is not None and not text.has(tags.PREFIX):
            return text  # a string built from literals only
        result: set[Tag] = set(text.tags) if text is not None else set()  # a known start, and what else flows
        left_flat, right_flat = flat(left), flat(right)
        if isinstance(op, ast.Pow):
            power = [p for p in tags.literal_values(right_flat.tags) if isinstance(p, (int, float))]
            for tag in left_flat.tags:
                if tags.kind(tag) == tags.PART and power and power[0] >= 2:
                    if tags.part_name(tag) == tags.RESID:
                        result.add(tags.result_part(tags.fit_id(tag), tags.RESID_SQUARED))
                    elif tags.part_name(tag) == tags.FITTED:
                        result.add(tags.result_part(tags.fit_id(tag), tags.FITTED_POWER))
        if isinstance(op, (ast.Sub, ast.Div)):
            if self.compare_measures([left, right], node, frame, "difference" if isinstance(op, ast.Sub) else "ratio"):
                left_flat, right_flat = _without_compared(left_flat), _without_compared(right_flat)
        self.ssr_arithmetic(op, left_flat, right_flat, node, frame, result)
        for tag in (*left_flat.tags, *right_flat.tags):
            kind = tags.kind(tag)
            if kind in ARITHMETIC_KEEPS and kind != tags.OUTCOME:
                result.add(tag)
        outcomes = [tags.outcome_of(t) for t in (*left_flat.tags_of(tags.OUTCOME), *right_flat.tags_of(tags.OUTCOME))]
        if len({o.base for o in outcomes}) == 1 and isinstance(node, ast.BinOp):
            result.add(tags.outcome(Outcome(outcomes[0].base, "expr", short_text(node))))
        return Value(frozenset(result)) if result else EMPTY

    def ssr_arithmetic(
        self, op: ast.operator, left: Value, right: Value, node: Node, frame: Frame, result: set[Tag]
    ) -> None:
        """``ssr_a + ssr_b`` is a sum of subsample SSRs; a pooled SSR against such a sum is a Chow test."""
        left_ssr = {tags.fit_id(t) for t in left.tags_of(tags.MEASURE) if tags.measure_name(t) == _SSR}
        right_ssr = {tags.fit_id(t) for t in right.tags_of(tags.MEASURE) if tags.measure_name(t) == _SSR}
        left_summed: set[int] = set().union(*(tags.summed_fits(t) for t in left.tags_of(tags.SSR_SUM)))
        right_summed: set[int] = set().union(*(tags.summed_fits(t) for t in right.tags_of(tags.SSR_SUM)))
        if isinstance(op, ast.Add) and left_ssr and right_ssr and left_ssr != right_ssr:
            result.add(tags.ssr_sum(frozenset(left_ssr | right_ssr | left_summed | right_summed)))
        for summed, other in ((left_summed, right_ssr), (right_summed, left_ssr)):
            pooled = other - summed
            if summed and pooled:
                loc = self.loc(node, frame)
                for fid in summed | pooled:
                    self.checks[Check(fid, "breaks", "Chow test from subsample SSRs", loc)] = None

    def compare_measures(self, values: list[Value], node: Node, frame: Frame, how: str) -> bool:
        """Record a comparison when the values' measures span two fits or more (and, for a difference,
        ratio or ``<``, come from two sides). True when one was recorded."""
        sides = [compared_measures(value) for value in values]
        measures: set[tuple[int, str]] = set().union(*sides)
        if len({fid for fid, _ in measures}) < 2:
            return False
        if sum(1 for s in sides if s) < 2 and how in ("difference", "ratio", "compare"):
            return False
        self.comparisons[Comparison(self.loc(node, frame), tuple(sorted(measures)), how)] = None
        return True

    # --- the facts -------------------------------------------------------------------------------
    def build_facts(self) -> FileFacts:
        fits: list[Fit] = []
        specs = _spec_numbers([m for m in self.models.values() if m.spec is not None])
        for record in self.fits.values():
            model = record.model
            spec = specs.get(model.id)
            site = record.via[-1] if record.via else record.fit_call
            model_span = model.loc.span if model.loc.path is None else None
            shift, inter, main = _category_column_groups(model)
            fits.append(
                Fit(
                    id=record.id,
                    site=site,
                    fit_call=record.fit_call,
                    via=tuple(record.via),
                    estimator=model.estimator,
                    api=model.api,
                    constructor=model.constructor,
                    formula=model.formula_text,
                    outcome=model.outcome,
                    n_regressors=model.n_regressors,
                    regressors=model.regressors,
                    cov_type=record.cov_type,
                    data_name=model.data_name,
                    time_reason=model.time_reason,
                    time_where=model.time_where,
                    shift_groups=shift | (model.formula.shift_groups if model.formula else frozenset()),
                    interacted_groups=inter | (model.formula.interacted_groups if model.formula else frozenset()),
                    categorical_terms=main | (model.formula.main_groups if model.formula else frozenset()),
                    interacted_columns=model.formula.interacted_columns if model.formula else frozenset(),
                    columns=model.columns,
                    auxiliary=bool(model.aux_for),
                    parent=record.parent,
                    result_name=record.result_name,
                    statement=record.statement,
                    model_span=model_span,
                    formula_too_large=model.formula is not None and model.formula.too_large,
                    spec=spec,
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


def design_formula(data_values: list[Value]) -> str | None:
    """The formula of ``sm.OLS(y, X)`` when X (and y, if it is one) come from one ``patsy.dmatrices`` call."""
    if len(data_values) != 2:
        return None
    endog, exog = (flat(v) for v in data_values)
    formulas = {tags.design_formula(t) for t in exog.tags_of(tags.DESIGN) if tags.design_side(t) == tags.EXOG}
    if len(formulas) != 1:
        return None
    text = next(iter(formulas))
    from_y = {tags.design_formula(t) for t in endog.tags_of(tags.DESIGN)}
    return text if not from_y or from_y == {text} else None


def _bound(name: str, frame: Frame) -> Value | None:
    """What ``name`` holds in ``frame`` now, read without resolving anything (a lazy import stays one)."""
    f: Frame | None = frame
    if name not in frame.declared_global:
        while f is not None:
            if name in f.locals:
                return f.locals[name]
            f = f.parent
    return frame.module.globals.get(name)


def _spec_numbers(models: list[ModelRecord]) -> dict[int, int]:
    """Model id -> a number shared by the models of the same specification on the same data.

    Models are first grouped with each argument's expression left out (cheap); only within a group
    of several are the expressions compared, by their ``ast.dump``."""

    def arg(item: tuple, full: bool) -> tuple:
        how, *rest = item
        if how != "expr":
            return item
        node, names = rest
        return ("expr", ast.dump(node) if full else type(node).__name__, names)

    def key(spec: tuple, full: bool) -> tuple:
        estimator, api, text, data_keys, (extra, named), ctx, unroll = spec
        return (
            estimator,
            api,
            text,
            tuple(arg(d, full) for d in data_keys),
            tuple(arg(a, full) for a in extra),
            tuple((n, arg(a, full)) for n, a in named),
            ctx,
            unroll,
        )

    groups: dict[tuple, list[ModelRecord]] = {}
    for model in models:
        groups.setdefault(key(model.spec, False), []).append(model)  # type: ignore[arg-type]
    out: dict[int, int] = {}
    numbers: dict[tuple, int] = {}
    for group in groups.values():
        if len(group) < 2:
            continue
        for model in group:
            out[model.id] = numbers.setdefault(key(model.spec, True), len(numbers))  # type: ignore[arg-type]
    return out


def _spec_key(
    ctor: catalog.Constructor, source: ModelSource, data_keys: tuple, others: tuple, frame: Frame, unroll: tuple
) -> tuple | None:
    """What two models must share to be the same specification on the same data: the estimator, the
    formula (or the arrays), the data and every other argument (``same_data_key``), and the calling
    context and loop step (the data of another call or iteration may differ under the same tags).
    None when the formula is unknown."""
    if source.how not in (FORMULA_LITERAL, ARRAYS):
        return None
    text = "".join((source.text or "").split())
    return (ctor.estimator, ctor.api, text, data_keys, others, frame.ctx, unroll)


def _category_column_groups(model: ModelRecord) -> tuple[frozenset[str], frozenset[str], frozenset[str]]:
    """(intercept-only groups, interacted groups, groups that are a term of their own) of the formula terms
    that name a column holding categories (``df["chain"] = pd.Categorical(...)``, then ``y ~ x + chain``)."""
    if model.formula is None or not model.categorical_columns:
        return frozenset(), frozenset(), frozenset()
    cols = model.categorical_columns
    alone = {t[0] for t in model.formula.terms if len(t) == 1 and t[0] in cols}
    inter = {f for t in model.formula.terms if len(t) > 1 for f in t if f in cols}
    return frozenset(alone - inter), frozenset(inter), frozenset(alone)
