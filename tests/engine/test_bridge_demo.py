"""The bridge demo end to end: `railroom check` on engine/demos/bridge_sensor.toml (its exit codes
and JSON report as the README gives them) finds the instrumentation amplifier's first stage clipping while its output looks fine."""

import json
import subprocess
import sys
from pathlib import Path

import pytest

import railroom.engine.demos

DEMO = Path(railroom.engine.demos.__file__).parent / "bridge_sensor.toml"
LOWER = "first stage, lower op amp"


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    home = tmp_path_factory.mktemp("presets-home")
    done = subprocess.run(
        [sys.executable, "-m", "railroom.tui.cli", "check", str(DEMO), "--json"],
        capture_output=True,
        text=True,
        timeout=60,
        env={"RAILROOM_PRESETS_HOME": str(home), "PATH": "/usr/bin:/bin"},
    )
    assert done.returncode == 1, done.stderr  # the README (exit codes): 1 for NO-GO
    return json.loads(done.stdout)


def test_the_first_stage_fails_and_is_named(report):
    assert report["verdict"] == "no-go"
    amplifier = report["stages"][0]
    assert amplifier["block"] == "instrumentation" and amplifier["regime"] == "clipping"
    assert amplifier["reasons"] == ["output-low"]
    assert amplifier["failing_nodes"] == {"output-low": LOWER}
    nodes = {n["label"]: n for n in amplifier["nodes"]}
    assert set(nodes) == {"first stage, upper op amp", LOWER, "difference stage"}
    # the block's own output stays inside its window by more than the 50 mV margin ...
    out, window = amplifier["output"], amplifier["window"]
    assert out["min"] - window["low"] > 0.2 and window["high"] - out["max"] > 0.9
    # ... while the lower input op amp goes below its swing limit
    assert nodes[LOWER]["output"][0] < nodes[LOWER]["window"][0]


def test_first_stage_margin_against_the_textbook_worst_case(report):
    # three-op-amp instrumentation amplifier, Sedra & Smith, Microelectronic Circuits, ch. 2: first-stage outputs V_cm -/+ (1 + 2 rf/rg) V_d/2; output offset = Vos times
    # the gain it sees: (G + 1)/2 from the lower op amp's own offset and (G - 1)/2 from the
    # upper's, G in all. Worst corner: V_cm 1.2 V, V_d 22 mV + 2 mV ripple, rf high, rg low
    # (0.1 %), offset 2 mV + 5 uV/C x 25 C (generic-rro-5v, presets/generic.toml).
    gain = 1 + 2 * 49.9e3 * 1.001 / (1e3 * 0.999)
    offset = 2e-3 + 5e-6 * 25
    lowest = 1.2 - gain * (22e-3 + 2e-3) / 2 - gain * offset
    # the window's low end: 0 V rail + 30 mV headroom + 40 ohm times the op amp's current
    node = next(n for n in report["stages"][0]["nodes"] if n["label"] == LOWER)
    window_low = 0.03 + 40 * node["current_needed"]
    assert node["window"][0] == pytest.approx(window_low, abs=1e-6)
    # finite open-loop gain (100 dB) trims the closed-loop gain by about G/A0 = 0.1 %
    assert node["output"][0] == pytest.approx(lowest, abs=3e-3)
    assert report["stages"][0]["margins"]["output-low"] == pytest.approx(lowest - window_low, abs=3e-3)


def test_downstream_stages_are_fed_the_clipped_signal(report):
    for stage in report["stages"][1:]:
        assert stage["reasons"] == ["fed-clipped"]
