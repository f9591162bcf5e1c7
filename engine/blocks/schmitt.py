"""Schmitt trigger: a comparator with positive feedback, saturated by design, with two thresholds.

invert = false: in through r1 to +, r2 from + to the output, ref drives -. The output flips when
V+ = (Vin r2 + Vout r1)/(r1 + r2) crosses ref, so the input thresholds are
    to go high (output low):  ref (1 + r1/r2) - V_low r1/r2,   to go low:  ref (1 + r1/r2) - V_high r1/r2
invert = true: in to -, r1 from + to ref, r2 from + to the output. V+ = (ref r2 + Vout r1)/(r1 + r2):
    to go high (output low, input falling):  (ref r2 + V_low r1)/(r1 + r2),  to go low: with V_high
(Sedra & Smith, ch. 18; REFERENCES.md: +/-12 V, 10k, 100k -> +/-1.091 V). The saturated levels
carry the rail tolerance and the load drop (opamp.saturated_levels), so each threshold is a span.
"""
from __future__ import annotations

from typing import Mapping

import numpy as np

from railroom.engine.blocks.base import Block, FieldSpec
from railroom.engine.blocks.comparator import Span, Switching, span_of
from railroom.engine.model import Part, Rails
from railroom.engine.opamp import saturated_levels


def thresholds(r1, r2, ref, level: Span, invert: bool) -> np.ndarray:
    """Input threshold at every corner and both ends of one saturated level's span."""
    level = np.array(level)
    if invert:
        return (ref * r2 + level * r1) / (r1 + r2)
    return ref * (1.0 + r1 / r2) - level * r1 / r2


class Schmitt(Block):
    name = "schmitt"
    summary = "comparator with positive feedback: saturated by design, with two thresholds"
    ideal = ("invert = false: switches where in = ref (1 + r1/r2) - out r1/r2 (out at either level)",
             "invert = true: switches where in = (ref r2 + out r1)/(r1 + r2)")
    saturates = True
    fields = {
        "r1": FieldSpec("resistance", help="invert = false: in to + input; true: + input to ref"),
        "r2": FieldSpec("resistance", help="+ input to the output (positive feedback)"),
        "ref": FieldSpec("voltage", required=False, default=0.0,
                         help="invert = false: drives the - input; true: where r1 returns, V"),
        "invert": FieldSpec("flag", required=False, default=False,
                            help="true: signal to the - input"),
    }

    def switch(self, v: Mapping[str, np.ndarray], flags: Mapping[str, object], part: Part,
               rails: Rails, signal: Span) -> Switching:
        r1, r2, ref = v["r1"], v["r2"], v.get("ref", np.zeros((1, 1)))
        invert = bool(flags.get("invert"))
        load = v.get("load")
        g_load = 0.0 if load is None else float(np.max(1.0 / load))
        # the feedback pair loads the output as well (to a voltage near the middle: outside bound)
        levels = saturated_levels(part, rails, g_load + float(np.max(1.0 / (r1 + r2))))
        (low_min, low_max), (high_min, high_max) = levels
        to_high = span_of(thresholds(r1, r2, ref, levels[0], invert))
        to_low = span_of(thresholds(r1, r2, ref, levels[1], invert))
        if invert:
            reaches = (signal[1] > to_low[1], signal[0] < to_high[0])
            # - follows the input; + sits on one threshold or the other
            input_span = (min(signal[0], to_high[0]), max(signal[1], to_low[1]))
            far = max(high_max - float(np.min(ref)), float(np.max(ref)) - low_min)
        else:
            reaches = (signal[0] < to_low[0], signal[1] > to_high[1])
            # V+ stays at or below ref while the output is low, at or above it while high
            plus_high = (signal[1] * r2 + high_max * r1) / (r1 + r2)
            plus_low = (signal[0] * r2 + low_min * r1) / (r1 + r2)
            input_span = (min(float(np.min(ref)), float(np.min(plus_low))),
                          max(float(np.max(ref)), float(np.max(plus_high))))
            far = max(high_max - signal[0], signal[1] - low_min)
        current = (max(abs(high_max), abs(low_min)) * g_load
                   + abs(far) * float(np.max(1.0 / (r1 + r2))))
        return Switching(levels=levels, thresholds=(to_high, to_low), input_span=input_span,
                         reaches=reaches, current=current)
