"""The inverse of the standard normal distribution, in numpy alone (a plain install has no scipy).

Rational approximation of P. J. Acklam ("An algorithm for computing the inverse normal cumulative
distribution function", 2003; coefficients [memory], checked against scipy.special.ndtri in
tests/engine/test_normal_deviates.py): relative error below 1.2e-9 over (0, 1), which is far
below what a tolerance draw needs.
"""

from __future__ import annotations

import numpy as np

_A = (
    -3.969683028665376e01,
    2.209460984245205e02,
    -2.759285104469687e02,
    1.383577518672690e02,
    -3.066479806614716e01,
    2.506628277459239e00,
)
_B = (
    -5.447609879822406e01,
    1.615858368580409e02,
    -1.556989798598866e02,
    6.680131188771972e01,
    -1.328068155288572e01,
)
_C = (
    -7.784894002430293e-03,
    -3.223964580411365e-01,
    -2.400758277161838e00,
    -2.549732539343734e00,
    4.374664141464968e00,
    2.938163982698783e00,
)
_D = (7.784695709041462e-03, 3.224671290700398e-01, 2.445134137142996e00, 3.754408661907416e00)
_LOW = 0.02425


def _poly(coefficients: tuple[float, ...], x: np.ndarray) -> np.ndarray:
    total = np.full_like(x, coefficients[0])
    for c in coefficients[1:]:
        total = total * x + c
    return total


def inverse_normal(p: np.ndarray, out: np.ndarray | None = None) -> np.ndarray:
    """z with Phi(z) = p, for p in (0, 1); written into `out` when given."""
    p = np.asarray(p, dtype=float)
    q = p - 0.5
    r = q * q
    z = q * _poly(_A, r) / (_poly(_B, r) * r + 1.0)
    tail = np.minimum(p, 1.0 - p)
    outer = tail < _LOW
    if np.any(outer):
        t = np.sqrt(-2.0 * np.log(tail[outer]))
        value = _poly(_C, t) / (_poly(_D, t) * t + 1.0)
        z[outer] = np.where(p[outer] < 0.5, value, -value)
    if out is None:
        return z
    out[...] = z
    return out


# erfc by the Chebyshev fit of Numerical Recipes (Press, Teukolsky, Vetterling & Flannery,
# Numerical Recipes in C, 2nd ed., 1992, section 6.2, `erfcc`): fractional error below 1.2e-7
# everywhere, so tail probabilities keep their relative accuracy. Coefficients [memory], checked
# against math.erfc in tests/engine/test_rare_events.py.
_ERFC = (
    -1.26551223,
    1.00002368,
    0.37409196,
    0.09678418,
    -0.18628806,
    0.27886807,
    -1.13520398,
    1.48851587,
    -0.82215223,
    0.17087277,
)


def erfc(x: np.ndarray) -> np.ndarray:
    """Complementary error function of an array."""
    x = np.asarray(x, dtype=float)
    z = np.abs(x)
    t = 1.0 / (1.0 + 0.5 * z)
    poly = np.zeros_like(z)
    for c in _ERFC[::-1]:
        poly = poly * t + c
    r = t * np.exp(-z * z + poly)
    return np.where(x >= 0, r, 2.0 - r)


def normal_tail(u: np.ndarray) -> np.ndarray:
    """P(U > u) for a standard normal U, accurate in relative terms far into the tail."""
    return 0.5 * erfc(np.asarray(u, dtype=float) / np.sqrt(2.0))
