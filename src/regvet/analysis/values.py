"""Abstract values for the fact collector.

A :class:`Value` over-approximates what a Python expression may hold at run time:
a set of atomic tags (a statsmodels name, a model, a results object, a piece of
one, a literal, an opaque data frame, ...; the kinds are listed in
:mod:`regvet.analysis.tags`) plus, for containers, the value of their elements,
their keys, and their positions when the structure is known. Values are
immutable; :func:`join` is their least upper bound.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from typing import NamedTuple

from regvet.analysis import tags
from regvet.analysis.tags import Tag
from regvet.analysis.tags import has_kind as _has_kind
from regvet.analysis.tags import select as _select

#: Values nest (lists of dicts of fits). Past this depth they are flattened into tags.
MAX_DEPTH = 5
#: Upper bound on atomic tags kept in one value; literals and data tags are dropped first.
MAX_TAGS = 96


class Value(NamedTuple):
    """What an expression may hold: atomic tags, and for a container the values inside it."""

    tags: frozenset[Tag] = frozenset()
    elem: Value | None = None  # any element (for a dict: any value)
    keys: Value | None = None  # any key (dicts only)
    items: tuple[Value, ...] | None = None  # one value per known position (a dict's: (key, value) pairs)
    level: int = 0  # nesting depth of containers (0: no elements)

    def __bool__(self) -> bool:
        return bool(self.tags) or self.elem is not None or self.keys is not None or self.items is not None

    def tags_of(self, kind: str) -> list[Tag]:
        """Atomic tags of one kind, e.g. ``value.tags_of(tags.FIT)``."""
        return _select(self.tags, kind)

    def has(self, kind: str) -> bool:
        return _has_kind(self.tags, kind)

    def depth(self) -> int:
        return self.level

    def deep_tags(self) -> Iterator[Tag]:
        """Atomic tags here and in every element, key and position, recursively."""
        yield from self.tags
        for child in (self.elem, self.keys):
            if child is not None:
                yield from child.deep_tags()
        # items are already folded into elem

    def with_tags(self, extra: Iterable[Tag]) -> Value:
        return Value(_cap(self.tags | frozenset(extra)), self.elem, self.keys, self.items, self.level)


EMPTY = Value()
#: Dropped first when a value holds too many tags.
_DROPPED_FIRST = frozenset({tags.LITERAL, tags.DATA, tags.PREFIX, tags.COLUMN_VALUE})


def _cap(atoms: frozenset[Tag]) -> frozenset[Tag]:
    if len(atoms) <= MAX_TAGS:
        return atoms
    keep = tags.without_kinds(atoms, _DROPPED_FIRST)
    if len(keep) > MAX_TAGS:  # which tags stay must not depend on the set's (hash-seeded) order
        keep = sorted(keep, key=_stable_key)
    return frozenset(keep[:MAX_TAGS])


def _stable_key(tag: Tag) -> tuple[str, ...]:
    """A key for ordering tags that is the same in every run (no ids, no hash order)."""
    out = []
    for part in tag:
        if isinstance(part, (str, int, float, bool)) or part is None:
            out.append(repr(part))
        elif hasattr(part, "lineno"):  # a syntax node: its place
            out.append(f"node:{part.lineno}:{getattr(part, 'col_offset', 0)}")
        elif hasattr(part, "span"):  # a Loc
            out.append(f"loc:{getattr(part, 'path', '')}:{part.span}")
        else:
            out.append(type(part).__name__)
    return tuple(out)


def tagged(*atoms: Tag) -> Value:
    """A value holding exactly these tags."""
    return Value(frozenset(atoms))


def join(a: Value | None, b: Value | None) -> Value:
    if a is None or not a:
        return b if b is not None else EMPTY
    if b is None or not b or a is b:
        return a
    if a == b:
        return a
    items = None
    if a.items is not None and b.items is not None and len(a.items) == len(b.items):
        items = tuple(join(x, y) for x, y in zip(a.items, b.items, strict=False))
    elem = _join_opt(a.elem, b.elem)
    keys = _join_opt(a.keys, b.keys)
    return _limit(Value(_cap(a.tags | b.tags), elem, keys, items, _level(elem, keys)))


def join_all(values: Iterable[Value]) -> Value:
    out = EMPTY
    for v in values:
        out = join(out, v)
    return out


def _join_opt(a: Value | None, b: Value | None) -> Value | None:
    if a is None:
        return b
    if b is None:
        return a
    return join(a, b)


def _level(elem: Value | None, keys: Value | None) -> int:
    return max(-1 if elem is None else elem.level, -1 if keys is None else keys.level) + 1


def container(elem: Value, keys: Value | None = None, items: tuple[Value, ...] | None = None) -> Value:
    return _limit(Value(frozenset(), elem, keys, items, _level(elem, keys)))


def sequence(values: tuple[Value, ...]) -> Value:
    """A list or tuple literal: known positions, and their join as the element value."""
    return container(join_all(values), None, values)


def _limit(value: Value) -> Value:
    if value.depth() <= MAX_DEPTH:
        return value
    return Value(_cap(frozenset(value.deep_tags())))


def elements(value: Value) -> Value:
    """The value of any element of ``value`` (for a dict: any value)."""
    return value.elem if value.elem is not None else EMPTY


def is_dict(value: Value) -> bool:
    return value.keys is not None


def iterate(value: Value) -> Value:
    """What iterating over ``value`` yields: a dict's keys, any other container's elements."""
    if value.keys is not None:
        return value.keys
    return elements(value)


def positions(value: Value) -> tuple[Value, ...] | None:
    """What iterating over ``value`` yields, one value per step, when the structure is known."""
    if value.items is None:
        return None
    if value.keys is not None:  # a dict with literal keys: items are its (key, value) pairs
        return tuple(p.items[0] if p.items else EMPTY for p in value.items)
    return value.items


def dict_value(value: Value, key: object) -> Value | None:
    """The value stored under literal ``key`` in a dict with known pairs, or None."""
    if value.keys is None or value.items is None:
        return None
    for pair in value.items:
        if pair.items and len(pair.items) == 2 and pair.items[0].tags == frozenset({tags.literal(key)}):
            return pair.items[1]
    return None


def mapping(pairs: list[tuple[Value, Value]]) -> Value:
    """A dict literal with known (key, value) pairs."""
    keys = join_all(k for k, _ in pairs)
    vals = join_all(v for _, v in pairs)
    return container(vals, keys, tuple(sequence((k, v)) for k, v in pairs))


def flat(value: Value) -> Value:
    """``value`` with every nested element folded into its top level (for 'anything in here')."""
    if value.elem is None and value.keys is None:
        return value
    return Value(_cap(frozenset(value.deep_tags())))
