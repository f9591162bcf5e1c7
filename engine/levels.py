"""Worst-case output span of every stage at every band frequency (for the level picture).

The corners walk (stage_walk.walk_chain) keeps per-frequency bounds only long enough to pass them
to the next stage; `frequency_levels` walks the chain the same way, with the same functions, and
keeps each linear stage's lowest and highest output at each band frequency. Its overall extremes
are the stage's output span of the corners method (a test holds them equal). A stage's own gain
is frequency dependent when the magnitude of its signal transfer moves by more than
FREQUENCY_DEPENDENT (1 %) across the band at some corner.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

import numpy as np

from railroom.engine.blocks.base import InputLoad
from railroom.engine.checks import judge
from railroom.engine.model import Chain, Part
from railroom.engine.propagation import clamp, merge

FREQUENCY_DEPENDENT = 0.01
SIGNAL_INPUTS = ("in", "pos", "neg")


@dataclass(frozen=True)
class StageLevels:
    index: int
    freqs: np.ndarray          # Hz, the band grid
    low: np.ndarray            # lowest worst-case output at each frequency, V
    high: np.ndarray           # highest
    frequency_dependent: bool  # the stage's own gain moves across the band


def gain_moves(response) -> bool:
    """The stage's signal transfer magnitude varies by more than FREQUENCY_DEPENDENT in band."""
    for key in SIGNAL_INPUTS:
        transfer = response.output.transfers.get(key)
        if transfer is None:
            continue
        band = np.abs(np.asarray(transfer)[..., 1:])
        if band.size == 0:
            continue
        top = band.max(axis=-1)
        spread = (top - band.min(axis=-1)) / np.where(top > 0, top, 1.0)
        if float(np.max(spread)) > FREQUENCY_DEPENDENT:
            return True
    return False


def frequency_levels(chain: Chain, parts: Mapping[str, Part]) -> list[StageLevels | None]:
    """Per stage its StageLevels (None for saturated-by-design stages), corners method."""
    from railroom.engine.analysis import band_grid
    from railroom.engine.methods import corners
    from railroom.engine.plan import plan_chain
    from railroom.engine.stage_walk import linear_stage, saturated_stage
    plans = plan_chain(chain, parts)
    freqs = band_grid(chain, plans)
    prepared = corners.prepare(chain, plans, freqs)
    signal = corners.start_signal(chain, freqs)
    rise = chain.conditions.worst_temperature_rise
    memo: dict = {}
    levels: list[StageLevels | None] = []
    for k, plan in enumerate(prepared.plans):
        following = prepared.responses[k + 1] if k + 1 < len(prepared.responses) else None
        next_load = following.input_load if following is not None else InputLoad()
        v = prepared.values[k]
        if plan.block.saturates:
            measure, signal = saturated_stage(plan, v, signal)
            levels.append(None)
        else:
            measure, bounds = linear_stage(plan, prepared.responses[k], v, signal, freqs,
                                           next_load, rise, False, memo,
                                           max(chain.conditions.temperature) - 25.0)
            low, high = bounds.lo.min(axis=0), bounds.hi.max(axis=0)
            levels.append(StageLevels(plan.index, np.asarray(freqs, dtype=float),
                                      np.broadcast_to(low, np.shape(freqs)).astype(float),
                                      np.broadcast_to(high, np.shape(freqs)).astype(float),
                                      gain_moves(prepared.responses[k])))
            signal = merge(bounds, getattr(signal, "fed_clipped", False))
        result = judge(measure, plan.part, plan.rails, chain.conditions.margin)
        if result.regime == "clipping" and measure.window is not None:
            signal = clamp(signal, measure.window)
    return levels
