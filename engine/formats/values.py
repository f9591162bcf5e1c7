"""Values as people write them: "4k7 1% 50ppm", "100nF", "0.5V/us", "100dB" -> SI numbers.

Sources:
- SI prefixes f p n u/µ m k M G: BIPM, The International System of Units (SI Brochure),
  9th edition (2019), table 7. "u" for micro and "meg"/"MEG" for mega are common practice
  (plain text has no µ, and "m" is milli).
- Letter-and-digit code: IEC 60062:2016, "R47" = 0.47, "4R7", "470R", "4K7", "47K3", "4M7"; the
  letter stands for the decimal point and R stands for 1 (ohms). Lower-case "4k7" and capacitor
  codes such as "4n7" are common practice.
"""

from __future__ import annotations

import math
import re
import unicodedata
from dataclasses import dataclass

KINDS = (
    "resistance",
    "capacitance",
    "voltage",
    "current",
    "frequency",
    "gain",
    "slew",
    "fraction",
    "temperature",
    "time",
    "number",
)

# Powers of ten, SI Brochure table 7; "K" only because IEC 60062 writes its codes in upper case.
# Text is NFKC-normalised first, so the micro sign becomes the Greek mu and the ohm sign omega.
PREFIXES = {
    "f": -15,
    "p": -12,
    "n": -9,
    "u": -6,
    "\u03bc": -6,
    "m": -3,
    "k": 3,
    "K": 3,
    "M": 6,
    "G": 9,
    "meg": 6,
    "MEG": 6,
}

# Units accepted per kind, with their power of ten to SI. "dB" (gain) is logarithmic, handled apart.
UNITS: dict[str, dict[str, int]] = {
    "resistance": {"ohm": 0, "ohms": 0, "\u03a9": 0},
    "capacitance": {"F": 0},
    "voltage": {"V": 0},
    "current": {"A": 0},
    "frequency": {"Hz": 0},
    "gain": {"V/V": 0},
    "slew": {"V/s": 0, "V/ms": 3, "V/us": 6, "V/\u03bcs": 6},
    "fraction": {"%": -2, "ppm": -6},
    "temperature": {"C": 0, "°C": 0},
    "time": {"s": 0},
    "number": {},
}
# A prefix before these would be nonsense ("1k%"); temperature takes none, so "300K" is not 300 kC.
NO_PREFIX_UNITS = {"%", "ppm", "dB"}
NO_PREFIX_KINDS = {"temperature"}

EXAMPLES = {
    "resistance": '"4k7", "10k 1%" or 4700',
    "capacitance": '"100n", "4n7 5%" or 1e-7',
    "voltage": '"2.5", "-15V" or "50m"',
    "current": '"20m", "1pA" or 0.001',
    "frequency": '"1k", "20kHz" or 1e6',
    "gain": '"100dB", "1e5" or "10V/V"',
    "slew": '"0.5V/us", "2V/µs" or 5e5',
    "fraction": '"1%", "50ppm" or 0.01',
    "temperature": '"25", "-40C" or "85°C"',
    "time": '"1m", "10ms" or 0.001',
    "number": '"10k", "2.5" or 100',
}
TOLERANCE_KINDS = ("resistance", "capacitance", "voltage", "current")
POSITIVE_KINDS = ("resistance", "capacitance", "frequency", "slew", "gain")
NON_NEGATIVE_KINDS = ("fraction", "time")

NUMBER = r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"
PLAIN = re.compile(rf"(?P<number>{NUMBER})\s*(?P<rest>.*)")
# IEC 60062: digits, a letter in place of the decimal point, digits ("4k7", "R47"), then a unit.
CODE = re.compile(
    r"(?P<sign>[+-]?)(?P<whole>\d*)(?P<letter>[fpnu\u03bcmkKMGR])(?P<part>\d+)"
    r"(?P<unit>\D.*)?"
)
# A trailing "1%", "±1%", "+/-1%" or "50ppm", "50ppm/°C" after the value.
EXTRA = re.compile(
    rf"(?:\s*(?:±|\+/-)\s*|\s+)(?P<number>{NUMBER})\s*"
    r"(?P<what>%|ppm(?:/°?C|/K)?)$"
)


@dataclass(frozen=True)
class Quantity:
    """A value in SI units, with the tolerance and temperature coefficient written beside it.

    tolerance: symmetric fraction (0.01 for "1%"); tempco: symmetric bound, fraction per degree C
    (50e-6 for "50ppm"). Both None when not written.
    """

    value: float
    tolerance: float | None = None
    tempco: float | None = None


class ValueTextError(ValueError):
    """A value that cannot be read; str(err) is one sentence saying what was expected."""

    def __init__(self, expected: str, got: str, detail: str = "") -> None:
        self.expected = expected
        self.got = got
        self.detail = detail
        sentence = f"expected {expected}, got {got}"
        super().__init__(visible(f"{sentence} ({detail})" if detail else sentence, 400))


def _article(kind: str) -> str:
    return f"an {kind}" if kind[0] in "aeiou" else f"a {kind}"


def _expected(kind: str) -> str:
    return f"{_article(kind)} such as {EXAMPLES[kind]}"


# Characters a terminal acts on instead of showing (C0, DEL, C1), the line and paragraph
# separators (U+2028, U+2029), the bidirectional marks, embeddings, overrides and isolates that
# reorder what is shown (Unicode TR9: ALM, LRM, RLM, LRE..RLO, LRI..PDI), and the invisible
# format characters (soft hyphen, zero-width space and joiners, word joiner and invisible
# operators, the byte-order mark / zero-width no-break space, interlinear annotation marks).
_CONTROL = re.compile(
    "[\x00-\x1f\x7f-\x9f\u00ad\u061c\u180e\u200b-\u200f\u2028-\u202e"
    "\u2060-\u2064\u2066-\u206f\ufeff\ufff9-\ufffb]"
)


def visible(text: str, limit: int = 80) -> str:
    """User text made safe to echo in a message: control characters as \\xNN escapes, cut short."""
    text = escaped(text)
    return text if len(text) <= limit else text[: limit - 3] + "..."


def escaped(text: str) -> str:
    """The whole text, with what `visible` escapes shown as \\xNN or \\uNNNN."""
    return _CONTROL.sub(lambda m: f"\\x{ord(m[0]):02x}" if ord(m[0]) < 0x100 else f"\\u{ord(m[0]):04x}", text)


def has_control(text: str) -> bool:
    return bool(_CONTROL.search(text))


def terminal_json(text: str) -> str:
    """JSON text whose strings show every character `visible` escapes as a \\uXXXX escape
    (the same data: JSON reads it back unchanged), so printing it cannot drive a terminal. The
    line breaks of indented output stay: json.dumps writes none inside a string."""
    return _CONTROL.sub(lambda m: m[0] if m[0] == "\n" else f"\\u{ord(m[0]):04x}", text)


def _shown(raw: object) -> str:
    if isinstance(raw, bool):
        return "true" if raw else "false"
    if isinstance(raw, str):
        return f'"{visible(raw, 40)}"' if raw.strip() else "nothing"
    text = repr(raw)
    return text if len(text) <= 40 else text[:37] + "..."


def _scaled(number: float, power: int) -> float:
    """number * 10**power; dividing for negative powers keeps "4n7" exactly 4.7e-9."""
    return number * 10.0**power if power >= 0 else number / 10.0**-power


def parse_quantity(raw: object, kind: str) -> Quantity:
    """Read a TOML number or a value string ("4k7 1% 50ppm") as a quantity of the given kind."""
    if kind not in KINDS:
        raise ValueError(f"unknown kind {kind!r}; expected one of {', '.join(KINDS)}")
    got = _shown(raw)
    if isinstance(raw, bool) or not isinstance(raw, (int, float, str)):
        raise ValueTextError(_expected(kind), got)
    if isinstance(raw, str):
        text = unicodedata.normalize("NFKC", raw).strip()
        text, tolerance, tempco = _split_extras(text, kind, got)
        value = _read_value(text, kind, got)
    else:
        value, tolerance, tempco = (float(raw) if abs(raw) < 1e308 else math.inf), None, None
    if not math.isfinite(value):
        raise ValueTextError(_expected(kind), got, "the number is not finite")
    _check_sign(value, kind, got)
    return Quantity(value, tolerance, tempco)


def parse_value(raw: object, kind: str) -> float:
    """parse_quantity(raw, kind).value, refusing a written tolerance or temperature coefficient."""
    quantity = parse_quantity(raw, kind)
    if quantity.tolerance is not None or quantity.tempco is not None:
        raise ValueTextError(f"{_article(kind)} without a tolerance or temperature coefficient", _shown(raw))
    return quantity.value


def _split_extras(text: str, kind: str, got: str) -> tuple[str, float | None, float | None]:
    """Peel "1%" and "50ppm" off the end of the text (either order, each at most once)."""
    tolerance = tempco = None
    while match := EXTRA.search(text):
        if match.start() == 0:
            break  # the whole text is one number with a unit: "5%" for a fraction
        if kind not in TOLERANCE_KINDS:
            raise ValueTextError(
                _expected(kind),
                got,
                "a tolerance or temperature coefficient "
                "is only allowed for resistance, capacitance, voltage and current",
            )
        number = float(match["number"])
        if match["what"] == "%":
            if tolerance is not None:
                raise ValueTextError(_expected(kind), got, "the tolerance is written twice")
            tolerance = number / 100
            if not 0 <= tolerance < 1:
                raise ValueTextError(f"{_article(kind)} with a tolerance from 0% to below 100%", got)
        else:
            if tempco is not None:
                raise ValueTextError(_expected(kind), got, "the temperature coefficient is written twice")
            tempco = number / 1e6
            if tempco > TEMPCO_LIMIT:
                raise ValueTextError(
                    f"{_article(kind)} with a temperature coefficient of at most {TEMPCO_LIMIT * 1e6:g}ppm",
                    got,
                )
            if tempco < 0:
                raise ValueTextError(
                    f"{_article(kind)} with a temperature coefficient of zero or "
                    "more (a symmetric bound, such as 50ppm)",
                    got,
                )
        text = text[: match.start()].rstrip()
    return text, tolerance, tempco


def _read_value(text: str, kind: str, got: str) -> float:
    code = CODE.fullmatch(text)
    if code and (code["whole"] or code["letter"] == "R"):
        number = float(f"{code['sign']}{code['whole'] or '0'}.{code['part']}")
        unit = (code["unit"] or "").strip()
        return _scaled(number, _prefix_and_unit(code["letter"], unit, kind, got))
    plain = PLAIN.fullmatch(text)
    if not plain:
        raise ValueTextError(_expected(kind), got)
    number, rest = float(plain["number"]), plain["rest"]
    if rest == "dB":
        if kind != "gain":
            raise ValueTextError(_expected(kind), got, "dB is only for a gain")
        # Voltage gain in decibels is 20 log10(ratio); past 6000 dB the ratio overflows a float.
        return 10 ** (number / 20) if number < 6000 else math.inf
    if rest in UNITS[kind] or rest == "":
        return _scaled(number, UNITS[kind].get(rest, 0))
    prefix = next((word for word in ("meg", "MEG") if rest.startswith(word)), rest[0])
    return _scaled(number, _prefix_and_unit(prefix, rest[len(prefix) :], kind, got))


def _prefix_and_unit(prefix: str, unit: str, kind: str, got: str) -> int:
    """Power of ten of a prefix (or IEC 60062 "R") followed by an optional unit of the kind."""
    if prefix == "R":
        if kind != "resistance":
            raise ValueTextError(_expected(kind), got, "the letter R stands for ohms")
        if unit:
            raise ValueTextError(_expected(kind), got, "R already stands for ohms")
        return 0
    if prefix not in PREFIXES:
        raise ValueTextError(_expected(kind), got, _unit_detail(prefix + unit, kind))
    if kind in NO_PREFIX_KINDS or unit in NO_PREFIX_UNITS:
        raise ValueTextError(_expected(kind), got, f'no SI prefix is taken here ("{prefix}")')
    if unit and unit not in UNITS[kind]:
        raise ValueTextError(_expected(kind), got, _unit_detail(unit, kind))
    return PREFIXES[prefix] + UNITS[kind].get(unit, 0)


def _unit_detail(unit: str, kind: str) -> str:
    if unit in PREFIXES or unit[0] in PREFIXES and unit[1:] in UNITS[kind]:
        return "only one SI prefix is allowed"
    fits = [other for other, units in UNITS.items() if unit in units]
    if fits:
        return f'"{unit}" is a unit of {fits[0]}, not of {kind}'
    accepted = ", ".join(UNITS[kind]) + (", dB" if kind == "gain" else "")
    if accepted:
        return f'"{unit}" is not a prefix or a unit of {kind} ({accepted})'
    return f'"{unit}" is not an SI prefix'


def _check_sign(value: float, kind: str, got: str) -> None:
    if kind in POSITIVE_KINDS and value <= 0:
        raise ValueTextError(f"{_article(kind)} greater than zero", got)
    if kind in NON_NEGATIVE_KINDS and value < 0:
        raise ValueTextError(f"{_article(kind)} of zero or more", got)
    _check_plausible(value, kind, got)


# Sizes no circuit on a bench has, far outside any real part (a 1e300 ohm resistor, a 5e-324 F
# capacitor): refused here, where the message can still name the field, instead of overflowing
# the circuit arithmetic later. Nonzero magnitudes in SI units, whatever the kind.
PLAUSIBLE_SIZE = (1e-18, 1e15)
TEMPCO_LIMIT = 0.1  # per C: 100000 ppm/C, beyond any component


def _check_plausible(value: float, kind: str, got: str) -> None:
    low, high = PLAUSIBLE_SIZE
    if value != 0 and not low <= abs(value) <= high:
        raise ValueTextError(f"{_article(kind)} from {low:g} to {high:g} in size (SI units)", got)


def _decimal_exponent(value: float, digits: int) -> tuple[float, int]:
    """The value rounded to `digits` significant digits, and its power of ten."""
    mantissa, exponent = f"{value:.{digits - 1}e}".split("e")
    return float(f"{mantissa}e{exponent}"), int(exponent)


def _significant(value: float, digits: int) -> str:
    """Plain decimal text with at most `digits` significant digits, trailing zeros dropped."""
    rounded, exponent = _decimal_exponent(value, digits)
    if not -5 <= exponent < 15:
        mantissa = f"{rounded / 10.0**exponent:.{digits - 1}f}".rstrip("0").rstrip(".")
        return f"{mantissa}e{exponent}"
    text = f"{rounded:.{max(0, digits - 1 - exponent)}f}"
    return text.rstrip("0").rstrip(".") if "." in text else text


def format_si(value: float, unit: str, digits: int = 3) -> str:
    """Engineer's text for a value: "4.7 kΩ", "100 nF", "-12 V", "2.5 mV".

    Special units: "V/s" is shown in V/µs ("0.6 V/µs"), "dB" shows a ratio in decibels
    ("100 dB" for 1e5), "%" and "ppm" show a fraction ("5%", "50ppm"), "°C" takes no prefix.
    """
    if not math.isfinite(value):
        return f"{value} {unit}".strip()
    if unit == "V/s":
        return f"{_significant(value / 1e6, digits)} V/µs"
    if unit == "dB":
        if value <= 0:
            raise ValueError(f"a gain in dB needs a ratio greater than zero, got {value}")
        return f"{_significant(20 * math.log10(value), digits)} dB"
    if unit in ("%", "ppm"):
        return f"{_significant(_scaled(value, -UNITS['fraction'][unit]), digits)}{unit}"
    if unit in ("°C", "C"):
        return f"{_significant(value, digits)} {unit}"
    rounded, power = _decimal_exponent(value, digits)
    exponent = 0 if rounded == 0 else min(max(power // 3 * 3, -15), 9)
    prefix = {-15: "f", -12: "p", -9: "n", -6: "µ", -3: "m", 0: "", 3: "k", 6: "M", 9: "G"}
    mantissa = _significant(rounded / 10.0**exponent, digits)
    return f"{mantissa} {prefix[exponent]}{unit}" if unit else f"{mantissa}{prefix[exponent]}"


def format_span(low: float, high: float, unit: str, digits: int = 3) -> str:
    """ "low .. high" with enough digits (up to 7) that two different ends never read the same:
    a comparator threshold of 3.897 .. 3.903 V is not shown as "3.9 V .. 3.9 V"."""
    for shown in range(digits, 8):
        a, b = format_si(low, unit, shown), format_si(high, unit, shown)
        if a != b or low == high:
            return f"{a} .. {b}"
    return f"{a} .. {b}"
