"""Open-loop comparator: saturated by design.

Without negative feedback the op amp's output sits at its upper swing limit when V+ > V-, and at
the lower one otherwise (common practice; the ideal op-amp rules). Both inputs must stay inside
the part's common-mode window, and the output levels carry the rail tolerance and load drop
(a load returning to `load_to`: its drop either way, Millman's theorem, returned_levels.py).

The op amp's errors move the threshold, each at its worst sign: the output flips where
V+ + Vos = V-, and the bias current Ib drawn from the signal's pin drops Ib Rd across the
resistance Rd that drives it (the source impedance, or a passive stage before it); the threshold
pin is driven by a voltage source. The input level at which it flips is therefore
    threshold +/- (|Vos| + Ib Rd)
(the same either way round, invert = true or false), and the signal's pin sits within +/- Ib Rd of
the signal (its common-mode span).
"""

from __future__ import annotations

from dataclasses import dataclass
from collections.abc import Mapping

import numpy as np

from railroom.engine.circuit.blocks.base import Block, FieldSpec, dc_resistance
from railroom.engine.circuit.model import Part, Rails
from railroom.engine.circuit.opamp import saturated_levels
from railroom.engine.circuit.returned_levels import load_current, return_span, returned_spans

Span = tuple[float, float]


@dataclass(frozen=True)
class Switching:
    """What a saturating block does with the span it is fed."""

    levels: tuple[Span, Span]  # (low level min/max, high level min/max), V
    thresholds: tuple[Span, Span]  # input level to go high, to go low (each min/max), V
    input_span: Span  # common-mode span at the op amp's inputs, V
    reaches: tuple[bool, bool]  # (can reach low, can reach high) at every corner
    current: float  # largest output current, A


def span_of(values: np.ndarray) -> Span:
    return (float(np.min(values)), float(np.max(values)))


class Comparator(Block):
    name = "comparator"
    summary = "open loop against a threshold voltage: saturated by design"
    ideal = (
        "out = upper swing limit while in > threshold, lower limit while in < threshold",
        "invert = true swaps them",
    )
    saturates = True
    fields = {
        "threshold": FieldSpec("voltage", help="voltage on the other input, V"),
        "invert": FieldSpec(
            "flag",
            required=False,
            default=False,
            help="true: signal to the - input, threshold to the + input",
        ),
    }

    def switch(
        self,
        v: Mapping[str, np.ndarray],
        flags: Mapping[str, object],
        part: Part,
        rails: Rails,
        signal: Span,
        offset: float = 0.0,
        bias: float = 0.0,
    ) -> Switching:
        # the offset and the bias current through the driving resistance, at their worst sign
        # (module docstring), as the Schmitt trigger's (schmitt.py)
        drop = float(np.max(np.abs(bias) * dc_resistance(v.get("drive", 0.0))))
        error = abs(offset) + drop
        written = span_of(v["threshold"])
        threshold = (written[0] - error, written[1] + error)
        load = v.get("load")
        conductance = 0.0 if load is None else float(np.max(1.0 / load))
        if "load_to" in v:  # the load returns to a voltage: Millman's theorem (returned_levels)
            returns = return_span(v)
            levels = returned_spans(part, rails, (0.0, conductance), returns)
        else:
            returns = (0.0, 0.0)
            levels = saturated_levels(part, rails, conductance)
        # output high when the signal is above the threshold (below it when inverted)
        above = signal[1] > threshold[1]  # goes above at every corner of the threshold
        below = signal[0] < threshold[0]
        reaches = (below, above) if not flags.get("invert") else (above, below)
        current = load_current(levels, conductance, returns)  # demanded, uncapped
        return Switching(
            levels=levels,
            thresholds=(threshold, threshold),
            input_span=(min(signal[0] - drop, written[0]), max(signal[1] + drop, written[1])),
            reaches=reaches,
            current=current,
        )
