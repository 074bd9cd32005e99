"""Reading a run's collinearity statistics the way ``collinear-design`` judges them.

Shared by the rule (``rules/collinear_design.py``, which words the finding) and the audit
(``audit.py``, whose collinearity row is :func:`collinearity_cell`): which term has the largest
generalized VIF, and which slopes a Belsley-Kuh-Welsch dimension carries, with the thresholds.
Pure; nothing here computes a statistic (the probe's ``regvet_collinear`` does).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

from regvet.rules.numbers import num

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


# --- the report's collinearity cell (audit.py) ----------------------------------------------------
#: The short forms of the collinearity row (the probe records the long ones; ``regvet explain collinear-design``).
GVIF_FORM = "generalized VIF per term (Fox-Monette), scaled GVIF^(1/(2·df)); a plain VIF for a one-column term"
CONDITION_FORM = (
    "condition indexes of the design with unit-length columns, the constant included, and variance-decomposition "
    "proportions (Belsley-Kuh-Welsch)"
)


def _names(names: tuple[str, ...] | list[str], limit: int | None = None) -> str:
    shown = names if limit is None or len(names) <= limit else names[:limit]
    more = f" and {len(names) - len(shown)} more" if len(shown) < len(names) else ""
    return ", ".join(f"`{n}`" for n in shown) + more


def _carried(s: FitStatistics, dim: Carried) -> str:
    """Which coefficients' variance (BKW proportion > 0.5) a condition index carries, in words."""
    props = ", ".join(num(dim.proportions[n]) for n in dim.slopes)
    if dim.dependence:
        return f"carries more than half the variance of {_names(dim.slopes)} (Belsley-Kuh-Welsch proportions {props})"
    if dim.term is not None:
        return f"its variance sits inside the term `{dim.term}` ({_names(dim.slopes)}: proportions {props})"
    const = constant(s)
    if dim.on_constant and const is not None:
        also = f" and {_names(dim.slopes)} {props}" if dim.slopes else ""
        return f"its variance sits on the intercept (proportions `{const}` {num(dim.proportions[const])}{also})"
    if dim.slopes:
        return f"carries more than half the variance of {_names(dim.slopes)} alone (proportion {props})"
    return "no coefficient has more than half its variance on it"


def collinearity_cell(s: FitStatistics) -> tuple[str | None, str | None, str | None]:
    """The collinearity cell as ``collinear-design`` judges it: the worst term's (generalized) VIF (the
    largest GVIF^(1/(2·df)), which for a one-column term is the square root of its plain VIF) and
    the largest condition index with the coefficients whose variance it carries. Runs from before
    generalized VIFs or BKW proportions were recorded show the largest plain VIF, the index alone."""
    bits: list[str] = []
    forms: list[str | None] = []
    worst = worst_term(s)
    vif = s.get("vif")
    if worst is not None:
        if worst.get("df") == 1:
            bits.append(f"worst term `{worst.get('term')}`: VIF {num(worst.get('gvif'))} (threshold {VIF})")
        else:
            bits.append(
                f"worst term `{worst.get('term')}` ({worst.get('df')} columns: {_names(worst.get('columns') or [], 6)}): "
                f"generalized VIF {num(worst.get('gvif'))}, GVIF^(1/(2·df)) = {num(worst.get('scaled'))} "
                f"(threshold √{VIF} = {num(SCALED_GVIF)})"
            )
        forms.append(GVIF_FORM)
    elif vif is not None and vif.get("max") is not None:
        bits.append(f"largest VIF {num(vif.get('max'))} (`{vif.get('variable')}`)")
    ci = s.get("condition_index")
    if ci is not None and ci.get("value") is not None:
        dims = ci.get("dimensions")
        text = f"condition index {num(ci.get('value'))}"
        if dims:  # the largest first
            text += f" (threshold {CONDITION}): " + _carried(s, carried(s, dims[0]))
            judged = judged_dimension(s)
            if judged is not None and judged.index != dims[0].get("index"):
                text += f"; condition index {num(judged.index)}: " + _carried(s, judged)
        elif dims is not None:
            text += " (no dimension of 10 or more)"
        bits.append(text)
        forms.append(CONDITION_FORM if dims is not None else ci.get("form"))
    form = "; ".join(f for f in forms if f) or None
    return ("; ".join(bits) or None), form, None
