"""Findings: the frozen values every rule produces and every front prints."""

from __future__ import annotations

import enum
from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING, Any

from regvet.model.span import Span

if TYPE_CHECKING:
    from regvet.model.stats_schema import FindingStats


class Severity(enum.IntEnum):
    """Ordered so that ``severity >= fail_on`` decides the exit code."""

    INFO = 1
    WARNING = 2
    ERROR = 3

    @classmethod
    def parse(cls, text: str) -> Severity:
        try:
            return cls[text.upper()]
        except KeyError:
            raise ValueError(f"unknown severity {text!r}; expected one of error, warning, info") from None

    @property
    def label(self) -> str:
        return self.name.lower()


@dataclass(frozen=True)
class Related:
    """A secondary location: where inference is used, where the other fit is, ...

    ``path`` is None when the location is in the same file as the finding.
    """

    span: Span
    message: str
    path: str | None = None


@dataclass(frozen=True)
class Finding:
    """One problem found in one file.

    ``fix`` carries what quick fixes and ``--fix`` need (JSON-safe values only);
    ``stats`` stays None until the runtime mode attaches statistics.
    """

    rule: str
    severity: Severity
    span: Span
    message: str
    related: tuple[Related, ...] = ()
    waived: bool = False
    reason: str | None = None
    fix: dict[str, Any] | None = field(default=None, compare=False, hash=False)
    stats: FindingStats | None = field(default=None, compare=False, hash=False)
    #: Ids of the fits the finding is about (so a run's statistics can be attached to it).
    fits: tuple[int, ...] = field(default=(), compare=False, hash=False)

    def sort_key(self) -> tuple:
        return (*self.span.sort_key(), self.rule, self.message)

    def with_(self, **changes: Any) -> Finding:
        return replace(self, **changes)
