"""`load_to` on the saturated blocks (issue 13, real boards, item 2): a comparator's or a Schmitt
trigger's output level behind its output resistance, with a load returning to a voltage, against
Ohm's law and Millman's theorem by hand (Horowitz & Hill, The Art of Electronics, ch. 1), in
every method and in the per-draw nodal reference."""

from __future__ import annotations

import pytest

from railroom.engine.analysis import analyse
from railroom.engine.circuit.model import Part
from railroom.engine.circuit.returned_levels import returned_level
from railroom.engine.formats.chain_file import chain_from_text

# an illustrative part of our own: swings to 1 V of each rail, 100 ohm output, 20 mA limit
PART = Part(
    id="board-amp",
    description="",
    supply=(1, 40),
    supply_abs_max=44,
    output_headroom=(1.0, 1.0),
    output_resistance=100.0,
    input_headroom=(0.0, 0.0),
    gbw=1e6,
    slew=1e6,
    open_loop_gain=1e5,
    offset=0.0,
    offset_drift=0.0,
    bias_current=0.0,
    output_current=0.02,
)

HEAD = """\
format = 1
[conditions]
method = "{method}"
samples = 200
[rails.main]
positive = "12"
negative = "0"
[source]
level = ["0", "0"]
amplitude = "4"
band = ["100", "100"]
"""
COMPARATOR = """\
[[stage]]
name = "flag"
block = "comparator"
part = "board-amp"
threshold = "2"
load = "900"
load_to = "5"
"""
SCHMITT = """\
[[stage]]
name = "trigger"
block = "schmitt"
part = "board-amp"
r1 = "10k"
r2 = "1000k"
ref = "2"
invert = true
load = "900"
load_to = "5"
"""


def run(stages: str, method: str = "corners"):
    chain = chain_from_text(HEAD.format(method=method) + stages)
    return analyse(chain, {PART.id: PART})


# By hand (Millman's theorem; Ohm's law): the high level V0 = 11 V (12 V less 1 V) behind 100 ohm,
# 900 ohm to 5 V: V = (11 * 900 + 5 * 100) / 1000 = 10.4 V, sourcing (11 - 5) / 1000 = 6 mA. The low
# level V0 = 1 V with the load pulling it up: V = (1 * 900 + 5 * 100) / 1000 = 1.4 V, sinking
# (5 - 1) / 1000 = 4 mA. Before, a load to 0 V gave 11 / 1000 ... 9.9 V and 0.9 V.
HIGH, LOW = 10.4, 1.4
CURRENT = (HIGH - 5.0) / 900.0  # 6 mA, the larger of the two


def test_the_level_helper_follows_millman_both_ways():
    assert float(returned_level(PART, 11.0, 1 / 900, 5.0)) == pytest.approx(HIGH, rel=1e-12)
    assert float(returned_level(PART, 1.0, 1 / 900, 5.0)) == pytest.approx(LOW, rel=1e-12)
    # to 0 V it is opamp.saturated_levels' V0 / (1 + Ro G): 11 * 900 / 1000
    assert float(returned_level(PART, 11.0, 1 / 900, 0.0)) == pytest.approx(9.9, rel=1e-12)
    # the current limit caps the drop: 1 ohm load to 5 V from 11 V would take 6 / 101 A; 20 mA
    # through 100 ohm drops 2 V
    assert float(returned_level(PART, 11.0, 1.0, 5.0)) == pytest.approx(9.0, rel=1e-12)
    assert float(returned_level(PART, 1.0, 1.0, 5.0)) == pytest.approx(3.0, rel=1e-12)


def test_a_comparator_with_load_to_reads_both_levels_and_the_current():
    stage = run(COMPARATOR).stages[0]
    # the corners take the load at 0 .. its conductance (opamp.saturated_levels, as before), so
    # each level spans its unloaded value and its Millman value: low 1 .. 1.4 V, high 10.4 .. 11 V
    assert stage.measure.output == pytest.approx((1.0, 11.0), rel=1e-12)
    assert stage.regime == "saturated"
    # the largest current, an outside bound: the unloaded 11 V end into 5 V, 6 V / 900 ohm
    # (the loaded level gives (10.4 - 5) / 900 = 6 mA)
    assert stage.measure.opamps[0].current_needed == pytest.approx(6.0 / 900.0, rel=1e-12)
    assert stage.measure.opamps[0].current_needed >= CURRENT


def test_a_schmitt_trigger_with_load_to_takes_the_pulled_levels():
    stage = run(SCHMITT).stages[0]
    to_high, to_low = stage.measure.thresholds
    # invert = true: thresholds (ref r2 + V r1) / (r1 + r2) with the level at each end of its
    # span; the levels span every load end (the load alone, and with the pair's 1/1010k; the
    # pair returns near the middle, taken at 0 V as before: schmitt.py)
    # Millman by hand: 100 ohm to V0 = 1 V, 900 ohm to 5 V, and with the pair 1010k to 0 V
    rp = 1.01e6
    low_levels = [LOW, (1.0 * 900 * rp + 5 * 100 * rp) / (900 * rp + 100 * rp + 100 * 900)]
    assert to_high[0] == pytest.approx((2 * 1e6 + min(low_levels) * 1e4) / 1.01e6, rel=1e-9)
    assert to_high[1] == pytest.approx((2 * 1e6 + max(low_levels) * 1e4) / 1.01e6, rel=1e-9)
    assert max(low_levels) == pytest.approx(LOW, rel=1e-12)
    # the load current: 6 mA from the high level into 5 V (the pair adds its own)
    amp = stage.measure.opamps[0]
    pair = (HIGH - 2.0) / 1.01e6
    assert amp.current_needed == pytest.approx(CURRENT + pair, rel=1e-6)


def test_without_load_to_the_levels_are_as_before():
    stage = run(COMPARATOR.replace('load_to = "5"\n', "")).stages[0]
    # the corners' ends (0 .. the load's conductance) of 0.9 .. 1 V and 9.9 .. 11 V
    assert stage.measure.output == pytest.approx((1.0, 11.0), rel=1e-12)
    assert stage.measure.opamps[0].current_needed == pytest.approx(11.0 / 900.0, rel=1e-12)


@pytest.mark.parametrize("method", ["rss", "montecarlo"])
def test_the_draw_walk_reads_the_pulled_levels(method):
    stage = run(COMPARATOR, method).stages[0]
    # one circuit per row, no tolerance: exact levels 1.4 V and 10.4 V (the signal reaches both)
    assert stage.measure.output == pytest.approx((LOW, HIGH), rel=1e-9)


def test_the_per_draw_reference_agrees_with_the_draw_walk():
    from railroom.engine.benchmark import per_draw
    from railroom.engine.methods import corners, montecarlo
    from railroom.engine.walks import circuit_walk as dw
    from railroom.engine.walks.preparation import band_grid, plan_chain

    chain = chain_from_text(HEAD.format(method="montecarlo") + COMPARATOR.replace('"900"', '"900 1%"'))
    plans = plan_chain(chain, {PART.id: PART})
    freqs = band_grid(chain, plans)
    layout = montecarlo.layout_for(chain, plans, freqs, corners.walk(corners.prepare(chain, plans, freqs)))
    D, dT = next(montecarlo.chunks(layout, 8, 3, chunk=8))
    fast = dw.walk_draws(layout, D, dT)[0]
    slow = per_draw.run_draws(layout, D, dT)
    column = layout.column(1, "load", "tolerance")
    for j in range(8):
        load = 900 * (1 + 0.01 * D[j, column])
        high = (11 * load + 5 * 100) / (load + 100)  # Millman's theorem by hand
        assert fast.out_hi[j] == pytest.approx(high, rel=1e-12)
        assert fast.margins["current"][j] == pytest.approx(slow[j][0]["current"], rel=1e-12)
        assert fast.margins["current"][j] == pytest.approx(0.02 - (high - 5) / load, rel=1e-12)
