"""Facts about one analysed file: its fits and everything done with them.

The collector (``regvet.analysis.collect``) builds these in one pass over the
syntax tree; rules only read them. Locations are :class:`Loc` values: a span
plus the path of the file it is in (None for the analysed file itself), since a
fit made in the analysed file may be used inside a helper module.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Protocol

from regvet.model.span import Span


@dataclass(frozen=True)
class Outcome:
    """A dependent variable: its base variable and transform, e.g. ``log(riders)`` -> riders, log."""

    base: str
    transform: str | None
    text: str

    @property
    def key(self) -> str:
        return self.text

    def same_variable(self, other: Outcome) -> bool:
        return self.base == other.base


@dataclass(frozen=True)
class Loc:
    span: Span
    path: str | None = None  # None: the analysed file


@dataclass(frozen=True)
class Fit:
    """One results object: a ``.fit()`` call (or ``get_robustcov_results``) in one calling context."""

    id: int
    site: Loc  # where findings about the fit are placed
    fit_call: Loc  # the call that produced the results object
    via: tuple[Loc, ...]  # call sites it was returned through, innermost first
    estimator: str  # "OLS" | "WLS"
    api: str  # "formula" | "array"
    constructor: str  # qualified name of the model constructor
    formula: str | None
    outcome: Outcome | None
    n_regressors: int | None
    regressors: tuple[str, ...] | None
    cov_type: str | None  # lower-cased literal, "nonrobust" when not given, None when not a literal
    data_name: str | None
    time_reason: str | None  # why the data is time-ordered, or None
    shift_groups: frozenset[str]
    interacted_groups: frozenset[str]
    columns: frozenset[str]  # columns the fit is known to use or its data to hold
    auxiliary: bool  # an auxiliary regression built from another fit's residuals or fitted values
    parent: int | None  # for a robust-covariance copy: the fit it was derived from
    result_name: str | None  # the variable the result was assigned to, when simple
    statement: Span | None  # the statement holding the fit call, in the analysed file
    model_span: Span | None = None  # the model constructor call, in the analysed file
    time_where: Loc | None = None  # where the evidence of time order is, when known
    formula_too_large: bool = False  # the formula expands to too many terms to read them
    categorical_terms: frozenset[str] = frozenset()  # C(g) factors that are a term of their own
    interacted_columns: frozenset[str] = frozenset()  # identifiers read by a factor of an interaction term
    #: Fits with the same number are the same specification fitted on the same data (None: unknown).
    spec: int | None = None


@dataclass(frozen=True)
class Use:
    fit: int
    kind: str  # "estimate" | "inference" | "robust"
    member: str
    loc: Loc


@dataclass(frozen=True)
class Check:
    fit: int
    family: str
    function: str
    loc: Loc


@dataclass(frozen=True)
class Escape:
    fit: int
    callee: str
    loc: Loc


@dataclass(frozen=True)
class Comparison:
    loc: Loc
    measures: tuple[tuple[int, str], ...]  # (fit id, measure name)
    how: str  # "compare" | "difference" | "ratio" | "max" | "min" | "sorted"


@dataclass(frozen=True)
class Mismatch:
    loc: Loc
    function: str
    fits: tuple[int, ...]


@dataclass(frozen=True)
class GroupTest:
    """An F test of a model with interactions with the given categorical groups (a break test)."""

    fits: tuple[int, ...]
    groups: frozenset[str]
    loc: Loc


class _Derived(Protocol):
    @property
    def parent(self) -> int | None: ...


def root_fit(fid: int, fits: Mapping[int, _Derived]) -> int:
    """The fit a robust-covariance copy was derived from: follow ``parent`` links through ``fits``
    (a :class:`Fit` or the collector's record of one, by id) to the first fit whose parent is
    None or unknown. A cycle, which the collector never makes, stops at the first fit seen twice."""
    seen: set[int] = set()
    while fid not in seen:
        seen.add(fid)
        record = fits.get(fid)
        parent = None if record is None else record.parent
        if parent is None or parent not in fits:
            return fid
        fid = parent
    return fid


@dataclass(frozen=True)
class FileFacts:
    fits: tuple[Fit, ...] = ()
    uses: tuple[Use, ...] = ()
    checks: tuple[Check, ...] = ()
    escapes: tuple[Escape, ...] = ()
    comparisons: tuple[Comparison, ...] = ()
    mismatches: tuple[Mismatch, ...] = ()
    group_tests: tuple[GroupTest, ...] = ()
    tsa_in_use: bool = False
    #: Paths of the project modules the analysis found through imports (an editor re-analyses
    #: the file when one of them changes).
    dependencies: tuple[str, ...] = ()
    _index: dict = field(default_factory=dict, compare=False, repr=False)

    def _build(self) -> dict:
        if not self._index:
            by_id = {f.id: f for f in self.fits}
            roots = {f.id: root_fit(f.id, by_id) for f in self.fits}
            siblings: dict[int, set[int]] = {}
            for fid, root in roots.items():
                siblings.setdefault(root, set()).add(fid)
            by_fit: dict[str, dict[int, list]] = {"uses": {}, "checks": {}, "escapes": {}}
            for name in by_fit:
                for event in getattr(self, name):
                    by_fit[name].setdefault(event.fit, []).append(event)
            same_spec: dict[int, set[int]] = {}
            for f in self.fits:
                if f.spec is not None:
                    same_spec.setdefault(f.spec, set()).add(f.id)
            self._index.update(by_id=by_id, roots=roots, siblings=siblings, same_spec=same_spec, **by_fit)
        return self._index

    def fit(self, fid: int) -> Fit:
        return self._build()["by_id"][fid]

    def root(self, fid: int) -> int:
        """The fit a robust-covariance copy was derived from (itself otherwise)."""
        return self._build()["roots"].get(fid, fid)

    def same_residuals(self, fid: int) -> set[int]:
        """All fits sharing ``fid``'s residuals: itself, its root and every copy derived from the root."""
        index = self._build()
        return set(index["siblings"].get(self.root(fid), {fid}))

    def fits_at_site(self, site: Loc) -> list[Fit]:
        """The fits placed at ``site`` (a loop, a comprehension or a helper called in one makes several)."""
        index = self._build()
        by_site = index.get("by_site")
        if by_site is None:
            by_site = index["by_site"] = {}
            for f in self.fits:
                by_site.setdefault(f.site, []).append(f)
        return by_site.get(site, [])

    def same_data(self, fid: int) -> set[int]:
        """The fits whose checks count for ``fid``: those sharing its residuals, and every fit of the
        identical specification on the same data (with the fits sharing their residuals)."""
        index = self._build()
        out = self.same_residuals(fid)
        for member in list(out):
            fit = index["by_id"].get(member)
            if fit is not None and fit.spec is not None:
                for other in index["same_spec"].get(fit.spec, ()):
                    out |= self.same_residuals(other)
        return out

    def events_of(self, kind: str, fid: int) -> list:
        """``uses``, ``checks`` or ``escapes`` recorded for one fit."""
        return self._build()[kind].get(fid, [])
