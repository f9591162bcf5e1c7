"""Branches and loads that return elsewhere (issue 13 items 1 and 4) against the whole-chain
netlist (references/chain_netlist.py, which imports nothing of railroom) and textbook results:
Ohm's law, Kirchhoff's current law (the currents into one node add) and Millman's theorem (a
node's voltage is the conductance-weighted mean of what its branches return to)."""

from __future__ import annotations

import numpy as np
import pytest

from references.chain_netlist import OpAmp, Stage, build, dc, response

PRECISION = OpAmp(10**6.5, 1.5e6)  # generic-precision (presets/generic.toml): 130 dB, 1.5 MHz
OFFSET, BIAS = 50e-6, 2e-9  # its offset and bias current: what the engine may add at most

HEAD = """\
format = 1
[rails.main]
positive = "15"
negative = "-15"
[source]
level = ["{lo}", "{hi}"]
amplitude = "{amp}"
band = ["100", "1k"]
"""


def analysed(tmp_path, text: str, method: str = "corners"):
    from railroom.engine.analysis import analyse
    from railroom.engine.formats.loading import load_checked

    path = tmp_path / "chain.toml"
    path.write_text(text, encoding="utf-8")
    chain, library = load_checked(str(path))
    return analyse(chain, library.parts, method=method, design_aids=False, headroom=False), library


def opamp_current(stages: list[Stage], level: float, amplitude: float, freqs, index: int) -> tuple:
    """Largest current the op amp of stage `index` sources and sinks over the source's DC ends
    and the AC peak (a flat band: DC plus |I_ac| a; superposition)."""
    highs, lows = [], []
    for dc_level in level:
        c, outs = build(stages, dc_level, 0.0)
        i_dc = float(np.real(c.opamp_output_current(outs[index], np.array([0.0]))[0]))
        ac_stages = [
            Stage(
                s.block, {**s.values, "ref": 0.0}, s.load, OpAmp(s.opamp.open_loop_gain, s.opamp.gbw), s.feed
            )
            for s in stages
        ]
        c_ac, outs_ac = build(ac_stages, 1.0, 0.0)
        i_ac = float(np.max(np.abs(c_ac.opamp_output_current(outs_ac[index], np.asarray(freqs)))))
        highs.append(i_dc + i_ac * amplitude)
        lows.append(i_dc - i_ac * amplitude)
    return max(max(highs), 0.0), max(-min(lows), 0.0)


BRANCHED = (
    HEAD.format(lo="-0.5", hi="0.5", amp="1")
    + """
[[stage]]
name = "gain"
block = "noninverting"
part = "generic-precision"
rf = "10k"
rg = "10k"
[[stage]]
name = "buffer"
block = "follower"
part = "generic-precision"
[[stage]]
name = "invert"
block = "inverting"
part = "generic-precision"
from = "gain"
rin = "2k"
rf = "4k"
[[stage]]
name = "direct"
block = "inverting"
part = "generic-precision"
from = "source"
rin = "5k"
rf = "5k"
load = "2k"
load_to = "3"
"""
)


def branched_netlist(op=PRECISION) -> list[Stage]:
    return [
        Stage("noninverting", {"rf": 10e3, "rg": 10e3}, opamp=op),
        Stage("follower", opamp=op),
        Stage("inverting", {"rin": 2e3, "rf": 4e3}, opamp=op, feed=0),
        Stage("inverting", {"rin": 5e3, "rf": 5e3}, load=2e3, load_to=3.0, opamp=op, feed=-1),
    ]


def test_a_branch_chain_matches_the_whole_chain_netlist(tmp_path):
    result, _ = analysed(tmp_path, BRANCHED)
    stages = branched_netlist()
    freqs = np.geomspace(100, 1e3, 40)
    gains = [np.abs(r) for r in response(stages, freqs)]
    for k, stage in enumerate(result.stages):
        lows = [dc(stages, level)[k] - float(np.max(gains[k])) for level in (-0.5, 0.5)]
        highs = [dc(stages, level)[k] + float(np.max(gains[k])) for level in (-0.5, 0.5)]
        low, high = stage.measure.output
        # never optimistic, and wider only by the offsets and bias currents upstream (< 1 mV)
        assert low <= min(lows) + 1e-9 and high >= max(highs) - 1e-9, stage.measure.stage.name
        assert low >= min(lows) - 1e-3 and high <= max(highs) + 1e-3, stage.measure.stage.name
    # the netlist itself: gain 2 then -2 on its branch (-4 from the source), -1 straight from it
    assert dc(stages, 0.5) == pytest.approx([1.0, 1.0, -2.0, -0.5], abs=1e-5)
    # the gain stage's op amp drives its own rf + rg, the buffer (nothing) and the 2k of the
    # branch to a virtual earth: the currents add (Kirchhoff), as the netlist's op amp carries
    sourced, sunk = opamp_current(stages, (-0.5, 0.5), 1.0, freqs, 0)
    assert sourced == pytest.approx(3.0 / 20e3 + 3.0 / 2e3, rel=1e-4)  # 3 V peak output
    need = result.stages[0].measure.opamps[0].current_needed
    assert max(sourced, sunk) <= need <= max(sourced, sunk) * (1 + 1e-3)


def test_the_load_current_returning_to_load_to_matches_the_netlist(tmp_path):
    # "direct": -Vin, output -1.5 .. 1.5 V, its 2k load returns to 3 V: at -1.5 V the op amp
    # sinks (3 + 1.5) / 2k = 2.25 mA through the load (Ohm's law), plus the feedback current;
    # at +1.5 V the load still pushes current in: the op amp sources through rf only
    result, library = analysed(tmp_path, BRANCHED)
    stages = branched_netlist()
    freqs = np.geomspace(100, 1e3, 40)
    sourced, sunk = opamp_current(stages, (-0.5, 0.5), 1.0, freqs, 3)
    assert sunk == pytest.approx(4.5 / 2e3 + 1.5 / 5e3, rel=1e-4)
    measure = result.stages[3].measure.opamps[0]
    assert max(sourced, sunk) <= measure.current_needed <= max(sourced, sunk) * (1 + 1e-3)
    # direction: the lower headroom grows with the sunk current, the upper with the sourced
    part = library.parts["generic-precision"]
    ro = part.output_resistance
    window_low = -15 + part.output_headroom[1] + ro * measure.current_needed
    assert measure.window[0] == pytest.approx(window_low, abs=ro * 1e-6)
    window_high = 15 - part.output_headroom[0] - ro * sourced
    assert measure.window[1] == pytest.approx(window_high, abs=ro * 2e-6)


def test_load_to_on_every_method_stays_outside_the_netlist(tmp_path):
    stages = branched_netlist()
    freqs = np.geomspace(100, 1e3, 40)
    truth = max(opamp_current(stages, (-0.5, 0.5), 1.0, freqs, 3))
    for method in ("rss", "montecarlo"):
        result, _ = analysed(tmp_path, BRANCHED, method)
        need = result.stages[3].measure.opamps[0].current_needed
        # no tolerance here: every drawn circuit is the netlist, up to offsets and bias
        assert need == pytest.approx(truth, rel=2e-3), method


PASSIVE = (
    HEAD.format(lo="1", hi="1", amp="0")
    + """
[[stage]]
name = "divider"
block = "divider"
top = "10k"
bottom = "10k"
load = "10k"
load_to = "3"
[[stage]]
name = "buffer"
block = "follower"
part = "generic-precision"
"""
)


def test_a_passive_load_returning_to_load_to_follows_millman(tmp_path):
    # Millman: V = (1/10k + 0/10k + 3/10k) / (3/10k) = 4/3 V (1 V in, 10k/10k, 10k to 3 V)
    result, _ = analysed(tmp_path, PASSIVE)
    netlist = [
        Stage("divider", {"top": 10e3, "bottom": 10e3}, load=10e3, load_to=3.0),
        Stage("follower", opamp=PRECISION),
    ]
    assert dc(netlist, 1.0)[0] == pytest.approx(4 / 3, rel=1e-12)
    low, high = result.stages[0].measure.output
    assert low <= 4 / 3 <= high and high - low < 2 * (OFFSET + BIAS * 5e3 * 2)
    low, high = result.stages[1].measure.output
    assert low <= dc(netlist, 1.0)[1] <= high and high - low < 4 * (OFFSET + BIAS * 5e3)
