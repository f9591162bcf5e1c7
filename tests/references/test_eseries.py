"""Preferred number series against IEC 60063:2015."""

import numpy as np
import pytest

from railroom.engine.aids.eseries import SERIES, _neighbour_arrays, nearest_array, values_between


def neighbours(value: float, series: str) -> tuple[float, float]:
    """The series values at or below and at or above `value`, in any decade (one at a time)."""
    below, above = _neighbour_arrays(np.array([value], dtype=float), series)
    return float(below[0]), float(above[0])


def nearest(value: float, series: str) -> float:
    """The series value nearest to `value` by ratio, in any decade (one at a time)."""
    return float(nearest_array(np.array([value], dtype=float), series)[0])


# IEC 60063:2015, E24 table .
IEC_60063_E24 = [
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
]

# E96 as printed in resistor catalogues [memory]; checked below against the formula.
E96_RECALLED = [
    1.00,
    1.02,
    1.05,
    1.07,
    1.10,
    1.13,
    1.15,
    1.18,
    1.21,
    1.24,
    1.27,
    1.30,
    1.33,
    1.37,
    1.40,
    1.43,
    1.47,
    1.50,
    1.54,
    1.58,
    1.62,
    1.65,
    1.69,
    1.74,
    1.78,
    1.82,
    1.87,
    1.91,
    1.96,
    2.00,
    2.05,
    2.10,
    2.15,
    2.21,
    2.26,
    2.32,
    2.37,
    2.43,
    2.49,
    2.55,
    2.61,
    2.67,
    2.74,
    2.80,
    2.87,
    2.94,
    3.01,
    3.09,
    3.16,
    3.24,
    3.32,
    3.40,
    3.48,
    3.57,
    3.65,
    3.74,
    3.83,
    3.92,
    4.02,
    4.12,
    4.22,
    4.32,
    4.42,
    4.53,
    4.64,
    4.75,
    4.87,
    4.99,
    5.11,
    5.23,
    5.36,
    5.49,
    5.62,
    5.76,
    5.90,
    6.04,
    6.19,
    6.34,
    6.49,
    6.65,
    6.81,
    6.98,
    7.15,
    7.32,
    7.50,
    7.68,
    7.87,
    8.06,
    8.25,
    8.45,
    8.66,
    8.87,
    9.09,
    9.31,
    9.53,
    9.76,
]


def test_e24_is_the_iec_60063_table():
    assert list(SERIES["E24"]) == IEC_60063_E24


def test_e24_departs_from_its_formula_exactly_where_iec_60063_says():
    # IEC 60063:2015: the E24 table keeps historic values that round(10**(i/24), 1) does not give.
    formula = np.round(10.0 ** (np.arange(24) / 24), 1)
    table = np.array(IEC_60063_E24)
    assert table[formula != table].tolist() == [2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2]
    assert formula[formula != table].tolist() == [2.6, 2.9, 3.2, 3.5, 3.8, 4.2, 4.6, 8.3]


def test_e12_and_e6_take_every_other_and_every_fourth_e24_value():
    # IEC 60063:2015 E12 and E6 tables.
    assert list(SERIES["E12"]) == [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2]
    assert list(SERIES["E6"]) == [1.0, 1.5, 2.2, 3.3, 4.7, 6.8]


def test_e96_is_the_rounded_formula():
    # IEC 60063:2015: E96 = round(10**(i/96), 2), i = 0..95; computed here with numpy.
    e96 = SERIES["E96"]
    assert len(e96) == 96
    assert e96[0] == 1.00 and e96[-1] == 9.76
    assert np.array_equal(np.array(e96), np.round(10.0 ** (np.arange(96) / 96), 2))
    assert list(e96) == E96_RECALLED


def test_e48_is_every_other_e96_value():
    # IEC 60063:2015.
    e48 = SERIES["E48"]
    assert len(e48) == 48
    assert e48[:4] == (1.00, 1.05, 1.10, 1.15) and e48[-1] == 9.53


def test_series_are_ascending_mantissas():
    for name, values in SERIES.items():
        assert all(1.0 <= v < 10.0 for v in values), name
        assert list(values) == sorted(set(values)), name


@pytest.mark.parametrize(
    "value, series, expected",
    [
        (4750.0, "E24", (4700.0, 5100.0)),  # 4.75k lies between E24 4.7k and 5.1k
        (4700.0, "E24", (4700.0, 4700.0)),  # a series value is its own neighbour
        (4.7e-9, "E6", (4.7e-9, 4.7e-9)),
        (5e-9, "E6", (4.7e-9, 6.8e-9)),
        (9.5, "E24", (9.1, 10.0)),  # across the decade boundary
        (95e3, "E12", (82e3, 100e3)),
        (95e3, "E24", (91e3, 100e3)),
        (1000.0, "E12", (1000.0, 1000.0)),  # an exact power of ten
        (0.96, "E96", (0.953, 0.976)),
        (9.8, "E96", (9.76, 10.0)),
        (1.01, "E96", (1.00, 1.02)),
        (45e3, "E48", (44.2e3, 46.4e3)),
    ],
)
def test_neighbours(value, series, expected):
    below, above = neighbours(value, series)
    assert below == pytest.approx(expected[0], rel=1e-12)
    assert above == pytest.approx(expected[1], rel=1e-12)


@pytest.mark.parametrize(
    "value, series, expected",
    [
        (4750.0, "E24", 4700.0),
        (4950.0, "E24", 5100.0),  # 5.1/4.95 = 1.0303 < 4.95/4.7 = 1.0532
        (9.6, "E24", 10.0),  # 10/9.6 = 1.042 < 9.6/9.1 = 1.055: next decade
        (0.0105, "E12", 0.01),
        (1.2e-6, "E6", 1.0e-6),  # 1.2/1.0 = 1.2 < 1.5/1.2 = 1.25
        (1.23e-6, "E6", 1.5e-6),  # 1.5/1.23 = 1.220 < 1.23/1.0
        (49.5e3, "E96", 49.9e3),
        (95e3, "E24", 91e3),  # 95/91 = 1.044 < 100/95 = 1.053
    ],
)
def test_nearest(value, series, expected):
    assert nearest(value, series) == pytest.approx(expected, rel=1e-12)


def test_nearest_array_keeps_shape():
    values = np.array([[4750.0, 9.6], [1.2e-6, 97e3]])
    assert np.allclose(nearest_array(values, "E24"), [[4700.0, 10.0], [1.2e-6, 100e3]], rtol=1e-12, atol=0)
    assert np.allclose(nearest_array(values, "E6"), [[4700.0, 10.0], [1.0e-6, 100e3]], rtol=1e-12, atol=0)


def test_values_between():
    assert np.allclose(
        values_between(1e3, 1e4, "E12"),
        [1e3, 1.2e3, 1.5e3, 1.8e3, 2.2e3, 2.7e3, 3.3e3, 3.9e3, 4.7e3, 5.6e3, 6.8e3, 8.2e3, 1e4],
        rtol=1e-12,
        atol=0,
    )
    assert np.allclose(values_between(4.7e-9, 1e-8, "E6"), [4.7e-9, 6.8e-9, 1e-8], rtol=1e-12, atol=0)
    assert len(values_between(1.0, 9.99, "E96")) == 96
    assert len(values_between(10.0, 1e6, "E24")) == 5 * 24 + 1


@pytest.mark.parametrize(
    "call",
    [
        lambda: neighbours(0.0, "E24"),
        lambda: neighbours(-1.0, "E24"),
        lambda: nearest(float("nan"), "E24"),
        lambda: nearest(1.0, "E192"),
        lambda: values_between(10.0, 1.0, "E24"),
    ],
)
def test_refused(call):
    with pytest.raises(ValueError):
        call()
