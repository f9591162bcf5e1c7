"""The bench runs end to end with tiny sizes and reports the keys of SPEC section 6 (no timing)."""
from __future__ import annotations

from railroom.engine import bench

SPEC_KEYS = {"format", "stages", "corners_ms", "rss_ms", "montecarlo_1e4_ms", "montecarlo_1e5_ms",
             "montecarlo_1e6_ms", "montecarlo_1e6_peak_mb", "per_draw_ratio", "same_answers",
             "check_process_s", "interface_first_screen_s", "interface_edit_ms"}


def test_engine_bench_tiny():
    figures = bench.run(sizes=(200, 300, 400), repeats=1, reference_draws=5)
    assert figures["stages"] == 12
    assert figures["same_answers"] is True          # nodal reference and vectorised walk agree
    assert figures["montecarlo_1e6_peak_mb"] > 0
    assert set(figures) <= SPEC_KEYS


def test_bench_command_keys(monkeypatch):
    from railroom.tui import bench_command
    monkeypatch.setattr(bench_command, "check_process_seconds", lambda runs=3: 0.5)
    monkeypatch.setattr(bench_command, "interface_times", lambda: (None, None))
    figures = bench_command.bench_figures(sizes=(100, 100, 100), repeats=1, reference_draws=3)
    assert set(figures) == SPEC_KEYS


def test_reference_chain_is_linear_in_every_draw():
    # the comparison of the two evaluations is meant for circuits that stay linear
    assert bench.draws_linear_share(samples=500) == 1.0
