"""Monte Carlo tells its caller how far it is, and stops when asked (the interface's worker)."""

from __future__ import annotations

from pathlib import Path

import pytest

from railroom.engine.analysis import analyse
from railroom.engine.formats.chain_file import load_chain
from railroom.engine.methods.montecarlo import Cancelled
from railroom.engine.formats.presets import load_library, search_order

DEMO = Path(__file__).resolve().parents[2] / "engine/demos/pump_vibration.toml"


def demo():
    return load_chain(DEMO), load_library(search_order()).parts


def test_progress_reaches_every_draw():
    chain, parts = demo()
    seen: list[float] = []
    analyse(chain, parts, method="montecarlo", samples=25000, progress=lambda f: seen.append(f) or True)
    # 25000 draws in chunks of at most 10000 rows: at least three reports, rising to all of them
    assert len(seen) >= 3
    assert seen == sorted(seen) and seen[-1] == pytest.approx(1.0)


def test_progress_false_stops_the_run():
    chain, parts = demo()
    calls: list[float] = []

    def stop(fraction: float) -> bool:
        calls.append(fraction)
        return False

    with pytest.raises(Cancelled):
        analyse(chain, parts, method="montecarlo", samples=25000, progress=stop)
    assert len(calls) == 1 and calls[0] < 1.0


def test_cancelled_stops_analyse_at_the_boundary_that_first_says_so(monkeypatch):
    """analyse asks `cancelled()` between its phases; the first True ends the run there with
    Cancelled, and nothing after it runs (the headroom search and the fixes are the last)."""
    import railroom.engine.analysis as analysis

    chain, parts = demo()
    asked: list[int] = []
    analyse(chain, parts, cancelled=lambda: asked.append(1) is not None)  # never says stop
    boundaries = len(asked)
    # plan, band grid, nominal, corners prepared, corners walked, headroom, and one per stage's fixes
    assert boundaries >= 6 + len(chain.stages)
    searched: list[int] = []
    real_headroom = analysis.headroom_db
    monkeypatch.setattr(analysis, "headroom_db", lambda *a, **k: searched.append(1) or real_headroom(*a, **k))
    for stop_at in range(1, boundaries + 1):
        count = [0]

        def cancelled() -> bool:
            count[0] += 1
            return count[0] >= stop_at

        searched.clear()
        with pytest.raises(Cancelled):
            analyse(chain, parts, cancelled=cancelled)
        assert count[0] == stop_at  # asked no more once it said stop
        if stop_at <= 5:
            assert not searched  # stopped before the headroom search


def test_cancelled_in_monte_carlo_stops_between_chunks():
    chain, parts = demo()
    chunks: list[float] = []
    with pytest.raises(Cancelled):
        analyse(
            chain,
            parts,
            method="montecarlo",
            samples=25000,
            design_aids=False,
            progress=lambda f: chunks.append(f) or True,
            cancelled=lambda: len(chunks) >= 1,
        )
    assert len(chunks) == 1  # the first chunk reported, then the run stopped


def test_a_hook_that_never_cancels_changes_nothing():
    chain, parts = demo()
    plain = analyse(chain, parts, method="rss")
    hooked = analyse(chain, parts, method="rss", cancelled=lambda: False)
    assert [s.margins for s in plain.stages] == [s.margins for s in hooked.stages]
    assert [s.fixes for s in plain.stages] == [s.fixes for s in hooked.stages]
    assert plain.headroom_db == hooked.headroom_db
