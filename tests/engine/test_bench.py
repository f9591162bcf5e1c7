"""The bench runs end to end with tiny sizes and reports its keys (no timing is asserted)."""

from __future__ import annotations

from railroom.engine.benchmark import figures as bench

SPEC_KEYS = {
    "format",
    "quick",
    "stages",
    "corners_ms",
    "rss_ms",
    "montecarlo_1e4_ms",
    "montecarlo_1e5_ms",
    "montecarlo_1e6_ms",
    "montecarlo_1e6_peak_mb",
    "per_draw_ratio",
    "same_answers",
    "rare_1e6_ms",
    "rare_1e6_ratio",
    "rare_1e6_interval_holds",
}
FILTER_KEYS = (
    {"filter_stages", "filter_montecarlo_1e5_ms", "filter_montecarlo_1e6_ms", "filter_montecarlo_1e6_peak_mb"}
    | {f"filter_{m}_{end}" for m in ("corners", "rss", "montecarlo_1e4") for end in ("ms", "peak_mb")}
    | {"baseline_draws", "baseline_freqs", "baseline_us_per_draw", "engine_us_per_draw", "baseline_ratio"}
    | {"baseline_agreement"}
)
METHODS = ("corners", "rss", "montecarlo")
LONG_KEYS = (
    {f"{m}_{n}{f}_ms" for m in METHODS for n in (12, 48, 200) for f in ("", "_failing")}
    | {f"{m}_{n}_peak_mb" for m in METHODS for n in (48, 200)}
    | {f"{m}{f}_exponent{s}" for m in METHODS for f in ("", "_failing") for s in ("", "_12_200")}
)
PROCESS_KEYS = {
    f"{key}_process_{end}"
    for key in [f"filter_{m}" for m in METHODS] + [f"{m}_{n}" for m in METHODS for n in (48, 200)]
    for end in ("s", "peak_mb")
}
COMMAND_KEYS = {
    "check_process_s",
    "interface_first_screen_s",
    "interface_edit_ms",
    "typing_median_ms",
    "typing_worst_ms",
    "typing_burst_median_ms",
    "typing_burst_worst_ms",
    "load_average",
    "bench_s",
}
CHECKS = {"output-high", "output-low", "input-high", "input-low", "slew", "current", "supply"}


def test_engine_bench_tiny():
    figures = bench.run(
        sizes=(200, 300, 400), repeats=1, reference_draws=5, long_chains=False, filter_chain=False
    )
    assert figures["stages"] == 12
    # the one-in-a-million case: importance sampling within its interval of Phi(-4.76) = 9.68e-7
    assert figures["rare_1e6_interval_holds"] is True and 0.5 < figures["rare_1e6_ratio"] < 2
    assert figures["same_answers"] is True  # nodal reference and vectorised walk agree
    assert figures["montecarlo_1e6_peak_mb"] > 0
    assert set(figures) == SPEC_KEYS


def test_quick_bench_has_every_engine_key():
    figures = bench.run(quick=True)
    assert set(figures) == SPEC_KEYS | FILTER_KEYS | LONG_KEYS
    assert figures["quick"] is True and figures["filter_stages"] == 6
    assert figures["baseline_draws"] == 64 and figures["baseline_ratio"] > 0
    agreement = figures["baseline_agreement"]
    assert set(agreement) == CHECKS
    # the voltage, slew and supply margins come out of the same circuits: equal to rounding
    for check in ("input-high", "input-low", "slew", "supply"):
        assert agreement[check]["exact"] and agreement[check]["max_rel"] < 1e-9, check
    assert all(v is not None and v > 0 for k, v in figures.items() if k.endswith("_peak_mb"))


def test_bench_command_keys(monkeypatch):
    from railroom.tui import timing
    from railroom.tui.subcommands import bench as bench_command

    monkeypatch.setattr(bench_command, "check_process_seconds", lambda runs=3: 0.5)
    monkeypatch.setattr(bench_command, "check_child", lambda command: (0.7, 60.0))
    monkeypatch.setattr(timing, "first_screen_seconds", lambda: 0.9)
    monkeypatch.setattr(timing, "edit_repaint_ms", lambda stages=20: 40.0)
    monkeypatch.setattr(timing, "typing_ms", lambda stages=20, interval=0.33: (30.0, 80.0))
    figures = bench_command.bench_figures(quick=True, long_chains=False, filter_chain=False)
    assert set(figures) == SPEC_KEYS | PROCESS_KEYS | COMMAND_KEYS
    assert figures["typing_burst_worst_ms"] == 80.0 and figures["filter_rss_process_peak_mb"] == 60.0
    assert set(bench_command.TARGETS) <= SPEC_KEYS | FILTER_KEYS | LONG_KEYS | PROCESS_KEYS | COMMAND_KEYS


def test_bench_table_rows_flatten_the_agreement():
    from railroom.tui.subcommands.bench import rows

    found = dict(rows({"a": 1, "baseline_agreement": {"slew": {"max_abs": 0.0, "exact": True}}, "b": None}))
    assert found == {
        "a": "1",
        "baseline_agreement.slew.max_abs": "0.0",
        "baseline_agreement.slew.exact": "True",
        "b": "-",
    }


def test_check_child_counts_the_child_alone():
    # Linux carries a process's resident high-water mark across exec, so a child forked from a
    # big process reports at least the parent's peak; the launcher's floor is a bare interpreter
    import sys

    import numpy as np

    from railroom.tui.subcommands.bench import check_child

    held = np.ones(20_000_000)  # 160 MB in this process while the children run
    _, bare = check_child([sys.executable, "-c", "pass"])
    _, big = check_child([sys.executable, "-c", "bytearray(200_000_000)"])
    assert held.sum() == 20_000_000
    assert bare < 100  # a bare interpreter, not this process's 160 MB and more
    assert 200 < big < 300  # the 200 MB it held, and the interpreter


def test_check_child_refuses_an_unread_chain():
    import sys

    import pytest

    from railroom.tui.subcommands.bench import check_child

    assert check_child([sys.executable, "-c", "raise SystemExit(1)"])[0] > 0  # NO-GO is a figure
    with pytest.raises(RuntimeError, match="failed"):
        check_child([sys.executable, "-c", "raise SystemExit(2)"])  # an unreadable chain is not


def test_filter_bench_chain_is_what_it_says():
    from railroom.engine.analysis import analyse
    from railroom.engine.benchmark.chains import filter_chain_text
    from railroom.engine.formats.chain_file import chain_from_text

    chain = chain_from_text(filter_chain_text())
    blocks = [s.block for s in chain.stages]
    assert len(blocks) == 12
    assert {"sallen_key_lowpass", "mfb_lowpass", "mfb_bandpass"} <= set(blocks)
    found = analyse(chain, bench.PARTS, design_aids=False, headroom=False).stages
    # stage 11: gain 3 of a 1.56 V +/- 1.2 V signal reaches 8.3 V against a 5 V rail
    assert [s.go for s in found] == [True] * 10 + [False, False]
    assert found[10].regime == "clipping" and "fed-clipped" in found[11].reasons


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
