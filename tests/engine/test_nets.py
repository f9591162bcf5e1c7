"""Named DC nets (the README's File formats, "Named DC nets"): located errors, one value per
corner shared by every stage, and the textbook ratiometric case.

Textbook: an inverting stage about a reference gives Vout = -(Rf/Rin) Vin + (1 + Rf/Rin) Vref
(Horowitz & Hill, The Art of Electronics, 3rd ed., 4.2.2 [memory]). With Rf = Rin and
Vref = V/4 (a ratiometric net, V the converter rail) the output is V/2 - Vin; a converter window
whose top is V/2 (a ratiometric net on the same rail) then leaves Vin_min - 0 of room at the
top: the rail drops out. The same window with a fixed 2.5 V top leaves 2.5 - V/2 + Vin_min,
which moves by V_nominal tol / 2 with the rail tolerance.
"""

from __future__ import annotations

import pytest

from railroom.engine.analysis import analyse
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.circuit.model import InputError, Part

# an op amp far from every limit: only the finite open-loop gain A0 remains (1e5 here)
PART = Part(
    id="plain",
    description="test part",
    supply=(2.0, 40.0),
    supply_abs_max=44.0,
    output_headroom=(0.05, 0.05),
    output_resistance=0.0,
    input_headroom=(0.0, 0.0),
    gbw=1e6,
    slew=1e6,
    open_loop_gain=1e5,
    offset=1e-3,
    offset_drift=0.0,
    bias_current=0.0,
    output_current=0.02,
)
PARTS = {"plain": PART}


def ratiometric_chain(tolerance: str, high: str, method: str = "corners") -> str:
    return f"""format = 1
title = "ratiometric window"
[conditions]
method = "{method}"
samples = 4000
[rails.converter]
positive = "5"
negative = "0"
tolerance = "{tolerance}"
[nets.quarter]
rail = "converter"
fraction = "0.25"
[nets.half]
rail = "converter"
fraction = "0.5"
[source]
level = ["0.1", "1"]
[[stage]]
name = "bias"
block = "inverting"
part = "plain"
rin = "10k"
rf = "10k"
ref = {{ net = "quarter" }}
[[stage]]
name = "converter"
block = "adc"
low = "0"
high = {high}
"""


def top_margin(text: str) -> float:
    result = analyse(chain_from_text(text), PARTS, design_aids=False, headroom=False)
    return result.stages[1].margins["input-high"]


def closed_loop(vref: float, vin: float) -> float:
    """Vout = (2 Vref - Vin) / (1 + 2 / A0) for Rf = Rin: the noise gain 2 over the finite A0
    (an offset adds to Vref: it sits in series with the + input)
    (Franco, Design with Operational Amplifiers and Analog Integrated Circuits, 3rd ed., 1.6,
    the closed-loop gain A / (1 + A beta) [memory])."""
    return (2 * vref - vin) / (1 + 2 / PART.open_loop_gain)


def ratiometric_top(rail: float) -> float:
    # top of the window V/2 less the highest output: least Vin (0.1 V), the offset up
    return rail / 2 - closed_loop(rail / 4 + PART.offset, 0.1)


def test_a_ratiometric_window_fed_by_a_ratiometric_bias_does_not_move_with_the_rail():
    at_0, at_5 = (top_margin(ratiometric_chain(t, '{ net = "half" }')) for t in ("0%", "5%"))
    assert at_0 == pytest.approx(ratiometric_top(5.0), abs=1e-9)
    # the worst of the rail's two ends; the finite gain leaves 2.5 uV between them
    assert at_5 == pytest.approx(min(ratiometric_top(4.75), ratiometric_top(5.25)), abs=1e-9)
    assert at_5 == pytest.approx(at_0, abs=3e-6)


def test_the_same_window_with_a_fixed_top_moves_with_the_rail():
    at_0, at_5 = (top_margin(ratiometric_chain(t, '"2.5"')) for t in ("0%", "5%"))
    assert at_0 == pytest.approx(ratiometric_top(5.0), abs=1e-9)
    # 2.5 less the output at the rail's high end, 5.25 V: 0.125 V off the margin
    assert at_5 == pytest.approx(2.5 - closed_loop(5.25 / 4 + PART.offset, 0.1), abs=1e-9)
    assert at_0 - at_5 == pytest.approx(0.125, abs=1e-5)


SHARED = """format = 1
[rails.main]
positive = "12"
negative = "0"
[nets.mid]
value = "2.5 2%"
[source]
level = ["0", "0"]
[[stage]]
name = "shift"
block = "inverting"
part = "plain"
rin = "10k"
rf = "10k"
ref = {{ net = "mid" }}
[[stage]]
name = "converter"
block = "adc"
low = {low}
high = "12"
"""


def test_a_fixed_net_takes_one_value_shared_by_every_stage():
    # the shift's output is 2 x mid, the converter's bottom mid: room below 2 mid - mid = mid,
    # least at the net's low end, 2.45 V (less the offset x 2); each stage at its own end of
    # mid would give 2 x 2.45 - 2.55 = 2.35 V
    shared = top_margin_low(SHARED.format(low='{ net = "mid" }'))
    assert shared == pytest.approx(2.45 - 2e-3, abs=2e-4)


def top_margin_low(text: str) -> float:
    result = analyse(chain_from_text(text), PARTS, design_aids=False, headroom=False)
    return result.stages[1].margins["input-low"]


def problems(text: str) -> list[str]:
    with pytest.raises(InputError) as err:
        chain_from_text(text, "board.toml")
    return [str(p) for p in err.value.problems]


def test_an_unknown_net_is_named_with_its_line():
    found = problems(SHARED.format(low='{ net = "midd" }'))
    assert found == ["board.toml:19: stage.2.low: no net named 'midd'; did you mean 'mid'?"]


def test_a_net_where_no_voltage_goes_is_named_with_its_line():
    text = SHARED.format(low='"0"').replace('rf = "10k"', 'rf = { net = "mid" }')
    found = problems(text)
    assert len(found) == 1
    assert found[0].startswith(
        "board.toml:14: stage.1.rf: a net is a voltage, and this field takes no voltage"
    )


def test_a_net_outside_the_stages_is_refused():
    found = problems(SHARED.format(low='"0"').replace('positive = "12"', 'positive = { net = "mid" }'))
    assert found == [
        "board.toml:3: rails.main.positive: a net is taken by a stage's voltage fields only, not here"
    ]


def test_a_ratiometric_net_naming_an_unknown_rail():
    text = SHARED.format(low='{ net = "mid" }').replace('value = "2.5 2%"', 'rail = "mian"\nfraction = "0.5"')
    found = problems(text)
    assert found == ["board.toml:6: nets.mid.rail: no rails named 'mian'; expected one of main"]


@pytest.mark.parametrize("fraction", ['"1.5"', '"0"', '"half"', '"0.5 two%"'])
def test_a_bad_fraction(fraction):
    text = SHARED.format(low='{ net = "mid" }').replace(
        'value = "2.5 2%"', f'rail = "main"\nfraction = {fraction}'
    )
    found = problems(text)
    assert len(found) == 1 and found[0].startswith(
        "board.toml:7: nets.mid.fraction: expected a divider's ratio"
    )


def test_a_net_both_fixed_and_ratiometric():
    text = SHARED.format(low='"0"').replace('value = "2.5 2%"', 'value = "2.5"\nrail = "main"')
    assert problems(text) == [
        "board.toml:5: nets.mid: a net is fixed (value) or ratiometric (rail and fraction), not both"
    ]


def test_too_many_shared_values_fall_back_to_an_outside_bound_with_a_caution():
    # nine fixed nets, each with a tolerance: past the 8 joint corners walked one by one
    nets = "".join(f'[nets.n{i}]\nvalue = "1 1%"\n' for i in range(9))
    stages = "".join(
        f'[[stage]]\nname = "s{i}"\nblock = "inverting"\npart = "plain"\nrin = "10k"\nrf = "10k"\n'
        f'ref = {{ net = "n{i}" }}\n'
        for i in range(9)
    )
    text = f'format = 1\n[rails.main]\npositive = "12"\nnegative = "-12"\n{nets}[source]\nlevel = ["0", "0"]\n{stages}'
    result = analyse(chain_from_text(text), PARTS, design_aids=False, headroom=False)
    assert any("9 shared values vary" in c for c in result.cautions)
    fewer = text.replace('[nets.n8]\nvalue = "1 1%"', '[nets.n8]\nvalue = "1"')
    assert not analyse(chain_from_text(fewer), PARTS, design_aids=False, headroom=False).cautions


def statistical_top(tolerance: str, high: str, method: str) -> float:
    return top_margin(ratiometric_chain(tolerance, high, method))


@pytest.mark.parametrize("method", ["rss", "montecarlo"])
def test_the_statistical_methods_share_the_net_and_its_rail_with_every_stage(method):
    # one column per net and the rail's own column: the ratiometric window keeps its room at
    # any rail tolerance (the draws differ between the two files: the 5 % file has the rail
    # columns more, so Monte Carlo's 0.1 % percentile of the offset's share moves by a few uV)
    ratio_0, ratio_5 = (statistical_top(t, '{ net = "half" }', method) for t in ("0%", "5%"))
    assert ratio_0 == pytest.approx(ratiometric_top(5.0), abs=1e-5)
    assert ratio_5 == pytest.approx(ratio_0, abs=2e-5)
    fixed_0, fixed_5 = (statistical_top(t, '"2.5"', method) for t in ("0%", "5%"))
    # the fixed top loses up to 0.125 V (rss: nominal - 3 sigma capped at the extreme value;
    # Monte Carlo: the rail's 0.1 % percentile)
    assert fixed_0 - fixed_5 > 0.1


def test_the_json_report_lists_the_nets_with_their_spans():
    from railroom.engine.reports.json_report import chain_report

    text = ratiometric_chain("5%", '{ net = "half" }')
    report = chain_report(analyse(chain_from_text(text), PARTS, design_aids=False, headroom=False))
    # half: 0.5 x 5 V (1 -/+ 5 %) = [2.375, 2.625]; quarter: 0.25 x the same
    assert report["nets"] == [
        {
            "name": "quarter",
            "kind": "ratiometric",
            "rail": "converter",
            "fraction": 0.25,
            "nominal": 1.25,
            "span": [1.1875, 1.3125],
            "stages": [1],
        },
        {
            "name": "half",
            "kind": "ratiometric",
            "rail": "converter",
            "fraction": 0.5,
            "nominal": 2.5,
            "span": [2.375, 2.625],
            "stages": [2],
        },
    ]


def test_rss_never_quotes_a_margin_below_the_corners_of_a_ratiometric_product():
    # the bias stage's + input sits at 0.25 (1 +/- 1 %) x V (1 +/- 5 %); its room to the top of
    # the input range is V - 0.25 f V, least at V low and f high: 0.75 V_lo - 0.25 x 0.01 x V_lo.
    # The linear model's extreme adds the cross term 0.25 x 0.01 x 0.05 x 5 V = 0.6 mV more,
    # which no circuit reaches: rss quotes the corners' margin there (the README: rss never
    # reports a margin smaller than corners)
    text = ratiometric_chain("5%", '{ net = "half" }').replace('fraction = "0.25"', 'fraction = "0.25 1%"')
    corners = analyse(chain_from_text(text), PARTS, design_aids=False, headroom=False)
    rss = analyse(chain_from_text(text), PARTS, method="rss", design_aids=False, headroom=False)
    exact = 4.75 - 0.25 * 1.01 * 4.75  # the + input sits at ref: the offset moves no common mode
    assert corners.stages[0].margins["input-high"] == pytest.approx(exact, abs=1e-9)
    for worst, statistical in zip(corners.stages, rss.stages):
        for check, margin in worst.margins.items():
            assert statistical.margins[check] >= margin - 1e-12, (worst.index, check)


def test_the_markdown_report_lists_the_nets_in_its_conditions():
    from railroom.engine.reports.markdown import markdown_report

    text = ratiometric_chain("5%", '{ net = "half" }')
    report = markdown_report(analyse(chain_from_text(text), PARTS, design_aids=False, headroom=False))
    # 0.25 x 5 V (1 -/+ 5 %) and 0.5 x the same
    assert (
        "| nets | quarter: 0.25 x converter +, 1.19 V to 1.31 V; half: 0.5 x converter +, 2.38 V to 2.62 V |"
        in report
    )
