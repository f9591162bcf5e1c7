"""Issue 11, the items left after the whole-chain reference: the plain comparator's thresholds with
the op amp's errors, and the stages fed a clipped signal taking their needs from it. Each against
a hand calculation named beside it; `part()` is an illustrative part with no offset or bias."""

from __future__ import annotations

import pytest

from railroom.engine.analysis import analyse
from railroom.engine.formats.chain_file import chain_from_text

from clean_part import part


def result(text: str, parts: dict, **options):
    return analyse(chain_from_text(text), parts, design_aids=False, headroom=False, **options)


def comparator(before: str = "", impedance: str = "10k", invert: str = "false") -> str:
    return f'''format = 1
title = "comparator"
[rails.main]
positive = "5"
negative = "0"
[source]
level = ["2", "3"]
impedance = "{impedance}"
{before}
[[stage]]
name = "alarm"
block = "comparator"
part = "clean"
threshold = "2.5"
invert = {invert}
'''


DIVIDER = """[[stage]]
name = "halve"
block = "divider"
top = "10k"
bottom = "10k"
"""

ERRORS = dict(offset=1e-3, bias_current=100e-9)


@pytest.mark.parametrize("invert", ["false", "true"])
def test_comparator_threshold_carries_offset_and_bias_through_the_source_impedance(invert):
    # the flip is V+ + Vos = V- (the op amp's input offset, Sedra & Smith ch. 2), and the bias
    # current drawn from the signal's pin drops Ib Rd across the 10k source impedance (Ohm's law):
    # threshold 2.5 V +/- (1 mV + 100 nA x 10k) = 2.5 V +/- 2 mV, at either input
    stage = result(comparator(invert=invert), part(**ERRORS)).stages[0]
    to_high, to_low = stage.measure.thresholds
    assert to_high == pytest.approx((2.498, 2.502), abs=1e-12)
    assert to_low == pytest.approx((2.498, 2.502), abs=1e-12)
    # the signal's pin: 2..3 V moved by 100 nA x 10k = 1 mV either way
    assert stage.measure.opamps[0].input == pytest.approx((1.999, 3.001), abs=1e-12)


def test_comparator_threshold_bias_through_a_divider_before_it():
    # the divider's Thevenin resistance 10k || 10k = 5k (Horowitz & Hill ch. 1) with no source
    # impedance: 2.5 V +/- (1 mV + 100 nA x 5k) = 2.5 V +/- 1.5 mV
    stage = result(comparator(DIVIDER, impedance="0"), part(**ERRORS)).stages[1]
    assert stage.measure.thresholds[0] == pytest.approx((2.4985, 2.5015), abs=1e-12)


def test_comparator_with_a_clean_part_keeps_the_written_threshold():
    stage = result(comparator(), part()).stages[0]
    assert stage.measure.thresholds[0] == pytest.approx((2.5, 2.5), abs=1e-15)


def clipping_then_buffer(gain: str, level: str, amplitude: str, band: str) -> str:
    return f'''format = 1
title = "a clipping gain, then a buffer"
[rails.main]
positive = "5"
negative = "-5"
[source]
level = [{level}]
amplitude = "{amplitude}"
band = [{band}]
[[stage]]
name = "gain"
block = "noninverting"
part = "clean"
rf = "{gain}"
rg = "10k"
[[stage]]
name = "buffer"
block = "follower"
part = "clean"
'''


@pytest.mark.parametrize("method", ["corners", "rss", "montecarlo"])
def test_a_buffer_after_a_voltage_clip_needs_the_clipped_sines_full_slope(method):
    # 1 V at 1 kHz times 1 + 90k/10k = 10 V peak, clipped at the 5 V rails less 30 mV: the clipped
    # sine keeps the unclipped slope where it crosses zero, 2 pi f A = 2 pi 1k 10 = 62.83 kV/s
    # (the slope of A sin(wt) at 0, Sedra & Smith ch. 2's slew need). Its amplitude held at the
    # window's half (4.97 V) gave 2 pi 1k 4.97 = 31.2 kV/s before: optimistic by half.
    text = clipping_then_buffer("90k", '"0", "0"', "1", '"1k", "1k"')
    first, second = result(
        text, part(), method=method, samples=200 if method == "montecarlo" else None
    ).stages
    assert first.regime == "clipping"
    assert second.measure.opamps[0].slew_needed == pytest.approx(62832, rel=1e-4)


def test_a_buffer_after_a_slew_limited_stage_needs_at_most_that_slew_rate():
    # 1 V at 10 kHz times 2 needs 2 pi 10k 2 = 125.7 kV/s of a 50 kV/s part: the stage is slew
    # limited, its output never steeper than 50 kV/s, so the buffer after it (gain 1, A0 = 1e7:
    # 1/(1 + 1e-7)) needs 50 kV/s, not 125.7 kV/s, and meets its own 50 kV/s at equality
    found = result(clipping_then_buffer("10k", '"0", "0"', "1", '"10k", "10k"'), part(slew=5e4))
    first, second = found.stages
    assert first.regime == "clipping" and first.reasons == ("slew",)
    assert second.measure.opamps[0].slew_needed == pytest.approx(5e4, rel=1e-6)
    assert second.reasons == ("fed-clipped",)


def test_pump_demo_stage5_slew_need_from_the_slew_limited_stage_before_it():
    # engine/demos/pump_vibration.toml: stage 4's low-power part slews at 0.04 V/us
    # (presets/generic.toml) and cannot follow its 47.1 kV/s need; what it hands the converter
    # driver (a follower, gain 1/(1 + 1/A0) with A0 = 100 dB) is never steeper than 40 kV/s, so
    # the driver needs 40 kV/s (it took 47.1 kV/s from the unclipped amplitude before)
    from pathlib import Path

    import railroom.engine.demos as demos
    from railroom.engine.formats.loading import load_checked

    chain, library = load_checked(str(Path(demos.__file__).parent / "pump_vibration.toml"))
    stages = analyse(chain, library.parts, design_aids=False, headroom=False).stages
    assert stages[3].reasons == ("slew",)
    assert stages[3].measure.opamps[0].slew_needed == pytest.approx(47100, rel=1e-3)
    assert stages[4].measure.opamps[0].slew_needed == pytest.approx(4e4, rel=1e-4)


ADC_THEN_INVERTING = """format = 1
title = "buffer, converter input, inverting stage on the same node"
[rails.main]
positive = "15"
negative = "-15"
[source]
level = ["2", "2"]
[[stage]]
name = "buffer"
block = "follower"
part = "clean"
[[stage]]
name = "converter input"
block = "adc"
low = "0"
high = "4"
[[stage]]
name = "inverting"
block = "inverting"
part = "clean"
rin = "1k"
rf = "1k"
"""


def test_a_stage_driving_a_converter_input_is_loaded_by_the_stage_after_it():
    # the converter input draws nothing and passes its node on, so the inverting stage's 1k to its
    # virtual earth at 0 V hangs on the buffer's output: 2 V / 1k = 2 mA (Ohm's law), and the
    # 40 ohm output resistance of the part costs 80 mV of upper swing. Found by the whole-chain
    # reference (tests/references/catalogue_brute.py); the buffer was charged 0 mA before.
    buffer = result(ADC_THEN_INVERTING, part()).stages[0]
    assert buffer.measure.opamps[0].current_needed == pytest.approx(2e-3, rel=1e-6)
    assert buffer.margins["output-high"] == pytest.approx(15 - 0.03 - 0.08 - 2.0, abs=1e-6)


FOLLOWER_INTO_RC = """format = 1
title = "buffer into an RC low-pass, below 0 V"
[rails.main]
positive = "15"
negative = "-15"
[source]
level = ["-0.3", "-0.3"]
amplitude = "0.2"
band = ["100k", "100k"]
[[stage]]
name = "buffer"
block = "follower"
part = "clean"
[[stage]]
name = "rc"
block = "rc_lowpass"
r = "1k"
c = "1u"
"""


def test_a_buffer_into_an_rc_lowpass_sources_current_while_below_0_v():
    # 100 kHz is 628 times the 159 Hz corner: the capacitor holds -0.3 V and the 0.2 V sine drives
    # +/-0.2 V / 1k = +/-0.2 mA through r (Ohm's law), sourced while the output is at -0.1 V. The
    # capacitor's voltage follows the signal, so it is no fixed return: it lies between the span
    # -0.5..-0.1 V and 0 V, so at most (-0.1 + 0.5) V / 1k = 0.4 mA is sourced, and the part's
    # 40 ohm output resistance takes 16 mV of upper swing: 15 - 0.03 - 0.016 + 0.1 = 15.054 V.
    # Before, the load was a conductance to 0 V: nothing sourced below 0 V (15.07 V).
    # Found by the whole-chain reference (tests/references/catalogue_brute.py).
    buffer = result(FOLLOWER_INTO_RC, part()).stages[0]
    assert buffer.margins["output-high"] == pytest.approx(15.054, abs=1e-4)


def gain_then(stages: str, level: str = "-0.3") -> str:
    return f'''format = 1
title = "loading"
[rails.main]
positive = "15"
negative = "-15"
[source]
level = ["{level}", "{level}"]
[[stage]]
name = "first"
block = "noninverting"
part = "clean"
rf = "1k"
rg = "1k"
{stages}
'''


DIVIDER_INTO_INVERTING = """[[stage]]
name = "halve"
block = "divider"
top = "1k"
bottom = "1k"
[[stage]]
name = "invert"
block = "inverting"
part = "clean"
rin = "1k"
rf = "1k"
"""

INVERTING = """[[stage]]
name = "invert"
block = "inverting"
part = "clean"
rin = "1k"
rf = "1k"
"""


def test_a_divider_loaded_by_the_next_stage_loads_the_stage_before_it_more():
    # -0.3 V x 2 = -0.6 V into top 1k + (bottom 1k || rin 1k to the virtual earth at 0 V) = 1.5k
    # (series and parallel resistors, Horowitz & Hill ch. 1): 0.4 mA sunk, plus 0.3 mA through
    # its own rf + rg (0.6 V over 2k): 0.7 mA. The divider's own 1k + 1k gave 0.3 + 0.3 = 0.6 mA
    # before. Found by the whole-chain reference. The virtual earth's return is widened by its
    # Vout/A0 as well, at most 15 V / 1e7 = 1.5 uV (bounds_walk.earth_error): under 1.5 nA more.
    first = result(gain_then(DIVIDER_INTO_INVERTING), part()).stages[0]
    assert first.measure.opamps[0].current_needed == pytest.approx(0.7e-3, abs=1.5e-9)
    assert first.measure.opamps[0].current_needed >= 0.7e-3


def test_an_input_resistor_returns_to_ref_plus_the_offset():
    # 0 V in, gain 2: the output sits within +/-2 mV (1 mV offset x noise gain 2); the next
    # stage's 1k returns to its - pin, at ref + Vos = +/-1 mV: at most (2 + 1) mV / 1k = 3 uA
    # (Ohm's law), plus 1 uA through its own rf (2 mV less the 1 mV at its - pin, over 1k):
    # 4 uA. Taken to ref alone it was 2 + 1 = 3 uA. The - pin's Vout/A0 widens the return by
    # 15 V / 1e7 = 1.5 uV more (bounds_walk.earth_error): 1.5 nA through the 1k.
    first = result(gain_then(INVERTING, level="0"), part(offset=1e-3)).stages[0]
    assert first.measure.opamps[0].current_needed == pytest.approx(4e-6 + 1.5e-9, rel=1e-4)


RC_ADC_INVERTING = """format = 1
title = "divider, converter input, inverting stage on the same node"
[rails.main]
positive = "15"
negative = "-15"
[source]
level = ["2", "2"]
[[stage]]
name = "halve"
block = "divider"
top = "10k"
bottom = "10k"
[[stage]]
name = "converter input"
block = "adc"
low = "0"
high = "0.7"
[[stage]]
name = "inverting"
block = "inverting"
part = "clean"
rin = "10k"
rf = "10k"
"""


@pytest.mark.parametrize("method", ["corners", "rss", "montecarlo"])
def test_a_converter_input_sees_its_node_loaded_by_the_stage_after_it(method):
    # 2 V into 10k/10k is 1 V open; the inverting stage's 10k to its virtual earth sits on the
    # same node: 2 V x (10k || 10k) / (10k + 10k || 10k) = 2/3 V (Thevenin, Horowitz & Hill ch. 1),
    # inside the 0.7 V window by 33 mV. The converter input was checked on the open 1 V (margin
    # -0.3 V) before. Found by the whole-chain reference (tests/references/catalogue_brute.py).
    found = result(RC_ADC_INVERTING, part(), method=method, samples=200 if method == "montecarlo" else None)
    adc = found.stages[1]
    assert adc.margins["input-high"] == pytest.approx(0.7 - 2 / 3, abs=1e-6)
    assert found.stages[0].measure.output == pytest.approx((2 / 3, 2 / 3), abs=1e-6)
    # and the inverting stage after it is fed that node, not a signal held at the 0.7 V edge of
    # a window it never left (-rf/rin x 2/3 V = -2/3 V; it read -0.467 V, 0.7 x 10k / 15k)
    assert found.stages[2].measure.output == pytest.approx((-2 / 3, -2 / 3), abs=1e-5)
    assert "fed-clipped" not in found.stages[2].reasons


SCHMITT_AFTER_BUFFER = """format = 1
title = "buffer into a Schmitt trigger"
[rails.main]
positive = "15"
negative = "-15"
[source]
level = ["0", "0"]
[[stage]]
name = "buffer"
block = "follower"
part = "clean"
[[stage]]
name = "trigger"
block = "schmitt"
part = "clean"
r1 = "10k"
r2 = "100k"
"""


def test_a_buffer_driving_a_schmitt_trigger_carries_its_feedback_current():
    # the buffer at 0 V drives r1 + r2 = 110k to the trigger's output, at either level up to the
    # rails: 15 V / 110k = 136.4 uA either way (Ohm's law). It was charged nothing before (the
    # trigger's input was taken to draw no current). Found by the whole-chain reference.
    buffer = result(SCHMITT_AFTER_BUFFER, part()).stages[0]
    assert buffer.measure.opamps[0].current_needed == pytest.approx(15 / 110e3, rel=1e-6)


def test_an_output_supplies_the_bias_currents_of_the_pins_it_drives():
    # a follower at 0 V driving a follower: the first op amp's own - pin (its output) and the
    # second's + pin each draw up to 1 uA of bias either way, and the second's - pin is its own
    # output: the first supplies 1 + 2 x 1 uA at most, a bound on the 2 uA it does supply. It
    # was charged nothing before. Found by the whole-chain reference.
    text = SCHMITT_AFTER_BUFFER.replace('block = "schmitt"', 'block = "follower"').replace(
        'r1 = "10k"\nr2 = "100k"\n', ""
    )
    buffer = result(text, part(bias_current=1e-6)).stages[0]
    assert buffer.measure.opamps[0].current_needed == pytest.approx(3e-6, rel=1e-9)


MFB_AFTER_BUFFER = """format = 1
title = "buffer into an MFB low-pass"
[rails.main]
positive = "15"
negative = "-15"
[source]
level = ["0", "0"]
[[stage]]
name = "buffer"
block = "follower"
part = "clean"
[[stage]]
name = "filter"
block = "mfb_lowpass"
part = "clean"
r1 = "1k"
r2 = "1k"
r3 = "47k"
c1 = "1n"
c2 = "1n"
"""


def test_an_mfb_lowpass_input_returns_to_node_a_moved_by_the_bias_through_r3():
    # at DC (capacitors open) the filter's - pin draws its 1 uA bias through r3 from node A, so
    # A sits at 1 uA x 47k = 47 mV above the virtual earth (KCL at A and Ohm's law): the buffer at
    # 0 V sinks 47 mV / 1k = 47 uA through r1, plus its own - pin's 1 uA: 48 uA. The bound adds
    # the filter's second pin: 47 + 3 = 50 uA. It was 3 uA before (node A taken at ref).
    # Found by the whole-chain reference (tests/references/catalogue_brute.py).
    buffer = result(MFB_AFTER_BUFFER, part(bias_current=1e-6)).stages[0]
    assert buffer.measure.opamps[0].current_needed >= 48e-6
    assert buffer.measure.opamps[0].current_needed == pytest.approx(50e-6, rel=1e-3)
