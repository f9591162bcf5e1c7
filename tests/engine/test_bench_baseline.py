"""The bench's batched baseline (engine/benchmark/baseline.py): its nodal circuits against
textbook transfer functions, and its margins against the engine's draw walk on the same draws."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np

from railroom.engine.benchmark import baseline
from railroom.engine.benchmark import figures as bench
from railroom.engine.benchmark.chains import filter_chain_text

IDEAL = SimpleNamespace(open_loop_gain=1e14, gbw=1e20)  # an op amp as near ideal as floats allow
FREQS = np.array([10.0, 300.0, 1e3, 3e3, 3e4])


def solved(block: str, values: dict, part=IDEAL, drive: float = 0.0):
    s = 1j * 2 * np.pi * np.concatenate(([0.0], FREQS))
    v = {k: np.array([x]) for k, x in values.items()}
    net, plus, branch = baseline.stage_network(block, v, s, drive, part, rows=1)
    return net.solve()[0], net.index, s


def test_sallen_key_lowpass_is_the_textbook_section():
    # unity-gain Sallen-Key: H = 1 / (1 + s c2 (r1 + r2) + s^2 r1 r2 c1 c2) (Franco, Design with
    # Operational Amplifiers, ch. 3; K = 1 in the general form quoted in blocks/filters.py)
    r1, r2, c1, c2 = 10e3, 4.7e3, 22e-9, 10e-9
    x, index, s = solved("sallen_key_lowpass", {"r1": r1, "r2": r2, "c1": c1, "c2": c2})
    expected = 1.0 / (1.0 + s * c2 * (r1 + r2) + s * s * r1 * r2 * c1 * c2)
    assert np.allclose(x[:, index["out"], baseline.SIGNAL], expected, rtol=1e-9)


def test_mfb_bandpass_is_the_textbook_section():
    # H = -s c1 r2 rp / r1 / (1 + s rp (c1 + c2) + s^2 rp r2 c1 c2), rp = r1 || r3
    # (Franco ch. 3, multiple-feedback band-pass)
    r1, r2, r3, c1, c2 = 10e3, 100e3, 1e3, 10e-9, 10e-9
    rp = r1 * r3 / (r1 + r3)
    x, index, s = solved("mfb_bandpass", {"r1": r1, "r2": r2, "r3": r3, "c1": c1, "c2": c2})
    expected = -s * c1 * r2 * rp / r1 / (1.0 + s * rp * (c1 + c2) + s * s * rp * r2 * c1 * c2)
    assert np.allclose(x[:, index["out"], baseline.SIGNAL], expected, rtol=1e-9)


def test_mfb_lowpass_dc_gain_and_inverting_with_finite_gain():
    # MFB low-pass: H(0) = -r2 / r1 (Franco ch. 3)
    x, index, _ = solved("mfb_lowpass", {"r1": 10e3, "r2": 22e3, "r3": 10e3, "c1": 22e-9, "c2": 4.7e-9})
    assert abs(x[0, index["out"], baseline.SIGNAL].real - (-2.2)) < 1e-9
    # inverting amplifier with A0 = 1e5: G = -(rf/rin) / (1 + (1 + rf/rin)/A0) (Black's feedback
    # formula, Sedra & Smith ch. 2); offset to the output: the noise gain 1 + rf/rin at A0 -> inf,
    # here A0 / (1 + A0 beta) with beta = rin / (rin + rf); bias into - : rf per ampere
    part = SimpleNamespace(open_loop_gain=1e5, gbw=1e6)
    x, index, _ = solved("inverting", {"rin": 10e3, "rf": 20e3}, part)
    out = x[0, index["out"]]
    assert abs(out[baseline.SIGNAL].real - (-2.0 / (1.0 + 3.0 / 1e5))) < 1e-12
    assert abs(out[baseline.OFFSET].real - 1e5 / (1.0 + 1e5 / 3.0)) < 1e-9
    assert abs(abs(out[baseline.BIAS_MINUS].real) - 20e3 / (1.0 + 3.0 / 1e5)) < 1e-6


def test_baseline_agrees_with_the_engine_on_a_tiny_chain():
    from railroom.engine.benchmark.chain_figures import agreement
    from railroom.engine.formats.chain_file import chain_from_text
    from railroom.engine.methods import corners, montecarlo
    from railroom.engine.walks import circuit_walk as dw
    from railroom.engine.walks.preparation import band_grid, plan_chain

    chain = chain_from_text(filter_chain_text(quick=True))  # one of each filter, a clipping stage
    plans = plan_chain(chain, bench.PARTS)
    freqs = band_grid(chain, plans)
    layout = montecarlo.layout_for(chain, plans, freqs, corners.walk(corners.prepare(chain, plans, freqs)))
    D, dT = next(montecarlo.chunks(layout, 40, chain.conditions.seed, chunk=40))
    labels = [(v.stage, v.quantity, v.kind, v.amp) for v in layout.variables]
    ours = baseline.run(chain, plans, labels, dw.row_freqs(layout, D, dT), D, dT)
    engine = dw.walk_draws(layout, D, dT)
    assert [set(m) for m in ours] == [set(s.margins) for s in engine]
    found = agreement(engine, ours)
    for check in ("input-high", "input-low", "slew", "supply"):
        assert found[check]["exact"], check
    assert engine[4].linear.sum() == 0  # the gain-3 stage clips in every draw ...
    window = engine[5].margins  # ... and the converter input is fed its clamped output
    assert np.allclose(window["input-low"], ours[5]["input-low"], rtol=1e-9, atol=1e-12)
    assert np.allclose(window["input-high"], ours[5]["input-high"], rtol=1e-9, atol=1e-12)
    # the current: the engine adds its own - pin's bias current as a worst-case pin term, takes
    # each node's bias error as a width either way, and a Sallen-Key input's conductance at
    # max |1 - T_A| / r1 (node A swings against the input near the peak, filters.through_r1),
    # while the baseline's op-amp branch current carries the drawn pin currents (as a width too)
    # and 1 / r1: the engine is never the less cautious (per draw, sign kept), and apart by at
    # most 12 uA (the Sallen-Key into the MFB band-pass: 11.3 uA measured; the follower into the
    # Sallen-Key 3.24 uA) and the output windows by
    # the output resistance times that
    for k, plan in enumerate(plans[:-1]):
        part = plan.part
        gap = engine[k].margins["current"] - ours[k]["current"]
        assert gap.max() <= 1e-9 and -gap.min() <= 12e-6, (k, gap.max(), gap.min())
        for check in ("output-high", "output-low"):
            gap = engine[k].margins[check] - ours[k][check]
            assert gap.max() <= 1e-9 and -gap.min() <= 12e-6 * part.output_resistance, (k, check)
