"""Hypothesis strategies for broken and hostile user files, shared by the fuzz tests.

Two families: a shipped file (demo chain, generic presets) with some values replaced by hostile
TOML literals, keys added or lines cut; and text-level damage (characters inserted, deleted,
truncated). Both keep to what a user could really save in an editor.
"""

from __future__ import annotations

import json
import math
import re
from pathlib import Path

from hypothesis import strategies as st

import railroom.engine.demos
import railroom.presets

DEMO_CHAIN = Path(railroom.engine.demos.__file__).parent / "pump_vibration.toml"
GENERIC_PRESETS = Path(railroom.presets.__file__).parent / "generic.toml"
VALUE_LINE = re.compile(r"^(?P<key>\s*[A-Za-z_\-]+\s*=\s*)(?P<value>.*?)(?P<comment>\s*#.*)?$")

HOSTILE_TEXTS = [
    "",
    " ",
    "0",
    "-0",
    "-1",
    "1e300",
    "-1e300",
    "1e-300",
    "5e-324",
    "1e400",
    "nan",
    "inf",
    "-inf",
    "NaN",
    "1e308k",
    "1e-320 1%",
    "10k 99.99%",
    "10k 100%",
    "10k -1%",
    "10k 1% -5ppm",
    "10k 1% 1%",
    "1e300 1%",
    "0R",
    "R",
    "k",
    "4k7k",
    "1..2",
    "10 k",
    "10kk",
    "1e3e3",
    "0x10",
    "1_000",
    "10k ohm",
    "[bold red]x[/]",
    "[link=file:///etc/passwd]x[/link]",
    "\x1b[31mred\x1b[0m",
    "\x1b]0;title\x07",
    "\x1b[2J\x1b[H",
    "a\rb",
    "tab\there",
    "line\nbreak",
    "\u202eevil",
    "zero\u200bwidth",
    "ü€😀",
    "Ω",
    "µ",
    "°C",
    "x" * 2000,
    "100dB",
    "1e6dB",
    "-100dB",
    "0.5V/us",
    "-0.5V/us",
    "1%",
    "50ppm",
    "\\",
    "'",
    '"',
    "\x00",
    "\x7f",
]


def toml_string(text: str) -> str:
    """A TOML basic string: JSON escapes are TOML escapes; DEL must be escaped too."""
    return json.dumps(text, ensure_ascii=False).replace("\x7f", "\\u007f")


def toml_float(value: float) -> str:
    if math.isnan(value):
        return "nan"
    if math.isinf(value):
        return "inf" if value > 0 else "-inf"
    text = repr(value)
    return text if any(c in text for c in ".eE") else text + ".0"


scalars = st.one_of(
    st.sampled_from(HOSTILE_TEXTS).map(toml_string),
    st.text(max_size=30).map(toml_string),
    st.integers(min_value=-(2**63), max_value=2**63 - 1).map(str),
    st.sampled_from(["0", "-1", "1", "10" + "0" * 40]),
    st.floats(allow_nan=True, allow_infinity=True).map(toml_float),
    st.sampled_from(["true", "false", "1979-05-27T07:32:00Z", "1979-05-27", "07:32:00"]),
)
literals = st.recursive(
    scalars,
    lambda inner: st.one_of(
        st.lists(inner, max_size=3).map(lambda xs: "[" + ", ".join(xs) + "]"),
        st.dictionaries(st.sampled_from(["r", "v", "x", "positive"]), inner, max_size=2).map(
            lambda d: "{" + ", ".join(f"{k} = {v}" for k, v in d.items()) + "}"
        ),
    ),
    max_leaves=4,
)
hostile_keys = st.one_of(
    st.sampled_from(
        ["name", "rf", "rg", "gbw", "bogus", "part", "block", "rails", "load", "ref", "inputs", "supply"]
    ),
    st.text(min_size=1, max_size=12).map(toml_string),
)


@st.composite
def edited_file(draw, original: Path) -> str:
    """The file with a few values replaced, keys added and lines dropped or doubled."""
    lines = original.read_text(encoding="utf-8").splitlines()
    value_lines = [i for i, line in enumerate(lines) if VALUE_LINE.match(line)]
    for i in draw(st.lists(st.sampled_from(value_lines), min_size=1, max_size=4, unique=True)):
        match = VALUE_LINE.match(lines[i])
        lines[i] = match["key"] + draw(literals)
    for _ in range(draw(st.integers(0, 2))):
        action = draw(st.sampled_from(["add", "drop", "double"]))
        at = draw(st.integers(0, len(lines) - 1))
        if action == "add":
            lines.insert(at + 1, f"{draw(hostile_keys)} = {draw(literals)}")
        elif action == "drop":
            del lines[at]
        else:
            lines.insert(at, lines[at])
    return "\n".join(lines) + "\n"


@st.composite
def damaged_text(draw, original: Path) -> str:
    """Text-level damage: cut short, or characters deleted, inserted or replaced."""
    text = original.read_text(encoding="utf-8")
    if draw(st.booleans()):
        return text[: draw(st.integers(0, len(text)))]
    for _ in range(draw(st.integers(1, 6))):
        at = draw(st.integers(0, len(text)))
        piece = draw(
            st.one_of(st.sampled_from(list("[]{}=\"'#.,\n\\ ") + ["[[", "]]", "\x1b"]), st.text(max_size=3))
        )
        cut = draw(st.integers(0, 3))
        text = text[:at] + piece + text[at + cut :]
    return text


def chain_files() -> st.SearchStrategy[str]:
    return st.one_of(
        edited_file(DEMO_CHAIN), edited_file(DEMO_CHAIN), damaged_text(DEMO_CHAIN), st.text(max_size=200)
    )


def preset_files() -> st.SearchStrategy[str]:
    return st.one_of(
        edited_file(GENERIC_PRESETS),
        edited_file(GENERIC_PRESETS),
        damaged_text(GENERIC_PRESETS),
        st.text(max_size=200),
    )


CONTROL = re.compile(r"[\x00-\x08\x0b-\x1f\x7f-\x9f]")


def has_control(text: str) -> bool:
    """A raw control character (tab and newline aside) that a terminal would act on."""
    return bool(CONTROL.search(text))


NAME_KEYS = (
    "name",
    "title",
    "block",
    "part",
    "rails",
    "method",
    "kind",
    "format",
    "description",
    "distribution",
    "presets",
)
COMPONENT_KEYS = ("r", "c", "rf", "rg", "rin", "load", "top", "bottom")
sizes = st.builds(
    lambda sign, exponent, mantissa: f"{sign}{mantissa:.3g}e{exponent}",
    st.sampled_from(["", "", "", "-"]),
    st.integers(-18, 15),
    st.floats(1, 9.99),
)
extras = st.sampled_from(["", " 1%", " 50%", " 99%", " 1% 50ppm", " 5000ppm", " 0%"])


@st.composite
def extreme_values(draw, original: Path) -> str:
    """The file with one to three values moved anywhere inside the accepted sizes: files that
    load, to probe the arithmetic rather than the parser."""
    lines = original.read_text(encoding="utf-8").splitlines()
    value_lines = [
        i
        for i, line in enumerate(lines)
        if (m := VALUE_LINE.match(line)) and m["key"].split("=")[0].strip() not in NAME_KEYS
    ]
    for i in draw(st.lists(st.sampled_from(value_lines), min_size=1, max_size=3, unique=True)):
        match = VALUE_LINE.match(lines[i])
        if "inputs" in match["key"]:
            value = f'[{{ r = "{draw(sizes)}", v = "{draw(sizes)}" }}]'
        elif match["value"].startswith("["):
            value = f'["{draw(sizes)}", "{draw(sizes)}"]'
        else:
            key = match["key"].split("=")[0].strip()
            toleranced = "%" in match["value"] or key in COMPONENT_KEYS
            value = toml_string(draw(sizes) + (draw(extras) if toleranced else ""))
        lines[i] = match["key"] + value
    return "\n".join(lines) + "\n"
