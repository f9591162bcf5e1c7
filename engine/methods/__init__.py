"""Methods: corners (extreme values), rss (root-sum-square), montecarlo: `run(setup, progress) -> Outcome`.

Every method module has the same entry, `run(setup: Setup, progress=None) -> Outcome`; `run`
below picks the chain's method. The corners verdicts come first (every method starts from them
and the design aids compare against them), so `Setup.corner_stages` is filled before rss or
Monte Carlo runs.

The statistical methods measure each margin per circuit (engine/walks/circuit_walk.py) and turn the
statistic they quote (rss: nominal - 3 sigma; montecarlo: the 0.1 % percentile over the draws)
back into a StageMeasure that checks.judge decides on like any other: each op amp's output and
input spans are the statistic's, and its window is the one that leaves exactly that margin.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field, replace
from importlib import import_module
from typing import Any

import numpy as np

from railroom.engine.circuit.model import Chain
from railroom.engine.verdict.judge import judge
from railroom.engine.verdict.results import StageResult

Stat = dict[str, float]
Progress = Callable[[float], bool]  # fraction done -> keep going?


@dataclass(frozen=True)
class Setup:
    """What every method starts from, built once by analysis.analyse."""

    chain: Chain
    plans: list
    freqs: np.ndarray  # the band grid (Hz)
    prepared: Any  # corners.Prepared: the chain's values and responses, amplitude-independent
    notes: list | None = None  # per-stage measure fields known beforehand (nominal span, gain error)
    corner_stages: list[StageResult] = field(default_factory=list)  # the corners verdicts
    layout: Any = None  # circuit_walk.Layout over the full band, when built (statistics, aids)
    lin: Any = None  # sensitivity.Linearised of `layout`, when built


@dataclass(frozen=True)
class Outcome:
    """What a method returns: its stage verdicts, and the chain yield where it measures one."""

    stages: list[StageResult]
    chain_yield: float | None = None


def run(setup: Setup, progress: Progress | None = None) -> Outcome:
    """The chain's method (conditions.method) on `setup`. `progress(fraction) -> bool` hears
    how far a long method is; returning False stops it with montecarlo.Cancelled."""
    method = setup.chain.conditions.method
    if method not in ("corners", "rss", "montecarlo"):
        raise NotImplementedError(f"method {method!r} is not built")
    return import_module(f"railroom.engine.methods.{method}").run(setup, progress)


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
    """A StageResult whose margins are the statistic's, judged as they are. `amps` holds per op
    amp its margins and spans ("out-low", "out-high", "in-low", "in-high"); the spans and the
    windows that leave those margins are set on the measure for the views. A stage fed a
    clipped signal has its slew need from the slope bound each circuit carries (circuit_walk)."""
    m = corner.measure
    opamps = []
    for old, stat in zip(m.opamps, amps):
        out = (stat.get("out-low", old.output[0]), stat.get("out-high", old.output[1]))
        inp = (stat["in-low"], stat["in-high"])
        amp_window = old.window
        if "output-high" in stat:
            amp_window = (out[0] - stat["output-low"], out[1] + stat["output-high"])
        opamps.append(
            replace(
                old,
                output=out,
                window=amp_window,
                input=inp,
                input_window=(inp[0] - stat["input-low"], inp[1] + stat["input-high"]),
                slew_needed=old.slew_available - stat["slew"] if "slew" in stat else old.slew_needed,
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
    # the statistic's margins go to the judge as they are; the windows above are for the views
    margins: Stat = {}
    nodes: dict[str, str] = {}
    checks = ["input-high", "input-low", "current"]
    if not m.saturated:
        checks += ["output-high", "output-low", "slew"]
    for amp, stat in zip(m.opamps, amps):
        for check in checks:
            if check in stat and (check not in margins or stat[check] < margins[check]):
                margins[check], nodes[check] = stat[check], amp.label
    if window_margins is not None and not m.opamps:
        margins.update({c: window_margins[c] for c in ("input-high", "input-low")})
    return judge(measure, plan.part, plan.rails, required, measured=(margins, nodes))
