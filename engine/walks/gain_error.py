"""Closed-loop gain shortfall of each stage against the ideal op amp, at the top of the band."""

from __future__ import annotations

from functools import partial

import numpy as np

from railroom.engine.circuit.model import Chain
from railroom.engine.walks.reuse import STAGE_FACTS, array_key, plan_key


def gain_errors(chain: Chain, plans) -> list[float | None]:
    """Closed-loop gain shortfall at the top of the band against the ideal op amp, nominal values."""
    from railroom.engine.circuit.opamp import laplace_grid

    s = laplace_grid(np.array([chain.source.band[1]]))
    errors: list[float | None] = []
    from railroom.engine.walks.bounds_walk import plan_parents

    for plan, parent in zip(plans, plan_parents(plans)):
        differential = chain.source.differential and parent < 0  # fed by the source (`from`)
        if plan.block.saturates or plan.part is None:
            errors.append(None)
            continue
        # kept by the stage's own inputs (walks/reuse.py): a keystroke changes one stage
        key = ("gain error", plan_key(plan), differential, array_key(s))
        errors.append(STAGE_FACTS.get(key, partial(stage_gain_error, plan, s, differential)))
    return errors


def stage_gain_error(plan, s: np.ndarray, differential: bool) -> float | None:
    from railroom.engine.methods.corners import corner_values
    from railroom.engine.circuit.opamp import inverse_open_loop

    v = corner_values(plan, 0.0, nominal=True)
    real = plan.block.respond(v, s, inverse_open_loop(plan.part, s), 0.0, differential).output
    ideal = plan.block.respond(v, s, inverse_open_loop(None, s), 0.0, differential).output
    signal = ("pos", "neg") if differential else ("in",)
    h_real = sum(real.transfers.get(k, 0) * (-1) ** i for i, k in enumerate(signal))
    h_ideal = sum(ideal.transfers.get(k, 0) * (-1) ** i for i, k in enumerate(signal))
    magnitude = abs(complex(np.ravel(h_ideal)[-1]))
    return None if magnitude == 0 else float(1.0 - abs(complex(np.ravel(h_real)[-1])) / magnitude)
