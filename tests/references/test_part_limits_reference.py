"""Part limits (engine/circuit/part_limits.py) against the whole-chain nodal reference (references/chain_netlist.py)."""

import itertools

import numpy as np

import pytest

from references.chain_netlist import OpAmp, Stage, dc

PRESET = """[part.fet]
description = "FET-input test class (illustrative values)"
supply = ["4", "36"]
supply_abs_max = "40"
output_headroom = ["1", "1"]
input_headroom = ["1", "1"]
gbw = "1M"
slew = "1V/us"
open_loop_gain = "100dB"
offset = "0"
bias_current = "1n"
bias_current_doubling = "10"
output_current = "20m"
"""

CHAIN = """format = 1
[conditions]
temperature = [25, 85]
[rails.main]
positive = "15"
negative = "-15"
[source]
level = ["1", "1"]
impedance = "1M"
[[stage]]
name = "buffer"
block = "follower"
part = "fet"
[[stage]]
name = "gain"
block = "noninverting"
part = "fet"
rf = "10k"
rg = "10k"
"""


def test_doubled_bias_through_a_two_stage_chain_matches_the_nodal_reference():
    # the doubling rule (common practice, FET inputs): at 85 C the 1 nA bias is 1n x 2^6 = 64 nA.
    # The nodal chain (every stage loaded by the next, one netlist) with 64 nA into each op amp's
    # pins, both signs for each op amp: railroom's corners spans must be those extremes
    from railroom.engine.analysis import analyse
    from railroom.engine.formats.chain_file import chain_from_text
    from railroom.engine.formats.presets import parts_from_text

    parts, problems = parts_from_text(PRESET, "fet.toml")
    assert problems == []
    result = analyse(chain_from_text(CHAIN), {"fet": parts[0]}, design_aids=False, headroom=False)
    ib = 1e-9 * 2 ** ((85 - 25) / 10)
    outs = []
    for signs in itertools.product((1, -1), repeat=2):
        st = [
            Stage("follower", opamp=OpAmp(1e5, 1e6, bias=signs[0] * ib)),
            Stage("noninverting", {"rf": 10e3, "rg": 10e3}, opamp=OpAmp(1e5, 1e6, bias=signs[1] * ib)),
        ]
        outs.append(dc(st, 1.0, impedance=1e6))
    for k, stage in enumerate(result.stages):
        low, high = min(o[k] for o in outs), max(o[k] for o in outs)
        assert stage.measure.output == pytest.approx((low, high), abs=1e-9), stage.stage.name
    # the first stage moves by Ib x 1 Mohm = 64 mV either way (Ohm's law)
    assert result.stages[0].measure.output[1] - result.stages[0].measure.output[0] == pytest.approx(
        2 * 0.064, rel=1e-4
    )


CURVE_PRESET = """[part.curved]
description = "swing against output current (illustrative values)"
supply = ["4", "36"]
supply_abs_max = "40"
output_headroom = ["1", "1"]
output_headroom_curve = [["0", "1", "1"], ["10m", "1.5", "2"], ["20m", "2.5", "3"]]
input_headroom = ["1", "1"]
input_differential_max = "0.7"
gbw = "1M"
slew = "1V/us"
open_loop_gain = "100dB"
offset = "0"
output_current = "40m"
"""

CURVE_CHAIN = """format = 1
[rails.main]
positive = "15"
negative = "-15"
[source]
level = ["{level}", "{level}"]
[[stage]]
name = "x2 into 1k"
block = "noninverting"
part = "curved"
rf = "10k"
rg = "10k"
load = "1k"
[[stage]]
name = "clamped comparator"
block = "comparator"
part = "curved"
threshold = "1"
"""


def _curve_result(level: float):
    from railroom.engine.analysis import analyse
    from railroom.engine.formats.chain_file import chain_from_text
    from railroom.engine.formats.presets import parts_from_text

    parts, problems = parts_from_text(CURVE_PRESET, "curved.toml")
    assert problems == []
    chain = chain_from_text(CURVE_CHAIN.format(level=level))
    return analyse(chain, {"curved": parts[0]}, design_aids=False, headroom=False)


@pytest.mark.parametrize("level", [2.0, 6.2])
def test_swing_curve_at_the_current_the_nodal_chain_sources(level):
    # The nodal chain gives the x2 stage's output and its - pin; the op amp sources the load's
    # current plus the feedback network's (Kirchhoff's current law at the output). The upper
    # headroom is read off the curve at that current by linear interpolation (numpy.interp).
    from references.chain_netlist import build

    c, outs = build(
        [Stage("noninverting", {"rf": 10e3, "rg": 10e3}, load=1e3, opamp=OpAmp(1e5, 1e6))], level, 0.0
    )
    sol = c.solve(np.array([0.0]))
    vout, vminus = float(np.real(sol[outs[0]][0])), float(np.real(sol["n0_m"][0]))
    sourced = vout / 1e3 + (vout - vminus) / 10e3
    assert sourced == pytest.approx(
        float(np.real(c.opamp_output_current(outs[0], np.array([0.0]))[0])), rel=1e-9
    )
    headroom = np.interp(sourced, [0.0, 10e-3, 20e-3], [1.0, 1.5, 2.5])
    stage = _curve_result(level).stages[0]
    assert stage.margins["output-high"] == pytest.approx(15.0 - headroom - vout, abs=1e-6)


def test_comparator_input_difference_from_the_nodal_chain():
    # the comparator's + input is the x2 stage's output (it draws no current here); its - input is
    # the 1 V threshold: margin = 0.7 V - |V+ - V-|, the clamp-diode limit of the part
    vout = dc([Stage("noninverting", {"rf": 10e3, "rg": 10e3}, load=1e3, opamp=OpAmp(1e5, 1e6))], 2.0)[0]
    stage = _curve_result(2.0).stages[1]
    assert stage.margins["input-differential"] == pytest.approx(0.7 - abs(vout - 1.0), abs=1e-6)
    assert not stage.go
