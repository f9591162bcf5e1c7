"""Monte Carlo: many built circuits drawn at random, each walked exactly (engine/walks/circuit_walk.py).

Each toleranced value is drawn uniform over its tolerance, or normal with the tolerance as
3 sigma (conditions.distribution); each op amp's offset, offset drift and bias are signed draws in
+/- their maximum the same way; each rail within its tolerance; the ambient temperature uniform
over the range (one per circuit, shared by every part on the board). Draws are made in chunks of
rows from one generator seeded with `seed`: the row sequence is the same whatever the chunk size,
so a run is reproducible and chunking only bounds the memory.

Quoted per stage: the share of draws that leave the linear regime (`probability`), margin
percentiles 0.1 %, 1 % and 50 % (numpy's linear interpolation), and margins at the 0.1 %
percentile, which checks.judge decides on. The chain yield is the share of draws in which every
stage stays linear. The 0.1 % and 1 % percentiles are exact at any sample count (the lowest draws
are kept); the median is exact up to MEDIAN_ROWS draws and taken from the first MEDIAN_ROWS
draws beyond (its standard error there is about 1.25 sigma / 128, about 1 % of sigma).
"""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np

from railroom.engine.walks import circuit_walk as dw
from railroom.engine.methods import Outcome, Progress, Setup, judged
from railroom.engine.methods.corners import prepare
from railroom.engine.methods.normal import inverse_normal
from railroom.engine.walks.bounds_walk import plan_parents
from railroom.engine.verdict.results import StageResult

CHUNK_ROWS = 10_000  # the default sample count in one walk; larger chunks ran slower
CHUNK_CELLS = CHUNK_ROWS * 32  # rows x frequencies in one walk: memory held by the chunk, not the band
MEDIAN_ROWS = 16384
QUOTED = {"0.1%": 0.001, "1%": 0.01, "50%": 0.5}
TAIL = 0.01  # the highest quoted percentile read from the kept low tail


def deviates(uniform: np.ndarray, distribution: str) -> np.ndarray:
    """Uniform u in [0, 1) -> d in [-1, 1] (uniform) or normal with d = 1 at 3 sigma.

    Returned column-major, as the draw walk reads it column by column: the one copy into that
    order is made first and the arithmetic runs in place on it (same operations, same values)."""
    d = np.asfortranarray(uniform)
    if d is uniform:
        d = d.copy(order="F")
    if distribution == "normal":
        np.clip(d, 1e-16, 1.0 - 1e-16, out=d)
        inverse_normal(d, out=d)
        d /= 3.0
        return d
    d *= 2.0
    d -= 1.0
    return d


def layout_for(
    chain,
    plans,
    freqs,
    corner_stages,
    band: str = "decisive",
    full: dw.Layout | None = None,
    decisive: np.ndarray | None = None,
) -> dw.Layout:
    """The draw walk's layout; `full`: the full-band layout and `decisive` its decisive
    frequencies (sensitivity.linearise) when the caller has them."""
    layout = full or dw.build_layout(chain, plans, freqs, prepare(chain, plans, freqs), corner_stages)
    if band != "decisive":
        return layout
    return dw.peak_layout(layout, decisive)


def chunks(
    layout: dw.Layout, samples: int, seed: int, chunk: int = CHUNK_ROWS
) -> Iterator[tuple[np.ndarray, np.ndarray]]:
    """(D, dT) blocks of rows, the same rows whatever `chunk` is."""
    rng = np.random.default_rng(seed)
    K = len(layout.variables)
    done = 0
    while done < samples:
        rows = min(chunk, samples - done)
        uniform = rng.random((rows, K + 1))
        D = deviates(uniform[:, :K], layout.chain.conditions.distribution)
        yield D, dw.row_temperatures(layout.chain, uniform[:, K])
        done += rows


def sample(
    layout: dw.Layout, samples: int, seed: int, chunk: int = CHUNK_ROWS
) -> Iterator[list[dw.StageDraws]]:
    """Per-chunk, per-stage draws (for tests and tools that want the raw rows)."""
    for D, dT in chunks(layout, samples, seed, chunk):
        yield dw.walk_draws(layout, D, dT)


def series_of(draws: list[dw.StageDraws]) -> dict[tuple, np.ndarray]:
    """Every quantity quoted, keyed (stage, amp or None, name); upper spans negated so every
    series is read at its low tail. Per-op-amp series only where a stage has several op amps."""
    found: dict[tuple, np.ndarray] = {}
    for k, stage in enumerate(draws):
        for j, amp in enumerate(stage.amps if len(stage.amps) > 1 else ()):
            for name, value in amp.items():
                if name != "spans":
                    found[(k, j, name)] = value
            for span in ("out-low", "out-high"):
                found[(k, j, span)] = amp["spans"][span] * (-1 if span.endswith("high") else 1)
        for name, value in stage.margins.items():
            found[(k, None, name)] = value
        found[(k, None, "out-low")] = stage.out_lo
        found[(k, None, "out-high")] = -stage.out_hi
        if stage.amps:
            found[(k, None, "in-low")] = np.minimum.reduce([a["spans"]["in-low"] for a in stage.amps])
            found[(k, None, "in-high")] = -np.maximum.reduce([a["spans"]["in-high"] for a in stage.amps])
    return found


class LowTail:
    """The k lowest values of many series, merged chunk by chunk, and the first MEDIAN_ROWS
    values of the series whose median is quoted (`median_keys`: the stage margins).

    One buffer holds the kept values and the new chunk side by side; an in-place partition
    (np.partition's introselect) moves the k lowest to its front, so nothing kept is copied."""

    def __init__(self, keys: list, samples: int, median_keys: list):
        self.keys = keys
        self.samples = samples
        self.k = min(samples, int(np.floor((samples - 1) * TAIL)) + 2)
        self.buffer = np.empty((len(keys), 0))
        self.filled = 0
        self.median_keys = median_keys
        self.median_rows = [keys.index(key) for key in median_keys]
        self.head: list[np.ndarray] = []
        self.head_rows = 0
        self.ordered: np.ndarray | None = None  # the kept tail sorted, once for every quote

    def add(self, series: dict[tuple, np.ndarray]) -> None:
        rows = np.shape(series[self.keys[0]])[0]
        end = self.filled + rows
        if self.buffer.shape[1] < end:
            grown = np.empty((len(self.keys), end))
            grown[:, : self.filled] = self.buffer[:, : self.filled]
            self.buffer = grown
        for row, key in enumerate(self.keys):
            self.buffer[row, self.filled : end] = series[key]
        if self.head_rows < MEDIAN_ROWS:
            take = min(rows, MEDIAN_ROWS - self.head_rows)
            self.head.append(self.buffer[self.median_rows, self.filled : self.filled + take])
            self.head_rows += take
        if end > self.k:
            self.buffer[:, :end].partition(self.k - 1, axis=1)
            end = self.k
        self.filled = end
        self.ordered = None

    def low(self, q: float) -> dict[tuple, float]:
        """numpy's linear-interpolation percentile of each series, from the kept low tail."""
        if self.ordered is None:
            self.ordered = np.sort(self.buffer[:, : self.filled], axis=1)
        ordered = self.ordered
        h = (self.samples - 1) * q
        lo = int(np.floor(h))
        hi = min(lo + 1, self.samples - 1)
        return dict(zip(self.keys, ordered[:, lo] + (h - lo) * (ordered[:, hi] - ordered[:, lo])))

    def median(self) -> dict[tuple, float]:
        """np.percentile(head, 50, axis=1) of the median series, bit for bit. The head is ours
        alone: it is partitioned in place (an order statistic does not depend on the order)."""
        head = self.head[0] if len(self.head) == 1 else np.concatenate(self.head, axis=1)
        self.head = [head]
        return dict(zip(self.median_keys, median_rows(head, overwrite=True)))


def median_rows(x: np.ndarray, overwrite: bool = False) -> np.ndarray:
    """np.percentile(x, 50, axis=1) (linear method) by one single-index partition: numpy's own
    call partitions at both neighbours of the middle, several times slower. The two neighbours
    are the lo-th value and the least value above it; they are blended as numpy's _lerp does
    (a + (b - a) t, or b - (b - a)(1 - t) when t >= 0.5), and a row holding NaN gives NaN.
    `overwrite`: partition x itself instead of a copy (x's rows keep their values, reordered)."""
    n = x.shape[1]
    h = (n - 1) * 0.5
    lo = int(np.floor(h))
    t = h - lo
    if overwrite:
        x.partition(lo, axis=1)
    else:
        x = np.partition(x, lo, axis=1)
    a = x[:, lo]
    b = x[:, lo + 1 :].min(axis=1) if lo + 1 < n else a
    diff = b - a
    found = b - diff * (1 - t) if t >= 0.5 else a + diff * t
    return np.where(np.isnan(x).any(axis=1), np.nan, found)


class Cancelled(Exception):
    """The caller's progress callback asked to stop (a newer edit made this run stale)."""


def run(setup: Setup, progress: Progress | None = None, chunk: int = CHUNK_ROWS) -> Outcome:
    """Stage results at the 0.1 % percentile, with probability and percentiles; chain yield.
    `progress(fraction_done) -> bool` is called after every chunk; False stops the run.
    `setup.layout` and the decisive checks of `setup.lin` are used when built: see layout_for."""
    chain, plans, corner_stages = setup.chain, setup.plans, setup.corner_stages
    decisive = None if setup.lin is None else setup.lin.decisive
    samples, seed = chain.conditions.samples, chain.conditions.seed
    layout = layout_for(chain, plans, setup.freqs, corner_stages, full=setup.layout, decisive=decisive)
    # a walk holds arrays of rows x frequencies per stage: fewer rows where many frequencies
    # decide (filters), so the memory is the chunk's (the rows are the same whatever the chunk)
    chunk = min(chunk, max(1024, CHUNK_CELLS // max(len(layout.freqs), 1)))
    tail = None
    leaving = np.zeros(len(plans))
    all_linear = 0
    done = 0
    for draws in sample(layout, samples, seed, chunk):
        series = series_of(draws)
        if tail is None:
            tail = LowTail(
                list(series),
                samples,
                [key for key in series if key[1] is None and not key[2].startswith(("out-", "in-"))],
            )
        tail.add(series)
        linear = np.vstack([d.linear for d in draws])
        leaving += (~linear).sum(axis=1)
        all_linear += int(linear.all(axis=0).sum())
        done += linear.shape[1]
        if progress is not None and not progress(done / samples):
            raise Cancelled()
    assert tail is not None  # samples >= 1: at least one chunk was walked
    quoted = {name: tail.median() if q == 0.5 else tail.low(q) for name, q in QUOTED.items()}
    stages = stage_results(plans, corner_stages, quoted, leaving / samples, chain.conditions.margin)
    return Outcome(stages, all_linear / samples)


def stage_results(plans, corner_stages, quoted, probability, required) -> list[StageResult]:
    deciding = quoted["0.1%"]
    # the series grouped by (stage, op amp) once, in their order: a scan of every series per
    # stage made this quadratic in stages
    grouped: dict[tuple, dict] = {}
    for (s, a, name), v in deciding.items():
        grouped.setdefault((s, a), {})[name] = v
    results = []
    clipping: list[bool] = []  # per stage: it clips, or a stage up its branch does
    parents = plan_parents(plans)
    for k, (plan, corner) in enumerate(zip(plans, corner_stages)):
        clipped_before = parents[k] >= 0 and clipping[parents[k]]
        stage = dict(grouped.get((k, None), {}))
        amps = []
        for j in range(len(corner.measure.opamps)):
            stat = {name: float(v) for name, v in grouped.get((k, j), {}).items()}
            if not stat:  # one op amp: the stage's own series are its
                stat = {n: float(v) for n, v in stage.items() if n != "supply"}
            stat.setdefault("in-low", stage["in-low"])
            stat.setdefault("in-high", stage["in-high"])
            amps.append({n: (-v if n in ("out-high", "in-high") else v) for n, v in stat.items()})
        out_span = (float(stage["out-low"]), float(-stage["out-high"]))
        window = None
        if plan.block.window_only:
            window = {c: float(stage[c]) for c in ("input-high", "input-low")}
        percentiles = {
            check: {label: float(quoted[label][(k, None, check)]) for label in QUOTED}
            for check in stage
            if not check.startswith(("out-", "in-"))
        }
        result = judged(
            plan, corner, amps, out_span, window, required, clipped_before, float(probability[k]), percentiles
        )
        clipping.append(clipped_before or result.regime == "clipping")
        results.append(result)
    return results
