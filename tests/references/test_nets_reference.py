"""Named DC nets against the whole-chain nodal reference (references/chain_netlist.py, which
imports nothing of railroom): a net is ONE source shared by every stage that names it.

The chain: an inverting stage about the fixed net `mid`, a non-inverting stage whose rg returns
to the ratiometric net `half` (0.5 of the rail), and a summer with a fixed input from `mid`. At
DC the engine's corners are exact (walks/signal_bounds.py), so each stage's span must equal the
extremes of the netlist over every joint corner: each toleranced resistor, the source level,
mid's two ends, half's fraction and its rail at both ends, each net the same in every stage.
"""

from __future__ import annotations

import itertools

import pytest

from references.chain_netlist import Net, OpAmp, Stage, dc, ratiometric
from railroom.engine.analysis import analyse
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.circuit.model import Part

A0 = 1e5
PART = Part(
    id="exact-dc",
    description="no offset, no bias: the nets and resistors alone move the outputs",
    supply=(2.0, 60.0),
    supply_abs_max=60.0,
    output_headroom=(0.1, 0.1),
    output_resistance=0.0,
    input_headroom=(0.0, 0.0),
    gbw=1e6,
    slew=1e6,
    open_loop_gain=A0,
    offset=0.0,
    offset_drift=0.0,
    bias_current=0.0,
    output_current=0.05,
)

CHAIN = """format = 1
[rails.main]
positive = "24"
negative = "-24"
[rails.logic]
positive = "5"
negative = "0"
tolerance = "5%"
[nets.mid]
value = "2.5 2%"
[nets.half]
rail = "logic"
fraction = "0.5 1%"
[source]
level = ["0", "0.5"]
[[stage]]
name = "shift"
block = "inverting"
part = "exact-dc"
rails = "main"
rin = "10k 1%"
rf = "10k 1%"
ref = { net = "mid" }
[[stage]]
name = "gain"
block = "noninverting"
part = "exact-dc"
rails = "main"
rf = "10k"
rg = "10k 1%"
ref = { net = "half" }
[[stage]]
name = "sum"
block = "summing"
part = "exact-dc"
rails = "main"
rin = "10k"
rf = "10k"
inputs = [{ r = "10k", v = { net = "mid" } }]
"""


def netlist_spans() -> list[tuple[float, float]]:
    """Each stage's DC extremes over every joint corner, by brute force on the netlist."""
    outs: list[list[float]] = [[], [], []]
    ends = (-1, 1)
    for level, d_rin, d_rf, d_rg, d_mid, d_frac, d_rail in itertools.product((0.0, 0.5), *[ends] * 6):
        op = OpAmp(A0)
        stages = [
            Stage(
                "inverting",
                {"rin": 10e3 * (1 + 0.01 * d_rin), "rf": 10e3 * (1 + 0.01 * d_rf), "ref": Net("mid")},
                opamp=op,
            ),
            Stage("noninverting", {"rf": 10e3, "rg": 10e3 * (1 + 0.01 * d_rg), "ref": Net("half")}, opamp=op),
            Stage("summing", {"rin": 10e3, "rf": 10e3, "inputs": [(10e3, Net("mid"))]}, opamp=op),
        ]
        nets = {
            "mid": 2.5 * (1 + 0.02 * d_mid),
            "half": ratiometric(0.5 * (1 + 0.01 * d_frac), 5.0 * (1 + 0.05 * d_rail)),
        }
        for k, v in enumerate(dc(stages, level, nets=nets)):
            outs[k].append(v)
    return [(min(o), max(o)) for o in outs]


def test_the_netlist_shares_one_source_per_net():
    # hand analysis with an ideal op amp (A0 -> infinity): shift = 2 mid - in, gain = 2 shift
    # - half, sum = -gain - mid (inverting amplifier about a reference and the summing
    # amplifier, Horowitz & Hill, The Art of Electronics, 3rd ed., 4.2 [memory])
    stages = [
        Stage("inverting", {"rin": 10e3, "rf": 10e3, "ref": Net("mid")}),
        Stage("noninverting", {"rf": 10e3, "rg": 10e3, "ref": Net("half")}),
        Stage("summing", {"rin": 10e3, "rf": 10e3, "inputs": [(10e3, Net("mid"))]}),
    ]
    shift, gain, total = dc(stages, 0.5, nets={"mid": 2.5, "half": 2.5})
    assert shift == pytest.approx(4.5, abs=1e-9)
    assert gain == pytest.approx(6.5, abs=1e-9)
    assert total == pytest.approx(-9.0, abs=1e-9)


def test_corners_with_shared_nets_equal_the_netlist_over_every_joint_corner():
    chain = chain_from_text(CHAIN)
    result = analyse(chain, {"exact-dc": PART}, design_aids=False, headroom=False)
    truth = netlist_spans()
    for stage, (low, high) in zip(result.stages, truth):
        assert stage.regime == "linear"
        assert stage.measure.output[0] == pytest.approx(low, abs=1e-9)
        assert stage.measure.output[1] == pytest.approx(high, abs=1e-9)


def test_each_drawn_circuit_reads_one_value_per_net_like_the_netlist():
    # rss and Monte Carlo walk drawn circuits (circuit_walk): each net and the rail it follows is
    # one column, so a row set at the joint corners is the netlist's circuit there
    import numpy as np

    from railroom.engine.walks import circuit_walk as dw
    from railroom.engine.walks.preparation import band_grid
    from railroom.engine.methods import corners, montecarlo
    from railroom.engine.walks.preparation import plan_chain

    chain = chain_from_text(CHAIN.replace('level = ["0", "0.5"]', 'level = ["0.5", "0.5"]'))
    plans = plan_chain(chain, {"exact-dc": PART})
    freqs = band_grid(chain, plans)
    layout = montecarlo.layout_for(chain, plans, freqs, corners.walk(corners.prepare(chain, plans, freqs)))
    columns = [
        (1, "rin", "tolerance"),
        (1, "rf", "tolerance"),
        (2, "rg", "tolerance"),
        (None, "nets.mid", "tolerance"),
        (None, "nets.half", "tolerance"),
        (None, "rails.logic.positive", "rail"),
    ]
    rows = list(itertools.product((-1, 1), repeat=len(columns)))
    D = np.zeros((len(rows), len(layout.variables)))
    for j, signs in enumerate(rows):
        for (stage, name, kind), d in zip(columns, signs):
            D[j, layout.column(stage, name, kind)] = d
    # no other column moves a value here: the part has no offset or bias
    assert len(layout.variables) == len(columns) + 1  # and the logic rail's negative (0 V)
    walked = dw.walk_draws(layout, D, np.zeros(len(rows)))
    op = OpAmp(A0)
    for j, (d_rin, d_rf, d_rg, d_mid, d_frac, d_rail) in enumerate(rows):
        stages = [
            Stage(
                "inverting",
                {"rin": 1e4 * (1 + 0.01 * d_rin), "rf": 1e4 * (1 + 0.01 * d_rf), "ref": Net("mid")},
                opamp=op,
            ),
            Stage("noninverting", {"rf": 1e4, "rg": 1e4 * (1 + 0.01 * d_rg), "ref": Net("half")}, opamp=op),
            Stage("summing", {"rin": 1e4, "rf": 1e4, "inputs": [(1e4, Net("mid"))]}, opamp=op),
        ]
        nets = {
            "mid": 2.5 * (1 + 0.02 * d_mid),
            "half": ratiometric(0.5 * (1 + 0.01 * d_frac), 5 * (1 + 0.05 * d_rail)),
        }
        for k, want in enumerate(dc(stages, 0.5, nets=nets)):
            assert walked[k].out_hi[j] == pytest.approx(want, abs=1e-9)
