"""What the walks keep between calls, and their lean form, change no answer.

The corners walk keeps per-Prepared structure (bounds_walk.WalkShape), the headroom search walks
lean (no limiting check, cautions or shown spans of passive stages), the refined band grid hands
its nominal walk to the analysis when it added no point, and the load currents of one worst
case run on floats. Each is checked here against the plain computation it replaces.
"""

from __future__ import annotations

import itertools
from pathlib import Path

import numpy as np
import pytest

from railroom.engine.api import load, parts_for
from railroom.engine.benchmark.figures import PARTS, reference_chain
from railroom.engine.methods import corners
from railroom.engine.verdict.margins import _float_maximum, _float_minimum, load_currents
from railroom.engine.circuit.blocks.base import InputLoad
from railroom.engine.walks.bounds_walk import walk_chain
from railroom.engine.walks.preparation import band_grid, frequency_grid, nominal_band, plan_chain

ROOT = Path(__file__).resolve().parents[2]
CHAINS = [
    ROOT / "engine/demos/mic_front_end.toml",  # ratiometric nets: joint walks
    ROOT / "engine/demos/bridge_sensor.toml",
    ROOT / "engine/demos/pump_vibration.toml",
    ROOT / "tests/chains/filters_rss.toml",
    ROOT / "tests/chains/alarms_nogo.toml",
]


def loaded(path: Path):
    chain = load(str(path))
    return chain, plan_chain(chain, parts_for(chain))


def test_float_extremes_are_numpys_bit_for_bit():
    # numpy's documented rules (numpy.maximum: "If one of the elements being compared is a NaN,
    # then that element is returned"); of equal values numpy returns the second, sign of zero too
    values = [0.0, -0.0, 1.0, -1.0, 2.5, np.nan, np.inf, -np.inf]
    for a, b in itertools.product(values, values):
        for ours, theirs in ((_float_maximum, np.maximum), (_float_minimum, np.minimum)):
            got, want = ours(a, b), float(theirs(a, b))
            assert np.isnan(got) == np.isnan(want)
            if not np.isnan(want):
                assert got == want and np.signbit(got) == np.signbit(want), (ours, a, b)


def test_load_currents_on_floats_equal_the_array_form():
    loads = (
        InputLoad(conductance=1e-4, returns=(-0.5, 1.25), pins=2e-9),
        InputLoad(conductance=2e-5, returns=(0.0, 0.0), follows=True),
        InputLoad(conductance=5e-5, blocks_dc=True, pins=1e-9),
    )
    for hi, lo, out_hi, out_lo in [(1e-3, -2e-3, 4.2, -3.1), (-0.0, 0.0, 0.0, -0.0), (0.0, 1e-6, -1.0, -2.0)]:
        floats = load_currents(hi, lo, out_hi, out_lo, loads)
        arrays = load_currents(*(np.array([x]) for x in (hi, lo, out_hi, out_lo)), loads)
        assert all(type(x) is float for x in floats)
        assert [float(x) for x in floats] == [float(x[0]) for x in arrays]


@pytest.mark.parametrize("path", CHAINS, ids=lambda p: p.stem)
def test_lean_walk_has_the_full_walks_margins(path):
    chain, plans = loaded(path)
    prepared = corners.prepare(chain, plans, band_grid(chain, plans))
    for scale in (0.0, 1.0, 10.0):
        full = corners.walk(prepared, scale=scale)
        lean = corners.walk(prepared, scale=scale, lean=True)
        assert [r.regime for r in lean] == [r.regime for r in full]
        assert [r.margins for r in lean] == [r.margins for r in full]
        assert [r.go for r in lean] == [r.go for r in full]
        assert all(r.limiting is None and r.cautions == () for r in lean)


@pytest.mark.parametrize("path", CHAINS, ids=lambda p: p.stem)
def test_walks_of_one_prepared_agree_with_a_fresh_one(path):
    # the second walk reads the structure the first one kept (WalkShape, node terms)
    chain, plans = loaded(path)
    freqs = band_grid(chain, plans)
    kept = corners.prepare(chain, plans, freqs)
    corners.walk(kept, scale=0.5)
    again = corners.walk(kept)
    fresh = corners.walk(corners.prepare(chain, plans, freqs))
    assert again == fresh
    assert any(key[0] == "shape" for p in (kept, *kept.joint_walks) for key in p.memo)


def test_nominal_band_hands_on_the_nominal_walk_only_when_the_grid_stands():
    chain = reference_chain()  # flat stages and first-order low-passes: no peak inside the band
    plans = plan_chain(chain, PARTS)
    grid, walked = nominal_band(chain, plans)
    assert walked is not None
    prepared, results = walked
    assert np.array_equal(prepared.freqs, grid)
    fresh = corners.walk(corners.prepare(chain, plans, grid, nominal=True), nominal=True)
    assert results == fresh
    # a chain whose filters peak inside the band gets more points, and no walk handed on
    chain, plans = loaded(ROOT / "tests/chains/filters_rss.toml")
    grid, walked = nominal_band(chain, plans)
    coarse = frequency_grid(chain, [], chain.source.amplitude)
    assert len(grid) > len(coarse) and walked is None


def test_walk_chain_lean_keeps_the_levels():
    chain, plans = loaded(ROOT / "tests/chains/filters_rss.toml")
    freqs = band_grid(chain, plans)
    prepared = corners.prepare(chain, plans, freqs, nominal=True)
    full: dict = {}
    lean: dict = {}
    walk_chain(prepared, corners.start_signal(chain, freqs), nominal=True, levels=full)
    walk_chain(prepared, corners.start_signal(chain, freqs), nominal=True, levels=lean, lean=True)
    assert full.keys() == lean.keys()
    for k in full:
        assert np.array_equal(full[k].hi, lean[k].hi) and np.array_equal(full[k].lo, lean[k].lo)


def test_node_bounds_of_a_negative_gain_are_the_formula_on_negated_signals():
    # the module docstring of signal_bounds: for g < 0, up = -lo and down = -hi
    from railroom.engine.circuit.blocks.base import Node
    from railroom.engine.walks.signal_bounds import Signal, single_bounds

    rng = np.random.default_rng(7)
    transfer = -(1.0 + rng.random((3, 6))) + 0.3j * rng.random((3, 6))
    transfer[:, 0] = transfer[:, 0].real  # DC first, real
    node = Node(transfers={"in": transfer, "ref": np.full((3, 6), 0.5 + 0j)})
    v = {"ref": np.full((3, 1), 1.2)}
    hi, lo = 1.0 + rng.random(5), -1.0 - rng.random(5)
    signal = Signal(hi=hi, lo=lo, amp_lo=0.1 * rng.random(5), amp_hi=0.2 + 0.1 * rng.random(5))
    error = np.array([[1e-3], [2e-3], [3e-3]])
    got = single_bounds(node, v, signal, error)
    g = transfer[:, :1].real
    gain, magnitude = np.abs(g), np.abs(transfer[:, 1:])
    a_sel = np.where(magnitude - gain >= 0, signal.amp_hi, signal.amp_lo)
    fixed = 0.5 * 1.2
    assert np.array_equal(got.lo, fixed - error + gain * -hi - (magnitude - gain) * a_sel)
    assert np.array_equal(got.hi, fixed + error + gain * -lo + (magnitude - gain) * a_sel)


def test_check_scales_are_check_scale_of_every_check():
    from railroom.engine.verdict.judge import check_scale, check_scales
    from railroom.engine.verdict.results import CHECK_TABLE

    chain = reference_chain()
    for plan in plan_chain(chain, PARTS):
        scales = check_scales(plan.part, plan.rails)
        assert scales == {c: check_scale(c, plan.part, plan.rails) for c in CHECK_TABLE}
        assert check_scales(plan.part, plan.rails) is scales  # found once per pair
