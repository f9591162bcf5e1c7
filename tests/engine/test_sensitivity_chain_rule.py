"""The one-pass linearisation (engine/sensitivity.walk_linearised) against plain central
differences over the whole chain and against the inverting amplifier's closed form.

Plain central differences: every column d_i at +/-h in its own row of one whole-chain walk,
(m(+h) - m(-h)) / 2h (any numerical analysis text: Burden & Faires, Numerical Analysis, 9th ed.,
section 4.1). Where a margin sits on a kink within the step (a max of two nearly equal terms),
central differences with h and with h / 10 disagree, and no two schemes need agree: those
entries (of either scheme: the one-pass walk steps along directions that mix columns) are left
out and counted (a handful at most).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

import railroom
from railroom.engine.walks import circuit_walk as dw
from railroom.engine.aids import sensitivity as sv
from railroom.engine.walks.preparation import band_grid
from railroom.engine.benchmark.figures import PARTS, long_chain_text
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.methods import corners
from railroom.engine.circuit.model import Part
from railroom.engine.walks.preparation import plan_chain

ROOT = Path(__file__).resolve().parents[2]
CHAINS = sorted([*(ROOT / "engine" / "demos").glob("*.toml"), *(ROOT / "tests" / "chains").glob("*.toml")])
AGREE = 2e-6  # of the gradient's sum of magnitudes: central differences are O(h^2) = 1e-6; the
# one pass's directions through filters_rss.toml (clipping at every stage) differ by 1.45e-6 on
# the integrator's current since an MFB input draws max |1 - T_A| / r1 (filters.through_r1)
STEADY = 1e-6  # an entry that moves more than this when h is cut tenfold sits at a kink


def layout_of(chain, parts) -> dw.Layout:
    plans = plan_chain(chain, parts)
    freqs = band_grid(chain, plans)
    prepared = corners.prepare(chain, plans, freqs)
    return dw.build_layout(chain, plans, freqs, prepared, corners.walk(prepared))


def plain(layout: dw.Layout, h: float) -> list[dict[str, np.ndarray]]:
    """Per stage, every quantity's (nominal, gradient) by one whole-chain walk."""
    K = len(layout.variables)
    D = np.zeros((2 * K + 1, K))
    D[1 + 2 * np.arange(K), np.arange(K)] = h
    D[2 + 2 * np.arange(K), np.arange(K)] = -h
    walked = dw.walk_draws(
        dw.signed_rows(layout), D, np.full(2 * K + 1, layout.chain.conditions.worst_temperature_rise)
    )
    return [
        {q: np.concatenate([x[:1], (x[1::2] - x[2::2]) / (2 * h)]) for q, x in flat(d).items()}
        for d in walked
    ]


def flat(draws: dw.StageDraws) -> dict[str, np.ndarray]:
    found = {"out-low": draws.out_lo, "out-high": draws.out_hi}
    found.update({f"stage {c}": x for c, x in draws.margins.items()})
    for j, amp in enumerate(draws.amps):
        for name, x in amp.items():
            if name == "spans":
                found.update({f"amp {j} {s}": y for s, y in x.items()})
            else:
                found[f"amp {j} {name}"] = x
    return found


def compare(layout: dw.Layout, monkeypatch) -> tuple[float, int, int]:
    """(worst disagreement, entries compared, entries left out at a kink)."""
    ours = [flat(d) for d in sv.walk_linearised(layout)]
    with monkeypatch.context() as m:
        m.setattr(sv, "DIRECTION_STEP", sv.STEP / 10)
        ours_fine = [flat(d) for d in sv.walk_linearised(layout)]
    coarse, fine = plain(layout, sv.STEP), plain(layout, sv.STEP / 10)
    worst, compared, kinks = 0.0, 0, 0
    for mine, mine_fine, theirs, finer in zip(ours, ours_fine, coarse, fine, strict=True):
        assert mine.keys() == theirs.keys()
        for q, x in theirs.items():
            assert mine[q][0] == x[0], q  # the nominal row is the same walk
            scale = float(np.abs(x[1:]).sum()) + 1e-12 * (1.0 + abs(x[0]))
            error = np.abs(mine[q][1:] - x[1:]) / scale
            converged = (np.abs(finer[q][1:] - x[1:]) / scale <= STEADY) & (
                np.abs(mine_fine[q][1:] - mine[q][1:]) / scale <= STEADY
            )
            kinks += int((~converged).sum())
            compared += int(converged.sum())
            worst = max(worst, float(error[converged].max(initial=0.0)))
    return worst, compared, kinks


@pytest.mark.parametrize("path", CHAINS, ids=lambda p: p.name)
def test_one_pass_equals_plain_differences_on_every_chain(path, monkeypatch):
    chain = railroom.load(str(path))
    if not sv.in_one_line(chain):
        # a tree (`from`) or named nets: linearise never takes the one pass for these
        layout = layout_of(chain, railroom.parts_for(chain))
        monkeypatch.setattr(sv, "PLAIN_UP_TO", 0)
        monkeypatch.setattr(sv, "walk_linearised", None)  # would fail if called
        assert sv.linearise(layout).draws
        return
    worst, compared, kinks = compare(layout_of(chain, railroom.parts_for(chain)), monkeypatch)
    assert compared > 100
    assert worst <= AGREE
    assert kinks <= 0.03 * compared


@pytest.mark.parametrize("failing", [False, True])
def test_one_pass_equals_plain_differences_on_a_long_chain(failing, monkeypatch):
    # twelve stages of followers, inverting stages and RC low-passes (the passive stage's
    # impedance drives the next stage: part of the state carried); with one clipping stage
    chain = chain_from_text(long_chain_text(12, failing), "<test>")
    worst, compared, kinks = compare(layout_of(chain, PARTS), monkeypatch)
    assert compared > 1000
    assert worst <= AGREE
    # with the clipping stage, the stages after it are fed its clip level (the rails less the
    # headroom: bounds_walk.clip_window) and clip at that same level themselves: two clamps
    # tie, a kink where neither difference converges (284 of 9159 entries, all in stages fed the
    # clipped signal)
    assert kinks <= (0.04 * (compared + kinks) if failing else 0)


IDEAL = Part(
    id="ideal",
    description="",
    supply=(1.0, 100.0),
    supply_abs_max=100.0,
    output_headroom=(1.5, 1.5),
    output_resistance=0.0,
    input_headroom=(0.5, 0.5),
    gbw=1e12,
    slew=1e12,
    open_loop_gain=1e12,
    offset=0.0,
    offset_drift=0.0,
    bias_current=0.0,
    output_current=1.0,
)
GAIN_CHAIN = """format = 1
[conditions]
temperature = [25, 25]
[rails.main]
positive = "15"
negative = "-15"
tolerance = "5%"
[source]
level = ["-0.5", "0.5"]
amplitude = "0.25"
band = ["10", "100"]
[[stage]]
name = "buffer"
block = "follower"
part = "ideal"
[[stage]]
name = "gain"
block = "inverting"
part = "ideal"
rin = "10k 1%"
rf = "40k 1%"
[[stage]]
name = "last buffer"
block = "follower"
part = "ideal"
"""


def test_gradient_through_the_chain_is_the_inverting_gain_formula():
    # The last follower's output-high margin m = 15 (1 + 0.05 d_r) - 1.5 - V_hi, with the
    # inverting stage's output V_hi = (Rf / Rin) x 0.75 V (ideal op amp, gain -Rf/Rin: Horowitz
    # & Hill, The Art of Electronics, 3rd ed., section 4.2.3). Rf = 40k (1 + 0.01 d_f):
    # dm/dd_f = -0.01 x 4 x 0.75 = -0.03 V; Rin = 10k (1 + 0.01 d_i): dm/dd_i = +0.03 V (to
    # O(h^2)); the rail: dm/dd_r = 15 x 0.05 = 0.75 V. None of the gain's columns is the last
    # stage's own: they reach it only through the signal it is fed.
    layout = layout_of(chain_from_text(GAIN_CHAIN, "<test>"), {"ideal": IDEAL})
    lin = sv.linearise(layout)  # (few columns: the plain walk) and the one pass itself
    for draws in (lin.draws, sv.walk_linearised(layout)):
        m = draws[2].margins["output-high"]
        assert lin.nominal(m) == pytest.approx(15 - 1.5 - 3.0, abs=1e-9)
        g = dict(zip(((v.label, v.kind) for v in layout.variables), lin.gradient(m)))
        assert g[("stage.2.rf", "tolerance")] == pytest.approx(-0.03, rel=1e-6)
        assert g[("stage.2.rin", "tolerance")] == pytest.approx(0.03, rel=1e-6)
        assert g[("rails.main.positive", "rail")] == pytest.approx(0.75, rel=1e-9)
        assert g[("rails.main.negative", "rail")] == 0.0


def test_rows_walked_per_stage_do_not_grow_with_the_chain(monkeypatch):
    # The cost claim without a clock: the rows each stage is walked on do not grow with the
    # stages upstream (the plain walk's grow with every column: 2K + 1). One state direction
    # whose singular value sits within rounding of RANK_TOL may be kept or dropped depending on
    # the LAPACK build (seen: 21 rows at 12 stages and 23 at 48 with numpy 2.4.6), so the bound
    # allows that one direction (2 rows) and no more; growth with the chain would add dozens.
    seen: list[int] = []
    real = dw.stage_values

    def counting(layout, plan, D, dT):
        seen.append(D.shape[0])
        return real(layout, plan, D, dT)

    monkeypatch.setattr(dw, "stage_values", counting)
    most = {}
    for n in (12, 48):
        seen.clear()
        layout = layout_of(chain_from_text(long_chain_text(n), "<test>"), PARTS)
        sv.walk_linearised(layout)
        most[n] = max(seen)
    assert most[48] <= most[12] + 2
    assert 4 * most[48] < 2 * len(layout.variables) + 1


def test_mirror_image_checks_limit_in_the_checks_order():
    # +/-15 V rails of one tolerance and a source centred on 0 V: each follower's and inverting
    # stage's input-high and input-low margins are mirror images (equal but for rounding under
    # rss, whose chain-rule sums run in another order for each), so the first of them in the
    # checks' order limits, on every stage (rounding alone picked input-low on 14 of 36)
    from railroom.engine.analysis import analyse

    result = analyse(chain_from_text(long_chain_text(48), "<test>"), PARTS, method="rss")
    active = [s for s in result.stages if s.limiting is not None]
    assert len(active) == 36
    for stage in active:
        assert stage.margins["input-high"] == pytest.approx(stage.margins["input-low"], rel=1e-10)
        assert stage.limiting == "input-high"


def test_a_margin_nothing_moves_has_no_ranking():
    # The Schmitt trigger fed by the comparator: its input-high margin is rail - headroom - the
    # comparator's high level (rail - its own headroom), so the rail cancels and no quantity
    # moves it; the chain rule leaves rounding there, which is no effect
    chain = railroom.load(str(ROOT / "tests" / "chains" / "alarms_nogo.toml"))
    from railroom.engine.analysis import analyse

    result = analyse(chain, railroom.parts_for(chain))
    # with the gain's clip and the trigger's windows at one rail value (corners.rail_pinned_walks)
    # input-high has 131.7 mV and input-low 130.0 mV: the low level (0 V rail + 30 mV of output
    # headroom, through the divider) against the 0 V rail less 0.1 V; neither moves with anything
    assert result.stages[2].limiting == "input-low"
    assert result.stages[2].margins["input-low"] == pytest.approx(0.13, abs=1e-4)
    assert result.stages[2].sensitivity == ()
