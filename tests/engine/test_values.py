"""The value parser against IEC 60062:2016 (letter-and-digit code) and the SI Brochure prefixes."""

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from railroom.engine.formats.values import (
    KINDS,
    Quantity,
    ValueTextError,
    format_si,
    parse_quantity,
    parse_value,
)


@pytest.mark.parametrize(
    "raw, kind, expected",
    [
        # IEC 60062:2016 letter-and-digit code: the letter stands for the decimal point, R for 1.
        ("R47", "resistance", 0.47),
        ("2R2", "resistance", 2.2),
        ("4R7", "resistance", 4.7),
        ("470R", "resistance", 470.0),
        ("4K7", "resistance", 4700.0),
        ("47K3", "resistance", 47300.0),
        ("4M7", "resistance", 4.7e6),
        # Lower-case "4k7" and capacitor codes are common practice.
        ("4k7", "resistance", 4700.0),
        ("1m5", "current", 1.5e-3),
        ("4n7", "capacitance", 4.7e-9),
        ("2u2", "capacitance", 2.2e-6),
        ("4k7Ω", "resistance", 4700.0),
        # SI Brochure (9th ed., 2019) table 7 prefixes; "u" and "meg" are common practice.
        ("1f", "capacitance", 1e-15),
        ("100p", "capacitance", 1e-10),
        ("100n", "capacitance", 1e-7),
        ("10u", "capacitance", 1e-5),
        ("10µ", "capacitance", 1e-5),  # micro sign U+00B5
        ("10μ", "capacitance", 1e-5),  # Greek mu U+03BC
        ("50m", "voltage", 0.05),
        ("10k", "resistance", 1e4),
        ("10K", "resistance", 1e4),
        ("1M", "resistance", 1e6),
        ("1meg", "resistance", 1e6),
        ("1MEG", "resistance", 1e6),
        ("2G", "frequency", 2e9),
        # Units after the prefix, checked against the kind.
        ("10kohm", "resistance", 1e4),
        ("10kohms", "resistance", 1e4),
        ("10kΩ", "resistance", 1e4),
        ("10k\u2126", "resistance", 1e4),  # ohm sign
        ("100nF", "capacitance", 1e-7),
        ("2.5V", "voltage", 2.5),
        ("-15V", "voltage", -15.0),
        ("1pA", "current", 1e-12),
        ("1MHz", "frequency", 1e6),
        ("20kHz", "frequency", 2e4),
        ("10ms", "time", 0.01),
        ("2s", "time", 2.0),
        ("-40C", "temperature", -40.0),
        ("85°C", "temperature", 85.0),
        # Slew rate in V/s: 1 V/us = 1e6 V/s.
        ("0.5V/us", "slew", 5e5),
        ("0.6V/µs", "slew", 6e5),
        ("2V/ms", "slew", 2e3),
        ("1kV/s", "slew", 1e3),
        # Voltage gain in decibels: ratio = 10**(dB/20).
        ("100dB", "gain", 1e5),
        ("20dB", "gain", 10.0),
        ("-6dB", "gain", 10 ** (-6 / 20)),
        ("1e5", "gain", 1e5),
        ("10V/V", "gain", 10.0),
        ("5%", "fraction", 0.05),
        ("0.05", "fraction", 0.05),
        ("50ppm", "fraction", 5e-5),
        # Number forms and whitespace.
        ("  10k  ", "resistance", 1e4),
        ("10 k", "resistance", 1e4),
        ("4.7 kΩ", "resistance", 4700.0),
        ("1e3", "number", 1000.0),
        ("-1.5", "voltage", -1.5),
        ("+2", "voltage", 2.0),
        (".5", "voltage", 0.5),
        ("1e-3", "current", 1e-3),
        ("0", "voltage", 0.0),
        ("0", "time", 0.0),
        # TOML numbers.
        (4700, "resistance", 4700.0),
        (2.5, "voltage", 2.5),
        (-12, "voltage", -12.0),
        (1e-7, "capacitance", 1e-7),
    ],
)
def test_value_forms(raw, kind, expected):
    quantity = parse_quantity(raw, kind)
    assert quantity.value == pytest.approx(expected, rel=1e-12)
    assert quantity.tolerance is None and quantity.tempco is None
    assert parse_value(raw, kind) == quantity.value


def test_codes_are_exact_decimals():
    # 4n7 must be the float nearest 4.7e-9, so E-series lookups find it.
    assert parse_value("4n7", "capacitance") == 4.7e-9
    assert parse_value("100nF", "capacitance") == 1e-7


@pytest.mark.parametrize(
    "raw, kind, expected",
    [
        ("10k 1%", "resistance", Quantity(1e4, 0.01, None)),
        ("10k 1% 50ppm", "resistance", Quantity(1e4, 0.01, 50e-6)),
        ("10k ±1%", "resistance", Quantity(1e4, 0.01, None)),
        ("10k±1%", "resistance", Quantity(1e4, 0.01, None)),
        ("10k +/-1%", "resistance", Quantity(1e4, 0.01, None)),
        ("90k9 0.1% 25ppm/C", "resistance", Quantity(90900.0, 0.001, 25e-6)),
        ("4k7 5% 100ppm/°C", "resistance", Quantity(4700.0, 0.05, 100e-6)),
        ("10k 50ppm 1%", "resistance", Quantity(1e4, 0.01, 50e-6)),
        ("4n7 10%", "capacitance", Quantity(4.7e-9, 0.1, None)),
        ("15 5%", "voltage", Quantity(15.0, 0.05, None)),
        ("-15V 5%", "voltage", Quantity(-15.0, 0.05, None)),
        ("2.5 0.1% 10ppm", "voltage", Quantity(2.5, 0.001, 10e-6)),
        ("1m 2%", "current", Quantity(1e-3, 0.02, None)),
        ("10k 0%", "resistance", Quantity(1e4, 0.0, None)),
    ],
)
def test_tolerance_and_tempco(raw, kind, expected):
    quantity = parse_quantity(raw, kind)
    assert quantity.value == pytest.approx(expected.value, rel=1e-12)
    assert quantity.tolerance == pytest.approx(expected.tolerance, rel=1e-12)
    if expected.tempco is None:
        assert quantity.tempco is None
    else:
        assert quantity.tempco == pytest.approx(expected.tempco, rel=1e-12)


def test_parse_value_refuses_tolerance():
    with pytest.raises(ValueTextError) as err:
        parse_value("10k 1%", "resistance")
    assert err.value.expected == "a resistance without a tolerance or temperature coefficient"
    assert str(err.value) == (
        'expected a resistance without a tolerance or temperature coefficient, got "10k 1%"'
    )


@pytest.mark.parametrize(
    "raw, kind, detail",
    [
        ("", "resistance", None),
        ("   ", "resistance", None),
        ("abc", "resistance", None),
        ("4x7", "resistance", '"x7" is not a prefix or a unit of resistance'),
        ("1..2", "voltage", '".2" is not a prefix or a unit of voltage (V)'),
        ("10kk", "resistance", "only one SI prefix is allowed"),
        ("10kF", "resistance", '"F" is a unit of capacitance, not of resistance'),
        ("100nV", "capacitance", '"V" is a unit of voltage, not of capacitance'),
        ("1.5k7", "resistance", '"7" is not a prefix or a unit of resistance'),
        ("2R2", "capacitance", "the letter R stands for ohms"),
        ("10kR", "resistance", '"R" is not a prefix or a unit of resistance'),
        ("4R7ohm", "resistance", "R already stands for ohms"),
        ("3dB", "voltage", "dB is only for a gain"),
        ("1kdB", "gain", 'no SI prefix is taken here ("k")'),
        ("1k%", "fraction", 'no SI prefix is taken here ("k")'),
        ("300K", "temperature", 'no SI prefix is taken here ("K")'),
        (
            "1k 1%",
            "frequency",
            "a tolerance or temperature coefficient is only allowed for "
            "resistance, capacitance, voltage and current",
        ),
        ("5 1%", "number", "a tolerance or temperature coefficient is only allowed"),
        ("10k 1% 2%", "resistance", "the tolerance is written twice"),
        ("10k 5ppm 5ppm", "resistance", "the temperature coefficient is written twice"),
        ("1e400", "voltage", "the number is not finite"),
        ("9000dB", "gain", "the number is not finite"),
        ("10V", "number", '"V" is a unit of voltage, not of number'),
        ("10x", "number", '"x" is not an SI prefix'),
    ],
)
def test_unreadable_text_says_what_was_expected(raw, kind, detail):
    with pytest.raises(ValueTextError) as err:
        parse_quantity(raw, kind)
    message = str(err.value)
    assert err.value.expected.startswith(f"a {kind} such as ")
    got = f'"{raw}"' if raw.strip() else "nothing"
    assert message.startswith(f"expected {err.value.expected}, got {got}")
    if detail is None:
        assert message == f"expected {err.value.expected}, got {got}"
    else:
        assert detail in message


def test_message_names_what_was_expected_and_what_was_written():
    with pytest.raises(ValueTextError) as err:
        parse_quantity("4x7", "resistance")
    assert str(err.value).startswith('expected a resistance such as "4k7", "10k 1%" or 4700, got "4x7"')
    assert isinstance(err.value, ValueError)


@pytest.mark.parametrize(
    "raw, kind, expected",
    [
        ("-10k", "resistance", "a resistance greater than zero"),
        ("0", "resistance", "a resistance greater than zero"),
        (0, "capacitance", "a capacitance greater than zero"),
        ("-1k", "frequency", "a frequency greater than zero"),
        ("0V/us", "slew", "a slew greater than zero"),
        ("-R47", "resistance", "a resistance greater than zero"),
        ("1e-400", "resistance", "a resistance greater than zero"),  # underflows to 0
        (-1, "gain", "a gain greater than zero"),
        ("-1m", "time", "a time of zero or more"),
        ("-5%", "fraction", "a fraction of zero or more"),
        ("10k -1%", "resistance", "a resistance with a tolerance from 0% to below 100%"),
        ("10k 100%", "resistance", "a resistance with a tolerance from 0% to below 100%"),
        ("10k 150%", "resistance", "a resistance with a tolerance from 0% to below 100%"),
        ("10k 1% -50ppm", "resistance", "a resistance with a temperature coefficient of zero or more"),
    ],
)
def test_out_of_range(raw, kind, expected):
    with pytest.raises(ValueTextError) as err:
        parse_quantity(raw, kind)
    assert err.value.expected.startswith(expected)
    assert str(err.value).startswith(f"expected {expected}")


@pytest.mark.parametrize(
    "raw, shown",
    [
        (True, "true"),
        (False, "false"),
        (None, "None"),
        ([1, 2], "[1, 2]"),
        (math.nan, "nan"),
        (math.inf, "inf"),
        (-math.inf, "-inf"),
        (10**400, "1000000000"),
    ],
)
def test_non_numbers_refused(raw, shown):
    with pytest.raises(ValueTextError) as err:
        parse_quantity(raw, "number")
    assert f"got {shown}" in str(err.value)


def test_signed_kinds_keep_their_sign():
    assert parse_value("-40", "temperature") == -40.0
    assert parse_value("-20m", "current") == -0.02
    assert parse_value("-1k", "number") == -1000.0


def test_every_kind_has_a_readable_example():
    for kind in KINDS:
        assert parse_value("1", kind) == 1.0


def test_unknown_kind_is_a_programming_error():
    with pytest.raises(ValueError, match="unknown kind 'ohms'"):
        parse_quantity("1", "ohms")


@pytest.mark.parametrize(
    "value, unit, text",
    [
        (4700.0, "Ω", "4.7 kΩ"),
        (1e-7, "F", "100 nF"),
        (4.7e-9, "F", "4.7 nF"),
        (-12.0, "V", "-12 V"),
        (2.5e-3, "V", "2.5 mV"),
        (1e-6, "A", "1 µA"),
        (0.0, "V", "0 V"),
        (999.7, "Ω", "1 kΩ"),  # rounds up into the next prefix
        (12345.0, "Hz", "12.3 kHz"),
        (6e5, "V/s", "0.6 V/µs"),
        (2e7, "V/s", "20 V/µs"),
        (1e5, "dB", "100 dB"),  # 20 log10(1e5)
        (1e5, "", "100k"),
        (0.05, "%", "5%"),
        (50e-6, "ppm", "50ppm"),
        (-40.0, "°C", "-40 °C"),
        (1e-20, "F", "0.00001 fF"),
        (1e15, "Hz", "1000000 GHz"),
    ],
)
def test_format_si(value, unit, text):
    assert format_si(value, unit) == text


def test_format_si_digits():
    assert format_si(4712.0, "Ω", digits=4) == "4.712 kΩ"
    assert format_si(4712.0, "Ω", digits=2) == "4.7 kΩ"


ROUND_TRIP_UNITS = [
    ("resistance", "Ω"),
    ("resistance", "ohm"),
    ("capacitance", "F"),
    ("voltage", "V"),
    ("current", "A"),
    ("frequency", "Hz"),
    ("time", "s"),
    ("slew", "V/s"),
    ("gain", ""),
    ("fraction", "%"),
    ("fraction", "ppm"),
    ("temperature", "°C"),
    ("number", ""),
]


@given(st.sampled_from(ROUND_TRIP_UNITS), st.floats(min_value=-15, max_value=11.9), st.booleans())
def test_format_then_parse_round_trip(kind_unit, power, negative):
    kind, unit = kind_unit
    value = 10.0**power
    if negative and kind in ("voltage", "current", "temperature", "number"):
        value = -value
    back = parse_quantity(format_si(value, unit), kind).value
    # Three significant digits: within half a unit in the third digit.
    half_step = 0.5 * 10.0 ** (math.floor(math.log10(abs(value))) - 2)
    assert abs(back - value) <= half_step * (1 + 1e-9)
