"""The design's rank and resolution judged by the probe itself, and a correct fit when statsmodels lost rank.

Imported by ``regvet_fit`` inside the user's interpreter (standard library and numpy only, never
regvet). statsmodels decides the rank of a design on its raw columns (``matrix_rank`` of the
singular values of ``wexog``, and ``pinv`` with ``rcond=1e-15`` relative to the largest one).
Columns on very different scales (1e-8 beside 1e8), a cubic in calendar years or a high-degree
polynomial in raw x make a direction look like rounding noise there although the design has it:
statsmodels then reports a truncated fit whose residuals are not the least-squares residuals.

:func:`resolve` reads the design once in the probe's basis (:class:`regvet_linalg.Basis`: every
column centred on the explicit constant column), scales the columns to unit length and takes a
blocked QR of [V, y]. The rank of the scaled factor by numpy's ``matrix_rank`` rule (singular
values above the largest x max(n, k) x eps) is the design's rank; the ratio of its extreme
singular values on those directions is the condition number double precision has to resolve.
When that rank exceeds statsmodels' rank, the least-squares fit in that basis gives the residuals,
fitted values, coefficients and their covariance that the statistics use instead (:class:`Refit`).
An exact rank deficiency (x3 = x1 + x2) has the same rank on both scales and changes nothing.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

# Siblings in this folder (the probe's own modules, never regvet itself).
from regvet_linalg import EPS, Basis, TallQR

__all__ = ["Refit", "Resolution", "noise_floor", "resolve"]

#: Rounding errors of a computed residual or fitted value are taken to be at most this many times
#: eps x condition number x the size of the data (a safety factor over the usual first-order bound).
NOISE_FACTOR = 64.0


class Refit(NamedTuple):
    """The least-squares fit in the scaled basis (whitened quantities for WLS)."""

    u: np.ndarray  # residuals
    params: np.ndarray  # coefficients of the model's columns
    normalized_cov: np.ndarray  # (X'X)^- in the model's columns, on the identified directions
    ssr: float


class Resolution(NamedTuple):
    """What the scaled design resolves."""

    rank: int  # numerical rank of the centred, unit-scaled design
    condition: float  # its condition number on those directions (1.0 without columns)
    refit: Refit | None  # set when ``rank`` exceeds statsmodels' rank


def noise_floor(condition: float) -> float:
    """The relative size below which a computed residual or spread of fitted values is rounding noise."""
    return NOISE_FACTOR * EPS * max(1.0, condition)


def resolve(basis: Basis, y: np.ndarray, statsmodels_rank: int) -> Resolution:
    """The design's rank and condition in the scaled basis; a :class:`Refit` when statsmodels lost rank."""
    n, k = basis.n, basis.k
    if k == 0 or n == 0:
        return Resolution(0, 1.0, None)
    qr = TallQR()
    for s, e in basis.spans():
        qr.add(np.column_stack([basis.rows(s, e), y[s:e]]))
    assert qr.r is not None
    r = qr.r
    if not np.isfinite(r).all():
        return Resolution(statsmodels_rank, 1.0, None)
    rx, z = r[:, :k], r[:, k]
    norms = np.sqrt(np.sum(rx * rx, axis=0))
    nonzero = norms > 0
    norms[~nonzero] = 1.0
    left, sv, right_t = np.linalg.svd(rx / norms, full_matrices=False)
    if sv.size == 0 or not sv[0] > 0:
        return Resolution(0, 1.0, None)
    rank = int(np.sum(sv > sv[0] * max(n, k) * EPS))
    condition = float(sv[0] / sv[rank - 1])
    if rank <= statsmodels_rank:
        return Resolution(rank, condition, None)
    # The least-squares fit on the kept directions: scaled coefficients, then the model's.
    ur, sr, wr = left[:, :rank], sv[:rank], right_t[:rank].T
    beta_scaled = wr @ ((ur.T @ z) / sr)
    beta_v = beta_scaled / norms
    u = np.empty(n)
    for s, e in basis.spans():
        u[s:e] = y[s:e] - basis.rows(s, e) @ beta_v
    cov_v = (wr / sr**2) @ wr.T / np.outer(norms, norms)
    params = basis.to_coefficients(beta_v)
    return Resolution(rank, condition, Refit(u, params, basis.to_params(cov_v), float(u @ u)))
