"""A passive stage feeding several stages (issue 13, real boards, item 1) against the whole-chain
netlist (references/chain_netlist.py, which imports nothing of railroom) and Millman's theorem
(a node's voltage is the conductance-weighted mean of what its branches return to; Horowitz &
Hill, The Art of Electronics, ch. 1): every stage meets the passive node loaded by all of them."""

from __future__ import annotations

import numpy as np
import pytest

from references.chain_netlist import Stage, dc, response
from references.test_branches_reference import HEAD, PRECISION, analysed

# 1 V (+/- 0.5 V, +/- 1 V peak) into a 10k/10k divider feeding two inverting stages, rin 10k each
# (rf 20k, ref 0; rf 10k, ref 1 V) and a follower (draws nothing but its pins' bias current).
TWO = (
    HEAD.format(lo="-0.5", hi="0.5", amp="1")
    + """
[[stage]]
name = "half"
block = "divider"
top = "10k"
bottom = "10k"
[[stage]]
name = "left"
block = "inverting"
part = "generic-precision"
rin = "10k"
rf = "20k"
[[stage]]
name = "right"
block = "inverting"
part = "generic-precision"
from = "half"
rin = "10k"
rf = "10k"
ref = "1"
[[stage]]
name = "watch"
block = "follower"
part = "generic-precision"
from = "half"
"""
)


def netlist(op=PRECISION) -> list[Stage]:
    return [
        Stage("divider", {"top": 10e3, "bottom": 10e3}),
        Stage("inverting", {"rin": 10e3, "rf": 20e3}, opamp=op),
        Stage("inverting", {"rin": 10e3, "rf": 10e3, "ref": 1.0}, opamp=op, feed=0),
        Stage("follower", opamp=op, feed=0),
    ]


def millman(vin: float) -> float:
    """The divider's node by hand: 10k from vin, 10k to 0 V, 10k to each virtual earth (0 V and
    1 V): V = (vin + 0 + 0 + 1) / 4 (all four conductances alike)."""
    return (vin / 10e3 + 0.0 / 10e3 + 0.0 / 10e3 + 1.0 / 10e3) / (4 / 10e3)


def test_the_netlist_and_millman_agree():
    stages = netlist()
    for vin in (-0.5, 0.5):
        node = millman(vin)
        found = dc(stages, vin)
        assert found[3] == pytest.approx(node, abs=1e-5)  # the follower shows the node
        assert found[1] == pytest.approx(-2 * node, abs=1e-5)
        assert found[2] == pytest.approx(1.0 - (node - 1.0), abs=1e-5)


@pytest.mark.parametrize("method", ["corners", "rss", "montecarlo"])
def test_every_stage_on_the_divider_meets_the_node_all_of_them_load(tmp_path, method):
    result, _ = analysed(tmp_path, TWO, method)
    stages = netlist()
    freqs = np.geomspace(100, 1e3, 40)
    gains = [float(np.max(np.abs(r))) for r in response(stages, freqs)]
    for k, stage in enumerate(result.stages):
        lows = [dc(stages, level)[k] - gains[k] for level in (-0.5, 0.5)]
        highs = [dc(stages, level)[k] + gains[k] for level in (-0.5, 0.5)]
        low, high = stage.measure.output
        name = stage.measure.stage.name
        # never optimistic, and wider only by the offsets and bias currents (< 1 mV here)
        assert low <= min(lows) + 1e-6 and high >= max(highs) - 1e-6, (method, name, low, high)
        assert low >= min(lows) - 1e-3 and high <= max(highs) + 1e-3, (method, name, low, high)
    # by hand: the node spans (-0.5 + 1) / 4 - 1/4 .. (0.5 + 1) / 4 + 1/4 = -0.125 .. 0.625 V,
    # so "left" (x -2) spans -1.25 .. 0.25 V; before, each stage met the divider's Thevenin
    # source alone (5k behind vin / 2) and "left" read -2 x 10k / 15k x 1 V = -1.333 V
    left = result.stages[1].measure.output
    assert left == pytest.approx((-1.25, 0.25), abs=1e-3)


def test_the_per_draw_reference_agrees_with_the_draw_walk(tmp_path):
    from railroom.engine.benchmark import figures as bench
    from railroom.engine.benchmark import per_draw
    from railroom.engine.methods import corners, montecarlo
    from railroom.engine.walks import circuit_walk as dw
    from railroom.engine.walks.preparation import band_grid, plan_chain
    from railroom.engine.formats.chain_file import chain_from_text
    from railroom.engine.formats.presets import load_library, search_order

    text = TWO.replace('"10k"', '"10k 1%"').replace('rf = "20k"', 'rf = "20k 1%"')
    chain = chain_from_text(text)
    parts = load_library(search_order()).parts
    plans = plan_chain(chain, parts)
    freqs = band_grid(chain, plans)
    layout = montecarlo.layout_for(chain, plans, freqs, corners.walk(corners.prepare(chain, plans, freqs)))
    D, dT = next(montecarlo.chunks(layout, 30, 5, chunk=30))
    vector = dw.walk_draws(layout, D, dT)
    reference = per_draw.run_draws(layout, D, dT)
    assert bench.agree(vector, reference)
    # and in one drawn circuit the follower shows the node by Millman, each resistor its own
    row = 0
    value = {}
    for stage, field in ((1, "top"), (1, "bottom"), (2, "rin"), (3, "rin")):
        column = layout.column(stage, field, "tolerance")
        value[(stage, field)] = 10e3 * (1 + 0.01 * D[row, column])
    g = [1 / value[(1, "top")], 1 / value[(1, "bottom")], 1 / value[(2, "rin")], 1 / value[(3, "rin")]]
    top_dc = 0.5 + 1.0  # the source's highest level plus its peak
    node = (top_dc * g[0] + 1.0 * g[3]) / sum(g)
    # the follower shows the node's top, plus at most the offsets and bias currents and the
    # others' finite gain (their - pins move by Vout / A: |Zk| kappa max|Vth|, about 0.3 mV here,
    # sibling_loads.finite_gain)
    follower_high = vector[3].out_hi[row]
    assert node - 1e-6 <= follower_high <= node + 5e-4


def test_a_rc_lowpass_beside_another_stage_is_refused_located(tmp_path):
    from railroom.engine.circuit.model import InputError

    text = TWO.replace(
        '[[stage]]\nname = "watch"\nblock = "follower"\npart = "generic-precision"\n',
        '[[stage]]\nname = "watch"\nblock = "rc_lowpass"\nr = "1k"\nc = "1n"\n',
    )
    with pytest.raises(InputError) as err:
        analysed(tmp_path, text)
    problem = err.value.problems[0]
    assert problem.field == "stage.4.from" and "follows the signal or blocks DC" in problem.message
    assert problem.line is not None


def test_the_gains_from_the_source_read_the_loaded_node(tmp_path):
    # the node per volt of the source is 1/4 (Millman, above): "left" -2 x 1/4, "right" and
    # "watch" 1 x 1/4 (the generic-precision part's finite gain moves the 4th figure at most)
    result, _ = analysed(tmp_path, TWO)
    found = [s.measure.gain_from_source["dc"][1] for s in result.stages]
    assert found == pytest.approx([0.25, 0.5, 0.25, 0.25], rel=1e-5)


@pytest.mark.parametrize("stage", [1, 2])
def test_a_fix_on_a_stage_beside_another_holds_when_checked_again(tmp_path, stage):
    # "left" with rf 300k reads -30 x 0.625 = -18.75 V (past the 15 V rail), or
    # "right" with rf 200k: 1 + 20 (1 - (-0.125)) = 23.5 V: each gets a resistor fix, re-checked
    # with the divider's node loaded by both (a change to one moves what the other meets)
    import re

    from railroom.engine.analysis import analyse
    from railroom.engine.formats.loading import load_checked

    names = {1: "left", 2: "right"}
    head, tail = TWO.split(f'name = "{names[stage]}"')
    old = 'rf = "20k"' if stage == 1 else 'rf = "10k"'
    new = 'rf = "300k"' if stage == 1 else 'rf = "200k"'
    text = head + f'name = "{names[stage]}"' + tail.replace(old, new, 1)
    path = tmp_path / "chain.toml"
    path.write_text(text, encoding="utf-8")
    chain, library = load_checked(str(path))
    before = analyse(chain, library.parts)
    failing = before.stages[stage]
    assert not failing.go
    fixes = [f for f in failing.fixes if f.field in ("rf", "rin")]
    assert fixes
    for fix in fixes:
        head, tail = text.split(f'name = "{names[stage]}"')
        tail = re.sub(rf'{fix.field} = "[^"]+"', f'{fix.field} = "{fix.value:g}"', tail, count=1)
        path.write_text(head + f'name = "{names[stage]}"' + tail, encoding="utf-8")
        chain, library = load_checked(str(path))
        after = analyse(chain, library.parts, design_aids=False)
        assert after.stages[stage].go and all(s.go for s in after.stages), fix.text


@pytest.mark.parametrize(
    "block, fields, values",
    [
        ("rc_lowpass", 'r = "10k"\nc = "10n"\n', {"r": 10e3, "c": 10e-9}),
        ("ac_coupling", 'c = "100n"\nr = "10k"\n', {"c": 100e-9, "r": 10e3}),
    ],
)
@pytest.mark.parametrize("method", ["corners", "montecarlo"])
def test_a_low_pass_or_a_coupling_feeding_two_meets_the_netlist(tmp_path, block, fields, values, method):
    # the Thevenin impedance is complex here (the capacitor): each stage meets Z / (1 + Z G) per
    # frequency; corner 1.6 kHz (low-pass) or 159 Hz (coupling) inside or near the 100 Hz-1 kHz band
    text = TWO.replace('block = "divider"\ntop = "10k"\nbottom = "10k"\n', f'block = "{block}"\n{fields}')
    result, _ = analysed(tmp_path, text, method)
    stages = [Stage(block, values), *netlist()[1:]]
    freqs = np.geomspace(100, 1e3, 200)
    gains = [np.abs(r) for r in response(stages, freqs)]
    for k, stage in enumerate(result.stages):
        lows = [dc(stages, level)[k] - float(np.max(gains[k])) for level in (-0.5, 0.5)]
        highs = [dc(stages, level)[k] + float(np.max(gains[k])) for level in (-0.5, 0.5)]
        low, high = stage.measure.output
        name = stage.measure.stage.name
        # never optimistic; the DC-plus-peak bounds of a stage whose gain moves over the band
        # are outside ones (signal_bounds.py), here within 5 % of the span
        width = max(highs) - min(lows)
        assert low <= min(lows) + 1e-6 and high >= max(highs) - 1e-6, (block, method, name, low, high)
        assert low >= min(lows) - 0.05 * width and high <= max(highs) + 0.05 * width, (block, name)


def test_with_tolerances_the_corners_hold_every_corner_of_the_netlist(tmp_path):
    # 1 % resistors: the netlist solved at every corner of the five (2^5 x both source levels,
    # the AC peak added by superposition) stays inside the engine's spans, which are wider by
    # at most the offsets, the bias currents and the others' finite gain (< 1 mV) plus the
    # enumeration of the others' conductance at its ends (a few mV here)
    import itertools

    text = TWO.replace('"10k"', '"10k 1%"').replace('rf = "20k"', 'rf = "20k 1%"')
    result, _ = analysed(tmp_path, text)
    freqs = np.geomspace(100, 1e3, 20)
    lows, highs = [np.inf] * 4, [-np.inf] * 4
    for signs in itertools.product((-1, 1), repeat=6):
        top, bottom, rin1, rf1, rin2, rf2 = (
            n * (1 + 0.01 * d) for n, d in zip((10e3, 10e3, 10e3, 20e3, 10e3, 10e3), signs)
        )
        stages = [
            Stage("divider", {"top": top, "bottom": bottom}),
            Stage("inverting", {"rin": rin1, "rf": rf1}, opamp=PRECISION),
            Stage("inverting", {"rin": rin2, "rf": rf2, "ref": 1.0}, opamp=PRECISION, feed=0),
            Stage("follower", opamp=PRECISION, feed=0),
        ]
        gains = [float(np.max(np.abs(r))) for r in response(stages, freqs)]
        for level in (-0.5, 0.5):
            for k, out in enumerate(dc(stages, level)):
                lows[k], highs[k] = min(lows[k], out - gains[k]), max(highs[k], out + gains[k])
    for k, stage in enumerate(result.stages):
        low, high = stage.measure.output
        assert low <= lows[k] + 1e-6 and high >= highs[k] - 1e-6, (k, low, high, lows[k], highs[k])
        assert low >= lows[k] - 0.02 and high <= highs[k] + 0.02, (k, low, high, lows[k], highs[k])


def test_the_loaders_list_of_inputs_that_cannot_share_is_what_the_blocks_report():
    # sibling_loads.NOT_SHARING (read by the loader) against each block's own InputLoad
    from railroom.engine.circuit.blocks import BLOCKS
    from railroom.engine.circuit.opamp import inverse_open_loop, laplace_grid
    from railroom.engine.walks.sibling_loads import NOT_SHARING

    s = laplace_grid(np.array([100.0]))
    starter = {"resistance": 1e4, "capacitance": 1e-8, "voltage": 1.0, "frequency": 1e3}
    found = set()
    for name, block in BLOCKS.items():
        if block.saturates:
            continue
        v = {
            key: np.array([[float(spec.default if not spec.required else starter.get(spec.kind, 1.0))]])
            for key, spec in block.fields.items()
            if spec.kind not in ("flag", "inputs") and (spec.required or spec.default is not None)
        }
        load = block.respond(v, s, inverse_open_loop(None, s), 0.0, False).input_load
        if load.follows or load.blocks_dc:
            found.add(name)
    assert found == NOT_SHARING
