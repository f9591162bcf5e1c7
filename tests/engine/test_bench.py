"""The bench runs end to end with tiny sizes and reports its keys (no timing is asserted)."""

from __future__ import annotations

from railroom.engine.benchmark import figures as bench

SPEC_KEYS = {
    "format",
    "stages",
    "corners_ms",
    "rss_ms",
    "montecarlo_1e4_ms",
    "montecarlo_1e5_ms",
    "montecarlo_1e6_ms",
    "montecarlo_1e6_peak_mb",
    "per_draw_ratio",
    "same_answers",
    "check_process_s",
    "interface_first_screen_s",
    "interface_edit_ms",
    "rare_1e6_ms",
    "rare_1e6_ratio",
    "rare_1e6_interval_holds",
}
LONG_KEYS = {f"{m}_{n}{f}_ms" for m in ("corners", "rss") for n in (48, 200) for f in ("", "_failing")} | {
    f"{m}{f}_exponent" for m in ("corners", "rss") for f in ("", "_failing")
}


def test_engine_bench_tiny():
    figures = bench.run(sizes=(200, 300, 400), repeats=1, reference_draws=5, long_chains=False)
    assert figures["stages"] == 12
    # the one-in-a-million case: importance sampling within its interval of Phi(-4.76) = 9.68e-7
    assert figures["rare_1e6_interval_holds"] is True and 0.5 < figures["rare_1e6_ratio"] < 2
    assert figures["same_answers"] is True  # nodal reference and vectorised walk agree
    assert figures["montecarlo_1e6_peak_mb"] > 0
    assert set(figures) <= SPEC_KEYS


def test_bench_command_keys(monkeypatch):
    from railroom.tui.subcommands import bench as bench_command

    monkeypatch.setattr(bench_command, "check_process_seconds", lambda runs=3: 0.5)
    monkeypatch.setattr(bench_command, "interface_times", lambda: (None, None))
    figures = bench_command.bench_figures(
        sizes=(100, 100, 100), repeats=1, reference_draws=3, long_chains=False
    )
    assert set(figures) == SPEC_KEYS


def test_long_bench_chains_are_what_they_say():
    from railroom.engine.analysis import analyse
    from railroom.engine.formats.chain_file import chain_from_text

    passing = chain_from_text(bench.long_chain_text(48))
    failing = chain_from_text(bench.long_chain_text(48, failing=True))
    assert len(passing.stages) == 48
    assert analyse(passing, bench.PARTS, design_aids=False, headroom=False).go
    found = analyse(failing, bench.PARTS, design_aids=False, headroom=False).stages
    # a gain of 191 on 0.2 V: 38 V against a 13.5 V ceiling; everything after is fed-clipped
    assert found[2].regime == "clipping" and "fed-clipped" in found[3].reasons
    assert all(s.go for s in found[:2])


def test_reference_chain_is_linear_in_every_draw():
    # the comparison of the two evaluations is meant for circuits that stay linear
    assert draws_linear_share(samples=500) == 1.0


def draws_linear_share(samples: int) -> float:
    """Share of reference-chain draws that stay linear everywhere (a sanity figure for tuning)."""
    from railroom.engine.walks.preparation import band_grid
    from railroom.engine.methods import Setup, corners, montecarlo
    from railroom.engine.walks.preparation import plan_chain

    chain = bench.reference_chain()
    plans = plan_chain(chain, bench.PARTS)
    freqs = band_grid(chain, plans)
    prepared = corners.prepare(chain, plans, freqs)
    setup = Setup(chain, plans, freqs, prepared, corner_stages=corners.walk(prepared))
    return float(montecarlo.run(setup, chunk=samples).chain_yield or 0.0)
