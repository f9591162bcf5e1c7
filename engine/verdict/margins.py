"""The margin kernel: each check's formula once, on floats or numpy arrays alike.

The corners walk (one worst case per stage), the draw walk (one margin per drawn circuit) and the
per-draw reference all call these, so a check's meaning lives in one place.

Output current has a direction (datasheets give swing against current per direction): the upper
headroom grows with the current the op amp SOURCES at its upper extreme, the lower headroom with
the current it SINKS at its lower extreme; current flowing the other way adds no headroom on that
side. The current check uses the larger of the two magnitudes. The model of the growth is the
part's output resistance times the current (common practice for rail-to-rail outputs).
"""

from __future__ import annotations

from typing import Any, TypeAlias

import numpy as np

from railroom.engine.circuit.blocks.base import InputLoad
from railroom.engine.circuit.model import Part

Number = Any  # a float, or a numpy array of margins per circuit

MEETS_AT_EQUALITY = 1e-9  # a need within this fraction of its limit's scale meets it


Loads: TypeAlias = "InputLoad | tuple[InputLoad, ...]"  # what the stages fed by an output draw (one each)


def each_load(load: Loads) -> tuple[InputLoad, ...]:
    return (load,) if isinstance(load, InputLoad) else tuple(load)


def one_load(load: Loads) -> InputLoad:
    """The one stage's input on a passive output (the loader lets a passive stage feed one; a
    converter input after it may feed several, whose inputs then count as one: their conductances
    add and the return spans all of theirs, an outside bound, since the node's voltage is linear in
    the conductance-weighted mean of the returns)."""
    found = each_load(load)
    if len(found) > 1:
        return InputLoad(
            conductance=sum(one.conductance for one in found),
            returns=(min(one.returns[0] for one in found), max(one.returns[1] for one in found)),
            least=sum(one.least for one in found),
            follows=any(one.follows for one in found),
            pins=sum(one.pins for one in found),
            shift=max(one.shift for one in found),
            earth=any(one.earth for one in found),
        )
    return found[0] if found else InputLoad()


def load_currents(
    current_hi: Number, current_lo: Number, out_hi: Number, out_lo: Number, load: Loads
) -> tuple[Number, Number]:
    """(sourced, sunk): the largest current the op amp sources and sinks, A, from its own
    network's current bounds plus the input conductance of every stage it feeds to its return
    voltage (one output feeding several stages: their currents add, Kirchhoff's current law).

    Each is an outside bound: the largest sourced current anywhere stands in for the current
    sourced at the upper extreme of the output (and likewise for the sunk current); with
    several stages fed, each one's current is taken at its own worst return voltage. An input
    that blocks DC (load.blocks_dc) draws the AC part alone, whose peak a is at most half the
    output's span: G (out_hi - out_lo) / 2 >= G a each way. A load whose return follows the
    signal (InputLoad.follows) may return anywhere between the signal's own span and its fixed
    returns; each adds the bias currents of the pins it counts (InputLoad.pins)."""
    if type(current_hi) is type(current_lo) is type(out_hi) is type(out_lo) is float:
        # one worst case (the corners walk): the same operations on floats, without numpy's
        # dispatch, which costs far more than the arithmetic here
        maximum: Any = _float_maximum
        minimum: Any = _float_minimum
    else:
        maximum, minimum = np.maximum, np.minimum
    sourced = maximum(current_hi, 0.0)
    sunk = maximum(-current_lo, 0.0)
    for one in each_load(load):
        if one.blocks_dc:
            swing = one.conductance * maximum(out_hi - out_lo, 0.0) / 2.0
            sourced, sunk = sourced + swing + one.pins, sunk + swing + one.pins
            continue
        low, high = one.returns
        if one.follows:
            low, high = minimum(out_lo, low), maximum(out_hi, high)
        sourced = sourced + one.conductance * maximum(out_hi - low, 0.0) + one.pins
        sunk = sunk + one.conductance * maximum(high - out_lo, 0.0) + one.pins
    return sourced, sunk


def _float_maximum(a: float, b: float) -> float:
    """np.maximum on two floats, bit for bit: NaN wins, and of two equal values (0.0 and -0.0)
    the second is returned."""
    return a if a > b or a != a else b


def _float_minimum(a: float, b: float) -> float:
    """np.minimum on two floats, bit for bit (see _float_maximum)."""
    return a if a < b or a != a else b


def output_drops(part: Part, sourced: Number, sunk: Number) -> tuple[Number, Number]:
    """(upper, lower) headroom added by the load current: each side by its own direction
    (the part's output_headroom_curve in place of its output resistance when it has one)."""
    if part.output_headroom_curve:
        from railroom.engine.circuit.part_limits import output_drops as curve_drops

        return curve_drops(part, sourced, sunk)
    return part.output_resistance * sourced, part.output_resistance * sunk


def opamp_margins(
    part: Part,
    positive: Number,
    negative: Number,
    out_hi: Number,
    out_lo: Number,
    in_hi: Number,
    in_lo: Number,
    sourced: Number,
    sunk: Number,
    slew_needed: Number,
) -> dict[str, Number]:
    """Every linear check's margin (limit - need, negative when violated) for one op amp.
    `positive` and `negative` are the rail voltages of the circuit (or the worst ends)."""
    drop_high, drop_low = output_drops(part, sourced, sunk)
    return {
        "output-high": positive - part.output_headroom[0] - drop_high - out_hi,
        "output-low": out_lo - (negative + part.output_headroom[1] + drop_low),
        "input-high": positive - part.input_headroom[0] - in_hi,
        "input-low": in_lo - (negative + part.input_headroom[1]),
        "slew": part.slew - slew_needed,
        "current": part.output_current - np.maximum(sourced, sunk),
    }


def supply_margin(part: Part, span_low: Number, span_high: Number) -> Number:
    """Room of the total supply inside the part's allowed range, V."""
    return np.minimum(span_low - part.supply[0], part.supply[1] - span_high)


def met_at_equality(margin: float, scale: float) -> float:
    """A margin short of zero by floating-point noise only (a supply exactly at the part's
    rating: 6 x 1.05 x 2 in floating point) counts as met: it is returned as 0."""
    return 0.0 if -MEETS_AT_EQUALITY * abs(scale) <= margin < 0.0 else margin
