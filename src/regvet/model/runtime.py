"""What a run of the analysed code showed, as plain values the rules can read.

The runtime mode (``regvet.runtime``, never imported by the static core) executes the
script, computes statistics for every fit in the child process and matches them to the
static fits; this module only holds the result. Statistics are JSON-safe dicts produced by
the probe; ``regvet.model.stats_schema`` describes their keys.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from regvet.model.span import Span

if TYPE_CHECKING:
    from regvet.model.stats_schema import FitRecord, PairRecord


@dataclass(frozen=True)
class RunFailure:
    """Why the run did not complete (an exception, an early exit, a timeout, memory)."""

    reason: str
    detail: tuple[str, ...] = ()  # last lines of the traceback or of the output
    span: Span | None = None  # where in the analysed file, when known (joined coordinates)


@dataclass(frozen=True)
class Pairing:
    """Two compared static fits whose outcomes the run showed to be one transform of the other."""

    transformed: int  # static fit id of the fit of the transformed outcome (``log_riders``)
    level: int  # static fit id of the fit of the level outcome (``riders``)
    record: PairRecord


@dataclass(frozen=True)
class RuntimeFacts:
    """Statistics per static fit id (one entry per time the fit ran), and the run's outcome."""

    fit_stats: dict[int, tuple[FitRecord, ...]] = field(default_factory=dict)
    failure: RunFailure | None = None
    cached: bool = False
    elapsed_s: float | None = None
    pairs: tuple[Pairing, ...] = ()

    def stats(self, fid: int) -> tuple[FitRecord, ...]:
        """The probe's records of every run of the fit (``FitRecord.stats`` holds the statistics)."""
        return self.fit_stats.get(fid, ())

    def pairing(self, fids: set[int] | frozenset[int]) -> list[Pairing]:
        """The pairings between fits in ``fids``."""
        return [p for p in self.pairs if p.transformed in fids and p.level in fids]
