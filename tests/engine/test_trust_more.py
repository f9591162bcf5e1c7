"""Issue 11, more of its items, each against a hand calculation named beside it. The circuits are
written in the chain format of the README; `part()` is an illustrative part with no offset."""

from __future__ import annotations

import pytest

from railroom.engine.analysis import analyse
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.reports.json_report import chain_report

from clean_part import part


def result(text: str, parts: dict, **options):
    return analyse(chain_from_text(text), parts, design_aids=False, headroom=False, **options)


CLIPPED = """format = 1
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
"""


@pytest.mark.parametrize("method", ["corners", "rss", "montecarlo"])
def test_a_stage_after_a_clipping_one_is_fed_clipped_everywhere(method):
    # 1 V x (1 + 90k/10k) = 10 V is past a 5 V rail (non-inverting gain, Sedra & Smith ch. 2):
    # stage 1 clips; stage 2 is fed its clipped output: "fed-clipped" is a marker in its
    # reasons, named the same in the list, the detail and the JSON, and its go is its own
    # checks' result (it passes them on the clipped signal); the chain is NO-GO for stage 1
    found = result(CLIPPED, part(), method=method, samples=2000 if method == "montecarlo" else None)
    first, second = found.stages
    assert first.regime == "clipping" and not first.go
    assert second.reasons == ("fed-clipped",) and second.go
    assert second.regime_word == "fed-clipped" and second.shown_regime == "fed-clipped"
    assert [s["go"] for s in chain_report(found)["stages"]] == [False, True]
    assert found.failing == 1 and not found.go


DC_ONLY = """format = 1
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
"""


def test_a_dc_only_source_band_of_zero_is_accepted():
    # band = ["0", "0"]: DC alone; gain 1 + 10k/10k = 2 takes 1..2 V to 2..4 V (Sedra & Smith ch. 2)
    found = result(DC_ONLY, part())
    assert found.stages[0].measure.output == pytest.approx((2.0, 4.0), abs=1e-5)
    assert found.stages[0].measure.opamps[0].slew_needed == 0.0


def schmitt(level: str, amplitude: str, rails: str = 'positive = "5"\nnegative = "0"', load: str = "") -> str:
    return f'''format = 1
title = "Schmitt trigger"
[rails.main]
{rails}
[source]
level = [{level}]
amplitude = "{amplitude}"
band = ["1k", "1k"]
[[stage]]
name = "trigger"
block = "schmitt"
part = "clean"
r1 = "10k"
r2 = "100k"
ref = "2.5"
{load}
'''


# Sedra & Smith, Microelectronic Circuits, ch. 18 (bistable circuit, non-inverting): the input
# thresholds are V_TH = ref (1 + r1/r2) - V_L r1/r2 and V_TL = ref (1 + r1/r2) - V_H r1/r2.
# With an ideal 0..5 V output (no headroom, no output resistance), r1/r2 = 0.1, ref = 2.5 V:
# V_TH = 2.75 V, V_TL = 2.75 - 0.5 = 2.25 V.
IDEAL_OUT = dict(output_headroom=(0.0, 0.0), output_resistance=0.0)


def test_schmitt_thresholds_by_hand():
    stage = result(schmitt('"2.5", "2.5"', "1"), part(**IDEAL_OUT)).stages[0]
    to_high, to_low = stage.measure.thresholds
    assert to_high == pytest.approx((2.75, 2.75), abs=1e-12)
    assert to_low == pytest.approx((2.25, 2.25), abs=1e-12)


def test_schmitt_may_stick_is_judged_at_joint_corners_item5():
    # level anywhere in 1.2..3.4 V with a 0.1 V sine: at level 1.2 V the input tops out at 1.3 V,
    # under V_TH = 2.75 V (it never goes high); at 3.4 V it never falls to V_TL = 2.25 V. The
    # overall span 1.1..3.5 V crosses both, which is what the caution looked at before.
    stuck = result(schmitt('"1.2", "3.4"', "0.1"), part(**IDEAL_OUT)).stages[0]
    assert any("stick low" in c for c in stuck.cautions)
    assert any("stick high" in c for c in stuck.cautions)
    # a 1 V sine on 2.4..2.6 V crosses both at every level: 1.4..3.4 V at worst, no caution
    free = result(schmitt('"2.4", "2.6"', "1"), part(**IDEAL_OUT)).stages[0]
    assert not any("stick" in c for c in free.cautions)


def test_schmitt_thresholds_carry_offset_and_bias_item5():
    # the flip is V+ + Vos = ref with V+ = (Vin r2 + Vout r1)/(r1 + r2) - Ib (r1 || r2):
    # Vin moves by Vos (1 + r1/r2) + Ib r1 = 1 mV x 1.1 + 100 nA x 10k = 2.1 mV either way
    found = result(schmitt('"2.5", "2.5"', "1"), part(**IDEAL_OUT, offset=1e-3, bias_current=100e-9)).stages[
        0
    ]
    to_high, to_low = found.measure.thresholds
    assert to_high == pytest.approx((2.75 - 2.1e-3, 2.75 + 2.1e-3), abs=1e-9)
    assert to_low == pytest.approx((2.25 - 2.1e-3, 2.25 + 2.1e-3), abs=1e-9)


def test_schmitt_high_level_drops_under_its_own_load_item9():
    # 5.26 V rail, 30 mV headroom: 5.23 V unloaded; Ro = 100 ohm into 1 k: V = V0 / (1 + Ro/RL)
    # = 5.23 / 1.1 = 4.7545 V (voltage divider); with the 110 k feedback pair as well
    # 5.23 / (1 + 100 (1/1k + 1/110k)) = 4.7507 V
    found = result(
        schmitt('"2.5", "2.5"', "1", rails='positive = "5.26"\nnegative = "0"', load='load = "1k"'),
        part(output_headroom=(0.03, 0.03), output_resistance=100.0),
    ).stages[0]
    assert found.measure.output[1] == pytest.approx(5.23 / 1.1, rel=1e-9)
    assert found.measure.thresholds[1] == pytest.approx(
        (2.75 - 0.1 * 5.23 / 1.1, 2.75 - 0.1 * 5.23 / (1 + 100 * (1e-3 + 1 / 110e3))), rel=1e-9
    )
    # the current: 4.7545 V into 1 k plus (4.7545 - 1.5) V through the 110 k pair = 4.784 mA
    high = 5.23 / 1.1
    assert found.measure.opamps[0].current_needed == pytest.approx(
        high / 1e3 + (high - 1.5) / 110e3, rel=1e-9
    )


def test_schmitt_input_pairs_each_rail_corner_with_its_threshold_item9():
    # 5 V +/- 5 %: the window's top is 4.75 V + 0.1 V (input headroom -0.1 V). At that rail the
    # high level is 4.75 V, so V+ reaches (3.5 x 100k + 4.75 x 10k) / 110k = 3.6136 V; the
    # highest rail's level (5.25 V) would give 3.6591 V, which never meets the 4.75 V window.
    text = schmitt('"2.5", "2.5"', "1", rails='positive = "5"\nnegative = "0"\ntolerance = "5%"')
    found = result(text, part(**IDEAL_OUT)).stages[0]
    assert found.measure.opamps[0].input[1] == pytest.approx((3.5e5 + 4.75 * 1e4) / 110e3, rel=1e-9)
    assert found.margins["input-high"] == pytest.approx(4.85 - (3.5e5 + 4.75e4) / 110e3, rel=1e-9)


def test_an_ac_amplitude_with_no_band_is_a_located_caution_item11():
    # issue 11 item 11: an amplitude with no band was checked at 1 Hz only, silently
    text = DC_ONLY.replace('band = ["0", "0"]', 'amplitude = "0.5"')
    found = analyse(chain_from_text(text, path="board.toml"), part(), design_aids=False, headroom=False)
    assert any(c.startswith("board.toml: source.band:") and "1 Hz only" in c for c in found.cautions)
    with_band = text.replace('amplitude = "0.5"', 'amplitude = "0.5"\nband = ["10", "1k"]')
    assert not any("source.band" in c for c in result(with_band, part()).cautions)


def test_a_band_of_one_hertz_written_is_meant_not_cautioned():
    # band = ["1", "1"] is a single frequency the user chose; only a missing band is cautioned
    text = DC_ONLY.replace('band = ["0", "0"]', 'amplitude = "0.5"\nband = ["1", "1"]')
    found = analyse(chain_from_text(text, path="board.toml"), part(), design_aids=False, headroom=False)
    assert not any("source.band" in c for c in found.cautions)
