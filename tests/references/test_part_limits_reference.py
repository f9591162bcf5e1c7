"""Part limits (engine/part_limits.py) against the whole-chain nodal reference (references/chain_netlist.py)."""

import itertools

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
    from railroom.engine.files import chain_from_text
    from railroom.engine.presets import parts_from_text

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
