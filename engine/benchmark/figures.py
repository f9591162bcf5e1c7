"""`railroom bench` figures for the engine (targets in DEVELOPERS.md): pure, returns a dict, prints nothing.

The reference chain is built here: twelve stages of mixed blocks on two rail sets, generic
illustrative parts and values. Times are medians of repeated runs of analysis.analyse (the whole
engine call the interface makes, design aids included). The per-draw comparison runs the slow
reference (benchmark/per_draw.py: a Python loop with a nodal solve per stage and draw) on the first
`reference_draws` draws of the Monte Carlo sequence, checks that every margin agrees with the
vectorised walk on the same draws, and scales its time per draw to the vectorised run's draw count.
The filter chain, the long chains and the batched baseline are measured by chain_figures.py.
"""

from __future__ import annotations

import statistics
import time
import tracemalloc


from railroom.engine.walks import circuit_walk as dw
from railroom.engine.analysis import analyse
from railroom.engine.walks.preparation import band_grid
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.methods import corners, montecarlo
from railroom.engine.benchmark import chain_figures, chains, per_draw
from railroom.engine.circuit.model import Part
from railroom.engine.walks.preparation import plan_chain

BENCH_FORMAT = 1
AGREE = 1e-6  # relative agreement of every margin (plus the same in absolute)

_CLASS = "generic illustrative class"
PARTS = {
    "bipolar": Part(
        id="bipolar",
        supply=(10.0, 36.0),
        output_headroom=(1.5, 1.5),
        output_resistance=75.0,
        input_headroom=(2.0, 2.0),
        gbw=1e6,
        slew=0.5e6,
        open_loop_gain=1e5,
        offset=3e-3,
        bias_current=100e-9,
        output_current=20e-3,
        description=_CLASS,
        supply_abs_max=40.0,
        offset_drift=5e-6,
    ),
    "precision": Part(
        id="precision",
        supply=(4.5, 36.0),
        output_headroom=(1.2, 1.2),
        output_resistance=60.0,
        input_headroom=(1.5, 1.5),
        gbw=1.5e6,
        slew=0.5e6,
        open_loop_gain=3e6,
        offset=50e-6,
        bias_current=2e-9,
        output_current=15e-3,
        description=_CLASS,
        supply_abs_max=40.0,
        offset_drift=5e-6,
    ),
    "rro": Part(
        id="rro",
        supply=(2.7, 5.5),
        output_headroom=(0.03, 0.03),
        output_resistance=40.0,
        input_headroom=(-0.1, -0.1),
        gbw=1e6,
        slew=0.6e6,
        open_loop_gain=1e5,
        offset=2e-3,
        bias_current=1e-12,
        output_current=20e-3,
        description=_CLASS,
        supply_abs_max=6.0,
        offset_drift=5e-6,
    ),
}

STAGES = [
    ("follower", "bipolar", "analog", {}),
    ("noninverting", "bipolar", "analog", {"rf": "40k2 0.1% 25ppm", "rg": "10k 0.1% 25ppm"}),
    ("rc_lowpass", None, None, {"r": "1k", "c": "10n 5%"}),
    ("inverting", "precision", "analog", {"rin": "10k", "rf": "20k"}),
    ("divider", None, None, {"top": "10k", "bottom": "10k"}),
    ("noninverting", "precision", "analog", {"rf": "10k", "rg": "10k", "load": "10k"}),
    ("rc_lowpass", None, None, {"r": "2k2", "c": "4n7 5%"}),
    ("inverting", "bipolar", "analog", {"rin": "10k", "rf": "10k"}),
    ("summing", "rro", "converter", {"rin": "20k", "rf": "10k", "ref": "1.25"}),
    ("follower", "rro", "converter", {}),
    ("adc", None, None, {"low": "0.2", "high": "4.8"}),
    ("comparator", "rro", "converter", {"threshold": "2.2", "load": "4k7"}),
]


def reference_text() -> str:
    return chains.chain_head("bench: twelve mixed stages") + chains.stages_text(STAGES)


def reference_chain():
    return chain_from_text(reference_text(), "<bench>")


def long_chain_text(stages: int, failing: bool = False) -> str:
    """`stages` stages on +/-15 V: followers, inverting x1 stages and RC low-passes in turn; with
    `failing`, stage 3 is a gain of 191 that clips (the stages after it are fed the clipped signal)."""
    text = """format = 1
title = "bench: a long chain"
[conditions]
temperature = [0, 50]
margin = "50m"
default_tolerance = "1%"
[rails.main]
positive = "15"
negative = "-15"
tolerance = "5%"
[source]
level = ["-0.1", "0.1"]
amplitude = "100m"
band = ["10", "1k"]
"""
    cycle: tuple[tuple[str, dict[str, str]], ...] = (
        ("follower", {}),
        ("inverting", {"rin": "10k", "rf": "10k"}),
        ("follower", {}),
        ("rc_lowpass", {"r": "1k", "c": "10n"}),
    )
    for i in range(1, stages + 1):
        block, fields = cycle[(i - 1) % len(cycle)]
        if failing and i == 3:
            block, fields = "noninverting", {"rf": "190k", "rg": "1k"}
        text += f'[[stage]]\nname = "stage {i}"\nblock = "{block}"\n'
        text += 'part = "bipolar"\n' if block != "rc_lowpass" else ""
        text += "".join(f'{k} = "{v}"\n' for k, v in fields.items())
    return text


# A follower whose output-high margin is linear in the positive rail and the offset, normal
# tolerances: m = 1.19 + 0.75 d_r - 0.003 d_o with d = 3 sigma, so P(m < 0) = Phi(-1.19 / 0.25)
# = 9.68e-7 (tests/engine/test_rare_events.py derives it).
RARE_PART = Part(
    id="rare",
    description="bench: a follower near its ceiling",
    supply=(1.0, 100.0),
    supply_abs_max=100.0,
    output_headroom=(1.5, 1.5),
    output_resistance=0.0,
    input_headroom=(0.5, 0.5),
    gbw=1e9,
    slew=1e9,
    open_loop_gain=1e9,
    offset=3e-3,
    offset_drift=0.0,
    bias_current=0.0,
    output_current=1.0,
)
RARE_TEXT = """format = 1
title = "bench: a one-in-a-million failure"
[conditions]
method = "montecarlo"
samples = 10000
distribution = "normal"
[rails.main]
positive = "15"
negative = "-15"
tolerance = "5%"
[source]
level = ["12.31", "12.31"]
[[stage]]
name = "buffer"
block = "follower"
part = "rare"
"""
RARE_EXACT = 9.681474535210985e-07


def rare_figures() -> dict:
    """Time of a Monte Carlo check that estimates a 1e-6 failure probability, and how close."""
    chain = chain_from_text(RARE_TEXT, "<bench>")
    parts = {"rare": RARE_PART}
    analyse(chain, parts)
    start = time.perf_counter()
    result = analyse(chain, parts)
    seconds = time.perf_counter() - start
    rare = result.rare
    return {
        "rare_1e6_ms": round(1e3 * seconds, 1),
        "rare_1e6_ratio": None if rare is None else round(rare.probability / RARE_EXACT, 3),
        "rare_1e6_interval_holds": None if rare is None else bool(rare.low <= RARE_EXACT <= rare.high),
    }


def median_seconds(call, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        call()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def peak_megabytes(call) -> float:
    """Largest memory held during the call (tracemalloc sees numpy's buffers)."""
    tracemalloc.start()
    try:
        call()
        return tracemalloc.get_traced_memory()[1] / 1e6
    finally:
        tracemalloc.stop()


def agree(vector: list[dw.StageDraws], reference: list[list[dict]]) -> bool:
    for j, stages in enumerate(reference):
        for draws, margins in zip(vector, stages):
            for check, value in margins.items():
                ours = float(draws.margins[check][j])
                if abs(ours - value) > AGREE * (1.0 + abs(value)):
                    return False
    return True


def per_draw_comparison(chain, rows: int, reference_draws: int, repeats: int) -> tuple[float, bool]:
    """(reference time / vectorised time for `rows` draws, same margins on the shared draws)."""
    plans = plan_chain(chain, PARTS)
    freqs = band_grid(chain, plans)
    layout = montecarlo.layout_for(chain, plans, freqs, corners.walk(corners.prepare(chain, plans, freqs)))
    D, dT = next(montecarlo.chunks(layout, rows, chain.conditions.seed, chunk=rows))
    vector_s = median_seconds(lambda: dw.walk_draws(layout, D, dT), repeats)
    vector = dw.walk_draws(layout, D, dT)
    head = slice(0, min(reference_draws, rows))
    start = time.perf_counter()
    reference = per_draw.run_draws(layout, D[head], dT[head])
    reference_s = (time.perf_counter() - start) * rows / len(reference)
    return reference_s / vector_s, agree(vector, reference)


QUICK: dict = {
    "sizes": (300, 600, 1000),
    "repeats": 1,
    "reference_draws": 5,
    "baseline_rows": 64,
    "long_samples": 200,
}


def run(
    sizes: tuple[int, int, int] = (10_000, 100_000, 1_000_000),
    repeats: int = 5,
    reference_draws: int = 200,
    memory: bool = True,
    long_chains: bool = True,
    baseline_rows: int = 4096,
    long_samples: int = 10_000,
    filter_chain: bool = True,
    quick: bool = False,
) -> dict:
    """Engine figures (targets in DEVELOPERS.md); the keys the engine cannot measure are left out.
    `quick`: tiny sizes and short "long" chains, every key present (for tests; not comparable)."""
    if quick:
        sizes, repeats, reference_draws = QUICK["sizes"], QUICK["repeats"], QUICK["reference_draws"]
        baseline_rows, long_samples = QUICK["baseline_rows"], QUICK["long_samples"]
    chain = reference_chain()

    def timed(method: str, samples: int | None = None, count: int = repeats) -> float:
        analyse(chain, PARTS, method=method, samples=samples)  # warm caches and imports
        return round(
            1e3 * median_seconds(lambda: analyse(chain, PARTS, method=method, samples=samples), count), 2
        )

    small, middle, large = sizes
    figures = {
        "format": BENCH_FORMAT,
        "quick": quick,
        "stages": len(chain.stages),
        "corners_ms": timed("corners"),
        "rss_ms": timed("rss"),
        "montecarlo_1e4_ms": timed("montecarlo", small),
        "montecarlo_1e5_ms": timed("montecarlo", middle, max(1, repeats // 2)),
        "montecarlo_1e6_ms": round(
            1e3 * median_seconds(lambda: analyse(chain, PARTS, method="montecarlo", samples=large), 1), 2
        ),
        "montecarlo_1e6_peak_mb": None,
    }
    if memory:
        figures["montecarlo_1e6_peak_mb"] = round(
            peak_megabytes(lambda: analyse(chain, PARTS, method="montecarlo", samples=large)), 1
        )
    ratio, same = per_draw_comparison(chain, small, reference_draws, repeats)
    figures["per_draw_ratio"] = round(ratio, 1)
    figures["same_answers"] = bool(same)
    if filter_chain:
        figures.update(chain_figures.filter_figures(PARTS, sizes, repeats, memory, quick))
        figures.update(chain_figures.baseline_figures(PARTS, baseline_rows, repeats, quick))
    if long_chains:
        figures.update(
            chain_figures.long_figures(
                PARTS, long_chain_text, long_samples, max(1, repeats // 2), memory, quick
            )
        )
    figures.update(rare_figures())
    return figures


def chain_texts(quick: bool = False) -> dict[str, str]:
    """The chains whose whole `railroom check` process the command line times (tui bench)."""
    sizes = chain_figures.QUICK_LONG if quick else chain_figures.LONG
    return {
        "filter": chains.filter_chain_text(quick),
        f"{chain_figures.LONG[1]}": long_chain_text(sizes[1]),
        f"{chain_figures.LONG[2]}": long_chain_text(sizes[2]),
    }


def presets_text() -> str:
    """The bench parts as a preset file, for `railroom check --presets`."""
    return chains.presets_text(PARTS)
