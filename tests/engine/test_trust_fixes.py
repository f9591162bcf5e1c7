"""Worst-case numbers that were optimistic (or falsely alarming) before, each against a hand
calculation named beside it. The circuits are written in the chain format of the README."""

from __future__ import annotations

import pytest

from railroom.engine.analysis import analyse
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.circuit.model import Part

from clean_part import part


def result(text: str, parts: dict[str, Part]):
    return analyse(chain_from_text(text), parts, design_aids=False, headroom=False)


def summing(count: int, low: str) -> str:
    inputs = ", ".join('{ r = "100k 10%", v = "-0.5" }' for _ in range(count))
    return f'''format = 1
title = "many toleranced inputs"
[rails.main]
positive = "15"
negative = "-15"
[source]
level = ["0", "0"]
[[stage]]
name = "sum"
block = "summing"
part = "clean"
rin = "100k"
rf = "100k"
inputs = [{inputs}]
[[stage]]
name = "adc"
block = "adc"
low = "{low}"
high = "14"
'''


def test_every_toleranced_value_reaches_its_corner():
    # Inverting summer (Sedra & Smith, ch. 2): Vout = -sum (rf / r_i) v_i. With 13 inputs of
    # -0.5 V through 100k +10 % each, the lowest output is 13 x 0.5 x 100/110 = 5.90909 V.
    stages = result(summing(13, "5.95"), part()).stages
    low = stages[0].measure.output[0]
    assert low == pytest.approx(13 * 0.5 * 100 / 110, abs=1e-4)
    assert not stages[1].go  # the converter window at 5.95 V is left


def test_twenty_interchangeable_inputs_are_enumerated_exactly():
    # 20 identical toleranced inputs: 2^20 corners, but the summer reads its inputs only through
    # sums (Sedra & Smith, ch. 2: Vout = -rf sum v_i / r_i), so the 21 counts of inputs at their
    # high end are every distinct corner (corners.exchangeable_inputs). All at 110k gives
    # 20 x 0.5 x 100/110 = 9.0909 V, below the 9.291 V window: NO-GO (it said GO at 9.62 V when
    # it held the values past the 14th at one end, and was refused after that).
    stages = result(summing(20, "9.291"), part()).stages
    assert stages[0].measure.output[0] == pytest.approx(20 * 0.5 * 100 / 110, abs=1e-4)
    assert stages[0].measure.output[1] == pytest.approx(20 * 0.5 * 100 / 90, abs=1e-4)
    assert not stages[1].go


def test_a_stage_with_too_many_distinct_corners_is_bounded_not_sampled():
    # 20 inputs that are not interchangeable (each its own resistor): 2^20 corners. Holding any
    # at one end could hide the worst case; they are taken together through their summed
    # conductance and current (corners.summed_inputs), an outside bound said in the cautions.
    # Inverting summer (Sedra & Smith, ch. 2): the lowest output has every r at +10 %,
    # sum 0.5 x 100 / (1.1 (100 + i)) = 8.3253 V, below the 9.291 V window: NO-GO (it was refused
    # before, with "20 toleranced values").
    text = summing(20, "9.291")
    for i in range(20):
        text = text.replace('{ r = "100k 10%", v = "-0.5" }', f'{{ r = "{100 + i}k 10%", v = "-0.5" }}', 1)
    checked = result(text, part())
    true_low = sum(0.5 * 100 / (1.1 * (100 + i)) for i in range(20))
    low = checked.stages[0].measure.output[0]
    assert true_low - 1e-4 < low <= true_low  # all at one sign: the box's corner is a true one
    assert not checked.stages[1].go
    assert any("20 fixed inputs are taken together" in c for c in checked.cautions)


FOLLOWER = """format = 1
title = "buffer on a high-impedance source"
[rails.main]
positive = "5"
negative = "0"
[source]
level = ["1", "3.8"]
impedance = "1meg"
[[stage]]
name = "buffer"
block = "follower"
part = "clean"
{load}
"""


def test_bias_current_through_the_source_moves_the_input_pin():
    # Ohm's law: 250 nA through 1 Mohm moves the + pin by 0.25 V either way: 0.75 V to 4.05 V.
    stage = result(FOLLOWER.format(load=""), part(bias_current=250e-9)).stages[0]
    assert stage.measure.opamps[0].input == pytest.approx((0.75, 4.05), abs=1e-6)


def test_output_current_grows_only_its_own_side_of_the_swing():
    # A 1k load to 0 V on a 0-5 V supply only ever takes current the op amp sources: at 3.8 V
    # out that is 3.8 mA, so the upper limit drops by 40 ohm x 3.8 mA = 0.152 V; the lower limit
    # stays at the no-load 30 mV (the part's swing is given per direction).
    stage = result(FOLLOWER.format(load='load = "1k"'), part()).stages[0]
    low, high = stage.measure.opamps[0].window
    assert low == pytest.approx(0.03, abs=1e-9)
    assert high == pytest.approx(5 - 0.03 - 40 * 3.8e-3, abs=1e-6)


def test_a_supply_exactly_at_the_rating_meets_it():
    # +/-6 V with 5 %: the largest span is 6 x 1.05 x 2 = 12.6 V, which is 12.600000000000001 in
    # floating point; a part rated to 12.6 V meets it (limits are met at equality).
    text = """format = 1
title = "at the rating"
[rails.main]
positive = "6"
negative = "-6"
tolerance = "5%"
[source]
level = ["0", "0"]
[[stage]]
name = "buffer"
block = "follower"
part = "clean"
"""
    stage = result(text, part(supply=(2.7, 12.6), supply_abs_max=13.0)).stages[0]
    assert stage.margins["supply"] == 0.0
    assert stage.go


def test_rss_never_reports_a_margin_below_the_worst_case():
    # Root-sum-square never exceeds the extreme values of the same linear model:
    # sqrt(sum (S_i t_i)^2) <= sum |S_i t_i| (ECSS-Q-HB-30-01A). The demo's first stage sits on
    # 12 V +/-5 % rails with 1.5 V headroom: its worst-case window is 12 x 0.95 - 1.5 = 9.9 V;
    # 3 sigma of a uniform 5 % (1.73 x 5 %) used to quote 9.466 V, tighter than any circuit.
    from pathlib import Path

    import railroom.engine.demos
    from railroom.engine.formats.loading import load_checked

    path = Path(railroom.engine.demos.__file__).parent / "pump_vibration.toml"
    chain, library = load_checked(str(path))
    corners = analyse(chain, library.parts, design_aids=False, headroom=False)
    rss = analyse(chain, library.parts, method="rss", design_aids=False, headroom=False)
    # less the output resistance's drop for the bias currents the output supplies: its own -
    # pin and the next stage's two pins, 75 ohm x 3 x 100 nA = 22.5 uV (presets/generic.toml)
    drop = 75 * 3 * 100e-9
    assert rss.stages[0].measure.window == pytest.approx((-9.9 + drop, 9.9 - drop), abs=1e-9)
    for worst, statistical in zip(corners.stages, rss.stages):
        for check, margin in worst.margins.items():
            assert statistical.margins[check] >= margin - 1e-9, (worst.measure.index, check)


def test_no_headroom_is_quoted_for_a_chain_with_no_linear_stage():
    # A comparator alone has no linear regime to leave; the search used to answer its 120 dB limit.
    text = """format = 1
title = "comparator only"
[rails.main]
positive = "5"
negative = "0"
[source]
level = ["1", "2"]
amplitude = "0.5"
band = ["10", "1k"]
[[stage]]
name = "alarm"
block = "comparator"
part = "clean"
threshold = "1.5"
"""
    found = analyse(chain_from_text(text), part(), design_aids=False)
    assert found.headroom_db is None
