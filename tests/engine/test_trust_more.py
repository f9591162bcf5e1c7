"""Issue 11, more of its items, each against a hand calculation named beside it. The circuits are
written in the chain format of the README; CLEAN is an illustrative part with no offset."""
from __future__ import annotations

import pytest

from railroom.engine.analysis import analyse
from railroom.engine.files import chain_from_text
from railroom.engine.model import Part
from railroom.engine.report import chain_report

CLEAN = dict(id="clean", description="test part", supply=(2.7, 40.0), supply_abs_max=44.0,
             output_headroom=(0.03, 0.03), output_resistance=40.0, input_headroom=(-0.1, -0.1),
             gbw=10e6, slew=10e6, open_loop_gain=1e7, offset=0.0, offset_drift=0.0,
             bias_current=0.0, output_current=50e-3)


def part(**changes) -> dict[str, Part]:
    return {"clean": Part(**{**CLEAN, **changes})}


def result(text: str, parts: dict[str, Part], **options):
    return analyse(chain_from_text(text), parts, design_aids=False, headroom=False, **options)


CLIPPED = '''format = 1
title = "a clipping gain, then a buffer"
[rails.main]
positive = "5"
negative = "-5"
[source]
level = ["1", "1"]
[[stage]]
name = "gain"
block = "noninverting"
part = "clean"
rf = "90k"
rg = "10k"
[[stage]]
name = "buffer"
block = "follower"
part = "clean"
'''


@pytest.mark.parametrize("method", ["corners", "rss", "montecarlo"])
def test_a_stage_after_a_clipping_one_is_fed_clipped_everywhere(method):
    # 1 V x (1 + 90k/10k) = 10 V is past a 5 V rail (non-inverting gain, Sedra & Smith ch. 2):
    # stage 1 clips; stage 2 is fed its clipped output, so it is not GO in the list, the detail
    # and the JSON alike, and the verdict counts one failing stage (the one that clips)
    found = result(CLIPPED, part(), method=method, samples=2000 if method == "montecarlo" else None)
    first, second = found.stages
    assert first.regime == "clipping" and not first.go
    assert second.reasons == ("fed-clipped",) and not second.go
    assert second.regime_word == "fed-clipped" and second.shown_regime == "fed-clipped"
    assert [s["go"] for s in chain_report(found)["stages"]] == [False, False]
    assert found.failing == 1


DC_ONLY = '''format = 1
title = "DC only"
[rails.main]
positive = "15"
negative = "-15"
[source]
level = ["1", "2"]
band = ["0", "0"]
[[stage]]
name = "gain"
block = "noninverting"
part = "clean"
rf = "10k"
rg = "10k"
'''


def test_a_dc_only_source_band_of_zero_is_accepted():
    # band = ["0", "0"]: DC alone; gain 1 + 10k/10k = 2 takes 1..2 V to 2..4 V (Sedra & Smith ch. 2)
    found = result(DC_ONLY, part())
    assert found.stages[0].measure.output == pytest.approx((2.0, 4.0), abs=1e-5)
    assert found.stages[0].measure.opamps[0].slew_needed == 0.0
