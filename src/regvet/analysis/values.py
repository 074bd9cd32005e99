"""Abstract values for the fact collector.

A :class:`V` over-approximates what a Python expression may hold at run time:
a set of atomic tags (a statsmodels name, a model, a results object, a piece of
one, a literal, an opaque data frame, ...) plus, for containers, the value of
their elements, their keys, and their positions when the structure is known.
Values are immutable; :func:`join` is their least upper bound.
"""

from __future__ import annotations

from typing import Iterable, Iterator, NamedTuple

#: Values nest (lists of dicts of fits). Past this depth they are flattened into tags.
MAX_DEPTH = 5
#: Upper bound on atomic tags kept in one value; literals and data tags are dropped first.
MAX_TAGS = 96


class V(NamedTuple):
    tags: frozenset = frozenset()
    elem: "V | None" = None
    keys: "V | None" = None
    items: "tuple[V, ...] | None" = None
    level: int = 0  # nesting depth of containers (0: no elements)

    def __bool__(self) -> bool:
        return bool(self.tags) or self.elem is not None or self.keys is not None or self.items is not None

    def of(self, kind: str) -> Iterator[tuple]:
        """Atomic tags of one kind, e.g. ``v.of("fit")``."""
        for t in self.tags:
            if t[0] == kind:
                yield t

    def has(self, kind: str) -> bool:
        return any(t[0] == kind for t in self.tags)

    def depth(self) -> int:
        return self.level

    def deep_tags(self) -> Iterator[tuple]:
        """Atomic tags here and in every element, key and position, recursively."""
        yield from self.tags
        for child in (self.elem, self.keys):
            if child is not None:
                yield from child.deep_tags()
        # items are already folded into elem

    def with_tags(self, extra: Iterable[tuple]) -> "V":
        return V(_cap(self.tags | frozenset(extra)), self.elem, self.keys, self.items, self.level)


EMPTY = V()


def _cap(tags: frozenset) -> frozenset:
    if len(tags) <= MAX_TAGS:
        return tags
    keep = [t for t in tags if t[0] not in ("lit", "data", "prefix", "colv")]
    return frozenset(keep[:MAX_TAGS])


def tags(*t: tuple) -> V:
    return V(frozenset(t))


def join(a: "V | None", b: "V | None") -> V:
    if a is None or not a:
        return b if b is not None else EMPTY
    if b is None or not b or a is b:
        return a
    if a == b:
        return a
    items = None
    if a.items is not None and b.items is not None and len(a.items) == len(b.items):
        items = tuple(join(x, y) for x, y in zip(a.items, b.items))
    elem = _join_opt(a.elem, b.elem)
    keys = _join_opt(a.keys, b.keys)
    return _limit(V(_cap(a.tags | b.tags), elem, keys, items, _level(elem, keys)))


def join_all(values: Iterable[V]) -> V:
    out = EMPTY
    for v in values:
        out = join(out, v)
    return out


def _join_opt(a: "V | None", b: "V | None") -> "V | None":
    if a is None:
        return b
    if b is None:
        return a
    return join(a, b)


def _level(elem: "V | None", keys: "V | None") -> int:
    return max(-1 if elem is None else elem.level, -1 if keys is None else keys.level) + 1


def container(elem: V, keys: "V | None" = None, items: "tuple[V, ...] | None" = None) -> V:
    return _limit(V(frozenset(), elem, keys, items, _level(elem, keys)))


def sequence(values: tuple[V, ...]) -> V:
    """A list or tuple literal: known positions, and their join as the element value."""
    return container(join_all(values), None, values)


def _limit(v: V) -> V:
    if v.depth() <= MAX_DEPTH:
        return v
    return V(_cap(frozenset(v.deep_tags())))


def elements(v: V) -> V:
    """The value of any element of ``v`` (for a dict: any value)."""
    return v.elem if v.elem is not None else EMPTY


def is_dict(v: V) -> bool:
    return v.keys is not None


def iterate(v: V) -> V:
    """What iterating over ``v`` yields: a dict's keys, any other container's elements."""
    if v.keys is not None:
        return v.keys
    return elements(v)


def positions(v: V) -> "tuple[V, ...] | None":
    """What iterating over ``v`` yields, one value per step, when the structure is known."""
    if v.items is None:
        return None
    if v.keys is not None:  # a dict with literal keys: items are its (key, value) pairs
        return tuple(p.items[0] if p.items else EMPTY for p in v.items)
    return v.items


def dict_value(v: V, key: object) -> "V | None":
    """The value stored under literal ``key`` in a dict with known pairs, or None."""
    if v.keys is None or v.items is None:
        return None
    for pair in v.items:
        if pair.items and len(pair.items) == 2 and pair.items[0].tags == frozenset({("lit", key)}):
            return pair.items[1]
    return None


def mapping(pairs: "list[tuple[V, V]]") -> V:
    """A dict literal with known (key, value) pairs."""
    keys = join_all(k for k, _ in pairs)
    vals = join_all(v for _, v in pairs)
    return container(vals, keys, tuple(sequence((k, v)) for k, v in pairs))


def flat(v: V) -> V:
    """``v`` with every nested element folded into its top level (for 'anything in here')."""
    if v.elem is None and v.keys is None:
        return v
    return V(_cap(frozenset(v.deep_tags())))
