"""The static core's own F distribution (``rules/evidence.f_pvalue``) against scipy.

The core may not import scipy (``regvet check`` starts without it), so the upper tail of
F(d1, d2) is computed with a continued fraction for the regularized incomplete beta
function. Reference: ``scipy.stats.f.sf`` (scipy as the reference implementation), over a grid
of degrees of freedom from the tiny to the large and of F values from the centre to the far tail.
"""

from __future__ import annotations

import math

import pytest

scipy_stats = pytest.importorskip("scipy.stats")

from regvet.rules.evidence import f_pvalue  # noqa: E402

DF_NUM = (1, 2, 3, 5, 10, 30, 100, 1000)
DF_DEN = (1, 2, 5, 10, 30, 100, 1000, 100000)
#: Quantiles of each F(d1, d2) at which the tail is compared: from the centre to p = 1e-12.
TAILS = (0.9, 0.5, 0.1, 0.05, 0.01, 1e-4, 1e-8, 1e-12)


@pytest.mark.parametrize("d1", DF_NUM)
@pytest.mark.parametrize("d2", DF_DEN)
def test_upper_tail_matches_scipy(d1, d2):
    for tail in TAILS:
        f = float(scipy_stats.f.isf(tail, d1, d2))
        if not math.isfinite(f):
            continue
        expected = float(scipy_stats.f.sf(f, d1, d2))
        got = f_pvalue(f, d1, d2)
        assert got is not None
        # Relative agreement in the tail, absolute near the centre (both far below any alpha).
        assert got == pytest.approx(expected, rel=1e-9, abs=1e-14), (d1, d2, f)


@pytest.mark.parametrize("d1, d2", [(1.5, 7.25), (2.5, 40.5), (12.75, 3.5)])
def test_fractional_degrees_of_freedom_match_scipy(d1, d2):
    """Degrees of freedom need not be whole (Satterthwaite-style corrections)."""
    for f in (0.2, 1.0, 3.0, 12.0, 80.0):
        assert f_pvalue(f, d1, d2) == pytest.approx(float(scipy_stats.f.sf(f, d1, d2)), rel=1e-9, abs=1e-14)


@pytest.mark.parametrize(
    "f, d1, d2, expected",
    [
        (0.0, 3, 10, 1.0),  # no evidence at all
        (-1.0, 3, 10, 1.0),
        (float("nan"), 3, 10, None),
        (float("inf"), 3, 10, None),
        (2.0, 0, 10, None),  # degenerate degrees of freedom: no p-value, never a made-up one
        (2.0, 3, 0, None),
        (2.0, -1, 10, None),
    ],
)
def test_edges_give_no_invented_numbers(f, d1, d2, expected):
    assert f_pvalue(f, d1, d2) == expected
