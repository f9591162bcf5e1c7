"""Walking the prepared chain stage by stage: bounds -> measures -> verdict -> next stage's input.

Used by the corners method (and by the nominal pass, which is corners with no spread and no
offsets). The next stage's input loads this stage's output: its conductance to its return voltage
adds to the output current before the swing window is drawn.
"""
from __future__ import annotations

from dataclasses import replace

import numpy as np

from railroom.engine.blocks.base import BlockResponse, InputLoad, OpAmpNodes
from railroom.engine.checks import judge
from railroom.engine.margins import load_currents
from railroom.engine.opamp import TWO_PI, input_window, output_window
from railroom.engine.part_limits import bias_at, clipped_differential, saturated_differential
from railroom.engine.plan import StagePlan
from railroom.engine.propagation import (DifferentialSignal, NodeBounds, Signal, clamp, error_bound,
                                         memory_order, merge, node_bounds, single_bounds,
                                         single_terms)
from railroom.engine.results import OpAmpMeasure, StageMeasure, StageResult


def span(bounds: NodeBounds) -> tuple[float, float]:
    return (float(np.min(bounds.lo)), float(np.max(bounds.hi)))


def bounds_once(node, v: dict, signal, offsets, bias, known: dict,
                memo: dict | None = None) -> NodeBounds:
    """The node's bounds, found once per stage: a stage's output node is usually its last op
    amp's output node too. `known` holds the node with its bounds so that its id stays its own.
    `memo` keeps each node's own terms (propagation.NodeTerms) across walks of one Prepared:
    the headroom search walks it again and again with only the source amplitude changed."""
    if id(node) in known:
        return known[id(node)][1]
    if memo is None or isinstance(signal, DifferentialSignal):
        bounds = node_bounds(node, v, signal, error_bound(node, offsets, bias))
    else:
        if id(node) not in memo:
            memo[id(node)] = (node, single_terms(node, v, error_bound(node, offsets, bias),
                                                 order=memory_order(signal.hi)))
        bounds = single_bounds(node, v, signal, None, terms=memo[id(node)][1])
    known[id(node)] = (node, bounds)
    return bounds


def walk_chain(prepared, signal, nominal: bool = False, notes=None, first: int = 0,
               entering: list | None = None, stop: int | None = None) -> list[StageResult]:
    """Results of stages `first` up to (not including) `stop`, the last by default, fed `signal`
    at stage `first`. `entering`, when
    given, receives the signal entering each walked stage (the fix search re-walks from there)."""
    chain = prepared.chain
    rise = chain.conditions.worst_temperature_rise
    # node terms depend on the offsets, which the nominal walk leaves out: one memo for each
    memo = prepared.memo.setdefault(("terms", nominal), {})
    results: list[StageResult] = []
    for k in range(first, len(prepared.plans) if stop is None else stop):
        plan = prepared.plans[k]
        if entering is not None:
            entering.append(signal)
        following = prepared.responses[k + 1] if k + 1 < len(prepared.responses) else None
        next_load = following.input_load if following is not None else InputLoad()
        v = prepared.values[k]
        if plan.block.saturates:
            measure, signal = saturated_stage(plan, v, signal)
        else:
            measure, bounds = linear_stage(plan, prepared.responses[k], v, signal, prepared.freqs,
                                           next_load, rise, nominal, memo,
                                           max(chain.conditions.temperature) - 25.0)
            signal = merge(bounds, getattr(signal, "fed_clipped", False))
        if notes is not None:
            measure = replace(measure, **notes[k])
        result = judge(measure, plan.part, plan.rails, chain.conditions.margin)
        if result.regime == "clipping" and measure.window is not None:
            signal = clamp(signal, measure.window)
        results.append(result)
    return results


def linear_stage(plan: StagePlan, response: BlockResponse, v: dict, signal, freqs: np.ndarray,
                 next_load: InputLoad, rise: float, nominal: bool,
                 memo: dict | None = None, hot_rise: float = 0.0) -> tuple[StageMeasure, NodeBounds]:
    part = plan.part
    count = len(response.opamps)
    offsets = np.full(count, 0.0 if (nominal or part is None) else part.offset_at(25.0 + rise))
    bias = 0.0 if (nominal or part is None) else bias_at(part, 25.0 + hot_rise)
    known: dict = {}
    out = bounds_once(response.output, v, signal, offsets, bias, known, memo)
    amps = tuple(
        opamp_measure(plan, amp, v, signal, offsets, bias, freqs,
                      next_load if amp.output is response.output else InputLoad(), known, memo)
        for amp in response.opamps
    )
    window = amps[-1].window if amps else None
    if plan.block.window_only:
        window = (float(np.max(v["low"])), float(np.min(v["high"])))   # worst over tolerance
    inner = {name: span(bounds_once(node, v, signal, offsets, bias, known, memo))
             for name, node in response.inner.items()}
    measure = StageMeasure(
        index=plan.index, stage=plan.stage, output=span(out), nominal=span(out), opamps=amps,
        window=window, supply=plan.rails.span_range if part else None,
        fed_clipped=getattr(signal, "fed_clipped", False), inner=inner,
        input_differential=clipped_differential(part, response, amps, freqs),
    )
    return measure, out


def opamp_measure(plan: StagePlan, amp: OpAmpNodes, v: dict, signal, offsets, bias, freqs,
                  load: InputLoad, known: dict | None = None, memo: dict | None = None
                  ) -> OpAmpMeasure:
    part = plan.part
    known = {} if known is None else known
    out = bounds_once(amp.output, v, signal, offsets, bias, known, memo)
    plus = bounds_once(amp.plus, v, signal, offsets, bias, known, memo)
    current = bounds_once(amp.current, v, signal, offsets, bias, known, memo)
    out_span = span(out)
    sourced, sunk = load_currents(float(np.max(current.hi)), float(np.min(current.lo)),
                                  out_span[1], out_span[0], load)
    needed = float(max(sourced, sunk))
    slew = float(np.max(TWO_PI * freqs * out.amp_hi)) if out.amp_hi.size else 0.0
    return OpAmpMeasure(
        label=amp.label, output=out_span,
        window=output_window(part, plan.rails, float(sourced), float(sunk)),
        input=span(plus), input_window=input_window(part, plan.rails),
        slew_needed=slew, slew_available=part.slew,
        current_needed=needed, current_available=part.output_current,
    )


def saturated_stage(plan: StagePlan, v: dict, signal) -> tuple[StageMeasure, Signal]:
    """A comparator-like stage: switch levels, thresholds and the two-level signal it passes on."""
    incoming = signal.span if isinstance(signal, Signal) else (signal.common[0], signal.common[1])
    switching = plan.block.switch(v, plan.flags, plan.part, plan.rails, incoming)
    (low_min, low_max), (high_min, high_max) = switching.levels
    reach_low, reach_high = switching.reaches
    top = high_max if reach_high else low_max
    bottom = low_min if reach_low else high_min
    amp = OpAmpMeasure(
        label="comparator", output=(bottom, top), window=(low_min, high_max),
        input=switching.input_span, input_window=input_window(plan.part, plan.rails),
        slew_needed=0.0, slew_available=plan.part.slew,
        current_needed=switching.current, current_available=plan.part.output_current,
    )
    measure = StageMeasure(
        index=plan.index, stage=plan.stage, output=(bottom, top), nominal=(bottom, top),
        opamps=(amp,), window=(low_min, high_max), supply=plan.rails.span_range,
        fed_clipped=getattr(signal, "fed_clipped", False), saturated=True,
        thresholds=switching.thresholds, reaches=switching.reaches,
        input_differential=float(np.max(saturated_differential(
            plan.stage.block, v, plan.flags, incoming, switching.levels))),
    )
    freqs_shape = np.shape(signal.hi) if isinstance(signal, Signal) else (1,)
    zero = np.zeros(freqs_shape)
    passed = Signal(hi=zero + top, lo=zero + bottom, amp_lo=zero, amp_hi=zero,
                    fed_clipped=getattr(signal, "fed_clipped", False))
    return measure, passed
