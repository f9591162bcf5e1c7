"""headroom_db against a plain bisection on the source amplitude and a hand calculation."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from railroom.engine.analysis import analyse
from railroom.engine.aids.headroom import headroom_db
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.methods import corners
from railroom.engine.circuit.model import Part
from railroom.engine.walks.preparation import plan_chain
from railroom.engine.walks.preparation import band_grid

PART = Part(
    id="p",
    description="",
    supply=(1.0, 100.0),
    supply_abs_max=100.0,
    output_headroom=(1.0, 1.0),
    output_resistance=0.0,
    input_headroom=(1.0, 1.0),
    gbw=1e12,
    slew=1e12,
    open_loop_gain=1e12,
    offset=0.0,
    offset_drift=0.0,
    bias_current=0.0,
    output_current=1.0,
)


def chain(gain_rf: str, amplitude: str, level: str = "0") -> str:
    return f"""
[rails.main]
positive = "15"
negative = "-15"
[source]
level = ["{level}", "{level}"]
amplitude = "{amplitude}"
band = ["10", "1k"]
[[stage]]
block = "noninverting"
part = "p"
rf = "{gain_rf}"
rg = "10k"
"""


def test_headroom_matches_hand_calculation():
    # Gain 10 (1 + 90k/10k, Sedra & Smith ch. 2), window 14 V (15 V rail less 1 V headroom):
    # the source may reach 1.4 V peak; from 0.1 V that is 20 log10(14) = 22.92 dB.
    result = analyse(chain_from_text(chain("90k", "100m")), {"p": PART})
    assert result.headroom_db == pytest.approx(20 * np.log10(14.0), abs=0.011)


def test_headroom_negative_when_the_amplitude_must_fall():
    # 2 V peak into gain 10 needs 20 V: it must fall to 1.4 V, -3.10 dB (20 log10(1.4/2)).
    result = analyse(chain_from_text(chain("90k", "2")), {"p": PART})
    assert result.headroom_db == pytest.approx(20 * np.log10(0.7), abs=0.011)


def test_headroom_none_when_dc_alone_fails():
    # 2 V DC into gain 10 is 20 V: beyond the 14 V window whatever the AC part does
    result = analyse(chain_from_text(chain("90k", "100m", level="2")), {"p": PART})
    assert result.headroom_db is None


@pytest.mark.parametrize("path", [Path(__file__).resolve().parents[2] / "engine/demos/pump_vibration.toml"])
def test_headroom_agrees_with_plain_bisection(path):
    from railroom.engine.formats.presets import load_library, search_order
    from railroom.engine.formats.chain_file import load_chain

    loaded = load_chain(path)
    parts = load_library(search_order()).parts
    plans = plan_chain(loaded, parts)
    prepared = corners.prepare(loaded, plans, band_grid(loaded, plans))

    def linear(db: float) -> bool:
        return all(r.regime != "clipping" for r in corners.walk(prepared, 10 ** (db / 20)))

    low, high = -60.0, 60.0
    while high - low > 0.005:
        middle = (low + high) / 2
        low, high = (middle, high) if linear(middle) else (low, middle)
    assert headroom_db(prepared) == pytest.approx(low, abs=0.011)


@pytest.mark.parametrize(
    "text", [chain("90k", "100m"), chain("90k", "2"), chain("40k2", "330m"), chain("90k", "0.987")]
)
def test_the_quoted_headroom_is_itself_linear(text):
    # never optimistic: the amplitude the figure names (the file's times 10^(dB/20)) keeps every
    # stage linear; a figure rounded to the nearest 0.01 dB could name one just past the edge
    loaded = chain_from_text(text)
    result = analyse(loaded, {"p": PART})
    plans = plan_chain(loaded, {"p": PART})
    prepared = corners.prepare(loaded, plans, band_grid(loaded, plans))
    at = corners.walk(prepared, 10 ** (result.headroom_db / 20))
    assert all(r.regime == "linear" for r in at)


@pytest.mark.parametrize("amplitude", ["100m", "123m", "0.5", "0.7071", "1.3", "33m", "77m"])
def test_the_figure_is_the_last_linear_step_of_the_hand_calculation(amplitude):
    """Gain 1 + 90k/10k = 10 into a 14 V window (15 V rails less the 1 V headroom; Sedra &
    Smith, ch. 2): the edge is at 14 / (10 A), so the figure is the largest 0.01 dB step not
    past it, floor(100 x 20 log10(14 / (10 A))) / 100 (hand calculation), never one step less."""
    a = float(amplitude[:-1]) * 1e-3 if amplitude.endswith("m") else float(amplitude)
    edge_db = 20 * np.log10(14.0 / (10.0 * a))
    result = analyse(chain_from_text(chain("90k", amplitude)), {"p": PART}, design_aids=False)
    assert result.headroom_db == pytest.approx(np.floor(100 * edge_db + 1e-9) / 100, abs=1e-9)


def walks_and_figure(loaded, parts):
    plans = plan_chain(loaded, parts)
    prepared = corners.prepare(loaded, plans, band_grid(loaded, plans))
    walks = [0]
    real = corners.walk

    def counted(*args, **kwargs):
        walks[0] += 1
        return real(*args, **kwargs)

    corners.walk = counted  # type: ignore[assignment]
    try:
        figure = headroom_db(prepared)
    finally:
        corners.walk = real  # type: ignore[assignment]
    assert figure is not None
    # tight: the amplitude the figure names is linear and the 0.01 dB step above it is not
    # (false position's last linear point could sit a step lower: this chain read 9.83 there)
    assert all(r.regime == "linear" for r in corners.walk(prepared, 10 ** (figure / 20)))
    assert any(r.regime == "clipping" for r in corners.walk(prepared, 10 ** ((figure + 0.01) / 20)))
    return walks[0], figure


def test_the_figure_is_the_last_linear_step():
    from railroom.engine.formats.presets import load_library, shipped_folder
    from railroom.tui.timing import long_chain_text

    text = long_chain_text(5).replace('amplitude = "200m"', 'amplitude = "3"')
    text = text.replace('r = "1k"', 'r = "17.657k"', 1)
    _, figure = walks_and_figure(chain_from_text(text), load_library([shipped_folder()]).parts)
    assert figure == 9.84


def test_the_search_walks_a_long_chain_as_often_as_a_short_one():
    """Inside the linear regime every check's margin is a straight line in the amplitude, so
    the first check's crossing predicts the edge; the search walks the same handful of times
    at 12 stages as at 200 (false position alone took 5, 6 and 9 walks at 12, 48 and 200)."""
    from railroom.engine.benchmark.figures import PARTS, long_chain_text

    counts = {n: walks_and_figure(chain_from_text(long_chain_text(n), "<b>"), PARTS)[0] for n in (12, 200)}
    assert counts[200] == counts[12] <= 6
