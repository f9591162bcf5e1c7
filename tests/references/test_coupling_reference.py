"""AC coupling, the AC-coupled rg (noninverting `cg`) and the gain per stage, against textbook
results, scipy.signal and the whole-chain nodal reference (which imports nothing of railroom).

Textbook results used (Horowitz & Hill, The Art of Electronics, 3rd ed., ch. 1.7: the RC
high-pass; Sedra & Smith, Microelectronic Circuits, ch. 2: the non-inverting amplifier):
    RC high-pass   H(s) = s R C / (1 + s R C), |H| = 1/sqrt(2) at f = 1/(2 pi R C)
    DC after a coupling capacitor: the bias voltage plus Ohm's law on the bias current, Vb + Ib R
    non-inverting with C in series with Rg: G(s) = 1 + s Rf C / (1 + s Rg C), G(0) = 1, G(inf) = 1 + Rf/Rg
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from scipy import signal as scipy_signal

from references.chain_netlist import OpAmp, Stage, dc, response

HEAD = """\
format = 1
title = "coupling"
[conditions]
temperature = [25, 25]
margin = "0"
method = "{method}"
default_tolerance = "0%"
[rails.main]
positive = "{positive}"
negative = "{negative}"
tolerance = "0%"
[source]
level = [{level}]
amplitude = "{amplitude}"
band = [{band}]
impedance = "{impedance}"
"""


def chain_text(stages: str, method="corners", positive="15", negative="-15", level='"0", "0"',
               amplitude="0", band='"1", "1"', impedance="0") -> str:  # fmt: skip
    return (
        HEAD.format(
            method=method,
            positive=positive,
            negative=negative,
            level=level,
            amplitude=amplitude,
            band=band,
            impedance=impedance,
        )
        + stages
    )


def analysed(tmp_path, text: str, **options):
    from railroom.engine.analysis import analyse
    from railroom.engine.formats.loading import load_checked

    path = tmp_path / "chain.toml"
    path.write_text(text)
    chain, library = load_checked(str(path))
    return analyse(chain, library.parts, design_aids=False, headroom=False, **options)


def run(tmp_path, text: str, **options) -> dict:
    from railroom.engine.reports.json_report import chain_report

    return chain_report(analysed(tmp_path, text, **options))


# --- the reference itself against the textbook -------------------------------------------------


def test_reference_rc_highpass_matches_scipy_and_the_corner():
    r, c = 10e3, 1 / (2 * math.pi * 10e3 * 1e3)  # corner at 1 kHz
    freqs = np.geomspace(10, 100e3, 41)
    ref = response([Stage("ac_coupling", {"c": c, "r": r})], freqs)[0]
    _, h = scipy_signal.freqs([r * c, 0.0], [r * c, 1.0], worN=2 * np.pi * freqs)
    assert np.allclose(ref, h, rtol=1e-10)
    corner = response([Stage("ac_coupling", {"c": c, "r": r})], np.array([1e3]))[0][0]
    assert abs(corner) == pytest.approx(1 / math.sqrt(2), rel=1e-10)


def test_reference_cg_stage_dc_gain_one_and_high_frequency_gain():
    st = [Stage("noninverting", {"rf": 99e3, "rg": 1e3, "cg": 1e-6})]
    assert dc(st, 1.0)[0] == pytest.approx(1.0, rel=1e-12)  # the capacitor blocks rg at DC
    f = np.array([1e2, 1e3, 1e5])
    s = 2j * np.pi * f
    want = 1 + s * 99e3 * 1e-6 / (1 + s * 1e3 * 1e-6)
    assert np.allclose(response(st, f)[0], want, rtol=1e-10)
    assert abs(response(st, np.array([1e6]))[0][0]) == pytest.approx(100.0, rel=1e-4)


# --- the engine against the textbook and the reference ------------------------------------------


def test_block_transfer_is_the_rc_highpass_of_scipy():
    from railroom.engine.circuit.blocks import BLOCKS
    from railroom.engine.circuit.opamp import inverse_open_loop, laplace_grid

    r, c = 100e3, 1e-6
    freqs = np.geomspace(0.1, 100.0, 31)
    s = laplace_grid(freqs)
    v = {"r": np.array([[r]]), "c": np.array([[c]]), "bias": np.array([[1.65]])}
    out = BLOCKS["ac_coupling"].respond(v, s, inverse_open_loop(None, s), 0.0, False).output
    _, h = scipy_signal.freqs([r * c, 0.0], [r * c, 1.0], worN=2 * np.pi * freqs)
    assert np.allclose(out.transfers["in"][0, 1:], h, rtol=1e-12)
    assert out.transfers["in"][0, 0] == 0  # the DC level is blocked
    assert out.transfers["bias"][0, 0] == 1  # the output sits at bias
    assert BLOCKS["ac_coupling"].critical_frequencies(v) == pytest.approx([1 / (2 * math.pi * r * c)])


FOLLOWER = """
[[stage]]
name = "coupling"
block = "ac_coupling"
c = "{c}"
r = "{r}"
bias = "{bias}"
[[stage]]
name = "buffer"
block = "follower"
part = "{part}"
"""


def test_engine_highpass_corner_response(tmp_path):
    # 1 V peak at the corner 1/(2 pi R C) = 1 kHz: 1/sqrt(2) around the 2.5 V bias (nominal:
    # no offset; the part's 130 dB, 1.5 MHz move a follower by less than 1e-6 at 1 kHz)
    c = 1 / (2 * math.pi * 10e3 * 1e3)
    text = chain_text(
        FOLLOWER.format(c=f"{c:.9g}", r="10k", bias="2.5", part="generic-precision"),
        amplitude="1",
        band='"1k", "1k"',
        level='"-3", "3"',
    )
    report = run(tmp_path, text)
    low, high = report["stages"][1]["output"]["nominal"]
    assert high - 2.5 == pytest.approx(1 / math.sqrt(2), rel=1e-5)
    assert 2.5 - low == pytest.approx(1 / math.sqrt(2), rel=1e-5)
    # the gain per stage: the high-pass at its corner, the follower 1
    assert report["stages"][0]["gain"]["band"] == pytest.approx([1 / math.sqrt(2)] * 2, rel=1e-6)
    assert report["stages"][0]["gain"]["dc"] == [0.0, 0.0]
    assert report["stages"][1]["gain_from_source"]["band"][1] == pytest.approx(1 / math.sqrt(2), rel=1e-5)


@pytest.mark.parametrize("method", ["corners", "rss", "montecarlo"])
def test_dc_after_coupling_is_bias_plus_bias_current_times_r(tmp_path, method):
    # the bipolar class draws 100 nA either way, offset 3 mV: through r = 1 M the follower's
    # input sits at 1.0 V +/- 100 mV (Ohm's law), its output 3 mV further; the source's own
    # DC level (0 to 4 V) never reaches it
    text = chain_text(
        FOLLOWER.format(c="1u", r="1M", bias="1.0", part="generic-bipolar-15v"), level='"0", "4"'
    )
    report = run(tmp_path, text, method=method)
    coupling, buffer = report["stages"]
    if method == "corners":  # the coupling shows the follower's input on it
        assert coupling["output"]["min"] == pytest.approx(0.9, rel=1e-6)
        assert coupling["output"]["max"] == pytest.approx(1.1, rel=1e-6)
    # the whole-chain reference at each sign of the bias current and offset
    found = [
        dc(
            [Stage("ac_coupling", {"c": 1e-6, "r": 1e6, "bias": 1.0}), Stage("follower", opamp=OpAmp(1e5, 1e6, os, ib))],
            level,
        )[1]
        for os, ib, level in itertools.product((-3e-3, 3e-3), (-100e-9, 100e-9), (0.0, 4.0))
    ]  # fmt: skip
    assert min(found) == pytest.approx(1.0 - 0.1 - 0.003, rel=1e-4)
    if method == "corners":  # worst case: exact at the corners
        assert buffer["output"]["min"] == pytest.approx(min(found), rel=1e-6)
        assert buffer["output"]["max"] == pytest.approx(max(found), rel=1e-6)
    else:  # statistics stay inside the worst case (README, rss never wider than corners)
        low, high = buffer["output"]["min"], buffer["output"]["max"]  # 6 significant figures
        assert min(found) * (1 - 1e-6) <= low <= high <= max(found) * (1 + 1e-6)


CG = """
[[stage]]
name = "gain"
block = "noninverting"
part = "generic-precision"
rf = "99k"
rg = "1k"
{cg}
"""


def test_cg_stage_dc_gain_one_offset_not_multiplied(tmp_path):
    # 1 V DC and 10 mV at 10 kHz into rf = 99k, rg = 1k, cg = 1u: DC gain 1 (the output sits at
    # 1 V), the AC gain 1 + rf/rg = 100 above 1/(2 pi rg cg) = 159 Hz (less the part's roll-off,
    # taken from the reference with the same 130 dB, 1.5 MHz op amp)
    text = chain_text(CG.format(cg='cg = "1u"'), level='"1", "1"', amplitude="10m", band='"10k", "10k"')
    report = run(tmp_path, text)
    stage = report["stages"][0]
    opamp = OpAmp(10**6.5, 1.5e6)
    st = [Stage("noninverting", {"rf": 99e3, "rg": 1e3, "cg": 1e-6}, opamp=opamp)]
    ac = abs(response(st, np.array([10e3]))[0][0])
    # Black's formula G = A / (1 + A beta), beta = 1 / (1 + s rf cg / (1 + s rg cg)), one-pole A
    s = 2j * math.pi * 10e3
    a = 10**6.5 / (1 + s * 10**6.5 / (2 * math.pi * 1.5e6))
    ideal = 1 + s * 99e3 * 1e-6 / (1 + s * 1e3 * 1e-6)
    assert ac == pytest.approx(abs(a / (1 + a / ideal)), rel=1e-9)
    assert dc(st, 1.0)[0] == pytest.approx(1.0, rel=1e-6)
    assert stage["output"]["nominal"][1] == pytest.approx(dc(st, 1.0)[0] + 10e-3 * ac, rel=1e-5)
    assert stage["gain"]["dc"] == pytest.approx([1.0, 1.0], rel=1e-5)
    assert stage["gain"]["band"] == pytest.approx([ac, ac], rel=1e-5)
    # offset 50 uV and 2 nA through rf = 99k see DC gain 1: 50 uV + 198 uV, not 100 x 50 uV
    measure = analysed(tmp_path, text).stages[0].measure
    assert measure.output[1] - measure.nominal[1] == pytest.approx(50e-6 + 2e-9 * 99e3, rel=1e-4)
    plain = analysed(tmp_path, chain_text(CG.format(cg=""), level='"1", "1"')).stages[0].measure
    assert plain.output[1] - plain.nominal[1] == pytest.approx(100 * 50e-6 + 2e-9 * 99e3, rel=1e-4)


GAINS = """
[[stage]]
name = "divider"
block = "divider"
top = "10k"
bottom = "10k"
[[stage]]
name = "inverting"
block = "inverting"
part = "generic-precision"
rin = "10k"
rf = "20k"
[[stage]]
name = "noninverting"
block = "noninverting"
part = "generic-precision"
rf = "9k 1%"
rg = "1k 1%"
[[stage]]
name = "alarm"
block = "comparator"
part = "generic-precision"
threshold = "0"
"""


def test_gain_per_stage_against_closed_forms(tmp_path):
    # divider 10k/10k (Thevenin 0.5 V behind 5k) into rin = 10k at a virtual earth: the divider
    # reads 0.5 x 10k / (5k + 10k) = 1/3 with that load (a voltage divider), the inverting stage
    # rf/rin = 2 from there, 2/3 from the source; the non-inverting 1 + rf/rg over 1 % resistors
    # spans 1 + 9k 0.99 / (1k 1.01) to 1 + 9k 1.01 / (1k 0.99); a comparator has no gain
    report = run(tmp_path, chain_text(GAINS, band='"10", "10"', amplitude="1m"))
    divider, inverting, noninverting, alarm = report["stages"]
    tight = dict(rel=1e-4)  # the part's 130 dB and 1.5 MHz move these by less than 1e-4 at 10 Hz
    assert divider["gain"]["dc"] == pytest.approx([1 / 3, 1 / 3], **tight)
    assert inverting["gain"]["dc"] == pytest.approx([2.0, 2.0], **tight)
    assert inverting["gain_from_source"]["band"] == pytest.approx([2 / 3, 2 / 3], **tight)
    low, high = 1 + 9 * 0.99 / 1.01, 1 + 9 * 1.01 / 0.99
    assert noninverting["gain"]["dc"] == pytest.approx([low, high], **tight)
    assert noninverting["gain_from_source"]["band"] == pytest.approx([2 / 3 * low, 2 / 3 * high], **tight)
    assert alarm["gain"] is None and alarm["gain_from_source"] is None


MIC = """
[[stage]]
name = "coupling"
block = "ac_coupling"
c = "1u 10%"
r = "100k 1%"
bias = "1.65"
[[stage]]
name = "gain"
block = "noninverting"
part = "generic-rro-5v"
rf = "100k 1%"
rg = "2k2 1%"
cg = "10u 20%"
"""


def test_chain_gain_and_span_against_the_whole_chain_reference(tmp_path):
    # every corner of the five toleranced values, through the source's 2k2, in one netlist with
    # the part's 100 dB and 1 MHz: the engine's gain from the source over its own band grid and
    # its nominal output are the reference's (exact), the worst-case span contains the reference's
    from railroom.engine.formats.loading import load_checked
    from railroom.engine.walks.preparation import band_grid
    from railroom.engine.walks.preparation import plan_chain

    text = chain_text(
        MIC,
        positive="3.3",
        negative="0",
        level='"0.5", "2"',
        amplitude="20m",
        band='"20", "8k"',
        impedance="2k2",
    )
    report = run(tmp_path, text)
    chain, library = load_checked(str(tmp_path / "chain.toml"))
    freqs = band_grid(chain, plan_chain(chain, library.parts))
    opamp = OpAmp(1e5, 1e6)
    mags, peaks = [], []
    for c, r, rf, rg, cg in itertools.product(
        (0.9e-6, 1.1e-6), (99e3, 101e3), (99e3, 101e3), (2178, 2222), (8e-6, 12e-6)
    ):
        st = [
            Stage("ac_coupling", {"c": c, "r": r, "bias": 1.65}),
            Stage("noninverting", {"rf": rf, "rg": rg, "cg": cg}, opamp=opamp),
        ]
        out = np.abs(response(st, freqs, impedance=2.2e3)[1])
        mags.append(out)
        peaks.append(float(np.max(out)))
    # fmt: skip
    mags = np.array(mags)
    gain = report["stages"][1]["gain_from_source"]
    assert gain["band"] == pytest.approx([mags.min(), mags.max()], rel=1e-5)
    assert gain["dc"] == [0.0, 0.0]
    nominal = [Stage("ac_coupling", {"c": 1e-6, "r": 100e3, "bias": 1.65}), Stage("noninverting", {"rf": 100e3, "rg": 2.2e3, "cg": 10e-6}, opamp=opamp)]  # fmt: skip
    swing = 20e-3 * float(np.max(np.abs(response(nominal, freqs, impedance=2.2e3)[1])))
    bias_dc = dc(nominal, 1.0, impedance=2.2e3)[1]
    assert bias_dc == pytest.approx(1.65, rel=1e-4)
    assert report["stages"][1]["output"]["nominal"][1] == pytest.approx(bias_dc + swing, rel=1e-5)
    assert report["stages"][1]["output"]["max"] >= 1.65 + 20e-3 * max(peaks) - 1e-9  # never optimistic


def test_per_draw_nodal_reference_agrees_with_the_draw_walk(tmp_path):
    # the per-draw reference (one nodal solve per stage and draw) and the vectorised draw walk
    # give the same margins for AC coupling and the cg stage
    from railroom.engine.walks import circuit_walk as draw_walk
    from railroom.engine.formats.loading import load_checked
    from railroom.engine.walks.preparation import band_grid
    from railroom.engine.benchmark.figures import agree
    from railroom.engine.benchmark import per_draw
    from railroom.engine.methods import corners, montecarlo
    from railroom.engine.walks.preparation import plan_chain

    path = tmp_path / "chain.toml"
    path.write_text(
        chain_text(
            MIC,
            positive="3.3",
            negative="0",
            level='"0.5", "2"',
            amplitude="20m",
            band='"20", "8k"',
            impedance="2k2",
        )  # fmt: skip
    )
    chain, library = load_checked(str(path))
    plans = plan_chain(chain, library.parts)
    freqs = band_grid(chain, plans)
    layout = montecarlo.layout_for(chain, plans, freqs, corners.walk(corners.prepare(chain, plans, freqs)))
    D, dT = next(montecarlo.chunks(layout, 32, 1, chunk=32))
    vector = draw_walk.walk_draws(layout, D, dT)
    reference = per_draw.run_draws(layout, D[:12], dT[:12])
    assert all(set(r[1]) >= {"output-high", "output-low", "input-high", "current"} for r in reference)
    assert agree(vector, reference)


DRIVEN = """
[[stage]]
name = "buffer"
block = "follower"
part = "generic-bipolar-15v"
[[stage]]
name = "coupling"
block = "ac_coupling"
c = "1u"
r = "1k"
"""


def test_current_into_a_coupling_capacitor_is_its_ac_part_only(tmp_path):
    # a follower at 5 V DC with 1 V peak at 100 kHz into 1u then 1k to 0 V: the capacitor
    # carries no DC, so the op amp delivers the AC current alone, 1 V / |1k + 1/(j w 1u)| = 1 mA
    # (Ohm's law on the series impedance; less the follower's roll-off), not (5 + 1) V / 1k; the engine's bound is the half
    # span over r (margins.load_currents), short of the reference by the offset's 3 mV / 1k and the - pin's bias current at most
    report = analysed(tmp_path, chain_text(DRIVEN, level='"5", "5"', amplitude="1", band='"100k", "100k"'))
    needed = report.stages[0].measure.opamps[0].current_needed
    from references.chain_netlist import build

    circuit, outs = build(
        [Stage("follower", opamp=OpAmp(1e5, 1e6)), Stage("ac_coupling", {"c": 1e-6, "r": 1e3})], 1.0, 0.0
    )
    truth = float(np.abs(circuit.opamp_output_current(outs[0], np.array([100e3]))[0]))
    # the one-pole follower passes 1 / |1 + j f / gbw| = 0.995 of the 1 V at 100 kHz
    assert truth == pytest.approx(1e-3 / abs(1 + 1j * 100e3 / 1e6), rel=1e-4)
    # plus the bias current of the follower's own - pin (100 nA for generic-bipolar-15v, which
    # the op amp supplies whichever way it flows: margins.load_currents counts InputLoad.pins)
    assert truth <= needed <= (truth + 3e-3 / 1e3 + 100e-9) * (1 + 1e-5)


def test_a_load_returning_elsewhere_sets_the_dc_after_coupling(tmp_path):
    # r = 100k to bias 0 V and load = 100k to load_to = 3.3 V: Millman's theorem gives the DC
    # level (0 / 100k + 3.3 / 100k) / (1/100k + 1/100k) = 1.65 V, as the nodal reference does
    stages = FOLLOWER.format(c="1u", r="100k", bias="0", part="generic-precision").replace(
        'bias = "0"', 'bias = "0"\nload = "100k"\nload_to = "3.3"'
    )
    report = run(tmp_path, chain_text(stages, level='"0", "4"'))
    ref = [
        Stage("ac_coupling", {"c": 1e-6, "r": 100e3, "bias": 0.0}, load=100e3, load_to=3.3),
        Stage("follower", opamp=OpAmp(10**6.5, 1.5e6)),
    ]
    truth = dc(ref, 2.0)[1]
    assert truth == pytest.approx(1.65, rel=1e-6)
    assert report["stages"][1]["output"]["nominal"] == pytest.approx([truth, truth], rel=1e-6)


@pytest.mark.parametrize("method", ["corners", "rss", "montecarlo"])
def test_current_into_a_coupling_counts_the_stage_it_feeds(tmp_path, method):
    # follower -> 1u, 1k to 0 V -> inverting stage with rin = 1k, at 100 kHz (the capacitor a
    # near short): the follower drives 1k || 1k = 500 ohm, about 2 mA for 1 V peak (Ohm's law),
    # twice what the coupling's own r draws; the engine's bound must not fall below the netlist's
    feeds = (
        DRIVEN
        + """
[[stage]]
name = "inverter"
block = "inverting"
part = "generic-bipolar-15v"
rin = "1k"
rf = "1k"
"""
    )
    report = analysed(tmp_path, chain_text(feeds, method=method, amplitude="1", band='"100k", "100k"'))
    needed = report.stages[0].measure.opamps[0].current_needed
    from references.chain_netlist import build

    op = OpAmp(1e5, 1e6)
    circuit, outs = build(
        [
            Stage("follower", opamp=op),
            Stage("ac_coupling", {"c": 1e-6, "r": 1e3}),
            Stage("inverting", {"rin": 1e3, "rf": 1e3}, opamp=op),
        ],
        1.0,
        0.0,
    )
    truth = float(np.abs(circuit.opamp_output_current(outs[0], np.array([100e3]))[0]))
    assert truth == pytest.approx(2e-3, rel=0.02)  # 1 V / 500 ohm, less the roll-off and 1/(j w C)
    assert needed >= truth
