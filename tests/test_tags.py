"""The collector's tag vocabulary: every constructor reads back through its accessors, and no other
module of the analysis builds a tag by hand or reads one by index (read with ``ast``)."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

from regvet.analysis import tags
from regvet.analysis.values import EMPTY, tagged
from regvet.model.facts import Loc, Outcome
from regvet.model.span import Span

ANALYSIS = Path(__file__).resolve().parents[1] / "src" / "regvet" / "analysis"
_NODE = ast.parse("x").body[0]
_RIDERS = Outcome("riders", "log", "log(riders)")
_RECEIVER = tags.result_part(3, tags.RESID)

_WHERE = Loc(Span(3, 0, 3, 20))

# (constructor call, its kind, [(accessor, expected value), ...])
ROUNDTRIPS = [
    (tags.qualified("statsmodels.api.OLS"), tags.QUALIFIED, [(tags.qualname, "statsmodels.api.OLS")]),
    (tags.project_module("helpers.fits"), tags.PROJECT_MODULE, [(tags.module_key, "helpers.fits")]),
    (
        tags.lazy_import("helpers", "fit_all", None),
        tags.LAZY_IMPORT,
        [(tags.lazy_import_parts, ("helpers", "fit_all", None))],
    ),
    (tags.function(4), tags.FUNCTION, [(tags.function_key, 4)]),
    (tags.literal("riders ~ fare"), tags.LITERAL, [(tags.literal_value, "riders ~ fare")]),
    (tags.literal(3), tags.LITERAL, [(tags.literal_value, 3)]),
    (tags.fstring_prefix("riders ~ "), tags.PREFIX, [(tags.prefix_text, "riders ~ ")]),
    (
        tags.string_method(" + ", "join"),
        tags.STRING_METHOD,
        [(tags.string_method_text, " + "), (tags.string_method_name, "join")],
    ),
    (
        tags.design("tons ~ cranes", tags.EXOG),
        tags.DESIGN,
        [(tags.design_formula, "tons ~ cranes"), (tags.design_side, tags.EXOG)],
    ),
    (tags.model(5), tags.MODEL, [(tags.model_id, 5)]),
    (tags.model_fit(5), tags.MODEL_FIT, [(tags.model_id, 5)]),
    (tags.model_part(5, tags.EXOG), tags.MODEL_PART, [(tags.model_id, 5), (tags.part_name, tags.EXOG)]),
    (tags.fit(7), tags.FIT, [(tags.fit_id, 7)]),
    (tags.result_part(7, tags.RESID), tags.PART, [(tags.fit_id, 7), (tags.part_name, tags.RESID)]),
    (tags.result_method(7, "summary"), tags.FIT_METHOD, [(tags.fit_id, 7), (tags.method_name, "summary")]),
    (tags.measure(7, "aic"), tags.MEASURE, [(tags.fit_id, 7), (tags.measure_name, "aic")]),
    (tags.ssr_sum(frozenset({1, 2})), tags.SSR_SUM, [(tags.summed_fits, frozenset({1, 2}))]),
    (tags.passing_method(_RECEIVER), tags.PASSING_METHOD, [(tags.receiver, _RECEIVER)]),
    (tags.time_method(_RECEIVER), tags.TIME_METHOD, [(tags.receiver, _RECEIVER)]),
    (
        tags.data_method(tags.opaque_call(_NODE), "assign"),
        tags.DATA_METHOD,
        [(tags.receiver, tags.opaque_call(_NODE)), (tags.method_name, "assign")],
    ),
    (
        tags.container_method("items", EMPTY),
        tags.CONTAINER_METHOD,
        [(tags.container_method_name, "items"), (tags.container_method_base, EMPTY)],
    ),
    (tags.attr_getter("bic"), tags.GETTER, [(tags.getter_name, "bic")]),
    (tags.outcome(_RIDERS), tags.OUTCOME, [(tags.outcome_of, _RIDERS)]),
    (tags.columns(("fare", "wind")), tags.COLUMNS, [(tags.column_names, ("fare", "wind"))]),
    (tags.holds_column("e"), tags.COLUMN_NAME, [(tags.column, "e")]),
    (tags.column_value("e", _RECEIVER), tags.COLUMN_VALUE, [(tags.column, "e"), (tags.column_source, _RECEIVER)]),
    (tags.time_order("dates"), tags.TIMED, [(tags.time_reason, "dates"), (tags.time_where, None)]),
    (tags.time_order("dates", _WHERE), tags.TIMED, [(tags.time_reason, "dates"), (tags.time_where, _WHERE)]),
    (
        tags.dates("`pd.to_datetime`", _WHERE),
        tags.DATES,
        [(tags.dates_what, "`pd.to_datetime`"), (tags.dates_where, _WHERE)],
    ),
    (
        tags.date_column("week", "`parse_dates`", _WHERE),
        tags.DATE_COLUMN,
        [(tags.date_column_name, "week"), (tags.date_column_what, "`parse_dates`"), (tags.date_column_where, _WHERE)],
    ),
    (tags.categories("`pd.Categorical`"), tags.CATEGORIES, []),
    (tags.category_column("chain"), tags.CATEGORY_COLUMN, [(tags.category_column_name, "chain")]),
]


@pytest.mark.parametrize("tag, kind, reads", ROUNDTRIPS, ids=[r[1] + str(i) for i, r in enumerate(ROUNDTRIPS)])
def test_constructors_read_back(tag, kind, reads):
    assert tags.kind(tag) == kind
    for accessor, expected in reads:
        assert accessor(tag) == expected


def test_every_kind_is_constructed_and_kinds_are_distinct():
    constructed = {r[1] for r in ROUNDTRIPS} | {tags.kind(tags.opaque_call(_NODE))}
    assert constructed == tags.KINDS
    names = [name for name in dir(tags) if name.isupper() and getattr(tags, name) in tags.KINDS]
    assert len({getattr(tags, n) for n in names}) == len(tags.KINDS)


def test_opaque_data_is_told_apart_by_node_and_by_how_it_was_made():
    other = ast.parse("y").body[0]
    made = [
        tags.opaque_call(_NODE),
        tags.opaque_attribute(_NODE),
        tags.opaque_subscript(_NODE),
        tags.opaque_class(_NODE),
        tags.opaque_call(other),
    ]
    assert len(set(made)) == len(made)
    assert all(tags.kind(t) == tags.DATA for t in made)


def test_set_readers():
    value = tagged(tags.fit(1), tags.fit(2), tags.literal("a"), tags.literal(2), tags.time_order("dates"))
    assert tags.fit_ids(value.tags) == {1, 2}
    assert sorted(tags.literal_values(value.tags), key=str) == [2, "a"]
    assert tags.literal_strings(value.tags) == ["a"]
    assert set(value.tags_of(tags.TIMED)) == {tags.time_order("dates")}
    assert value.has(tags.FIT) and not value.has(tags.MODEL)
    assert tags.has_any_kind(value.tags, {tags.MODEL, tags.TIMED})
    assert tags.only_kinds(value.tags, {tags.FIT}) == {tags.fit(1), tags.fit(2)}
    assert set(tags.without_kinds(value.tags, {tags.FIT, tags.LITERAL})) == {tags.time_order("dates")}


def _hand_made_tags(path: Path) -> list[str]:
    """Tuple literals headed by a kind string, and index reads of a tag's kind compared with a string."""
    tree = ast.parse(path.read_text(), filename=str(path))
    problems = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Tuple) and node.elts:
            head = node.elts[0]
            if isinstance(head, ast.Constant) and head.value in tags.KINDS and len(node.elts) > 1:
                problems.append(f"{path.name}:{node.lineno}: tuple headed by {head.value!r}")
        if isinstance(node, ast.Compare) and isinstance(node.left, ast.Subscript):
            index = node.left.slice
            if isinstance(index, ast.Constant) and index.value == 0:
                for right in node.comparators:
                    consts = right.elts if isinstance(right, (ast.Tuple, ast.Set, ast.List)) else [right]
                    if any(isinstance(c, ast.Constant) and isinstance(c.value, str) for c in consts):
                        problems.append(f"{path.name}:{node.lineno}: [0] compared with a string")
    return problems


@pytest.mark.parametrize("path", sorted(p for p in ANALYSIS.glob("*.py") if p.name != "tags.py"), ids=lambda p: p.name)
def test_tags_are_made_and_read_only_through_the_vocabulary(path):
    assert _hand_made_tags(path) == []


def test_the_guard_finds_hand_made_tags(tmp_path):
    sample = tmp_path / "sample.py"
    sample.write_text('a = ("fit", 3)\nif t[0] == "part":\n    pass\nok = ("items", "values")\n')
    assert len(_hand_made_tags(sample)) == 2
