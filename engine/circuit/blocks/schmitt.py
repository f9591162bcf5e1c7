"""Schmitt trigger: a comparator with positive feedback, saturated by design, with two thresholds.

invert = false: in through r1 to +, r2 from + to the output, ref drives -. The output flips when
V+ = (Vin r2 + Vout r1)/(r1 + r2) crosses ref, so the input thresholds are
    to go high (output low):  ref (1 + r1/r2) - V_low r1/r2,   to go low:  ref (1 + r1/r2) - V_high r1/r2
invert = true: in to -, r1 from + to ref, r2 from + to the output. V+ = (ref r2 + Vout r1)/(r1 + r2):
    to go high (output low, input falling):  (ref r2 + V_low r1)/(r1 + r2),  to go low: with V_high
(Sedra & Smith, Microelectronic Circuits, ch. 18, the bistable multivibrator; worked example:
+/-12 V levels, r1 = 10k, r2 = 100k -> thresholds +/-1.2 V non-inverting, +/-1.091 V inverting,
[memory]; tests/engine/test_blocks_catalogue.py checks both).

The op amp's errors move both thresholds, each at its worst sign (the flip is V+ + Vos = V-, with
the bias current Ib drawn from each pin):
    invert = false:  +/- (|Vos| (1 + r1'/r2) + Ib r1'),   r1' = r1 + the driving resistance
                     (Ib (r1' || r2) at +, referred to the input by (r1' + r2)/r2)
    invert = true:   +/- (|Vos| + Ib (r1 || r2) + Ib Rd),  Rd the driving resistance at -
The saturated levels carry the rail tolerance and the drop under the output's own load (the load
and the feedback pair: V = V0 / (1 + Ro G), opamp.saturated_levels), each end with its own
conductance: the highest level with the least load, the lowest with the most. The input
common-mode check pairs each rail corner with the level, hence the threshold, at that corner:
the + pin moves by r1/(r1 + r2) < 1 of a rail move, so the lowest positive rail (and the highest
negative one) is the worst, the corner the window is drawn at. A load returning to `load_to`
drops each level by the current it sources or sinks (returned_levels.py, Millman's theorem).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from railroom.engine.circuit.blocks.base import Block, FieldSpec, dc_resistance
from railroom.engine.circuit.blocks.comparator import Span, Switching
from railroom.engine.circuit.model import Part, Rails
from railroom.engine.circuit.returned_levels import return_span, returned_level, returned_spans


def thresholds(r1, r2, ref, level, invert: bool) -> np.ndarray:
    """Input threshold at every corner for the output sitting at `level` (an array of ends)."""
    level = np.array(level)
    if invert:
        return (ref * r2 + level * r1) / (r1 + r2)
    return ref * (1.0 + r1 / r2) - level * r1 / r2


def loaded(part: Part, ideal, conductance):
    """A saturated output level under its load: V = V0 / (1 + Ro G), the drop capped by the
    current limit (opamp.saturated_levels)."""
    ideal = np.asarray(ideal, dtype=float)
    current = np.minimum(
        np.abs(ideal) * conductance / (1 + part.output_resistance * conductance), part.output_current
    )
    return ideal - np.sign(ideal) * part.output_resistance * current


def level_spans(part: Part, rails: Rails, least: float, most: float) -> tuple[Span, Span]:
    """(low min, low max), (high min, high max) over both rail ends and both load ends."""
    pos, neg = rails.positive_range, rails.negative_range
    highs = [loaded(part, p - part.output_headroom[0], g) for p in pos for g in (least, most)]
    lows = [loaded(part, n + part.output_headroom[1], g) for n in neg for g in (least, most)]
    return (min(lows), max(lows)), (min(highs), max(highs))


class Schmitt(Block):
    name = "schmitt"
    summary = "comparator with positive feedback: saturated by design, with two thresholds"
    ideal = (
        "invert = false: switches where in = ref (1 + r1/r2) - out r1/r2 (out at either level)",
        "invert = true: switches where in = (ref r2 + out r1)/(r1 + r2)",
    )
    saturates = True
    fields = {
        "r1": FieldSpec("resistance", help="invert = false: in to + input; true: + input to ref"),
        "r2": FieldSpec("resistance", help="+ input to the output (positive feedback)"),
        "ref": FieldSpec(
            "voltage",
            required=False,
            default=0.0,
            help="invert = false: drives the - input; true: where r1 returns, V",
        ),
        "invert": FieldSpec("flag", required=False, default=False, help="true: signal to the - input"),
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
        r1, r2, ref = v["r1"], v["r2"], v.get("ref", np.zeros((1, 1)))
        drive = np.broadcast_to(dc_resistance(v.get("drive", 0.0)), np.shape(r1 + r2))
        invert = bool(flags.get("invert"))
        series = r1 if invert else r1 + drive  # the input's own path to + (not inverted)
        load = v.get("load")
        g_load = (0.0, 0.0) if load is None else (float(np.min(1.0 / load)), float(np.max(1.0 / load)))
        g_pair = 1.0 / (series + r2)
        # the feedback pair loads the output as well (to a voltage near the middle)
        levels = level_spans(part, rails, g_load[0], g_load[1] + float(np.max(g_pair)))
        returns = return_span(v)
        if "load_to" in v:
            # the load returns to a voltage (Millman's theorem, returned_levels.py); the pair
            # keeps its return near the middle (0 V), its conductance at both ends as before
            alone = returned_spans(part, rails, g_load, returns)
            # with the pair: one branch of g_load + g_pair to their Millman mean
            most = g_load[1] + float(np.max(g_pair))
            mean = (returns[0] * g_load[1] / most, returns[1] * g_load[1] / most)
            both = returned_spans(part, rails, (most,), mean)
            levels = (
                (min(alone[0][0], both[0][0]), max(alone[0][1], both[0][1])),
                (min(alone[1][0], both[1][0]), max(alone[1][1], both[1][1])),
            )
        if invert:
            error = offset + bias * r1 * r2 / (r1 + r2) + bias * drive
        else:
            error = offset * (1.0 + series / r2) + bias * series
        to_high = widened(thresholds(series, r2, ref, levels[0], invert), error)
        to_low = widened(thresholds(series, r2, ref, levels[1], invert), error)
        # some corner can reach each state (the output span); every-corner crossing, for the
        # caution that the output may stick, is judged against the signal per band frequency
        if invert:
            reaches = (signal[1] > to_low[0], signal[0] < to_high[1])
        else:
            reaches = (signal[0] < to_low[1], signal[1] > to_high[0])
        input_span = self.input_span(
            series, r2, ref, part, rails, g_load, signal, invert, bias, drive, to_high, to_low
        )
        current = output_current(levels, part, rails, g_load[1], g_pair, ref, signal, invert, returns)
        return Switching(
            levels=levels,
            thresholds=(to_high, to_low),
            input_span=input_span,
            reaches=reaches,
            current=current,
        )

    @staticmethod
    def input_span(
        series, r2, ref, part, rails, g_load, signal, invert, bias, drive, to_high, to_low
    ) -> Span:
        """Both pins' common-mode span with each rail paired with its own level: the levels at
        the window's corner (lowest positive, highest negative rail), at their least load."""
        high = float(loaded(part, rails.positive_range[0] - part.output_headroom[0], g_load[0]))
        low = float(loaded(part, rails.negative_range[1] + part.output_headroom[1], g_load[0]))
        if invert:
            # - follows the input (less the bias drop through the driving resistance); + sits on
            # the threshold of the state it is in
            pin = float(np.max(bias * drive))
            pair_high = float(np.max(thresholds(series, r2, ref, [high], True)))
            pair_low = float(np.min(thresholds(series, r2, ref, [low], True)))
            shift = float(np.max(bias * series * r2 / (series + r2)))
            return (min(signal[0] - pin, pair_low - shift), max(signal[1] + pin, pair_high + shift))
        # V+ stays at or below ref while the output is low, at or above it while high; the bias
        # current through r1' || r2 moves it either way
        shift = float(np.max(bias * series * r2 / (series + r2)))
        plus_high = (signal[1] * r2 + high * series) / (series + r2) + shift
        plus_low = (signal[0] * r2 + low * series) / (series + r2) - shift
        return (
            min(float(np.min(ref)), float(np.min(plus_low))),
            max(float(np.max(ref)), float(np.max(plus_high))),
        )


def widened(values: np.ndarray, error) -> Span:
    """The span of a threshold over the corners, widened by the op amp's error either way."""
    return (float(np.min(values - error)), float(np.max(values + error)))


def output_current(
    levels, part, rails, g_load: float, g_pair, ref, signal, invert, returns: Span = (0.0, 0.0)
) -> float:
    """The largest current the output drives: into its load at the level with the most load
    current (to the farther end of where the load returns, `load_to`; returned_levels.py), and
    through the feedback pair to its far end (the input, or ref when inverted)."""
    high_ideal = rails.positive_range[1] - part.output_headroom[0]
    low_ideal = rails.negative_range[0] + part.output_headroom[1]
    if returns == (0.0, 0.0):
        high, low = float(loaded(part, high_ideal, g_load)), float(loaded(part, low_ideal, g_load))
        high_load, low_load = abs(high) * g_load, abs(low) * g_load
    else:  # each level at each end of where the load returns: |V - Vto| G (Ohm's law)
        highs = [(float(returned_level(part, high_ideal, g_load, to)), to) for to in returns]
        lows = [(float(returned_level(part, low_ideal, g_load, to)), to) for to in returns]
        high, low = max(h for h, _ in highs), min(lo for lo, _ in lows)
        high_load = max(abs(h - to) for h, to in highs) * g_load
        low_load = max(abs(lo - to) for lo, to in lows) * g_load
    far_low, far_high = (float(np.min(ref)), float(np.max(ref))) if invert else signal
    pair = float(np.max(g_pair))
    return max(
        high_load + max(high - far_low, 0.0) * pair,
        low_load + max(far_high - low, 0.0) * pair,
    )
