"""The envelope of several corner walks of one chain: one walk per joint corner of the values the
stages share (named nets and the rails ratiometric nets follow, engine/circuit/nets.py).

Within one walk every stage sees the same value of each shared quantity, so a ratiometric window
and a ratiometric bias move together as they do on the board. The envelope keeps, per stage and
check, the least margin over the walks, and the union of every span; each window is rebuilt as
the one that leaves exactly that margin (as methods/__init__.judged does for the statistics), so
checks.judge decides on it like on any other measure. Spans are unions, margins minima: the
envelope is exactly the worst over the joint corners, never narrower.
"""

from __future__ import annotations

from dataclasses import replace

from railroom.engine.verdict.judge import judge
from railroom.engine.verdict.results import OpAmpMeasure, Span, StageMeasure, StageResult


def union(spans) -> Span:
    spans = list(spans)
    return (min(s[0] for s in spans), max(s[1] for s in spans))


def _room(outputs, windows) -> tuple[float, float]:
    """Least room below and above over the walks: (output low - window low, window high - output high)."""
    pairs = list(zip(outputs, windows))
    return (min(o[0] - w[0] for o, w in pairs), min(w[1] - o[1] for o, w in pairs))


def merged_amp(amps: list[OpAmpMeasure], saturated: bool) -> OpAmpMeasure:
    out = union(a.output for a in amps)
    inp = union(a.input for a in amps)
    if saturated:
        window = union(a.window for a in amps)
    else:
        low, high = _room([a.output for a in amps], [a.window for a in amps])
        window = (out[0] - low, out[1] + high)
    in_low, in_high = _room([a.input for a in amps], [a.input_window for a in amps])
    return replace(
        amps[0],
        output=out,
        window=window,
        input=inp,
        input_window=(inp[0] - in_low, inp[1] + in_high),
        slew_needed=max(a.slew_needed for a in amps),
        current_needed=max(a.current_needed for a in amps),
    )


def merged_measure(measures: list[StageMeasure], supply: Span | None) -> StageMeasure:
    first = measures[0]
    out = union(m.output for m in measures)
    amps = tuple(
        merged_amp([m.opamps[i] for m in measures], first.saturated) for i in range(len(first.opamps))
    )
    window = None
    if first.window is not None:
        if first.saturated:
            window = union(m.window for m in measures if m.window is not None)
        else:
            low, high = _room([m.output for m in measures], [m.window for m in measures])
            window = (out[0] - low, out[1] + high)
    # one stage's measures: a saturating block's carry thresholds, reaches and always at every corner
    thresholds = None
    if first.thresholds is not None:
        sets = [m.thresholds for m in measures if m.thresholds is not None]
        thresholds = (union(t[0] for t in sets), union(t[1] for t in sets))
    reaches = always = None
    if first.reaches is not None:
        pairs = [m.reaches for m in measures if m.reaches is not None]
        reaches = (any(p[0] for p in pairs), any(p[1] for p in pairs))
    if first.always is not None:
        pairs = [m.always for m in measures if m.always is not None]
        always = (all(p[0] for p in pairs), all(p[1] for p in pairs))
    differential = [m.input_differential for m in measures if m.input_differential is not None]
    phase = [m.phase_margin_deg for m in measures if m.phase_margin_deg is not None]
    return replace(
        first,
        output=out,
        opamps=amps,
        window=window,
        supply=supply,
        fed_clipped=any(m.fed_clipped for m in measures),
        thresholds=thresholds,
        reaches=reaches,
        always=always,
        inner={key: union(m.inner[key] for m in measures) for key in first.inner},
        input_differential=max(differential) if differential else None,
        phase_margin_deg=min(phase) if phase else None,
    )


def envelope(walks: list[list[StageResult]], plans, required: float, lean: bool = False) -> list[StageResult]:
    """Per stage, the worst over the walks, judged against the stage's own (unpinned) rails
    (`lean`: judge's, for a caller that reads the margins alone)."""
    results = []
    for k, plan in enumerate(plans):
        measures = [walk[k].measure for walk in walks]
        supply = plan.rails.span_range if plan.part is not None else None
        results.append(judge(merged_measure(measures, supply), plan.part, plan.rails, required, lean=lean))
    return results
