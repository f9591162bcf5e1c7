"""Monte Carlo memory follows the chunk, not the band: fewer rows per walk where many
frequencies decide, and the per-row 1/A(s) arrays of a few parts at a time; answers unchanged
(the draws are the same rows whatever the chunk: engine/methods/montecarlo.py)."""

from __future__ import annotations

from pathlib import Path

import numpy as np

import railroom
from railroom.engine.benchmark import figures as bench
from railroom.engine.walks import circuit_walk as dw
from railroom.engine.walks.preparation import band_grid
from railroom.engine.methods import Setup, corners, montecarlo
from railroom.engine.walks.preparation import plan_chain

ROOT = Path(__file__).resolve().parents[2]


def setup(chain, parts):
    plans = plan_chain(chain, parts)
    freqs = band_grid(chain, plans)
    prepared = corners.prepare(chain, plans, freqs)
    return Setup(chain, plans, freqs, prepared, corner_stages=corners.walk(prepared))


def margins_of(stages):
    return [dict(s.margins) for s in stages]


def test_rows_per_walk_shrink_with_the_frequencies_and_answers_do_not_change(monkeypatch):
    chain = railroom.load(str(ROOT / "tests" / "chains" / "filters_rss.toml"))
    args = setup(chain, railroom.parts_for(chain))
    chain = args.chain
    whole_run = montecarlo.run(args)
    whole, whole_yield = whole_run.stages, whole_run.chain_yield
    layout = montecarlo.layout_for(chain, args.plans, args.freqs, args.corner_stages)
    fitted = len(dw.fitted_variables(layout)[0])
    rows: list[int] = []
    real = dw.walk_draws

    def counting(layout, D, dT, record=None):
        rows.append(D.shape[0])
        return real(layout, D, dT, record)

    monkeypatch.setattr(dw, "walk_draws", counting)
    monkeypatch.setattr(montecarlo, "CHUNK_CELLS", 1024 * 4)  # under 1024 rows' worth
    bounded_run = montecarlo.run(args)
    bounded, bounded_yield = bounded_run.stages, bounded_run.chain_yield
    # the layout's walks first: the 3-row decisive walk, then one fit walk per peak range
    # (circuit_walk.fit_peaks: nominal, +/-1 on each fitted column, all-high and all-low, and
    # CHECK_ROWS checking rows)
    fit_rows = 2 * fitted + 3 + dw.CHECK_ROWS
    drawn = [r for r in rows[1:] if r != fit_rows]
    assert rows[0] == 3 and fit_rows in rows[1:] and max(drawn) == 1024
    assert sum(drawn) == chain.conditions.samples
    assert bounded_yield == whole_yield
    assert margins_of(bounded) == margins_of(whole)


def test_kept_parts_change_no_draw(monkeypatch):
    # the bench chain's stages alternate three parts: keeping one part's 1/A(s) at a time
    # recomputes it more often and gives the same rows
    found = setup(bench.reference_chain(), bench.PARTS)
    layout = montecarlo.layout_for(found.chain, found.plans, found.freqs, found.corner_stages)
    D, dT = next(montecarlo.chunks(layout, 500, 3, chunk=500))
    first = dw.walk_draws(layout, D, dT)
    monkeypatch.setattr(dw, "KEPT_PARTS", 1)
    for a, b in zip(first, dw.walk_draws(layout, D, dT), strict=True):
        for check in a.margins:
            assert np.array_equal(a.margins[check], b.margins[check])
