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
