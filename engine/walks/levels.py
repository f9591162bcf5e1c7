"""Worst-case output span of every stage at every band frequency (for the level picture).

The corners walk (bounds_walk.walk_chain) keeps per-frequency bounds only long enough to pass them
to the next stage; `frequency_levels` asks that same walk to keep each linear stage's bounds and
reads its lowest and highest output at each band frequency. Its overall extremes
are the stage's output span of the corners method (a test holds them equal). A stage's own gain
is frequency dependent when the magnitude of its signal transfer moves by more than
FREQUENCY_DEPENDENT (1 %) across the band at some corner.
"""

from __future__ import annotations

from dataclasses import dataclass
from collections.abc import Mapping

import numpy as np

from railroom.engine.circuit.model import Chain, Part

FREQUENCY_DEPENDENT = 0.01
SIGNAL_INPUTS = ("in", "pos", "neg")


@dataclass(frozen=True)
class StageLevels:
    index: int
    freqs: np.ndarray  # Hz, the band grid
    low: np.ndarray  # lowest worst-case output at each frequency, V
    high: np.ndarray  # highest
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
    """Per stage its StageLevels (None for saturated-by-design stages), corners method: the
    corners walk itself, asked to keep each stage's bounds per frequency (a passive stage's are
    those of the next stage's input terminal, as the check shows it)."""
    from railroom.engine.walks.preparation import band_grid
    from railroom.engine.methods import corners
    from railroom.engine.walks.preparation import plan_chain
    from railroom.engine.walks.bounds_walk import walk_chain

    plans = plan_chain(chain, parts)
    freqs = band_grid(chain, plans)
    prepared = corners.prepare(chain, plans, freqs)
    # with shared values (nets) every joint walk keeps its bounds; the picture takes their union
    walks: list[dict] = []
    for each in prepared.joint_walks or (prepared,):
        walks.append({})
        walk_chain(each, corners.start_signal(chain, freqs), levels=walks[-1])
    levels: list[StageLevels | None] = []
    for k, plan in enumerate(plans):
        found = [kept[k] for kept in walks if k in kept]
        if plan.block.saturates or not found:
            levels.append(None)
            continue
        low = np.min([bounds.lo.min(axis=0) for bounds in found], axis=0)
        high = np.max([bounds.hi.max(axis=0) for bounds in found], axis=0)
        levels.append(
            StageLevels(
                plan.index,
                np.asarray(freqs, dtype=float),
                np.broadcast_to(low, np.shape(freqs)).astype(float),
                np.broadcast_to(high, np.shape(freqs)).astype(float),
                gain_moves(prepared.responses[k]),
            )
        )
    return levels
