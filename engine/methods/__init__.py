"""Methods: corners (extreme values), rss (root-sum-square), montecarlo. Same input, same result shape.

The statistical methods measure each margin per circuit (engine/draw_walk.py) and turn the
statistic they quote (rss: nominal - 3 sigma; montecarlo: the 0.1 % percentile over the draws)
back into a StageMeasure that checks.judge decides on like any other: each op amp's output and
input spans are the statistic's, and its window is the one that leaves exactly that margin.
"""

from __future__ import annotations

from dataclasses import replace

from railroom.engine.checks import judge
from railroom.engine.results import StageResult

Stat = dict[str, float]


def run_statistical(method: str, chain, plans, freqs, corner_stages, progress=None, layout=None, lin=None):
    """Hook for the statistical methods; returns (stage results, chain yield). `progress`:
    see montecarlo.run. `layout` (full band) and `lin` (its linearisation) when the caller
    has them already."""
    if method == "rss":
        from railroom.engine.methods.rss import run

        return run(chain, plans, freqs, corner_stages, lin=lin), None
    if method == "montecarlo":
        from railroom.engine.methods.montecarlo import run

        return run(
            chain,
            plans,
            freqs,
            corner_stages,
            progress=progress,
            layout=layout,
            decisive=None if lin is None else lin.decisive,
        )
    raise NotImplementedError(f"method {method!r} is not built")


def judged(
    plan,
    corner: StageResult,
    amps: list[Stat],
    out_span: tuple[float, float],
    window_margins: Stat | None,
    required: float,
    fed_clipped: bool,
    probability: float | None = None,
    percentiles: dict | None = None,
) -> StageResult:
    """A StageResult whose margins are the statistic's. `amps` holds per op amp its margins and
    spans ("out-low", "out-high", "in-low", "in-high")."""
    m = corner.measure
    opamps = []
    # fed a clipped signal: the per-circuit walk reads a clipped sine's slope from its held
    # amplitude; the corners walk carries the clipped waveform's own slope bound, so its need stands
    slew_from_corners = fed_clipped and m.fed_clipped
    for old, stat in zip(m.opamps, amps):
        out = (stat.get("out-low", old.output[0]), stat.get("out-high", old.output[1]))
        inp = (stat["in-low"], stat["in-high"])
        window = old.window
        if "output-high" in stat:
            window = (out[0] - stat["output-low"], out[1] + stat["output-high"])
        opamps.append(
            replace(
                old,
                output=out,
                window=window,
                input=inp,
                input_window=(inp[0] - stat["input-low"], inp[1] + stat["input-high"]),
                slew_needed=(
                    old.slew_available - stat["slew"]
                    if "slew" in stat and not slew_from_corners
                    else old.slew_needed
                ),
                current_needed=old.current_available - stat["current"],
            )
        )
    window = m.window
    if opamps and not m.saturated:
        window = opamps[-1].window
    if window_margins is not None:
        window = (out_span[0] - window_margins["input-low"], out_span[1] + window_margins["input-high"])
    measure = replace(
        m,
        output=out_span,
        opamps=tuple(opamps),
        window=window,
        fed_clipped=fed_clipped,
        probability=probability,
        percentiles=percentiles,
    )
    if amps and "input-differential" in amps[0]:  # the statistic's, as the other margins
        measure = replace(
            measure, input_differential=plan.part.input_differential_max - amps[0]["input-differential"]
        )
    return judge(measure, plan.part, plan.rails, required)
