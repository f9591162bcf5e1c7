"""A saturated output level (comparator, Schmitt trigger) under a load that returns to a voltage.

The output sits at its swing limit V0 behind its output resistance Ro; a load of conductance G
returns to Vto (the stage's `load_to`, 0 V by default). By Millman's theorem the output node is
the conductance-weighted mean of what it is tied to:

    V = (V0 + Ro G Vto) / (1 + Ro G),     I = (V0 - Vto) G / (1 + Ro G)   (Ohm's law)

I > 0: the output sources the current and V drops below V0; I < 0: it sinks it and V rises
above V0 (a load to a voltage above the level pulls it up). The drop Ro I is capped by the current
limit, as for a load to 0 V (opamp.saturated_levels). A part with a headroom curve reads it at
the unloaded current |V0 - Vto| G (capped), on the side the current flows (part_limits.output_drops).
With Vto = 0 these are the formulas of opamp.saturated_levels exactly. V and I are monotonic in
G and linear-fractional in Vto, so the extremes over ranges of G, Vto and the rails are at their
ends: the level spans below take every end (Horowitz & Hill, The Art of Electronics, ch. 1).
"""

from __future__ import annotations

import itertools

import numpy as np

from railroom.engine.circuit.model import Part, Rails

Span = tuple[float, float]


def returned_level(part: Part, ideal, conductance, to=0.0):
    """The level V for the unloaded level `ideal`, the load conductance and its return `to`
    (floats or numpy arrays alike)."""
    ideal = np.asarray(ideal, dtype=float)
    pull = (ideal - to) * conductance  # the current with no output resistance
    if part.output_headroom_curve:
        from railroom.engine.circuit.part_limits import output_drops

        current = np.minimum(np.abs(pull), part.output_current)
        drop_high, drop_low = output_drops(part, current, current)
        return np.where(pull >= 0, ideal - drop_high, ideal + drop_low)
    current = pull / (1.0 + part.output_resistance * conductance)
    current = np.clip(current, -part.output_current, part.output_current)
    return ideal - part.output_resistance * current


def returned_spans(
    part: Part, rails: Rails, conductances: tuple[float, ...], returns: Span
) -> tuple[Span, Span]:
    """(low min, low max), (high min, high max) over both rail ends, every load conductance
    given and both ends of the return voltage."""
    pos, neg = rails.positive_range, rails.negative_range
    highs = [
        float(returned_level(part, p - part.output_headroom[0], g, to))
        for p, g, to in itertools.product(pos, conductances, returns)
    ]
    lows = [
        float(returned_level(part, n + part.output_headroom[1], g, to))
        for n, g, to in itertools.product(neg, conductances, returns)
    ]
    return (min(lows), max(lows)), (min(highs), max(highs))


def load_current(levels: tuple[Span, Span], conductance: float, returns: Span) -> float:
    """The largest current into the load, A: |V - Vto| G at the level ends and return ends."""
    ends = [levels[0][0], levels[0][1], levels[1][0], levels[1][1]]
    return max(abs(level - to) for level in ends for to in returns) * conductance


def return_span(v) -> Span:
    """Both ends of the stage's `load_to` over its corners (0 V when it has none)."""
    to = v.get("load_to")
    if to is None:
        return (0.0, 0.0)
    return (float(np.min(to)), float(np.max(to)))
