"""What a clipping stage hands on reaches as high as its output can clip, not only as high as its
narrowest swing window.

Hand calculation (the op amp's output as an ideal source behind Ro, its swing limited to the
rail less the headroom; a resistive load, Sedra & Smith ch. 2): stage 1 is a gain of 11 on
1.2 V (13.2 V unclipped) on a 12 V +/- 5 % rail with 1.5 V of headroom, 75 ohm behind it, into
1k || 110k. At the rail's upper end it clips where V = 12.6 - 1.5 - 75 V (1/1k + 1/110k):
V = 11.1 / 1.07568 = 10.319 V. The follower after it (on its own 15 V rails, so that only what
it is fed is read) passes that on. Before the fix the clipped signal was held inside stage 1's
own narrowest window, 11.4 - 1.5 - 75 x 13.3 mA = 8.90 V: 1.4 V short of what the board does,
and a stage fed it could read GO on a signal it never sees. Now it is held at the rail's upper
end less the headroom with no current drop (11.1 V): pessimistic by the drop, 0.78 V here.
"""

from __future__ import annotations

import pytest

from railroom.engine.analysis import analyse
from railroom.engine.formats.chain_file import chain_from_text

from clean_part import part

CHAIN = """format = 1
title = "a gain that clips into a load, then a buffer"
[rails.main]
positive = "12"
negative = "-12"
tolerance = "5%"
[rails.wide]
positive = "15"
negative = "-15"
[source]
level = ["1.2", "1.2"]
[[stage]]
name = "gain"
block = "noninverting"
part = "clean"
rails = "main"
rf = "100k"
rg = "10k"
load = "1k"
[[stage]]
name = "buffer"
block = "follower"
part = "clean"
rails = "wide"
"""

PHYSICAL = 11.1 / (1 + 75 * (1 / 1e3 + 1 / 110e3))  # 10.319 V, the clip level at the rail's top
BOUND = 12.6 - 1.5  # the rail's top less the headroom, no drop


@pytest.mark.parametrize("method", ["corners", "montecarlo"])
def test_the_stage_after_a_clip_is_fed_up_to_the_highest_clip_level(method):
    parts = part(output_headroom=(1.5, 1.5), output_resistance=75.0)
    found = analyse(
        chain_from_text(CHAIN),
        parts,
        method=method,
        samples=4000 if method == "montecarlo" else None,
        design_aids=False,
        headroom=False,
    )
    gain, buffer = found.stages
    assert gain.regime == "clipping" and "fed-clipped" in buffer.reasons
    top = buffer.measure.output[1]
    if method == "corners":  # the worst case: at or above the board's, by at most the drop
        assert PHYSICAL <= top <= BOUND + 1e-9
    else:  # Monte Carlo's 0.1 % quote: the rows near the rail's top clip near 11.1 V
        assert top >= PHYSICAL


def test_a_stage_on_the_clipping_stages_rail_meets_its_clip_at_the_same_rail_value():
    # tests/chains/alarms_nogo.toml: a gain on 5 V +/- 5 % clips; the comparator after it on
    # the same rail reads the clip level (the rail less 30 mV of output headroom) against its
    # input limit (the rail plus 0.1 V, a negative input headroom): 130 mV of room at every
    # rail value (hand calculation). Taken apart, the clip at the rail's top (5.22 V) met the
    # limit at its bottom (4.85 V): -370 mV, a failure the board does not have.
    from pathlib import Path

    import railroom

    chain = railroom.load(str(Path(__file__).resolve().parents[1] / "chains" / "alarms_nogo.toml"))
    found = analyse(chain, railroom.parts_for(chain), design_aids=False, headroom=False)
    gain, alarm, latch = found.stages
    assert gain.regime == "clipping" and not found.go
    assert alarm.margins["input-high"] == pytest.approx(0.13, abs=1e-9)
    assert alarm.go and alarm.reasons == ("fed-clipped",)
