"""Collinearity statistics from the R factor of the design: BKW condition indexes, VIFs, generalized VIFs.

Runs inside the user's interpreter beside ``regvet_stats`` (standard library and numpy only, never
regvet). Everything starts from R, the triangular factor of a blocked QR of the design in the
probe's basis V (``regvet_linalg.Basis``: R'R = V'V); nothing here reads the rows again and nothing
squares the condition number by forming a cross-product matrix and inverting or decomposing it.

* :func:`condition_indexes`: Belsley, Kuh and Welsch (1980): the singular values of the design X
  with every column, the constant included, scaled to unit length (not centred), and the
  variance-decomposition proportions: the share of each coefficient's variance that falls on each
  singular direction. X = V·A⁻¹ (``Basis``), so the singular values of X are those of R·A⁻¹.
* :func:`centred_factor`: a triangular F with F'F = the centred cross-product matrix of the
  non-constant columns (the columns of V orthogonal to the constant; the Gram matrix only for a
  design without an explicit constant column).
* :func:`vifs` and :func:`gvifs`: VIF_j = C_jj·(C⁻¹)_jj, and Fox and Monette's (1992, JASA)
  generalized VIF of a set of columns, GVIF = det(C_SS)·det((C⁻¹)_SS) (= det R_SS·det R_rest / det R
  for the correlation matrix R), each determinant from the QR of a slice of F or of F⁻¹.
* :func:`term_sets`: which columns form one term (a predictor with its powers and the interactions
  that contain it, the dummies of one categorical, and any other function of that one predictor,
  ``I(x**2 / 100)``, ``np.log(x)``, ``f(x)``: their collinearity with x is by construction): from
  patsy's ``design_info`` when the fit came from a formula, else from the column names (``x**2``,
  ``I(x ** 2)``, ``np.power(x, 2)``, ``x:z``, ``C(g)[T.b]``); other columns are terms of their own,
  and predictors joined by an interaction are one term.
"""

from __future__ import annotations

import ast
import re
from typing import Any

import numpy as np

# Siblings in this folder (the probe's own modules, never regvet itself).
from regvet_fit import StatisticError, as_float
from regvet_linalg import EPS

__all__ = [
    "FORM_CONDITION_INDEX",
    "FORM_GVIF",
    "PROPORTION_SHOWN",
    "centred_factor",
    "condition_indexes",
    "gvifs",
    "raw_factor",
    "term_sets",
    "vifs",
]

FORM_CONDITION_INDEX = (
    "Belsley-Kuh-Welsch: singular values of the design with every column, the constant included, scaled "
    "to unit length, not centred; variance-decomposition proportions per dimension"
)
FORM_GVIF = (
    "Fox-Monette generalized VIF per term (a predictor with its powers and the interactions that contain "
    "it, the dummies of one categorical; predictors that interact are one term): det(R_SS)·det(R_rest)/det(R) "
    "of the regressors' correlation matrix R; scaled = GVIF^(1/(2·df))"
)

#: Dimensions are reported from this condition index on, with the proportions from this share on
#: (BKW call indexes around 10 weak dependencies; the rule judges larger values).
INDEX_SHOWN = 10.0
PROPORTION_SHOWN = 0.1

# Calls whose first argument is the predictor: a categorical, a power, a centring or a spline of it.
_OF_ARGUMENT = {"C", "I", "Q", "center", "standardize", "scale", "bs", "cr", "cc", "power", "square"}
_LEVEL = re.compile(r"^(.*)\[[^\[\]]*\]$")


# --------------------------------------------------------------------------------------------
# Factors


def raw_factor(r_v: np.ndarray, const_idx: int | None, m: np.ndarray | None) -> np.ndarray:
    """A factor of the design X itself (F'F = X'X) from the factor R of V = X·A: R·A⁻¹ = R + R e_c m'."""
    if const_idx is None or m is None:
        return r_v
    return r_v + np.outer(r_v[:, const_idx], m)


def centred_factor(r_v: np.ndarray | None, gram: np.ndarray, sums: np.ndarray, n: int, idx: list[int]) -> np.ndarray:
    """Triangular F with F'F = the centred cross-product matrix of the columns ``idx``.

    With an explicit constant column, the columns of V at ``idx`` are already orthogonal to it, and
    the QR of R's columns gives F without a cross-product matrix. Without one (``r_v`` None), the
    centred Gram matrix is factored by Cholesky.
    """
    if r_v is not None:
        return np.asarray(np.linalg.qr(r_v[:, idx], mode="r"))
    centred = gram[np.ix_(idx, idx)] - np.outer(sums[idx], sums[idx]) / n
    centred = (centred + centred.T) / 2.0
    try:
        return np.linalg.cholesky(centred).T
    except np.linalg.LinAlgError as exc:
        raise StatisticError(_COLLINEAR) from exc


_COLLINEAR = (
    "the centred regressors are perfectly collinear (e.g. a full set of dummies without a constant "
    "column), so the VIFs are infinite"
)


def _unit_columns(f: np.ndarray, names: list[str]) -> np.ndarray:
    d = np.sqrt(np.sum(f * f, axis=0))
    if not np.all(d > 0):
        bad = [names[i] for i in np.flatnonzero(~(d > 0))]
        raise StatisticError(f"regressor(s) without variation: {', '.join(bad)}")
    return f / d


def _inverse(f: np.ndarray) -> np.ndarray:
    """F⁻¹ of a triangular factor of a correlation matrix, refused when it is numerically singular."""
    diag = np.abs(np.diag(f))
    if diag.size and not diag.min() > diag.max() * f.shape[0] * EPS * 10:
        raise StatisticError(_COLLINEAR)
    return np.linalg.solve(f, np.eye(f.shape[0]))  # F is triangular: the solve is exact to rounding


def vifs(f: np.ndarray, names: list[str]) -> dict[str, Any]:
    """Centred VIFs from F (F'F = C): VIF_j = C_jj·(C⁻¹)_jj = ‖row j of F⁻¹‖² for unit columns."""
    if not names:
        return {"max": None, "variable": None, "values": {}}
    finv = _inverse(_unit_columns(f, names))
    values = np.sum(finv * finv, axis=1)
    top = int(np.argmax(values))
    return {
        "max": as_float(values[top]),
        "variable": names[top],
        "values": {name: as_float(v) for name, v in zip(names, values)},
    }


def _det2(block: np.ndarray) -> float:
    """det(B'B) of a tall block B, from its QR (the product of R's squared diagonal)."""
    if block.shape[1] == 0:
        return 1.0
    r = np.linalg.qr(block, mode="r")
    return float(np.prod(np.diag(r) ** 2))


def gvifs(f: np.ndarray, names: list[str], sets: list[tuple[str, list[int]]]) -> dict[str, Any]:
    """Generalized VIFs of the column sets (positions into ``names``, the columns of F)."""
    out: dict[str, Any] = {"max": None, "term": None, "terms": [], "form": FORM_GVIF}
    if not names:
        return out
    fu = _unit_columns(f, names)
    finv = _inverse(fu)
    best = -1.0
    for label, cols in sets:
        df = len(cols)
        # det(C_SS)·det((C⁻¹)_SS): the first from F's columns S, the second from F⁻¹'s rows S.
        gvif = _det2(fu[:, cols]) * _det2(finv[cols, :].T)
        scaled = gvif ** (1.0 / (2 * df))
        out["terms"].append(
            {
                "term": label,
                "columns": [names[j] for j in cols],
                "df": df,
                "gvif": as_float(gvif),
                "scaled": as_float(scaled),
            }
        )
        if scaled > best:
            best = scaled
            out["max"], out["term"] = as_float(scaled), label
    return out


def condition_indexes(f_x: np.ndarray, names: list[str], constant: str | None) -> dict[str, Any]:
    """BKW condition indexes and variance-decomposition proportions of the design whose factor is ``f_x``.

    With X·D⁻¹ = U·S·W' (D: column lengths), Var(b_j) ∝ Σ_k W_jk²/s_k², and the proportion of
    coefficient j on dimension k is (W_jk/s_k)² over that sum. Dimensions with an index of at least
    :data:`INDEX_SHOWN` are listed, largest first, with the proportions of at least
    :data:`PROPORTION_SHOWN`.
    """
    d = np.sqrt(np.sum(f_x * f_x, axis=0))
    if not np.all(d > 0):
        raise StatisticError("a column of the design is all zeros")
    _, sv, wt = np.linalg.svd(f_x / d, full_matrices=False)
    if not sv[-1] > sv[0] * max(f_x.shape) * EPS:
        raise StatisticError("the scaled design is numerically singular: the condition index is infinite")
    phi = (wt.T / sv) ** 2  # phi[j, k]: coefficient j, dimension k
    props = phi / phi.sum(axis=1, keepdims=True)
    index = sv[0] / sv
    dims = []
    for k in np.argsort(-index):
        if index[k] < INDEX_SHOWN:
            break
        shown = {names[j]: as_float(props[j, k]) for j in np.argsort(-props[:, k]) if props[j, k] >= PROPORTION_SHOWN}
        dims.append({"index": as_float(index[k]), "proportions": shown})
    return {
        "value": as_float(index.max()),
        "form": FORM_CONDITION_INDEX,
        "constant": constant,
        "dimensions": dims,
    }


# --------------------------------------------------------------------------------------------
# Terms


def _bases(node: ast.expr) -> set[str]:
    """The predictors an expression is a power, categorical or product of (its own text otherwise)."""
    if isinstance(node, ast.Name):
        return {node.id}
    if isinstance(node, ast.Constant) and isinstance(node.value, str):  # Q("name")
        return {node.value}
    if isinstance(node, ast.Call) and node.args:
        func = node.func
        name = func.attr if isinstance(func, ast.Attribute) else func.id if isinstance(func, ast.Name) else ""
        if name in _OF_ARGUMENT:
            if name == "power" and not (len(node.args) == 2 and _is_int(node.args[1])):
                return {ast.unparse(node)}
            return _bases(node.args[0])
    if isinstance(node, ast.BinOp):
        if isinstance(node.op, (ast.Pow, ast.BitXor)) and _is_int(node.right):
            return _bases(node.left)
        if isinstance(node.op, ast.Mult) and not (_is_number(node.left) or _is_number(node.right)):
            return _bases(node.left) | _bases(node.right)
    free = _free_names(node)
    if len(free) == 1:  # a function of one predictor: exper**2 / 100, x - 2000, np.log(x), myfunc(x)
        return free
    return {ast.unparse(node)}


def _is_number(node: ast.expr) -> bool:
    return isinstance(node, ast.Constant) and isinstance(node.value, (int, float)) and not isinstance(node.value, bool)


def _free_names(node: ast.expr) -> set[str]:
    """The variables an expression reads: names, leaving out called functions and modules (``np`` in
    ``np.log(x)``), and the strings of ``Q("name")``."""
    skip: set[int] = set()
    for sub in ast.walk(node):
        if isinstance(sub, ast.Call):
            skip.add(id(sub.func))
            if isinstance(sub.func, ast.Name) and sub.func.id == "Q":
                skip.update(id(a) for a in sub.args)
        elif isinstance(sub, ast.Attribute):
            skip.add(id(sub.value))
    out: set[str] = set()
    for sub in ast.walk(node):
        if id(sub) in skip:
            continue
        if isinstance(sub, ast.Name):
            out.add(sub.id)
        elif isinstance(sub, ast.Call) and isinstance(sub.func, ast.Name) and sub.func.id == "Q":
            out.update(a.value for a in sub.args if isinstance(a, ast.Constant) and isinstance(a.value, str))
    return out


def _is_int(node: ast.expr) -> bool:
    return isinstance(node, ast.Constant) and isinstance(node.value, int) and not isinstance(node.value, bool)


def predictors(text: str) -> set[str]:
    """The predictors of one factor's code or one column's name (``x:z`` is both x and z)."""
    out: set[str] = set()
    level = _LEVEL.match(text.strip())
    if level:
        text = level.group(1)
    for piece in text.split(":") if not text.startswith(("I(", "Q(")) else [text]:
        piece = piece.strip()
        try:
            node = ast.parse(piece, mode="eval").body
        except SyntaxError:
            out.add(piece)
            continue
        out |= _bases(node)
    return out


def _column_predictors(model: Any, names: list[str], idx: list[int]) -> list[set[str]]:
    """For each non-constant column, the predictors it belongs to."""
    data = getattr(model, "data", None)
    info = getattr(data, "design_info", None) or getattr(getattr(data, "orig_exog", None), "design_info", None)
    slices = getattr(info, "term_slices", None)
    per_column: dict[int, set[str]] = {}
    if slices is not None and len(getattr(info, "column_names", ())) == len(names):
        for term, where in slices.items():
            found: set[str] = set()
            for factor in getattr(term, "factors", ()):
                found |= predictors(str(factor.name()))
            for j in range(len(names))[where]:
                per_column[j] = found
    return [per_column.get(j) or predictors(names[j]) for j in idx]


def term_sets(model: Any, names: list[str], idx: list[int]) -> list[tuple[str, list[int]]]:
    """The model's terms as sets of columns (positions into ``idx``), in the order of their first column.

    A predictor's term is every column that involves it (its powers, its dummies, the interactions
    that contain it); predictors that share a column (an interaction x:z) are one term, since the
    interaction belongs to both. A one-column term is labelled with the column's name, a larger one
    with its predictors joined by " * ".
    """
    found = _column_predictors(model, names, idx)
    label_of: dict[str, str] = {}
    parent: dict[str, str] = {}

    def root(p: str) -> str:
        while parent[p] != p:
            parent[p] = parent[parent[p]]
            p = parent[p]
        return p

    for preds in found:
        ordered = sorted(preds)
        for p in ordered:
            parent.setdefault(p, p)
            label_of.setdefault(p, p)
        for p in ordered[1:]:
            a, b = root(ordered[0]), root(p)
            if a != b:
                parent[b] = a
    groups: dict[str, list[int]] = {}
    members: dict[str, list[str]] = {}
    for pos, preds in enumerate(found):
        key = root(sorted(preds)[0])
        groups.setdefault(key, []).append(pos)
    for p in parent:
        members.setdefault(root(p), []).append(p)
    out: list[tuple[str, list[int]]] = []
    for key, cols in sorted(groups.items(), key=lambda item: item[1][0]):
        first = {p: min(i for i, preds in enumerate(found) if p in preds) for p in members[key]}
        label = names[idx[cols[0]]] if len(cols) == 1 else " * ".join(sorted(members[key], key=first.__getitem__))
        out.append((label, cols))
    return out
