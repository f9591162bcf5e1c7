"""`railroom bench` figures on the filter chain and the long chains (targets in DEVELOPERS.md).

Every (chain, method): the engine's time (median of repeated analysis.analyse calls, design aids
included, as the interface calls it) and its peak memory (tracemalloc, one more run). The cost
exponent of each method is the log-log slope of its time against the stage count. The batched
baseline (baseline.py) is compared with the draw walk on the same rows of the Monte Carlo
sequence: its time per draw, the engine's speed-up over it, and each margin's largest difference.
"""

from __future__ import annotations

import time
import tracemalloc

import numpy as np

from railroom.engine.analysis import analyse
from railroom.engine.benchmark import baseline
from railroom.engine.benchmark.chains import filter_chain_text
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.methods import corners, montecarlo
from railroom.engine.walks import circuit_walk as dw
from railroom.engine.walks import reuse
from railroom.engine.walks.preparation import band_grid, plan_chain

METHODS = ("corners", "rss", "montecarlo")
LONG = (12, 48, 200)  # stage counts of the long chains
QUICK_LONG = (3, 4, 6)  # --quick: the same keys on short chains (not comparable figures)
EXACT = 1e-9  # a margin whose largest relative difference is below this agrees to rounding


SLOW_S = 1.0  # a call this slow is timed once: the bench's own run time stays a few minutes


def timed_ms(call, repeats: int) -> float:
    """Median ms of `repeats` calls; one call when the first takes SLOW_S or more. Each call
    starts with nothing kept from the one before (walks/reuse.py): a cold check, as a
    `railroom check` process makes it (the interface's edits are timed by tui/timing.py)."""
    times: list[float] = []
    while len(times) < max(1, repeats) and not (times and times[0] >= SLOW_S):
        reuse.clear()
        start = time.perf_counter()
        call()
        times.append(time.perf_counter() - start)
    return round(1e3 * float(np.median(times)), 1)


def traced(call) -> tuple[float, float]:
    """(seconds, peak MB) of one call under tracemalloc (it sees numpy's buffers), cold."""
    reuse.clear()
    tracemalloc.start()
    try:
        start = time.perf_counter()
        call()
        return time.perf_counter() - start, tracemalloc.get_traced_memory()[1] / 1e6
    finally:
        tracemalloc.stop()


def filter_figures(
    parts, sizes: tuple[int, int, int], repeats: int, memory: bool, quick: bool = False
) -> dict:
    """Each method on the 12-stage filter chain; Monte Carlo at three draw counts. The largest
    count runs once, under tracemalloc: its time and its peak come from that one run (on the
    1e5 draws tracemalloc cost no more than the run-to-run spread: DEVELOPERS.md)."""
    chain = chain_from_text(filter_chain_text(quick), "<bench>")
    small, middle, large = sizes
    figures: dict = {"filter_stages": len(chain.stages)}
    runs = {
        "corners": ("corners", None, repeats),
        "rss": ("rss", None, repeats),
        "montecarlo_1e4": ("montecarlo", small, repeats),
        "montecarlo_1e5": ("montecarlo", middle, max(1, repeats // 2)),
    }
    analyse(chain, parts, method="corners")  # warm caches and imports
    for key, (method, samples, count) in runs.items():
        call = lambda method=method, samples=samples: analyse(chain, parts, method=method, samples=samples)  # noqa: E731
        if quick and key != "montecarlo_1e5":  # one traced run gives both figures
            seconds, peak = traced(call)
            figures[f"filter_{key}_ms"] = round(1e3 * seconds, 1)
            figures[f"filter_{key}_peak_mb"] = round(peak, 1) if memory else None
            continue
        figures[f"filter_{key}_ms"] = timed_ms(call, count)
        if key != "montecarlo_1e5":
            figures[f"filter_{key}_peak_mb"] = round(traced(call)[1], 1) if memory else None
    seconds, peak = traced(lambda: analyse(chain, parts, method="montecarlo", samples=large))
    figures["filter_montecarlo_1e6_ms"] = round(1e3 * seconds, 1)
    figures["filter_montecarlo_1e6_peak_mb"] = round(peak, 1) if memory else None
    return figures


def long_figures(parts, long_chain_text, samples: int, repeats: int, memory: bool, quick: bool) -> dict:
    """Each method on the long chains (figures.long_chain_text), passing and failing; peak
    memory on the passing 48- and 200-stage chains; exponents 48 -> 200 (`_exponent`, the
    figure the bench has always had) and 12 -> 200 (`_exponent_12_200`)."""
    sizes = QUICK_LONG if quick else LONG
    figures: dict = {}
    for failing in (False, True):
        tail = "_failing" if failing else ""
        for method in METHODS:
            seconds = {}
            for name, n in zip(LONG, sizes):
                chain = chain_from_text(long_chain_text(n, failing), "<bench>")
                call = lambda chain=chain, method=method: analyse(  # noqa: E731
                    chain, parts, method=method, samples=samples if method == "montecarlo" else None
                )
                count = 1 if method == "montecarlo" else repeats
                if name == LONG[0]:
                    call()  # warm
                figures[f"{method}_{name}{tail}_ms"] = timed_ms(call, count)
                seconds[name] = figures[f"{method}_{name}{tail}_ms"]
                if not failing and name != LONG[0]:
                    figures[f"{method}_{name}_peak_mb"] = round(traced(call)[1], 1) if memory else None
            figures[f"{method}{tail}_exponent"] = slope(seconds, LONG[1], LONG[2], sizes[1], sizes[2])
            figures[f"{method}{tail}_exponent_12_200"] = slope(seconds, LONG[0], LONG[2], sizes[0], sizes[2])
    return figures


def slope(ms: dict, a: int, b: int, n_a: int, n_b: int) -> float:
    """The log-log slope of time against stage count between chains a and b."""
    return round(float(np.log(max(ms[b], 0.1) / max(ms[a], 0.1)) / np.log(n_b / n_a)), 2)


def baseline_figures(parts, rows: int, repeats: int, quick: bool = False) -> dict:
    """The batched baseline against the draw walk on the first `rows` draws of the filter
    chain's Monte Carlo sequence (the same D and dT for both; see baseline.py)."""
    chain = chain_from_text(filter_chain_text(quick), "<bench>")
    plans = plan_chain(chain, parts)
    freqs = band_grid(chain, plans)
    layout = montecarlo.layout_for(chain, plans, freqs, corners.walk(corners.prepare(chain, plans, freqs)))
    D, dT = next(montecarlo.chunks(layout, rows, chain.conditions.seed, chunk=rows))
    labels = [(v.stage, v.quantity, v.kind, v.amp) for v in layout.variables]
    engine_ms = timed_ms(lambda: dw.walk_draws(layout, D, dT), repeats)
    start = time.perf_counter()
    ours = baseline.run(chain, plans, labels, dw.row_freqs(layout, D, dT), D, dT)
    baseline_s = time.perf_counter() - start
    theirs = dw.walk_draws(layout, D, dT)
    return {
        "baseline_draws": rows,
        "baseline_freqs": len(layout.freqs),
        "baseline_us_per_draw": round(1e6 * baseline_s / rows, 1),
        "engine_us_per_draw": round(1e3 * engine_ms / rows, 2),
        "baseline_ratio": round(1e3 * baseline_s / engine_ms, 1),
        "baseline_agreement": agreement(theirs, ours),
    }


def agreement(engine: list, ours: list[dict]) -> dict:
    """Per check: the largest absolute and relative difference over every stage and draw, the
    stages where it is above rounding (EXACT), and whether it agrees to rounding everywhere."""
    found: dict = {}
    for k, (stage, margins) in enumerate(zip(engine, ours), start=1):
        for check, value in margins.items():
            mine = np.asarray(stage.margins[check], dtype=float)
            diff = np.abs(mine - value)
            rel = diff / np.maximum(np.maximum(np.abs(mine), np.abs(value)), 1e-12)
            entry = found.setdefault(check, {"max_abs": 0.0, "max_rel": 0.0, "stages_apart": []})
            entry["max_abs"] = max(entry["max_abs"], float(diff.max()))
            entry["max_rel"] = max(entry["max_rel"], float(rel.max()))
            if float(rel.max()) > EXACT:
                entry["stages_apart"].append(k)
    for entry in found.values():
        entry["exact"] = not entry["stages_apart"]
        entry["max_abs"] = float(f"{entry['max_abs']:.3g}")
        entry["max_rel"] = float(f"{entry['max_rel']:.3g}")
    return dict(sorted(found.items()))
