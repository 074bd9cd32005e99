"""Reading a run's collinearity statistics the way ``collinear-design`` judges them.

Shared by the rule (``rules/collinear_design.py``, which words the finding) and the audit
(``audit.py``, the collinearity row of each fit): which term has the largest generalized VIF, and
which slopes a Belsley-Kuh-Welsch dimension carries, with the thresholds. Pure; nothing here
computes a statistic (the probe's ``regvet_collinear`` does).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from regvet.model.stats_schema import Dimension, FitStatistics, GvifTerm

CONDITION = 30  # Belsley, Kuh and Welsch (1980)
PROPORTION = 0.5  # Belsley, Kuh and Welsch (1980): a variance-decomposition proportion above one half
VIF = 10  # common practice
#: GVIF^(1/(2·df)) is compared with the square root of the VIF threshold (Fox and Monette 1992; common practice).
SCALED_GVIF = math.sqrt(VIF)


def worst_term(s: FitStatistics) -> GvifTerm | None:
    """The term with the largest scaled generalized VIF, None for a run without generalized VIFs."""
    gvif = s.get("gvif")
    if gvif is None or gvif.get("terms") is None:
        return None
    worst: GvifTerm | None = None
    for term in gvif.get("terms") or []:
        if worst is None or (term.get("scaled") or 0.0) > (worst.get("scaled") or 0.0):
            worst = term
    return worst


@dataclass(frozen=True)
class Carried:
    """What one BKW dimension carries: the coefficients with a proportion above :data:`PROPORTION`."""

    index: float | None
    slopes: tuple[str, ...]  # other than the constant, largest share first
    proportions: dict[str, float | None]
    on_constant: bool  # the constant's proportion is above PROPORTION too
    term: str | None  # the name of the one term holding every slope (two or more), when there is one

    @property
    def dependence(self) -> bool:
        """A near-dependence the rule judges: two or more slopes not all in one term."""
        return len(self.slopes) >= 2 and self.term is None


def constant(s: FitStatistics) -> str | None:
    """The name of the design's explicit constant column in the BKW statistics, if any."""
    index = s.get("condition_index")
    return index.get("constant") if index is not None else None


def carried(s: FitStatistics, dim: Dimension) -> Carried:
    const = constant(s)
    shares = dim.get("proportions") or {}
    slopes = tuple(n for n, p in shares.items() if p is not None and p > PROPORTION and n != const)
    share = shares.get(const) if const is not None else None
    gvif = s.get("gvif")
    named = (
        [(t.get("term"), set(t.get("columns") or [])) for t in (gvif.get("terms") or [])] if gvif is not None else []
    )
    inside = next((name for name, cols in named if set(slopes) <= cols), None) if len(slopes) >= 2 else None
    return Carried(dim.get("index"), slopes, shares, share is not None and share > PROPORTION, inside)


def judged_dimension(s: FitStatistics) -> Carried | None:
    """The largest dimension with an index above :data:`CONDITION` that the rule flags, or None
    (also for a run without the proportions: see :func:`old_index`)."""
    index = s.get("condition_index")
    if index is None or index.get("dimensions") is None:
        return None
    for dim in index.get("dimensions") or []:
        value = dim.get("index")
        if value is None or not value > CONDITION:
            continue
        c = carried(s, dim)
        if c.dependence:
            return c
    return None


def old_index(s: FitStatistics) -> float | None:
    """For a run from before the proportions were recorded: the index alone, when above the threshold."""
    index = s.get("condition_index")
    if index is None or index.get("dimensions") is not None:
        return None
    value = index.get("value")
    return value if value is not None and value > CONDITION else None
