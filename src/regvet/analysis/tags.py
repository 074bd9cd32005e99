"""The vocabulary of the fact collector: every kind of atomic tag an abstract value can hold.

An abstract value (:class:`regvet.analysis.values.Value`) is a set of *tags* plus, for a
container, the values of its elements. A tag says one thing the expression may be at run time:
"the name ``statsmodels.api.OLS``", "the residuals of fit 7", "a frame with a date index", ...

This module is the only place that knows how a tag is laid out. Everywhere else a tag is made
with one of the constructors below (``tags.fit(fid)``, ``tags.opaque_call(node)``) and read with
the named accessors (``tags.fit_id(tag)``, ``tags.part_name(tag)``) and the kind constants
(``tags.kind(tag) == tags.FIT``). Underneath, a tag is a plain tuple whose first item is its
kind: tags are hashed into frozensets constantly, and plain tuples keep that cheap. The kind
strings are short for the same reason; they are never shown to users.

Each constructor's docstring says what its tag stands for, which part of the collector makes it
("made by") and which reads it ("read by"). The collector's modules are named by their file:
``collect`` (the interpreter core), ``modules`` (imports and project modules), ``libraries``
(builtins, numpy, pandas, containers), ``regressions`` (statsmodels models, fits and checks),
``auxiliary`` (the auxiliary-regression classifier) and ``state`` (shared helpers).
DEVELOPERS.md has the same table.
"""

from __future__ import annotations

import ast
from collections.abc import Callable, Collection, Iterable
from operator import itemgetter
from typing import TYPE_CHECKING, Any

from regvet.model.facts import Loc, Outcome

if TYPE_CHECKING:
    from regvet.analysis.values import Value

#: A tag: a plain tuple, ``(kind, payload...)``. Build one with a constructor below, never by hand.
Tag = tuple[Any, ...]

#: The kind of any tag (one of the constants below).
kind: Callable[[Tag], str] = itemgetter(0)

# --- part names -------------------------------------------------------------------------------
# What a PART or MODEL_PART tag holds. ``catalog.PART_MEMBERS``, ``MODEL_PART_MEMBERS`` and
# ``DATA_PART_MEMBERS`` map statsmodels member names onto these (data, kept there).
RESID = "resid"  #: a fit's residuals (``resid``, ``wresid``, ``resid_pearson``)
FITTED = "fitted"  #: a fit's fitted values
RESID_SQUARED = "residsq"  #: residuals raised to a power of 2 or more
FITTED_POWER = "fittedpow"  #: fitted values raised to a power of 2 or more
MODEL_OF_FIT = "model"  #: ``res.model`` (and the model's ``data``)
DATA_OF_MODEL = "data"  #: a model's data object
EXOG = "exog"  #: the design matrix (or its column names)
ENDOG = "endog"  #: the dependent variable (or its name)
OTHER_PART = "other"  #: any other member of a results object


# --- names: libraries, project modules, functions -----------------------------------------------
QUALIFIED = "q"


def qualified(name: str) -> Tag:
    """A name from outside the project, by its qualified name: ``statsmodels.api.OLS``, ``numpy.log``,
    ``builtins.len``. Whatever a library module or one of its members is, the collector only knows it
    by this name; calling it dispatches on the name (``collect.Collector.call_qualified``).

    Made by: ``modules.import_names`` (imports), ``collect.lookup`` (builtins),
    ``modules.attribute_of_qualified`` (``sm.OLS`` -> ``statsmodels.api.OLS``).
    Read by: ``modules.attribute_of_qualified``, ``collect.call_qualified``,
    ``regressions.fit_making`` (a function that reads a constructor makes fits).
    """
    return (QUALIFIED, name)


#: The qualified name of a QUALIFIED tag.
qualname: Callable[[Tag], str] = itemgetter(1)

PROJECT_MODULE = "pmod"


def project_module(key: str) -> Tag:
    """A module of the project itself (found by the ``ModuleProvider``), by its dotted key.

    The module is parsed and run only when a member of it is first read.
    Made by: ``modules.import_names``, ``modules.attribute_of_project_module`` (a submodule),
    ``modules.resolve_lazy``. Read by: ``modules.attribute_of_project_module``.
    """
    return (PROJECT_MODULE, key)


#: The dotted key of a PROJECT_MODULE tag.
module_key: Callable[[Tag], str] = itemgetter(1)

LAZY_IMPORT = "pattr"


def lazy_import(module: str, name: str, submodule: str | None) -> Tag:
    """``from <project module> import name``, not resolved yet: ``module`` is the importing
    module's key, ``submodule`` the key of ``module.name`` when that is itself a module.

    Made by: ``modules.import_names``. Read by: ``modules.resolve_lazy``, which replaces it by
    what the module binds the first time the name is looked up (``collect.lookup``).
    """
    return (LAZY_IMPORT, module, name, submodule)


def lazy_import_parts(tag: Tag) -> tuple[str, str, str | None]:
    """``(module key, name, submodule key or None)`` of a LAZY_IMPORT tag."""
    return tag[1], tag[2], tag[3]


FUNCTION = "func"


def function(key: int) -> Tag:
    """A function or lambda defined in analysed code (``collect.Collector.funcs[key]``).

    Made by: ``collect`` (``def``, ``lambda``, methods of a class). Read by: ``collect.call_function``
    (calls follow it into the body), ``collect.interesting``, ``regressions.fit_making``.
    """
    return (FUNCTION, key)


#: The key of a FUNCTION tag in ``Collector.funcs``.
function_key: Callable[[Tag], int] = itemgetter(1)

# --- opaque data ---------------------------------------------------------------------------------
DATA = "data"


def opaque_call(node: ast.AST) -> Tag:
    """The result of a call regvet does not model (``pd.read_csv(...)``, ``df.dropna()``, a diagnostic's
    return value, ...): some data, identified by the call node so that two models fed the same data
    can be told to share it.

    Made by: ``collect.call`` (a call no handler takes), ``collect.call_user``, ``libraries``,
    ``regressions`` (every call without a better meaning).
    Read by: ``libraries.attribute_of_data`` (attributes and methods of data),
    ``libraries.subscript_tags``, ``regressions.new_model`` and ``regressions.attribution``
    (``data_models``: which models a diagnostic's data input may belong to), ``values`` (dropped
    first when a value holds too many tags).
    """
    return (DATA, ("call", id(node)))


def opaque_attribute(node: ast.AST) -> Tag:
    """An attribute read on opaque data (``df.riders``): data as well. Made by ``libraries.attribute_of_data``."""
    return (DATA, ("attr", id(node)))


def opaque_subscript(node: ast.AST) -> Tag:
    """A subscript of opaque data (``df["riders"]``, ``df[mask]``). Made by ``libraries.subscript_tags``."""
    return (DATA, ("sub", id(node)))


def opaque_class(node: ast.AST) -> Tag:
    """A class defined in analysed code (the class and its instances are opaque). Made by ``collect.define_class``."""
    return (DATA, ("class", id(node)))


# --- literals --------------------------------------------------------------------------------------
LITERAL = "lit"


def literal(value: object) -> Tag:
    """A literal string (up to 4000 characters) or number.

    Made by: ``collect.eval_Constant``, ``built`` (strings built from literal pieces: f-strings,
    ``+``, ``%``, ``.format``, ``.join``), ``libraries.call_builtin`` (``enumerate`` positions, ``dict(a=...)`` keys).
    Read by: ``regressions.make_models`` (formulas), ``regressions.cov_literal``, subscripts and
    dict keys (``collect``, ``values.dict_value``), column names (``libraries``), powers
    (``regressions.binary_operation``, ``libraries.call_numpy``), ``getattr``/``attrgetter`` names.
    """
    return (LITERAL, value)


#: The value of a LITERAL tag.
literal_value: Callable[[Tag], Any] = itemgetter(1)

PREFIX = "prefix"


def fstring_prefix(text: str) -> Tag:
    """The fixed start of a string built at run time (``f"riders ~ {rhs}"`` -> ``"riders ~ "``).

    Made by: ``built`` (f-strings, ``+``, ``%``, ``.format`` whose later pieces are not literals). Read by: ``regressions.make_models`` (the outcome of a
    formula built at run time).
    """
    return (PREFIX, text)


#: The text of a PREFIX tag.
prefix_text: Callable[[Tag], str] = itemgetter(1)

STRING_METHOD = "strmethod"


def string_method(text: str, name: str) -> Tag:
    """``"{} ~ {}".format`` or ``" + ".join`` read on a literal string: calling it builds a formula.

    Made by: ``strings.attribute_of_literal``. Read by: ``strings.call_string_method``.
    """
    return (STRING_METHOD, text, name)


#: The literal string and the method name of a STRING_METHOD tag.
string_method_text: Callable[[Tag], str] = itemgetter(1)
string_method_name: Callable[[Tag], str] = itemgetter(2)

DESIGN = "design"


def design(formula: str, side: str) -> Tag:
    """One side (``ENDOG`` or ``EXOG``) of ``patsy.dmatrices(formula, data)``: a design read like the formula.

    Made by: ``strings.call_design_matrices``. Read by: ``regressions.new_model`` (``sm.OLS(y, X)`` on it
    is read like ``smf.ols(formula, data)``).
    """
    return (DESIGN, formula, side)


#: The formula and the side of a DESIGN tag.
design_formula: Callable[[Tag], str] = itemgetter(1)
design_side: Callable[[Tag], str] = itemgetter(2)

# --- statsmodels models ---------------------------------------------------------------------------
MODEL = "model"


def model(mid: int) -> Tag:
    """An OLS/WLS model object (``regressions.ModelRecord`` ``mid``), before ``.fit()``.

    Made by: ``regressions.make_models``. Read by: ``regressions.attribute_of_model``,
    ``regressions.fit_making``, ``collect.interesting``.
    """
    return (MODEL, mid)


#: The model id of a MODEL, MODEL_FIT or MODEL_PART tag.
model_id: Callable[[Tag], int] = itemgetter(1)

MODEL_FIT = "mfit"


def model_fit(mid: int) -> Tag:
    """The bound method ``model.fit`` of model ``mid``; calling it makes a fit.

    Made by: ``regressions.attribute_of_model``. Read by: ``regressions.call_model_fit``.
    """
    return (MODEL_FIT, mid)


MODEL_PART = "mpart"


def model_part(mid: int, part: str) -> Tag:
    """A member of a model object (``model.exog``, ``model.endog``): a part name above.

    Made by: ``regressions.attribute_of_model``. Read by: ``regressions.attribute_of_model_part``,
    ``regressions.attribution`` (a diagnostic fed a model's exog is credited to that model's
    fits), ``libraries`` (kept through numpy, subscripts and arithmetic), ``collect.interesting``.
    """
    return (MODEL_PART, mid, part)


#: The part name of a PART or MODEL_PART tag.
part_name: Callable[[Tag], str] = itemgetter(2)

# --- statsmodels results ----------------------------------------------------------------------------
FIT = "fit"


def fit(fid: int) -> Tag:
    """A results object: fit ``fid`` (``regressions.FitRecord``; a ``Fit`` in the facts).

    Made by: ``regressions.call_model_fit``, ``regressions.call_fit_method``
    (``get_robustcov_results``). Read by: ``regressions.attribute_of_fit`` (members record uses and
    checks), ``regressions`` (crediting, escapes, anova, result names, call sites returned
    through), ``state.fits_in``, ``libraries`` (columns that hold a fit; not a container to grow).
    """
    return (FIT, fid)


#: The fit id of a FIT, PART, FIT_METHOD or MEASURE tag.
fit_id: Callable[[Tag], int] = itemgetter(1)

PART = "part"


def result_part(fid: int, part: str) -> Tag:
    """A piece of fit ``fid``: its residuals, fitted values, model, ... (a part name above).

    Made by: ``regressions.attribute_of_fit`` and ``attribute_of_result_part`` (``res.resid``,
    ``res.model.exog``), ``regressions.binary_operation`` and ``libraries.call_numpy`` (powers:
    RESID_SQUARED, FITTED_POWER). Read by: ``regressions.attribute_of_result_part``,
    ``regressions.attribution`` (crediting diagnostics), ``auxiliary`` (regressions of residuals),
    ``libraries`` (columns assigned from it; kept through numpy, subscripts and arithmetic).
    """
    return (PART, fid, part)


FIT_METHOD = "fmethod"


def result_method(fid: int, name: str) -> Tag:
    """A member of fit ``fid`` that may be called (``res.summary``, ``res.f_test``, ``res.get_robustcov_results``).

    Made by: ``regressions.attribute_of_fit``. Read by: ``regressions.call_fit_method``.
    """
    return (FIT_METHOD, fid, name)


#: The method name of a FIT_METHOD or DATA_METHOD tag.
method_name: Callable[[Tag], str] = itemgetter(2)

MEASURE = "measure"


def measure(fid: int, name: str) -> Tag:
    """A fit measure of fit ``fid`` (``rsquared``, ``aic``, ``ssr``, ...).

    Made by: ``regressions.attribute_of_fit``. Read by: ``regressions.compared_measures``
    (comparisons across fits), ``regressions.ssr_arithmetic`` and ``libraries.call_builtin``
    (``sum``: sums of SSRs).
    """
    return (MEASURE, fid, name)


#: The measure name of a MEASURE tag.
measure_name: Callable[[Tag], str] = itemgetter(2)

SSR_SUM = "ssrsum"


def ssr_sum(fids: frozenset[int]) -> Tag:
    """The sum of the SSRs of several fits (subsample fits summed for a hand-made Chow test).

    Made by: ``regressions.ssr_arithmetic``, ``libraries.call_builtin`` (``sum``).
    Read by: ``regressions.ssr_arithmetic`` (a pooled SSR against this sum is a break test);
    kept through arithmetic.
    """
    return (SSR_SUM, fids)


#: The fit ids of an SSR_SUM tag.
summed_fits: Callable[[Tag], frozenset[int]] = itemgetter(1)

# --- bound methods of data and containers --------------------------------------------------------
PASSING_METHOD = "passcall"


def passing_method(receiver: Tag) -> Tag:
    """A conversion method (``.to_numpy``, ``.copy``, ``.dropna``, ...) read on ``receiver`` (a
    PART, MODEL_PART, OUTCOME or COLUMNS tag); calling it gives ``receiver`` back.

    Made by: ``regressions.attribute_of_result_part``/``attribute_of_model_part``,
    ``libraries.attribute_of_columns``. Read by: ``libraries.call_passing_method``.
    """
    return (PASSING_METHOD, receiver)


#: The tag a PASSING_METHOD, TIME_METHOD or DATA_METHOD tag was read on.
receiver: Callable[[Tag], Tag] = itemgetter(1)

TIME_METHOD = "timecall"


def time_method(receiver: Tag) -> Tag:
    """A lag or difference method (``.shift``, ``.diff``, ``.resample``; ``catalog.TIME_METHODS``)
    read on data; calling it gives time-ordered data.

    Made by: ``libraries.attribute_of_data``/``attribute_of_columns``.
    Read by: ``libraries.call_time_method``.
    """
    return (TIME_METHOD, receiver)


DATA_METHOD = "dmethod"


def data_method(receiver: Tag, name: str) -> Tag:
    """Any other method ``name`` read on opaque data ``receiver`` (a DATA tag): ``df.assign``,
    ``df.set_index``, ``df.groupby``, ...

    Made by: ``libraries.attribute_of_data``. Read by: ``libraries.call_data_method``.
    """
    return (DATA_METHOD, receiver, name)


CONTAINER_METHOD = "cmethod"


def container_method(name: str, base: Value) -> Tag:
    """A method of a container value (``d.items``, ``d.get``, ...) with the container's value.

    Made by: ``libraries.container_attribute``. Read by: ``libraries.call_container_method``.
    """
    return (CONTAINER_METHOD, name, base)


#: The method name of a CONTAINER_METHOD tag.
container_method_name: Callable[[Tag], str] = itemgetter(1)
#: The container value of a CONTAINER_METHOD tag.
container_method_base: Callable[[Tag], Value] = itemgetter(2)

GETTER = "getter"


def attr_getter(name: str) -> Tag:
    """``operator.attrgetter(name)``: calling it reads ``name`` on its argument.

    Made by: ``libraries.call_library_name``. Read by: ``libraries.call_getter``.
    """
    return (GETTER, name)


#: The attribute name of a GETTER tag.
getter_name: Callable[[Tag], str] = itemgetter(1)

# --- columns and outcomes ----------------------------------------------------------------------------
OUTCOME = "outcome"


def outcome(value: Outcome) -> Tag:
    """The value may be (a transform of) one named variable: a candidate dependent variable
    (``df["riders"]`` -> riders; ``np.log(df.riders)`` -> log of riders).

    Made by: ``libraries.attribute_of_data`` (``df.riders``), ``libraries.subscript_tags``,
    ``libraries.call_numpy`` (transforms), ``regressions.binary_operation`` (``y - y.mean()``).
    Read by: ``regressions.new_model`` (an array model's outcome), ``libraries.attribute_of_columns``.
    """
    return (OUTCOME, value)


#: The :class:`Outcome` of an OUTCOME tag.
outcome_of: Callable[[Tag], Outcome] = itemgetter(1)

COLUMNS = "cols"


def columns(names: tuple[str, ...]) -> Tag:
    """A frame narrowed to these literal columns (``df[["fare", "wind"]]``).

    Made by: ``libraries.subscript_tags``. Read by: ``regressions.new_model`` (an array model's
    regressors), ``libraries.attribute_of_columns``; kept through ``add_constant`` and numpy.
    """
    return (COLUMNS, names)


#: The column names of a COLUMNS tag.
column_names: Callable[[Tag], tuple[str, ...]] = itemgetter(1)

COLUMN_NAME = "colname"


def holds_column(name: str) -> Tag:
    """A frame that was given a column ``name`` (``df["r"] = ...``, ``df.assign(r=...)``).

    Made by: ``libraries.assigned_column_tags`` (``df["r"] = ...``), ``libraries.call_data_method``
    (``assign``). Read by: ``regressions.new_model`` (the columns a fit's data is known to hold).
    """
    return (COLUMN_NAME, name)


#: The column name of a COLUMN_NAME or COLUMN_VALUE tag.
column: Callable[[Tag], str] = itemgetter(1)

COLUMN_VALUE = "colv"


def column_value(name: str, source: Tag) -> Tag:
    """A frame whose column ``name`` holds ``source`` (a FIT or PART tag): ``df["e"] = res.resid``.

    Made by: ``libraries.assigned_column_tags``, ``libraries.call_data_method`` (``assign``). Read by:
    ``libraries.subscript_tags`` (reading the column back gives the part), ``regressions.new_model``
    and ``auxiliary.classify_formula`` (a formula over that column regresses the part).
    """
    return (COLUMN_VALUE, name, source)


#: The FIT or PART tag a COLUMN_VALUE tag's column holds.
column_source: Callable[[Tag], Tag] = itemgetter(2)

# --- time order ------------------------------------------------------------------------------------
TIMED = "timed"


def time_order(reason: str, where: Loc | None = None) -> Tag:
    """The data is time-ordered; ``reason`` says why, for messages ("the data gets a date index from
    `set_index("week")`"), and ``where`` is the code that made it so (None when not known).

    Made by: ``libraries`` (a date index: ``set_index`` of dates or of a date column, ``index=`` of
    dates, ``df.index = dates``, ``read_*`` with a date ``index_col``; lag and difference methods;
    ``asfreq``/``resample``; sorting by a date column) and ``regressions`` (``statsmodels.tsa``'s
    ``lagmat``/``add_trend``). Passed on by most operations on data (``libraries.time_order_of``,
    attributes, subscripts, assignments, arithmetic). Read by: ``regressions.new_model``
    (``Fit.time_reason``, ``Fit.time_where``).
    """
    return (TIMED, reason, where)


#: The reason of a TIMED tag.
time_reason: Callable[[Tag], str] = itemgetter(1)
#: Where a TIMED tag's evidence is (a Loc, or None).
time_where: Callable[[Tag], Loc | None] = itemgetter(2)

DATES = "dates"


def dates(what: str, where: Loc) -> Tag:
    """Dates, not yet an order: the result of ``pd.to_datetime``, ``pd.date_range``, ``PeriodIndex``, ...
    (``what`` names the call for messages). Dates used in arithmetic or kept as an ordinary column
    order nothing; they become time order only as a frame's index.

    Made by: ``libraries.call_library_name``. Read by: ``libraries`` (``set_index``, ``index=``,
    ``assign``, column assignment: a date column), ``collect.bind`` (``df.index = dates``).
    """
    return (DATES, what, where)


#: The call that made a DATES tag, and where.
dates_what: Callable[[Tag], str] = itemgetter(1)
dates_where: Callable[[Tag], Loc] = itemgetter(2)

DATE_COLUMN = "datecol"


def date_column(name: str, what: str, where: Loc) -> Tag:
    """A frame's column ``name`` holds dates (``read_csv(parse_dates=[name])``, ``df[name] =
    pd.to_datetime(...)``); ``what`` and ``where`` say how it got them.

    Made by: ``libraries`` (``read_*``, ``assign``, column assignment, ``pd.DataFrame({...})``).
    Read by: ``libraries`` (``set_index(name)`` and ``sort_values(name)`` give time order),
    ``regressions.new_model`` (the column is one of the fit's data columns).
    """
    return (DATE_COLUMN, name, what, where)


#: The column, the call and the place of a DATE_COLUMN tag.
date_column_name: Callable[[Tag], str] = itemgetter(1)
date_column_what: Callable[[Tag], str] = itemgetter(2)
date_column_where: Callable[[Tag], Loc] = itemgetter(3)

# --- categories -----------------------------------------------------------------------------------
CATEGORIES = "cats"


def categories(what: str) -> Tag:
    """Values made categorical (``pd.Categorical(...)``, ``.astype("category")``; ``what`` names the call).

    Made by: ``libraries`` (``call_library_name``, ``call_data_method``). Read by:
    ``libraries.assigned_column_tags`` and ``assign`` (a column that holds categories).
    """
    return (CATEGORIES, what)


CATEGORY_COLUMN = "catcol"


def category_column(name: str) -> Tag:
    """A frame's column ``name`` holds categories: a formula term naming it is a categorical's dummies,
    as ``C(name)`` would be.

    Made by: ``libraries`` (column assignment, ``assign``). Read by: ``regressions.new_model``
    (``ModelRecord.categorical_columns``, then the fit's shift and interacted groups).
    """
    return (CATEGORY_COLUMN, name)


#: The column of a CATEGORY_COLUMN tag.
category_column_name: Callable[[Tag], str] = itemgetter(1)

#: Every kind above.
KINDS: frozenset[str] = frozenset(
    {
        QUALIFIED,
        PROJECT_MODULE,
        LAZY_IMPORT,
        FUNCTION,
        DATA,
        LITERAL,
        PREFIX,
        STRING_METHOD,
        DESIGN,
        MODEL,
        MODEL_FIT,
        MODEL_PART,
        FIT,
        PART,
        FIT_METHOD,
        MEASURE,
        SSR_SUM,
        PASSING_METHOD,
        TIME_METHOD,
        DATA_METHOD,
        CONTAINER_METHOD,
        GETTER,
        OUTCOME,
        COLUMNS,
        COLUMN_NAME,
        COLUMN_VALUE,
        TIMED,
        DATES,
        DATE_COLUMN,
        CATEGORIES,
        CATEGORY_COLUMN,
    }
)


# --- reading sets of tags (the hot loops) ---------------------------------------------------------
# Plain loops and list comprehensions: these run for nearly every name and call, and a
# generator costs more than the few tags a value holds.
def select(tags: Iterable[Tag], of_kind: str) -> list[Tag]:
    """The tags of one kind, in iteration order."""
    return [t for t in tags if t[0] == of_kind]


def has_kind(tags: Iterable[Tag], of_kind: str) -> bool:
    return any(t[0] == of_kind for t in tags)


def has_any_kind(tags: Iterable[Tag], kinds: Collection[str]) -> bool:
    return any(t[0] in kinds for t in tags)


def only_kinds(tags: Iterable[Tag], kinds: Collection[str]) -> frozenset[Tag]:
    """The tags whose kind is in ``kinds``."""
    return frozenset(t for t in tags if t[0] in kinds)


def without_kinds(tags: Iterable[Tag], kinds: Collection[str]) -> list[Tag]:
    """The tags whose kind is not in ``kinds``, in iteration order."""
    return [t for t in tags if t[0] not in kinds]


def fit_ids(tags: Iterable[Tag]) -> set[int]:
    """The ids of the FIT tags."""
    return {t[1] for t in tags if t[0] == FIT}


def literal_values(tags: Iterable[Tag]) -> list[Any]:
    """The values of the LITERAL tags, in iteration order."""
    return [t[1] for t in tags if t[0] == LITERAL]


def literal_strings(tags: Iterable[Tag]) -> list[str]:
    """The values of the LITERAL tags that are strings, in iteration order."""
    return [t[1] for t in tags if t[0] == LITERAL and isinstance(t[1], str)]
