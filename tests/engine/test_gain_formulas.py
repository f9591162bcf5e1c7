"""The engine's gain blocks and worst-case chain results against textbook op-amp formulas.

Sources: Sedra & Smith, Microelectronic Circuits, ch. 2; Franco, Design with
Operational Amplifiers and Analog Integrated Circuits, ch. 1-4; US Navy NEETS (NAVEDTRA 14180);
Sivakumar, Linear Integrated Circuits, Ex. 5.1.
"""

import numpy as np
import pytest
from scipy.optimize import brentq

from railroom.engine.analysis import analyse
from railroom.engine.circuit.blocks.gain import Follower, Inverting, Noninverting, Summing
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.circuit.model import Part
from railroom.engine.circuit.opamp import inverse_open_loop, laplace_grid

TWO_PI = 2 * np.pi


def part(**changes) -> Part:
    fields = dict(
        id="test-part",
        description="test",
        supply=(1.0, 100.0),
        supply_abs_max=110.0,
        output_headroom=(0.5, 0.5),
        output_resistance=0.0,
        input_headroom=(0.5, 0.5),
        gbw=1e15,
        slew=1e12,
        open_loop_gain=1e12,
        offset=0.0,
        offset_drift=0.0,
        bias_current=0.0,
        output_current=10.0,
    )
    fields.update(changes)
    return Part(**fields)


def column(*values: float) -> np.ndarray:
    return np.array(values, dtype=float)[:, None]


def respond(block, values: dict, freqs=(), op: Part | None = None, drive: float = 0.0):
    s = laplace_grid(np.asarray(freqs, dtype=float))
    v = {k: column(x) for k, x in values.items()}
    return block.respond(v, s, inverse_open_loop(op, s), drive, False).output.transfers


# ---- ideal gains ----------------------------------------------------------------------------


@pytest.mark.parametrize("rf, rg", [(100e3, 10e3), (90.9e3, 10e3), (4.7e3, 1e3), (1e3, 1e6)])
def test_noninverting_gain_is_one_plus_rf_over_rg(rf, rg):
    # Sedra & Smith ch. 2: G = 1 + Rf/Rg; rg returning to ref: Vout = G Vin - (Rf/Rg) Vref
    t = respond(Noninverting(), {"rf": rf, "rg": rg, "ref": 0.0})
    assert t["in"][0, 0].real == pytest.approx(1 + rf / rg, rel=1e-12)
    assert t["ref"][0, 0].real == pytest.approx(-rf / rg, rel=1e-12)


@pytest.mark.parametrize("rin, rf", [(10e3, 100e3), (10e3, 10e3), (22e3, 4.7e3)])
def test_inverting_gain_is_minus_rf_over_rin(rin, rf):
    # Sedra & Smith ch. 2: G = -Rf/Rin; ref on the + input appears times the noise gain 1 + Rf/Rin
    t = respond(Inverting(), {"rin": rin, "rf": rf, "ref": 0.0})
    assert t["in"][0, 0].real == pytest.approx(-rf / rin, rel=1e-12)
    assert t["ref"][0, 0].real == pytest.approx(1 + rf / rin, rel=1e-12)


def test_follower_is_unity():
    # Sedra & Smith ch. 2: the voltage follower, G = 1
    assert respond(Follower(), {})["in"][0, 0].real == pytest.approx(1.0, rel=1e-12)


def test_summing_amplifier_with_fixed_inputs_and_ref():
    # Franco ch. 1 (summing amplifier), superposition about ref:
    # Vout = -Rf (Vin/Rin + sum V_k/R_k) + Vref (1 + Rf (1/Rin + sum 1/R_k))
    rin, rf, ref, r1, v1, r2, v2 = 20e3, 16e3, 1.25, 82e3, 5.0, 47e3, -2.0
    values = {
        "rin": rin,
        "rf": rf,
        "ref": ref,
        "inputs.1.r": r1,
        "inputs.1.v": v1,
        "inputs.2.r": r2,
        "inputs.2.v": v2,
    }
    t = respond(Summing(), values)
    vin = 0.3
    engine = sum(t[k][0, 0].real * (vin if k == "in" else values[k]) for k in t)
    textbook = -rf * (vin / rin + v1 / r1 + v2 / r2) + ref * (1 + rf * (1 / rin + 1 / r1 + 1 / r2))
    assert engine == pytest.approx(textbook, rel=1e-12)
    assert t["in"][0, 0].real == pytest.approx(-rf / rin, rel=1e-12)


# ---- finite open-loop gain and bandwidth ----------------------------------------------------


def test_finite_gain_follows_black():
    # Black's feedback formula, Sedra & Smith, Microelectronic Circuits, ch. 2: G0 = 10 with A = 1e4 -> 9.99001
    t = respond(Noninverting(), {"rf": 90e3, "rg": 10e3, "ref": 0.0}, op=part(open_loop_gain=1e4, gbw=1e15))
    assert t["in"][0, 0].real == pytest.approx(9.99001, abs=1e-5)
    assert t["in"][0, 0].real == pytest.approx(1e4 / (1 + 1e4 / 10), rel=1e-9)


def corner(block, values, op) -> float:
    """-3 dB frequency of the engine's transfer, found by root finding (scipy brentq)."""
    dc = abs(respond(block, values, op=op)["in"][0, 0])

    def excess(f):
        return abs(respond(block, values, freqs=[f], op=op)["in"][0, 1]) - dc / np.sqrt(2)

    return brentq(excess, 1e2, 1e8, xtol=1e-3)


@pytest.mark.parametrize(
    "block, values, expected",
    [
        # US Navy NEETS, NAVEDTRA 14180: bandwidth = GBW / noise gain, GBW 1 MHz
        (Noninverting(), {"rf": 90e3, "rg": 10e3}, 100e3),  # gain 10 -> 100 kHz
        (Noninverting(), {"rf": 100e3, "rg": 10e3}, 90.909e3),  # gain 11 -> 90.909 kHz
        (Noninverting(), {"rf": 990e3, "rg": 10e3}, 10e3),  # gain 100 -> 10 kHz
        (Inverting(), {"rin": 10e3, "rf": 10e3}, 500e3),  # -1: noise gain 2 -> 500 kHz
    ],
)
def test_closed_loop_bandwidth_is_gbw_over_noise_gain(block, values, expected):
    op = part(gbw=1e6, open_loop_gain=1e9)  # A0 large: the corner is GBW/NG to 1e-8
    assert corner(block, values, op) == pytest.approx(expected, rel=1e-4)


# ---- whole-chain worst cases ----------------------------------------------------------------


def chain_text(stage: str, level=("0", "0"), amplitude="0", band=("1", "1"), rails="15") -> str:
    return f"""
format = 1
[rails.main]
positive = "{rails}"
negative = "-{rails}"
[source]
level = ["{level[0]}", "{level[1]}"]
amplitude = "{amplitude}"
band = ["{band[0]}", "{band[1]}"]
[[stage]]
part = "test-part"
{stage}
"""


def run(text: str, op: Part):
    return analyse(chain_from_text(text), {"test-part": op})


def slew_margin(top_hz: float, op: Part) -> float:
    text = chain_text('block = "follower"', amplitude="12", band=("10", str(top_hz)))
    return run(text, op).stages[0].margins["slew"]


def test_full_power_bandwidth_is_where_the_slew_margin_crosses_zero():
    # full-power bandwidth, Franco, Design with Operational Amplifiers [memory: chapter]: full-power bandwidth f = SR/(2 pi Vp); 2 V/us at 12 V peak -> 26,525.8 Hz
    op = part(slew=2e6)
    assert 2e6 / (TWO_PI * 12) == pytest.approx(26525.8, abs=0.1)
    assert slew_margin(26400, op) > 0
    assert slew_margin(26650, op) < 0
    # the margin is SR - 2 pi f Vp: zero at the full-power bandwidth
    assert slew_margin(26525.8, op) == pytest.approx(0.0, abs=2e6 * 1e-5)
    result = run(chain_text('block = "follower"', amplitude="12", band=("10", "27k")), op)
    assert result.stages[0].regime == "clipping" and "slew" in result.stages[0].reasons


@pytest.mark.parametrize(
    "stage",
    [
        'block = "inverting"\nrin = "5k"\nrf = "500k"',
        'block = "noninverting"\nrg = "5k"\nrf = "500k"',
    ],
)
def test_output_offset_is_vos_times_noise_gain_plus_bias_term(stage):
    # Sivakumar, Linear Integrated Circuits, Ex. 5.1: Vos 4 mV, R1 5k, R2 500k -> 404 mV;
    # Ios 150 nA -> 75 mV; total 479 mV. The engine's stages have no bias-compensation resistor,
    # so its bias term is Ib * Rf; with Ib = 150 nA that is the book's 75 mV (Ib Rf = Ios Rf).
    offset_only = run(chain_text(stage), part(offset=4e-3))
    low, high = offset_only.stages[0].measure.output
    assert high == pytest.approx(0.404, rel=1e-6)
    assert low == pytest.approx(-0.404, rel=1e-6)
    both = run(chain_text(stage), part(offset=4e-3, bias_current=150e-9))
    low, high = both.stages[0].measure.output
    assert high == pytest.approx(0.479, rel=1e-6)
    assert low == pytest.approx(-0.479, rel=1e-6)
    bias_only = run(chain_text(stage), part(bias_current=150e-9))
    assert bias_only.stages[0].measure.output[1] == pytest.approx(0.075, rel=1e-6)


def test_extreme_values_of_gain_11_at_one_percent():
    # worked by hand: extreme values and RSS of 1 + rf/rg, ECSS-Q-HB-30-01A tolerance example: non-inverting 100k/10k, both +/-1 %: 10.80198 to 11.20202
    # (1 + 99k/10.1k and 1 + 101k/9.9k), here as the output span for a 1 V DC input
    stage = 'block = "noninverting"\nrf = "100k 1%"\nrg = "10k 1%"'
    result = run(chain_text(stage, level=("1", "1")), part())
    low, high = result.stages[0].measure.output
    assert low == pytest.approx(10.80198, abs=1e-5)
    assert high == pytest.approx(11.20202, abs=1e-5)
    assert result.stages[0].measure.nominal == pytest.approx((11.0, 11.0), rel=1e-9)
