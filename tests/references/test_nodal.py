"""The reference nodal solver is only trusted once it reproduces published results."""

import numpy as np
import pytest
from scipy.optimize import brentq
from scipy.signal import freqs as analog_response

from references.block_circuits import (
    OpAmpModel,
    difference,
    divider,
    follower,
    instrumentation,
    integrator,
    inverting,
    mfb_bandpass,
    mfb_lowpass,
    noninverting,
    rc_lowpass,
    sallen_key_highpass,
    sallen_key_lowpass,
    summing,
)
from references.nodal import Circuit

TWO_PI = 2 * np.pi


def corner_frequency(response, low: float, high: float) -> float:
    """Frequency where |H(f)| falls to |H(0)|/sqrt(2)."""
    dc = abs(response(0.0))
    return brentq(lambda f: abs(response(f)) - dc / np.sqrt(2), low, high, xtol=1e-6)


def test_closed_loop_gains_with_ideal_op_amp():
    # Sedra & Smith ch. 2: non-inverting 1 + Rf/Rg, inverting -Rf/Rin
    assert noninverting(100e3, 10e3, v_in=1.0)["out"][0].real == pytest.approx(11.0, rel=1e-12)
    assert inverting(10e3, 100e3, v_in=1.0)["out"][0].real == pytest.approx(-10.0, rel=1e-12)
    assert follower(v_in=0.37)["out"][0].real == pytest.approx(0.37, rel=1e-12)


def test_finite_open_loop_gain_follows_black():
    # Black's feedback formula, Sedra & Smith, Microelectronic Circuits, ch. 2: G0 = 10 with A = 1e4 -> 9.99001
    sol = noninverting(90e3, 10e3, opamp=OpAmpModel(open_loop_gain=1e4))
    assert sol["out"][0].real == pytest.approx(9.99001, abs=1e-5)
    assert sol["out"][0].real == pytest.approx(1e4 / (1 + 1e4 / 10), rel=1e-12)


def test_single_pole_bandwidth_is_gbw_over_noise_gain():
    # US Navy NEETS, NAVEDTRA 14180: closed-loop -3 dB bandwidth = GBW / noise gain
    pole_only = OpAmpModel(gbw=1e6)
    gain_10 = noninverting(90e3, 10e3, opamp=pole_only, freqs=[0.0, 100e3])["out"]
    assert abs(gain_10[1]) == pytest.approx(10 / np.sqrt(2), rel=1e-9)

    def gain_11(f):
        return noninverting(100e3, 10e3, opamp=pole_only, freqs=f)["out"][0]

    assert corner_frequency(gain_11, 1e3, 1e6) == pytest.approx(90.909e3, rel=1e-5)

    def unity_inverting(f):
        return inverting(10e3, 10e3, opamp=pole_only, freqs=f)["out"][0]

    assert corner_frequency(unity_inverting, 1e3, 1e7) == pytest.approx(500e3, rel=1e-6)
    # with a finite A0 = 1e6 the corner moves by only about NG/A0
    finite = OpAmpModel(open_loop_gain=1e6, gbw=1e6)
    assert corner_frequency(
        lambda f: noninverting(100e3, 10e3, opamp=finite, freqs=f)["out"][0], 1e3, 1e6
    ) == pytest.approx(90.909e3, rel=2e-4)


def sallen_key_unity(q: float, f0: float = 1e3, r: float = 10e3):
    """Equal-R unity-gain design: Q = sqrt(C1/C2)/2 (Sallen & Key, IRE Trans. Circuit Theory CT-2, 1955; Franco, Design with Operational Amplifiers, active filters formula with R1 = R2)."""
    c2 = 1 / (TWO_PI * f0 * r * 2 * q)
    return dict(r1=r, r2=r, c1=4 * q * q * c2, c2=c2)


def test_sallen_key_lowpass_matches_textbook():
    # Sallen & Key, IRE Trans. Circuit Theory CT-2, 1955; Franco, Design with Operational Amplifiers, active filters: f0 = 1/(2 pi sqrt(R1 R2 C1 C2)), Q = sqrt(R1 R2 C1 C2)/(C2 (R1 + R2))
    r1, r2, c1, c2 = 12e3, 33e3, 22e-9, 4.7e-9
    f0 = 1 / (TWO_PI * np.sqrt(r1 * r2 * c1 * c2))
    q = np.sqrt(r1 * r2 * c1 * c2) / (c2 * (r1 + r2))
    at_f0 = sallen_key_lowpass(r1, r2, c1, c2, freqs=f0)["out"][0]
    # a second-order low-pass is -90 degrees with |H| = Q at f0
    assert np.angle(at_f0, deg=True) == pytest.approx(-90.0, abs=1e-9)
    assert abs(at_f0) == pytest.approx(q, rel=1e-12)
    # scipy.signal.freqs on the textbook H(s) = 1/(s^2 R1R2C1C2 + s C2(R1+R2) + 1)
    f = np.logspace(1, 6, 301)
    _, expected = analog_response([1.0], [r1 * r2 * c1 * c2, c2 * (r1 + r2), 1.0], TWO_PI * f)
    got = sallen_key_lowpass(r1, r2, c1, c2, freqs=f)["out"]
    np.testing.assert_allclose(got, expected, rtol=1e-10, atol=1e-15)


@pytest.mark.parametrize("q, peak", [(1 / np.sqrt(2), 1.029), (1.0, 1.230), (2.0, 2.122)])
def test_sallen_key_inner_node_peaks_above_output(q, peak):
    # Sallen & Key, IRE Trans. Circuit Theory CT-2, 1955; Franco, Design with Operational Amplifiers, active filters: V_A = V_out (1 + s R2 C2), max |V_A/V_in| 1.029 / 1.230 / 2.122
    f = np.logspace(1, 5, 20001)
    sol = sallen_key_lowpass(**sallen_key_unity(q), freqs=f)
    assert np.abs(sol["a"]).max() == pytest.approx(peak, abs=1e-3)
    np.testing.assert_allclose(sol["plus"], sol["out"], rtol=1e-12)


def test_sallen_key_butterworth_gain():
    # Sallen & Key, IRE Trans. Circuit Theory CT-2, 1955; Franco, Design with Operational Amplifiers, active filters: equal-R equal-C with gain K has Q = 1/(3 - K); K = 3 - sqrt(2) -> Q = 0.7071
    r, c = 10e3, 10e-9
    f0 = 1 / (TWO_PI * r * c)
    at_f0 = sallen_key_lowpass(r, r, c, c, rf=10e3 * (2 - np.sqrt(2)), rg=10e3, freqs=f0)["out"][0]
    assert np.angle(at_f0, deg=True) == pytest.approx(-90.0, abs=1e-9)
    assert abs(at_f0) / (3 - np.sqrt(2)) == pytest.approx(1 / np.sqrt(2), rel=1e-12)


def test_sallen_key_highpass_matches_textbook():
    # Franco ch. 3 [memory]: unity gain H = s^2 / (s^2 + s (C1+C2)/(R2 C1 C2) + 1/(R1 R2 C1 C2)),
    # R1 the feedback resistor, R2 to ref; compared through scipy.signal.freqs
    c1, c2, r1, r2 = 10e-9, 22e-9, 15e3, 47e3
    f = np.logspace(1, 6, 301)
    _, expected = analog_response(
        [1.0, 0.0, 0.0], [1.0, (c1 + c2) / (r2 * c1 * c2), 1 / (r1 * r2 * c1 * c2)], TWO_PI * f
    )
    got = sallen_key_highpass(c1, c2, r1, r2, freqs=f)["out"]
    np.testing.assert_allclose(got, expected, rtol=1e-10, atol=1e-15)
    assert sallen_key_highpass(c1, c2, r1, r2, freqs=0.0)["out"][0] == 0
    # capacitors are open at DC, so r2 carries no current and + sits at ref
    at_dc = sallen_key_highpass(c1, c2, r1, r2, ref=1.2, v_in=0.0, freqs=0.0)
    assert at_dc["out"][0].real == pytest.approx(1.2, rel=1e-12)


def test_reference_pins_by_superposition():
    # Sedra & Smith ch. 2, superposition: non-inverting Vout = Vin (1 + Rf/Rg) - Vref Rf/Rg;
    # inverting Vout = -Vin Rf/Rin + Vref (1 + Rf/Rin)
    assert noninverting(30e3, 10e3, 0.5, v_in=1.0)["out"][0].real == pytest.approx(4 - 1.5)
    assert inverting(10e3, 30e3, 0.5, v_in=1.0)["out"][0].real == pytest.approx(-3 + 2)


def test_mfb_lowpass_matches_textbook():
    # Franco, Design with Operational Amplifiers, active filters: H0 = -R2/R1, w0 = 1/sqrt(R2 R3 C1 C2),
    # Q = sqrt(C1/C2) / ((1/R1 + 1/R2 + 1/R3) sqrt(R2 R3)); inner node V_A = -s R3 C2 V_out
    r1, r2, r3, c1, c2 = 10e3, 22e3, 15e3, 47e-9, 2.2e-9
    h0 = -r2 / r1
    w0 = 1 / np.sqrt(r2 * r3 * c1 * c2)
    q = np.sqrt(c1 / c2) / ((1 / r1 + 1 / r2 + 1 / r3) * np.sqrt(r2 * r3))
    f = np.logspace(1, 6, 301)
    _, expected = analog_response([h0 * w0**2], [1.0, w0 / q, w0**2], TWO_PI * f)
    sol = mfb_lowpass(r1, r2, r3, c1, c2, freqs=f)
    np.testing.assert_allclose(sol["out"], expected, rtol=1e-10, atol=1e-15)
    np.testing.assert_allclose(sol["a"], -1j * TWO_PI * f * r3 * c2 * sol["out"], rtol=1e-10)
    assert mfb_lowpass(r1, r2, r3, c1, c2)["out"][0].real == pytest.approx(-2.2, rel=1e-12)


def test_mfb_bandpass_equal_capacitors():
    # Franco ch. 3 [memory], equal C: f0 = sqrt((R1 + R3)/(R1 R2 R3)) / (2 pi C), Q = pi f0 R2 C,
    # centre gain -R2/(2 R1) (R3 the resistor to ref, R2 the feedback resistor)
    r1, r2, r3, c = 10e3, 100e3, 1e3, 10e-9
    f0 = np.sqrt((r1 + r3) / (r1 * r2 * r3)) / (TWO_PI * c)
    q = np.pi * f0 * r2 * c
    at = mfb_bandpass(r1, r2, r3, c, c, freqs=[f0, f0 / 10, f0 * 10])["out"]
    assert at[0] == pytest.approx(-r2 / (2 * r1), rel=1e-12)
    # a second-order band-pass is down by |1/(1 + jQ(f/f0 - f0/f))| off centre
    expected = (-r2 / (2 * r1)) / (1 + 1j * q * (0.1 - 10))
    assert at[1] == pytest.approx(expected, rel=1e-12)


def test_instrumentation_worked_example():
    # three-op-amp instrumentation amplifier, Sedra & Smith, Microelectronic Circuits, ch. 2: V_cm 2 V, V_d 80 mV, rg 2k, rf 50k -> first stage 51, outputs 2 -/+ 2.04 V,
    # output 4.08 V with a unity difference stage
    sol = instrumentation(2e3, 50e3, v_pos=2.04, v_neg=1.96)
    assert sol["upper_out"][0].real == pytest.approx(2 + 2.04, rel=1e-12)
    assert sol["lower_out"][0].real == pytest.approx(2 - 2.04, rel=1e-12)
    assert sol["out"][0].real == pytest.approx(4.08, rel=1e-12)
    swapped = instrumentation(2e3, 50e3, v_pos=1.96, v_neg=2.04, ref=1.0)
    assert swapped["upper_out"][0].real == pytest.approx(2 - 2.04, rel=1e-12)
    assert swapped["out"][0].real == pytest.approx(1.0 - 4.08, rel=1e-12)


def test_output_offset_worked_example():
    # Sivakumar, Linear Integrated Circuits, Ex. 5.1: Vos 4 mV, R1 5k, R2 500k
    # -> 404 mV; Ios 150 nA -> 75 mV; total 479 mV (input grounded)
    vos = OpAmpModel(offset=4e-3)
    assert noninverting(500e3, 5e3, v_in=0.0, opamp=vos)["out"][0].real == pytest.approx(0.404)
    assert inverting(5e3, 500e3, v_in=0.0, opamp=vos)["out"][0].real == pytest.approx(0.404)
    ios = OpAmpModel(bias_minus=150e-9)
    assert inverting(5e3, 500e3, v_in=0.0, opamp=ios)["out"][0].real == pytest.approx(0.075)
    both = OpAmpModel(offset=4e-3, bias_minus=150e-9)
    assert inverting(5e3, 500e3, v_in=0.0, opamp=both)["out"][0].real == pytest.approx(0.479)


def test_difference_and_summing_amplifiers():
    # Sedra & Smith ch. 2: V+ = (R4 Vp + R3 Vref)/(R3 + R4), Vout = V+ (1 + R2/R1) - (R2/R1) Vn
    r1, r2, r3, r4 = 10e3, 47e3, 12e3, 39e3
    vp, vn, vref = 0.7, 0.2, 1.5
    v_plus = (r4 * vp + r3 * vref) / (r3 + r4)
    sol = difference(r1, r2, r3, r4, vref, v_pos=vp, v_neg=vn)
    assert sol["out"][0].real == pytest.approx(v_plus * (1 + r2 / r1) - r2 / r1 * vn, rel=1e-12)
    # weighted summer: Vout = -Rf (v/Rin + sum vk/Rk)
    summed = summing(10e3, 20e3, inputs=[(40e3, 2.0), (5e3, -0.5)], v_in=0.3)
    assert summed["out"][0].real == pytest.approx(-20e3 * (0.3 / 10e3 + 2 / 40e3 - 0.5 / 5e3))


def test_integrator_dc_gain_and_corner():
    # Franco, Design with Operational Amplifiers, ch. 3: DC gain -Rf/Rin, corner 1/(2 pi Rf C)
    rin, rf, c = 10e3, 1e6, 100e-9
    corner = 1 / (TWO_PI * rf * c)
    sol = integrator(rin, rf, c, freqs=[0.0, corner])
    assert sol["out"][0].real == pytest.approx(-100.0, rel=1e-12)
    assert abs(sol["out"][1]) == pytest.approx(100 / np.sqrt(2), rel=1e-12)


def test_passives_currents_and_load():
    # Ohm's law and the voltage-divider rule; first-order low-pass 1/(1 + j f/fc)
    assert divider(30e3, 10e3, v_in=4.0)["out"][0].real == pytest.approx(1.0)
    assert divider(10e3, 10e3, v_in=2.0, load=10e3)["out"][0].real == pytest.approx(2 / 3)
    fc = 1 / (TWO_PI * 1e3 * 1e-6)
    assert rc_lowpass(1e3, 1e-6, freqs=fc)["out"][0] == pytest.approx(1 / (1 + 1j))
    # inverting input resistance is rin (virtual ground); the op amp feeds load and rf
    sol = inverting(10e3, 100e3, v_in=0.5, load=2e3)
    assert sol.source_currents["in"][0].real == pytest.approx(0.5 / 10e3)
    assert sol.opamp_currents["out"][0].real == pytest.approx(-5 / 2e3 - 0.5 / 10e3)


def test_circuit_api_wrappers():
    # Ohm's law through the plain API: 1 V across 10k + 1 nF at f = 0 (capacitor open) and HF
    c = Circuit()
    c.resistor("in", "a", 10e3)
    c.capacitor("a", "0", 1e-9)
    c.source("in", 1.0)
    c.current("a", 1e-6)
    v = c.solve([0.0])
    assert v["a"][0].real == pytest.approx(1.0 + 1e-6 * 10e3)
    assert c.source_current("in", [0.0])[0].real == pytest.approx(-1e-6)


def test_batched_draws_equal_one_at_a_time():
    # numpy.linalg.solve on a stacked (N, F, n, n) system must equal N separate solves
    rng = np.random.default_rng(7)
    n = 25
    r1 = 10e3 * (1 + 0.01 * rng.uniform(-1, 1, n))
    r2 = 10e3 * (1 + 0.01 * rng.uniform(-1, 1, n))
    c1 = 20e-9 * (1 + 0.05 * rng.uniform(-1, 1, n))
    gain = 10 ** rng.uniform(4, 6, n)
    f = np.logspace(1, 5, 40)
    batch = sallen_key_lowpass(
        r1, r2, c1, 5e-9, opamp=OpAmpModel(open_loop_gain=gain, gbw=1e6), load=2e3, freqs=f
    )
    assert batch["a"].shape == (n, f.size)
    for k in range(n):
        one = sallen_key_lowpass(
            r1[k], r2[k], c1[k], 5e-9, load=2e3, freqs=f, opamp=OpAmpModel(open_loop_gain=gain[k], gbw=1e6)
        )
        np.testing.assert_allclose(batch["a"][k], one["a"], rtol=1e-12)
        np.testing.assert_allclose(batch.opamp_currents["out"][k], one.opamp_currents["out"], rtol=1e-12)
