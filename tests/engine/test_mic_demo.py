"""The microphone demo (engine/demos/mic_front_end.toml) against the README's hand calculation
("The microphone demo by hand"): every figure there from its textbook formula, then the engine.

Formulas: the RC high-pass corner 1/(2 pi R C) and the voltage divider (Horowitz & Hill, The Art
of Electronics, 3rd ed., ch. 1); the non-inverting gain 1 + Rf/Rg (Sedra & Smith, Microelectronic
Circuits, ch. 2); the unity-gain Sallen-Key low-pass f0 = 1/(2 pi sqrt(R1 R2 C1 C2)),
Q = sqrt(R1 R2 C1 C2)/(C2 (R1 + R2)) (Sallen and Key, IRE Trans. Circuit Theory, 1955); slew
2 pi f A for a sine of peak A. Part figures are the shipped generic-rro-5v class.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest

import railroom.engine.demos
from railroom.tui.cli import main

DEMO = Path(railroom.engine.demos.__file__).parent / "mic_front_end.toml"
README = (Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")
SECTION = README.split("### The microphone demo by hand", 1)[1].split("\n## ", 1)[0]

# the hand calculation, from the formulas (worst corners: r -1 %, c -10 %, rf +1 %, rg -1 %)
CORNER = 1 / (2 * math.pi * 99e3 * 0.9e-6)
DIVIDER = 100e3 / (100e3 + 2.2e3)
GAIN = 1 + 101e3 / 2178
OFFSET = 2e-3 + 5e-6 * 25  # the part's offset and drift at 50 C, times DC gain 1
PEAK = 20e-3 * DIVIDER * GAIN
RAIL = 3.3 * 0.97  # the lowest rail; the bias is half of it through a 0.2 % divider (a net)
BIAS = (0.5 * 0.998 * 3.3 * 0.97, 0.5 * 1.002 * 3.3 * 1.03)
TOP = 0.5 * 1.002 * RAIL + OFFSET + PEAK  # at the lowest rail, the bias at its top
SWING = RAIL - 30e-3 - 40 * (TOP / 10e3 + PEAK / 102.2e3)  # 40 ohm: 10k to 0 V, rf + rg
LOWEST = BIAS[0] - 2 * OFFSET - PEAK  # at the converter, after both op amps
F0 = 1 / (2 * math.pi * 10e3 * math.sqrt(2.2e-9 * 1.1e-9))
Q = math.sqrt(1e8 * 2.2e-9 * 1.1e-9) / (1.1e-9 * 20e3)


def test_hand_figures_are_the_ones_printed():
    printed = {
        f"{CORNER:.2f} Hz": CORNER,
        f"{1 / math.sqrt(1 + (CORNER / 100) ** 2):.4f} at 100 Hz": None,
        f"{DIVIDER:.4f}": DIVIDER,
        f"{BIAS[0]:.3f} V to {BIAS[1]:.3f} V": None,
        f"{GAIN:.2f} (nominal {1 + 100 / 2.2:.2f})": GAIN,
        f"{OFFSET * 1e3:.3f} mV offset": OFFSET,
        f"{PEAK:.3f} V |": PEAK,
        f"{TOP:.3f} V at most": None,
        f"{RAIL:.3f} V": None,
        f"{LOWEST + PEAK + 2 * OFFSET:.3f} V - 2 x {OFFSET * 1e3:.3f} mV": None,
        f"{LOWEST:.3f} V each side": None,
        f"{SWING:.3f} V: room {SWING - TOP:.3f} V": None,
        f"{2 * math.pi * 8e3 * PEAK * 1e-6:.3f} V/us": None,
        f"{F0 / 1e3:.2f} kHz, Q {Q:.3f}": None,
    }
    for text in printed:
        assert text in SECTION, text


def test_engine_confirms_the_hand_calculation(capsys):
    import json

    assert main(["check", str(DEMO), "--json"]) == 0  # GO
    report = json.loads(capsys.readouterr().out)
    coupling, gain, low_pass, converter = report["stages"]
    assert report["verdict"] == "go"
    # the coupling: the source's 2k2 against r, the corner far below the band
    assert coupling["gain"]["band"][1] == pytest.approx(DIVIDER, rel=1e-3)
    assert coupling["gain"]["dc"] == [0, 0]
    # the gain stage: 1 + rf/rg in the band, 1 at DC (cg), its span and its room
    assert gain["gain"]["dc"] == pytest.approx([1, 1], rel=1e-4)
    assert gain["gain"]["band"][1] == pytest.approx(GAIN, rel=1e-3)
    assert coupling["output"]["min"] == pytest.approx(BIAS[0] - 20e-3 * DIVIDER, rel=1e-4)
    assert coupling["output"]["max"] == pytest.approx(BIAS[1] + 20e-3 * DIVIDER, rel=1e-4)
    assert gain["output"]["max"] == pytest.approx(BIAS[1] + OFFSET + PEAK, rel=1e-3)
    assert gain["margins"]["output-high"] == pytest.approx(SWING - TOP, abs=1e-3)
    assert gain["margins"]["output-high"] == pytest.approx(0.628, abs=5e-4)  # the README's 628 mV
    assert 0.6e6 - gain["margins"]["slew"] <= 2 * math.pi * 8e3 * PEAK
    # the low-pass: at most 1.006, the converter's room each side 0.719 V
    assert low_pass["gain"]["band"][1] == pytest.approx(1.006, abs=5e-4)
    assert converter["margins"]["input-low"] == pytest.approx(LOWEST, abs=1e-4)
    assert converter["margins"]["input-high"] == pytest.approx(0.666, abs=5e-4)
    assert report["headroom_db"] == pytest.approx(4.47, abs=0.005)
    assert "628 mV" in SECTION and "+4.47 dB" in SECTION and "6.3 %" in SECTION
    # the nets: half the rail, and the whole rail as the converter's window
    nets = {n["name"]: n for n in report["nets"]}
    assert nets["mid_rail"]["span"] == pytest.approx(list(BIAS), rel=1e-4)
    assert nets["full_scale"]["span"] == pytest.approx([3.3 * 0.97, 3.3 * 1.03], rel=1e-6)


def test_markdown_report_gives_the_gain_per_stage(capsys):
    # the gain stage: 1 at DC (cg), 1 + rf/rg less the part's roll-off at 8 kHz over the band;
    # from the source the coupling's DC zero and the 2k2 divider (README, The microphone demo)
    main(["check", str(DEMO), "--markdown"])
    text = capsys.readouterr().out.split("### Gain", 1)[1]
    row = next(line for line in text.splitlines() if line.startswith("| 2 | mic gain |"))
    cells = [c.strip() for c in row.strip("|").split("|")]
    assert cells[2] == "1" and cells[4] == "0"
    low, high = (float(x) for x in cells[3].split(" to "))
    assert high == pytest.approx(GAIN, rel=1e-3)
    least = 1 + 99e3 / 2222  # rf -1 %, rg +1 %; one-pole roll-off at 8 kHz over noise gain / 1 MHz
    assert low == pytest.approx(least / math.sqrt(1 + (8e3 * least / 1e6) ** 2), rel=1e-3)
    low, high = (float(x) for x in cells[5].split(" to "))
    assert high == pytest.approx(DIVIDER * GAIN, rel=1e-3)


def test_interface_stage_detail_gives_the_gain():
    # the detail panel of the gain stage: 1 + rf/rg over the band, 1 at DC (cg), and from the
    # source the coupling's DC zero (README, The microphone demo by hand)
    import io

    from rich.console import Console

    from railroom.engine.analysis import analyse
    from railroom.engine.formats.loading import load_checked
    from railroom.tui.widgets.detail import stage_story

    chain, library = load_checked(str(DEMO))
    result = analyse(chain, library.parts, design_aids=False, headroom=False)
    console = Console(width=80, file=io.StringIO(), record=True, color_system=None)
    console.print(stage_story(result.stages[1], chain, library.parts))
    text = " ".join(console.export_text().split())
    assert "gain 42.79 to 47.35 over the band, 1 at DC" in text
    assert 47.35 == pytest.approx(GAIN, rel=1e-3)  # 1 + rf/rg at 100 Hz, just above the cg corner
    assert "from the source 41.86 to 46.34, 0 at DC" in text
