"""Linear algebra of the runtime probe's statistics: the design's basis, row passes, QR and inverses.

Imported by ``regvet_stats`` inside the user's interpreter (this folder is on the child process's
``PYTHONPATH``): standard library and numpy only, never regvet. Nothing here allocates an n x k
temporary beyond one block of ``chunk`` rows.

* :class:`Basis`: the design in a better-conditioned basis with the same column space (every column
  minus its projection on an explicit constant column), read in row blocks.
* :func:`sweep`: one pass over the row blocks, feeding every consumer, isolating a failing one.
* :class:`GInverse`: a generalised inverse of an equilibrated cross-product matrix.
* :class:`TallQR` and :func:`ssr_on_columns`: a blocked QR of a tall matrix and the rank-revealing
  regression of its last column on the others (designs that are rank-deficient by construction).
* :func:`constant_columns`, :func:`leverages`, :func:`gram_with_constant`: small helpers.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator

import numpy as np

__all__ = [
    "EPS",
    "Basis",
    "Consumer",
    "GInverse",
    "TallQR",
    "constant_columns",
    "gram_with_constant",
    "leverages",
    "ssr_on_columns",
    "sweep",
]

#: Machine epsilon of float64.
EPS = float(np.finfo(float).eps)

# --------------------------------------------------------------------------------------------
# Inverses and QR


class GInverse:
    """A generalised inverse of a symmetric positive semi-definite matrix ``a``.

    ``a`` is equilibrated (scaled to unit diagonal) and decomposed by ``eigh``; the ``rank``
    largest eigen-directions are kept (fewer if their eigenvalues are numerical noise, below
    10·p·eps of the largest). ``inv`` satisfies a·inv·a = a on the kept directions, which is all that
    projections, quadratic forms c'a⁻c for c in the range of a, and residualisation need.
    """

    def __init__(self, a: np.ndarray, rank: int | None = None) -> None:
        a = np.asarray(a, dtype=float)
        p = a.shape[0]
        a = (a + a.T) / 2.0
        d = np.sqrt(np.clip(np.diag(a), 0.0, None))
        d[~(d > 0)] = 1.0
        scaled = a / np.outer(d, d)
        if p == 0:
            self.rank, self.eigenvalues, self.inv = 0, np.zeros(0), np.zeros((0, 0))
            return
        w, q = np.linalg.eigh(scaled)
        w, q = w[::-1], q[:, ::-1]
        tol = max(w[0], 0.0) * p * EPS * 10.0
        numeric = int(np.sum(w > tol))
        keep = numeric if rank is None else max(0, min(int(rank), numeric))
        self.rank = keep
        self.eigenvalues = w
        qk = q[:, :keep] / d[:, None]
        self.inv = (qk / w[:keep]) @ qk.T

    def quad(self, c: np.ndarray) -> float:
        """c'·inv·c for a vector c."""
        return float(c @ self.inv @ c)


def _qr_r(block: np.ndarray) -> np.ndarray:
    """The R factor of a block (rows x p), always returned with p columns."""
    return np.asarray(np.linalg.qr(block, mode="r"))  # mode="r" returns the array itself


class TallQR:
    """Blocked QR of a tall matrix fed in row blocks: keeps only the small triangular factor R."""

    def __init__(self) -> None:
        self.r: np.ndarray | None = None
        self.rows = 0

    def add(self, block: np.ndarray) -> None:
        if block.shape[0] == 0:
            return
        self.rows += block.shape[0]
        stacked = block if self.r is None else np.vstack([self.r, block])
        self.r = _qr_r(stacked)


def ssr_on_columns(r: np.ndarray, n_rows: int, p: int) -> tuple[float, int]:
    """(SSR, rank): last column of the matrix whose QR factor is ``r`` regressed on its first p columns.

    The rank is numpy's ``matrix_rank`` rule (largest singular value x max(rows, p) x eps) applied to
    the unit-length-scaled columns; the SSR is the squared norm of what the rank-revealing projection
    leaves of the last column, so exactly collinear columns do not absorb a noise direction.
    """
    rx = r[:, :p]
    z = r[:, p]
    norms = np.sqrt(np.sum(rx * rx, axis=0))
    norms[~(norms > 0)] = 1.0
    u, sv, _ = np.linalg.svd(rx / norms, full_matrices=False)
    if sv.size == 0 or sv[0] == 0:
        return float(z @ z), 0
    rank = int(np.sum(sv > sv[0] * max(n_rows, p) * EPS))
    ur = u[:, :rank]
    rest = z - ur @ (ur.T @ z)
    return float(rest @ rest), rank


def constant_columns(X: np.ndarray, block: int = 4096) -> np.ndarray:
    """Indexes of the columns whose entries are all equal (without an n x k temporary).

    The first block of rows rules out almost every column; only the survivors are read further.
    """
    n = X.shape[0]
    if n == 0:
        return np.zeros(0, dtype=int)
    first = np.asarray(X[0])
    candidates = np.flatnonzero((np.asarray(X[:block]) == first).all(axis=0))
    for j in list(candidates):
        column = X[:, j]
        for s in range(block, n, 65_536):
            if not (column[s : s + 65_536] == first[j]).all():
                candidates = candidates[candidates != j]
                break
    return candidates


def leverages(v: np.ndarray, ginv: np.ndarray) -> np.ndarray:
    """The leverages h_i = v_i'·ginv·v_i of the rows v_i of a block (ginv: a generalised inverse of V'V)."""
    return np.einsum("ij,ij->i", v @ ginv, v)


# --------------------------------------------------------------------------------------------
# The design's basis


class Basis:
    """The design in a basis with the same column space: V = X·A, better conditioned than X.

    With an explicit constant column c (index ``c``), column j of V is x_j − m_j·c with
    m_j = c'x_j / c'c; otherwise V = X. A = I − e_c m' (m_c = 0), so Xβ = Vβ_V gives β = A·β_V and
    Cov(β) = A·Cov(β_V)·A'; X'X = A⁻ᵀ(V'V)A⁻¹ with A⁻¹ = I + e_c m'.
    """

    def __init__(self, X: np.ndarray, const_idx: int | None, chunk: int, shift_rows: bool) -> None:
        """``X``: the design (n x k); ``const_idx``: its explicit constant column, if any; ``chunk``:
        rows per block; ``shift_rows``: the constant column is one constant a (OLS with 1 in the
        design's span), so a row of V is the row of X minus a·m."""
        self.X = X
        self.n, self.k = X.shape
        self.c = const_idx
        self.chunk = chunk
        self.m: np.ndarray | None = None
        self.shift: np.ndarray | None = None  # a·m when the constant column is the constant a
        if self.c is not None:
            num = np.zeros(self.k)
            den = 0.0
            for s, e in self.spans():
                block = np.asarray(self.X[s:e], dtype=float)
                col = block[:, self.c]
                num += block.T @ col
                den += float(col @ col)
            m = num / den
            m[self.c] = 0.0
            self.m = m
            if shift_rows:
                self.shift = float(np.asarray(self.X[0, self.c], dtype=float)) * m

    def spans(self) -> Iterator[tuple[int, int]]:
        """(start, stop) of every row block."""
        for s in range(0, self.n, self.chunk):
            yield s, min(self.n, s + self.chunk)

    def _centre(self, block: np.ndarray) -> np.ndarray:
        if self.m is None:
            return block
        if self.shift is not None:
            return block - self.shift
        out = np.outer(block[:, self.c], self.m)
        np.subtract(block, out, out=out)
        return out

    def rows(self, s: int, e: int) -> np.ndarray:
        """Rows s..e of V (a new array, or a read-only view of X when no change of basis is needed)."""
        return self._centre(np.asarray(self.X[s:e], dtype=float))

    def take(self, positions: np.ndarray) -> np.ndarray:
        """The rows of V at these positions."""
        return self._centre(np.asarray(self.X[positions], dtype=float))

    def to_coefficients(self, beta_v: np.ndarray) -> np.ndarray:
        """Map coefficients β_V of V to the model's parameters β = A·β_V."""
        if self.m is None:
            return beta_v
        beta = np.array(beta_v, dtype=float)
        beta[self.c] -= float(self.m @ beta_v)
        return beta

    def to_params(self, cov_v: np.ndarray) -> np.ndarray:
        """Map a covariance of β_V to the covariance of the model's parameters β."""
        if self.m is None:
            return cov_v
        a = np.eye(self.k)
        a[self.c, :] -= self.m
        return a @ cov_v @ a.T

    def to_raw_gram(self, g: np.ndarray) -> np.ndarray:
        """X'X from V'V."""
        if self.m is None:
            return g
        ainv = np.eye(self.k)
        ainv[self.c, :] += self.m
        return ainv.T @ g @ ainv


# --------------------------------------------------------------------------------------------
# Passes over the rows


Consumer = Callable[[int, int, np.ndarray], None]


def sweep(basis: Basis, consumers: dict[str, Consumer], failed: dict[str, BaseException]) -> None:
    """One pass over the row blocks of V, feeding each block to every consumer.

    A consumer that raises is dropped for the rest of the pass and its exception kept in ``failed``.
    """
    active = {name: fn for name, fn in consumers.items() if name not in failed}
    if not active:
        return
    for s, e in basis.spans():
        v = basis.rows(s, e)
        for name, fn in list(active.items()):
            try:
                fn(s, e, v)
            except Exception as exc:
                failed[name] = exc
                del active[name]
        if not active:
            return


def gram_with_constant(g: np.ndarray, sums: np.ndarray, n: int) -> np.ndarray:
    """The cross-product matrix of [1, V] from V'V, V'1 and n."""
    k = g.shape[0]
    out = np.empty((k + 1, k + 1))
    out[0, 0] = n
    out[0, 1:] = sums
    out[1:, 0] = sums
    out[1:, 1:] = g
    return out
