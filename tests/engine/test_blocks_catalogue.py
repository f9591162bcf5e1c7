"""The catalogue blocks against textbook results, through the block responses and through the
whole engine (analyse) where the result is a worst-case span. Sources are named beside each check
(each check names its published source)."""

from dataclasses import replace

import numpy as np
import pytest
from scipy.signal import freqs as analog_response

from railroom.engine.analysis import analyse
from railroom.engine.circuit.blocks import BLOCKS
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.circuit.model import Part
from railroom.engine.circuit.opamp import inverse_open_loop, laplace_grid

TWO_PI = 2 * np.pi
NEAR_IDEAL = Part(
    id="ideal",
    description="",
    supply=(1, 100),
    supply_abs_max=200,
    output_headroom=(0.0, 0.0),
    output_resistance=0.0,
    input_headroom=(0.0, 0.0),
    gbw=1e13,
    slew=1e12,
    open_loop_gain=1e10,
    offset=0.0,
    offset_drift=0.0,
    bias_current=0.0,
    output_current=10.0,
)


def check(source: str, stages: str, part: Part = NEAR_IDEAL, rails: str = "15", tolerance="0"):
    text = (
        f'format = 1\n[rails.main]\npositive = "{rails}"\nnegative = "-{rails}"\n'
        f'tolerance = "{tolerance}"\n[source]\n{source}\n{stages}'
    )
    return analyse(chain_from_text(text), {part.id: part})


def ideal_response(block: str, values: dict, freqs: np.ndarray) -> np.ndarray:
    """The block's output per volt of `in` with the ideal op amp, at freqs (DC dropped)."""
    s = laplace_grid(freqs)
    v = {k: np.array([[x]]) for k, x in values.items()}
    out = BLOCKS[block].respond(v, s, inverse_open_loop(None, s), 0.0, False).output
    return out.transfers["in"][0, 1:]


FREQS = np.geomspace(10, 1e5, 200)


def test_sallen_key_unity_lowpass_f0_and_q():
    # Sallen & Key, IRE Trans. Circuit Theory CT-2, 1955; Franco, Design with Operational Amplifiers, active filters: f0 = 1/(2 pi sqrt(R1 R2 C1 C2)),
    # Q = sqrt(R1 R2 C1 C2)/(C2 (R1 + R2)); checked with scipy.signal.freqs on w0^2/(s^2 + s w0/Q + w0^2)
    r1, r2, c1, c2 = 12e3, 33e3, 22e-9, 4.7e-9
    w0 = 1 / np.sqrt(r1 * r2 * c1 * c2)
    q = np.sqrt(r1 * r2 * c1 * c2) / (c2 * (r1 + r2))
    _, expected = analog_response([w0**2], [1, w0 / q, w0**2], TWO_PI * FREQS)
    got = ideal_response("sallen_key_lowpass", {"r1": r1, "r2": r2, "c1": c1, "c2": c2}, FREQS)
    np.testing.assert_allclose(got, expected, rtol=1e-9)


def test_equal_component_butterworth_needs_k_3_minus_sqrt2():
    # Sallen & Key, IRE Trans. Circuit Theory CT-2, 1955; Franco, Design with Operational Amplifiers, active filters: equal R, equal C with gain K gives Q = 1/(3 - K); Butterworth K = 3 - sqrt(2)
    r, c = 10e3, 10e-9
    k = 3 - np.sqrt(2)
    values = {"r1": r, "r2": r, "c1": c, "c2": c, "rg": 10e3, "rf": 10e3 * (k - 1)}
    f0 = 1 / (TWO_PI * r * c)
    w0 = TWO_PI * f0
    _, expected = analog_response([k * w0**2], [1, np.sqrt(2) * w0, w0**2], TWO_PI * FREQS)
    np.testing.assert_allclose(ideal_response("sallen_key_lowpass", values, FREQS), expected, rtol=1e-9)
    # Butterworth: -3 dB (1/sqrt 2 of the pass-band gain) at f0
    at_f0 = ideal_response("sallen_key_lowpass", values, np.array([f0]))
    assert abs(at_f0[0]) / k == pytest.approx(1 / np.sqrt(2), rel=1e-9)


def test_sallen_key_highpass_against_textbook_response():
    # Franco ch. 3 (unity-gain Sallen-Key high-pass): w0 = 1/sqrt(R1 R2 C1 C2),
    # Q = sqrt(R1 R2 C1 C2)/(R1 (C1 + C2)) with R1 the resistor to the output, so equal C gives
    # Q = sqrt(R2/R1)/2 [memory]; checked with scipy.signal.freqs
    r1, r2, c1, c2 = 15e3, 47e3, 10e-9, 10e-9
    w0 = 1 / np.sqrt(r1 * r2 * c1 * c2)
    q = np.sqrt(r1 * r2 * c1 * c2) / (r1 * (c1 + c2))
    _, expected = analog_response([1, 0, 0], [1, w0 / q, w0**2], TWO_PI * FREQS)
    got = ideal_response("sallen_key_highpass", {"c1": c1, "c2": c2, "r1": r1, "r2": r2}, FREQS)
    np.testing.assert_allclose(got, expected, rtol=1e-9)


def test_mfb_lowpass_h0_w0_q():
    # Franco, Design with Operational Amplifiers, active filters: H0 = -R2/R1, w0 = 1/sqrt(R2 R3 C1 C2),
    # Q = sqrt(C1/C2)/((1/R1 + 1/R2 + 1/R3) sqrt(R2 R3))
    r1, r2, r3, c1, c2 = 10e3, 22e3, 15e3, 47e-9, 2.2e-9
    h0 = -r2 / r1
    w0 = 1 / np.sqrt(r2 * r3 * c1 * c2)
    q = np.sqrt(c1 / c2) / ((1 / r1 + 1 / r2 + 1 / r3) * np.sqrt(r2 * r3))
    _, expected = analog_response([h0 * w0**2], [1, w0 / q, w0**2], TWO_PI * FREQS)
    values = {"r1": r1, "r2": r2, "r3": r3, "c1": c1, "c2": c2}
    np.testing.assert_allclose(ideal_response("mfb_lowpass", values, FREQS), expected, rtol=1e-9)


def test_mfb_bandpass_peaks_at_f0():
    # Franco ch. 3 (multiple-feedback band-pass) [memory]: centre gain -R2 C1/(R1 (C1 + C2)),
    # w0 = sqrt((1/R1 + 1/R3)/(R2 C1 C2))
    r1, r2, r3, c1, c2 = 10e3, 100e3, 1e3, 10e-9, 10e-9
    w0 = np.sqrt((1 / r1 + 1 / r3) / (r2 * c1 * c2))
    values = {"r1": r1, "r2": r2, "r3": r3, "c1": c1, "c2": c2}
    centre = ideal_response("mfb_bandpass", values, np.array([w0 / TWO_PI]))[0]
    assert centre.real == pytest.approx(-r2 * c1 / (r1 * (c1 + c2)), rel=1e-9)
    assert abs(centre.imag) < 1e-9
    assert w0 / TWO_PI in BLOCKS["mfb_bandpass"].critical_frequencies(
        {k: np.array([[x]]) for k, x in values.items()}
    )


def unity_lowpass_stage(q: float, r: float = 10e3, c2: float = 10e-9, tolerance: str = "") -> str:
    """Equal-R unity-gain Sallen-Key low-pass: Q = sqrt(C1/C2)/2, so C1 = 4 Q^2 C2."""
    c1 = 4 * q * q * c2
    return (
        f'[[stage]]\nname = "filter"\nblock = "sallen_key_lowpass"\npart = "ideal"\n'
        f'r1 = "{r} {tolerance}"\nr2 = "{r} {tolerance}"\nc1 = "{c1} {tolerance}"\n'
        f'c2 = "{c2} {tolerance}"\n'
    ).replace(' "', '"')


@pytest.mark.parametrize("q,peaking", [(1.0, 1.1547), (2.0, 2.0656)])
def test_lowpass_peaking_in_the_worst_case_span(q, peaking):
    # second-order peaking, Franco, Design with Operational Amplifiers, active filters: |H|max/H0 = Q/sqrt(1 - 1/(4 Q^2)): 1.1547 at Q = 1, 2.0656 at Q = 2.
    # A flat 1 V peak source over a band holding the peak: the worst-case span is +/- the peak.
    result = check('level = ["0", "0"]\namplitude = "1"\nband = ["10", "100k"]', unity_lowpass_stage(q))
    low, high = result.stages[0].measure.output
    assert high == pytest.approx(peaking, rel=2e-4)
    assert low == pytest.approx(-peaking, rel=2e-4)
    assert high == pytest.approx(q / np.sqrt(1 - 1 / (4 * q * q)), rel=1e-6)


def test_tolerances_move_the_peak_and_every_corner_is_covered():
    # Each corner of the 2 % box is its own filter; its own peak (formula above, with the corner's
    # Q from the Sallen-Key formula) is inside the worst case, and the largest is what the engine reports.
    result = check(
        'level = ["0", "0"]\namplitude = "1"\nband = ["10", "100k"]', unity_lowpass_stage(2.0, tolerance="2%")
    )
    r, c2, c1 = 10e3, 10e-9, 16 * 10e-9
    ends = [(1 - 0.02), (1 + 0.02)]
    peaks = []
    for a in ends:
        for b in ends:
            for x in ends:
                for y in ends:
                    q = np.sqrt(r * a * r * b * c1 * x * c2 * y) / (c2 * y * (r * a + r * b))
                    peaks.append(q / np.sqrt(1 - 1 / (4 * q * q)))
    high = result.stages[0].measure.output[1]
    assert high == pytest.approx(max(peaks), rel=2e-4)
    assert max(peaks) > 2.0656 * 1.01  # the tolerance corners do move the peak


def test_inner_node_of_sallen_key_peaks_above_the_output():
    # Sallen & Key, IRE Trans. Circuit Theory CT-2, 1955; Franco, Design with Operational Amplifiers, active filters: V_A = V_out (1 + s R2 C2); max |V_A/V_in| 1.230 at Q = 1 (output peak 1.1547)
    result = check('level = ["0", "0"]\namplitude = "1"\nband = ["10", "100k"]', unity_lowpass_stage(1.0))
    inner = result.stages[0].measure.inner["node A"]
    # |V_A/V_in| = |1 + jx| / |1 - 4x^2 + 2jx| with x = w R C2 (C1 = 4 C2, equal R) peaks at
    # 1.23035 (numpy on a fine grid); the band grid is refined around node A's peak as well
    assert inner[1] == pytest.approx(1.23035, abs=2e-5)
    assert inner[1] > result.stages[0].measure.output[1]


INSTRUMENTATION = (
    '[[stage]]\nname = "in-amp"\nblock = "instrumentation"\npart = "ideal"\nrg = "2k"\nrf = "50k"\n'
)
BRIDGE = 'kind = "differential"\nlevel = ["2", "2"]\namplitude = "80m"\nband = ["10", "1k"]'


def node(result, label):
    return next(a for a in result.stages[0].measure.opamps if a.label == label)


def test_instrumentation_worked_example_first_stage_spans():
    # three-op-amp instrumentation amplifier, Sedra & Smith, Microelectronic Circuits, ch. 2: V_cm 2 V, 80 mV peak differential, rg 2k, rf 50k: first-stage gain 51,
    # outputs 2 -/+ 2.04 V, output 4.08 V peak with a unity difference stage
    result = check(BRIDGE, INSTRUMENTATION)
    for label in ("first stage, upper op amp", "first stage, lower op amp"):
        low, high = node(result, label).output
        assert low == pytest.approx(2 - 2.04, abs=1e-6)
        assert high == pytest.approx(2 + 2.04, abs=1e-6)
        assert node(result, label).input == pytest.approx((2 - 0.04, 2 + 0.04), abs=1e-9)
    assert result.stages[0].measure.output == pytest.approx((-4.08, 4.08), abs=1e-6)
    # the difference stage's + input sits at (upper + ref)/2: 1 -/+ 1.02 V
    assert node(result, "difference stage").input == pytest.approx((-0.02, 2.02), abs=1e-6)


def test_instrumentation_first_stage_clips_while_the_output_looks_fine():
    # Common practice: the first stage carries the common mode at unity. +/-5 V rails and 0.9 V
    # of headroom leave a +/-4.1 V window; V_cm 3.3 V and 40 mV peak at gain 51 put the upper
    # op amp at 3.3 + 1.02 = 4.32 V while the output swings only +/-2.04 V about ref = 0.
    part = replace(NEAR_IDEAL, output_headroom=(0.9, 0.9))
    source = BRIDGE.replace('["2", "2"]', '["3.3", "3.3"]').replace('"80m"', '"40m"')
    result = check(source, INSTRUMENTATION, part=part, rails="5")
    stage = result.stages[0]
    assert stage.regime == "clipping" and not stage.go
    assert stage.margins["output-high"] == pytest.approx(4.1 - 4.32, abs=1e-6)
    assert stage.failing_nodes["output-high"] == "first stage, upper op amp"
    assert stage.measure.output == pytest.approx((-2.04, 2.04), abs=1e-6)
    assert node(result, "first stage, lower op amp").output == pytest.approx((2.28, 4.32), abs=1e-6)


def test_difference_amplifier_gain_and_common_mode_rejection():
    # Sedra & Smith ch. 2: matched r2/r1 = r4/r3 gives (r2/r1)(Vpos - Vneg) + Vref; the common
    # mode (2 V here) does not reach the output
    stage = (
        '[[stage]]\nname = "diff"\nblock = "difference"\npart = "ideal"\n'
        'r1 = "10k"\nr2 = "30k"\nr3 = "10k"\nr4 = "30k"\nref = "1"\n'
    )
    result = check(BRIDGE, stage)
    assert result.stages[0].measure.output == pytest.approx((1 - 0.24, 1 + 0.24), abs=1e-6)
    # + input: 2 V common mode plus 40 mV times 3/4, on top of ref/4 ... (pos r4 + ref r3)/(r3 + r4)
    plus = result.stages[0].measure.opamps[0].input
    assert plus == pytest.approx(((2 - 0.04) * 0.75 + 0.25, (2 + 0.04) * 0.75 + 0.25), abs=1e-6)


def test_integrator_dc_gain_corner_and_offset():
    # Franco, Design with Operational Amplifiers, ch. 3: integrator with shunt Rf, DC gain -Rf/Rin, corner 1/(2 pi Rf C)
    values = {"rin": 10e3, "rf": 1e6, "c": 100e-9}
    corner = 1 / (TWO_PI * 1e6 * 100e-9)
    response = ideal_response("integrator", values, np.array([1e-6, corner]))
    assert response[0].real == pytest.approx(-100, rel=1e-6)
    assert abs(response[1]) == pytest.approx(100 / np.sqrt(2), rel=1e-9)
    # Sivakumar, Linear Integrated Circuits, Ex. 5.1: Vos 4 mV, R1 5k, R2 500k -> 404 mV; 150 nA -> 75 mV;
    # at DC the capacitor is open and the integrator is that inverting amplifier: 479 mV in all
    part = replace(NEAR_IDEAL, offset=4e-3, bias_current=150e-9)
    stage = (
        '[[stage]]\nname = "int"\nblock = "integrator"\npart = "ideal"\nrin = "5k"\nrf = "500k"\nc = "100n"\n'
    )
    result = check('level = ["0", "0"]', stage, part=part)
    assert result.stages[0].measure.output == pytest.approx((-0.479, 0.479), rel=1e-6)


SCHMITT = '[[stage]]\nname = "trigger"\nblock = "schmitt"\npart = "ideal"\nr1 = "10k"\nr2 = "100k"\n'
SATURATES_AT_12 = replace(NEAR_IDEAL, output_headroom=(1.5, 1.5))  # +/-13.5 V rails -> +/-12 V


def test_schmitt_inverting_thresholds():
    # Sedra & Smith, Microelectronic Circuits (bistable circuits): +/-12 V saturation, R1 10k (to the reference), R2 100k (feedback):
    # thresholds +/-1.091 V, hysteresis 2.182 V (inverting, ground-referenced)
    result = check(
        'level = ["0", "0"]\namplitude = "3"\nband = ["10", "100"]',
        SCHMITT + "invert = true\n",
        part=SATURATES_AT_12,
        rails="13.5",
    )
    stage = result.stages[0]
    to_high, to_low = stage.measure.thresholds
    assert to_high == pytest.approx((-1.0909, -1.0909), abs=1e-4)
    assert to_low == pytest.approx((1.0909, 1.0909), abs=1e-4)
    assert stage.regime == "saturated" and stage.go and not stage.cautions
    assert stage.measure.output == pytest.approx((-12, 12))


def test_schmitt_thresholds_carry_the_rail_tolerance_and_warn_when_not_crossed():
    # The saturated levels move with the rails (5 %): 12 V becomes 11.325 .. 12.675 V, so the
    # upper threshold spans 10/110 of that. A 1.1 V input crosses 1.0909 V only at the nominal
    # rails: the caution says the output can stick (checks.stage_cautions words it).
    result = check(
        'level = ["0", "0"]\namplitude = "1.1"\nband = ["10", "100"]',
        SCHMITT + "invert = true\n",
        part=SATURATES_AT_12,
        rails="13.5",
        tolerance="5%",
    )
    stage = result.stages[0]
    to_low = stage.measure.thresholds[1]
    assert to_low == pytest.approx(((13.5 * 0.95 - 1.5) / 11, (13.5 * 1.05 - 1.5) / 11), rel=1e-9)
    # reached at some corner (the nominal rails), but not crossed at every joint corner
    assert stage.measure.reaches == (True, True) and stage.measure.always == (False, False)
    assert len(stage.cautions) == 2 and all("never cross" in c for c in stage.cautions)


def test_schmitt_noninverting_thresholds():
    # Sedra & Smith ch. 18, non-inverting bistable [memory]: thresholds -/+ L R1/R2 (ref 0):
    # +/-12 V, R1 10k, R2 100k -> +/-1.2 V
    result = check(
        'level = ["0", "0"]\namplitude = "3"\nband = ["10", "100"]',
        SCHMITT,
        part=SATURATES_AT_12,
        rails="13.5",
    )
    to_high, to_low = result.stages[0].measure.thresholds
    assert to_high == pytest.approx((1.2, 1.2)) and to_low == pytest.approx((-1.2, -1.2))


def test_single_ended_difference_and_instrumentation_work_against_ref():
    # the README's File formats: after a single-ended stage `in` drives r3 and r1 returns to ref, so a
    # matched difference amplifier gives (r2/r1)(in - ref) + ref (Sedra & Smith ch. 2);
    # the instrumentation amplifier likewise: ref + (1 + 2 rf/rg)(in - ref)
    follower = '[[stage]]\nname = "buffer"\nblock = "follower"\npart = "ideal"\n'
    difference = (
        '[[stage]]\nname = "diff"\nblock = "difference"\npart = "ideal"\n'
        'r1 = "10k"\nr2 = "20k"\nr3 = "10k"\nr4 = "20k"\nref = "1"\n'
    )
    result = check('level = ["2", "2.5"]', follower + difference)
    assert result.stages[1].measure.output == pytest.approx((3.0, 4.0), abs=1e-6)
    amplifier = (
        '[[stage]]\nname = "ia"\nblock = "instrumentation"\npart = "ideal"\n'
        'rg = "10k"\nrf = "45k"\nref = "1"\n'
    )
    result = check('level = ["1.1", "1.2"]', follower + amplifier)
    assert result.stages[1].measure.output == pytest.approx((2.0, 3.0), abs=1e-6)  # G = 10
    lower = node_of(result.stages[1], "first stage, lower op amp")
    # lower op amp: its + input on ref (1 V), its output 1 - 4.5 (in - 1)
    assert lower.output == pytest.approx((1 - 4.5 * 0.2, 1 - 4.5 * 0.1), abs=1e-6)


def node_of(stage, label):
    return next(a for a in stage.measure.opamps if a.label == label)


EVERY_BLOCK = """
[[stage]]
name = "diff"
block = "difference"
part = "ideal"
r1 = "10k 1%"
r2 = "10k 1%"
r3 = "10k 1%"
r4 = "10k 1%"
[[stage]]
name = "integrator"
block = "integrator"
part = "ideal"
rin = "10k 1%"
rf = "100k 1%"
c = "10n 5%"
[[stage]]
name = "high-pass"
block = "sallen_key_highpass"
part = "ideal"
c1 = "100n 5%"
c2 = "100n 5%"
r1 = "11k 1%"
r2 = "22k 1%"
[[stage]]
name = "band-pass"
block = "mfb_bandpass"
part = "ideal"
r1 = "10k 1%"
r2 = "100k 1%"
r3 = "1k 1%"
c1 = "10n 5%"
c2 = "10n 5%"
[[stage]]
name = "low-pass"
block = "mfb_lowpass"
part = "ideal"
r1 = "10k 1%"
r2 = "10k 1%"
r3 = "10k 1%"
c1 = "100n 5%"
c2 = "10n 5%"
[[stage]]
name = "trigger"
block = "schmitt"
part = "ideal"
r1 = "10k 1%"
r2 = "100k 1%"
"""


@pytest.mark.parametrize("method", ["corners", "rss", "montecarlo"])
def test_every_new_block_in_one_chain_under_every_method(method):
    # Common practice: +/-15 V rails, a 1 V differential signal around 0 V. Every linear stage
    # stays linear (nothing reaches 14 V) and the trigger sits at its saturated levels.
    source = 'kind = "differential"\nlevel = ["-1", "1"]\namplitude = "1"\nband = ["10", "10k"]'
    text = (
        f'format = 1\n[conditions]\nmethod = "{method}"\nsamples = 500\n[rails.main]\n'
        f'positive = "15"\nnegative = "-15"\n[source]\n{source}\n{EVERY_BLOCK}'
    )
    result = analyse(chain_from_text(text), {"ideal": SATURATES_AT_12})
    regimes = [s.regime for s in result.stages]
    assert regimes == ["linear"] * 5 + ["saturated"]
    assert result.stages[-1].measure.output == pytest.approx((-13.5, 13.5))
