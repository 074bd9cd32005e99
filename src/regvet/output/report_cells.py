"""The cells of the report's comparison tables, shared by the HTML and Markdown renderers.

Pure: the compared fits' rows (``ComparisonRow``, from ``rules.evidence.comparison_rows`` or a
finding's stored table) in, the head, the cells (text with `code` spans) and the notes out. The
notes say which numbers are on which scale: never numbers in different units side by side
without saying so.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

from regvet.rules.evidence import LEVEL_CV, num

if TYPE_CHECKING:
    from regvet.model.stats_schema import ComparisonRow

LEVEL_R2 = "level-scale R²"
LEVEL = "level scale"


@dataclass(frozen=True)
class ComparisonCells:
    head: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]  # cells as text with `code` spans; the first names the fit
    numeric: tuple[int, ...]  # the positions of the number columns
    notes: tuple[str, ...]  # what the columns mean when the fits' outcomes differ


def _n(value: object) -> str:
    if value is None:
        return "—"
    return str(value) if isinstance(value, int) else num(value)  # type: ignore[arg-type]


def _on_level_scale(row: ComparisonRow, retransformed: bool) -> bool:
    """The row's CV errors are on the level scale of a log/level pair: retransformed (``cv_scale``), or
    the level model's own when the pair's level-scale errors were computed (``retransformed``)."""
    return "cv_scale" in row or ("level_r2" in row and retransformed)


def level_r2(row: ComparisonRow) -> float | None:
    """corr(y, ŷ)² on the level scale: the transformed fit's ``log_level_r2``, the level model's ``level_r2``."""
    if row.get("log_level_r2") is not None:
        return row.get("log_level_r2")
    return row.get("level_r2")


def comparison_cells(table: Sequence[ComparisonRow]) -> ComparisonCells:
    outcomes = list(dict.fromkeys(str(r.get("outcome")) for r in table))
    mixed = len(outcomes) > 1
    paired = any("level_r2" in r or "level_transform" in r for r in table)
    level_column = paired or any(r.get("log_level_r2") is not None for r in table)
    level_outcome = next((str(r.get("outcome")) for r in table if "level_r2" in r), None)
    head = ["fit", "outcome", "nobs", "R²", "adjusted R²", "AIC", "BIC"]
    if level_column:
        head.append(LEVEL_R2)
    head.append("CV RMSE")
    retransformed = any("cv_scale" in r for r in table)
    rows = []
    own_scale_cv = False
    for r in table:
        cells = [
            f"`{r.get('fit')}`",
            f"`{r.get('outcome')}`",
            _n(r.get("nobs")),
            _n(r.get("rsquared")),
            _n(r.get("rsquared_adj")),
            _n(r.get("aic")),
            _n(r.get("bic")),
        ]
        if level_column:
            cells.append(_n(level_r2(r)))
        cv = r.get("cv_rmse")
        if cv is None:
            cells.append("—")
        elif _on_level_scale(r, retransformed):
            cells.append(f"{_n(cv)} ({LEVEL})")
        elif mixed:
            own_scale_cv = True
            cells.append(f"{_n(cv)} (scale of `{r.get('outcome')}`)")
        else:
            cells.append(_n(cv))
        rows.append(tuple(cells))
    notes = []
    if mixed:
        names = ", ".join(f"`{o}`" for o in outcomes)
        also = " and neither are the CV RMSE marked with their outcome's scale" if own_scale_cv else ""
        notes.append(
            f"The fits have different outcomes ({names}): R², adjusted R², AIC and BIC are each on the fit's "
            f"own outcome and are not comparable across these rows{also}."
        )
    on = f"`{level_outcome}`" if level_outcome is not None else "the untransformed outcome"
    if level_column:
        notes.append(
            f"The {LEVEL_R2} is corr(y, ŷ)² with y and ŷ on the scale of {on}, a transformed outcome's fitted "
            "values transformed back: the one R² comparable across a transformed and a level fit."
        )
    scales = [r.get("cv_scale") for r in table if "cv_scale" in r and r.get("cv_rmse") is not None]
    if scales:
        how = "retransformed with Duan's smearing" if scales[0] == LEVEL_CV else f"on the {scales[0]}"
        notes.append(
            f"CV RMSE marked “{LEVEL}” are k-fold prediction errors on the scale of {on}: the level model's own, "
            f"and the transformed fit's {how}; they are comparable with each other."
        )
    numeric = tuple(range(2, len(head)))
    return ComparisonCells(tuple(head), tuple(rows), numeric, tuple(notes))
