"""Preferred number series of IEC 60063:2015 (E6 to E96), and the series values near a value.

E6, E12 and E24 are taken from the standard's table, not from a formula: E24 departs from
round(10**(i/24), 1) at 2.7 3.0 3.3 3.6 3.9 4.3 4.7 8.2. E96 is round(10**(i/96), 2) for
i = 0..95 and E48 is every other E96 value (IEC 60063:2015). E192 is left out: it has at least one
departure from its formula (9.20 where the formula gives 9.19 [memory]) that could not be checked.
"""

from __future__ import annotations

import numpy as np

# IEC 60063:2015, E24 table.
E24 = (
    1.0,
    1.1,
    1.2,
    1.3,
    1.5,
    1.6,
    1.8,
    2.0,
    2.2,
    2.4,
    2.7,
    3.0,
    3.3,
    3.6,
    3.9,
    4.3,
    4.7,
    5.1,
    5.6,
    6.2,
    6.8,
    7.5,
    8.2,
    9.1,
)
E96 = tuple(round(10 ** (i / 96), 2) for i in range(96))

SERIES: dict[str, tuple[float, ...]] = {
    "E6": E24[::4],
    "E12": E24[::2],
    "E24": E24,
    "E48": E96[::2],
    "E96": E96,
}

# Two series values closer than this ratio are the same value written twice (float rounding).
SAME = 1e-9


def _mantissas(series: str) -> np.ndarray:
    """The series' mantissas with the next decade's 1.0 appended, so every value has one above."""
    if series not in SERIES:
        raise ValueError(f"unknown series {series!r}; expected one of {', '.join(SERIES)}")
    return np.array(SERIES[series] + (10.0,))


def _scaled(mantissa: np.ndarray, decade: np.ndarray) -> np.ndarray:
    """mantissa * 10**decade, dividing for negative decades so 4.7 and -9 give exactly 4.7e-9."""
    return np.where(decade >= 0, mantissa * 10.0 ** np.abs(decade), mantissa / 10.0 ** np.abs(decade))


def _neighbour_arrays(values: np.ndarray, series: str) -> tuple[np.ndarray, np.ndarray]:
    table = _mantissas(series)
    if np.any(~np.isfinite(values)) or np.any(values <= 0):
        raise ValueError("series values exist only for finite values greater than zero")
    decade = np.floor(np.log10(values))
    mantissa = values / _scaled(np.ones_like(values), decade)
    # log10 may land a hair off at exact powers of ten; bring the mantissa back into [1, 10).
    decade = decade + (mantissa >= 10) - (mantissa < 1)
    mantissa = values / _scaled(np.ones_like(values), decade)
    below = np.searchsorted(table, mantissa * (1 + SAME), side="right") - 1
    above = np.searchsorted(table, mantissa * (1 - SAME), side="left")
    return _scaled(table[below], decade), _scaled(table[above], decade)


def nearest_array(values: np.ndarray, series: str) -> np.ndarray:
    """The nearest series value to each value, nearest by ratio (the series are geometric)."""
    values = np.asarray(values, dtype=float)
    below, above = _neighbour_arrays(values.ravel(), series)
    # A tie in ratio goes to the lower value.
    closer_above = above / values.ravel() < values.ravel() / below
    return np.where(closer_above, above, below).reshape(values.shape)


def values_between(lo: float, hi: float, series: str) -> np.ndarray:
    """Every series value from lo to hi inclusive, ascending."""
    if not 0 < lo <= hi or not np.isfinite(hi):
        raise ValueError(f"expected 0 < lo <= hi, got lo={lo}, hi={hi}")
    table = _mantissas(series)[:-1]
    decades = np.arange(np.floor(np.log10(lo)) - 1, np.floor(np.log10(hi)) + 2)
    candidates = _scaled(table[None, :], decades[:, None]).ravel()
    inside = (candidates >= lo * (1 - SAME)) & (candidates <= hi * (1 + SAME))
    return candidates[inside]
