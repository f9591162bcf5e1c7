"""The op-amp model shared by every block: finite gain with one pole, windows and feedback solution.

Open-loop gain A(s) = A0 / (1 + s / wp) with the pole at wp = 2 pi GBW / A0 (single-pole model;
Sedra & Smith, Microelectronic Circuits, ch. 2; Franco, Design with Operational Amplifiers, ch. 6).

Every single-op-amp block is written as a feedback loop around one op amp:

    V-  = beta  * Vout + sum_k a_minus[k] * V_k - Ib- * Z-
    V+  = gamma * Vout + sum_k a_plus[k]  * V_k - Ib+ * Z+  (+ Vos in series with the + input)
    Vout = A (V+ - V-)

so that Vout (1/A + beta - gamma) = sum_k (a_plus[k] - a_minus[k]) V_k + Vos + Ib- Z- - Ib+ Z+.
With A -> infinity this is the ideal op amp; the finite-A form is Black's feedback formula
G = A / (1 + A beta) for the non-inverting amplifier.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from railroom.engine.circuit.model import Part, Rails

TWO_PI = 2.0 * np.pi


def lifted(x, other):
    """`x` as complex when it is a real array meeting the complex array `other` in one ufunc.

    numpy casts a float64 operand to complex128 (x + 0j) before a complex add, subtract,
    multiply or divide, so the answer is bit for bit the same; cast once here, the small (J, 1)
    operand is not cast again in the ufunc's buffered inner loop, which ran such (J, 1) x (J, F+1)
    products about twice as slowly as two complex operands (a 10 000-row Monte Carlo chunk)."""
    if type(x) is np.ndarray and x.dtype is _FLOAT and getattr(other, "dtype", None) is _COMPLEX:
        return x.astype(_COMPLEX)
    return x


# numpy's native float64 and complex128 dtypes are singletons: compared by identity, cheaply (an
# array of another byte order is simply not lifted, and numpy casts it itself)
_FLOAT = np.dtype(np.float64)
_COMPLEX = np.dtype(np.complex128)


def mixed_add(a, b):
    """a + b with a real array lifted to meet a complex one (lifted): the same bits."""
    return lifted(a, b) + lifted(b, a)


def mixed_sub(a, b):
    return lifted(a, b) - lifted(b, a)


def mixed_mul(a, b):
    return lifted(a, b) * lifted(b, a)


def mixed_div(a, b):
    return lifted(a, b) / lifted(b, a)


def laplace_grid(freqs: np.ndarray) -> np.ndarray:
    """s = j 2 pi f with DC prepended: index 0 is s = 0, indices 1.. are the band frequencies;
    frequencies per row (rows, F) give (rows, F + 1), DC first in every row."""
    freqs = np.asarray(freqs, dtype=float)
    if freqs.ndim == 2:
        return 1j * TWO_PI * np.concatenate((np.zeros((freqs.shape[0], 1)), freqs), axis=1)
    return 1j * TWO_PI * np.concatenate(([0.0], freqs))


def inverse_open_loop(part: Part | None, s: np.ndarray) -> np.ndarray:
    """1 / A(s) for the single-pole model; zeros for the ideal op amp (part None)."""
    if part is None:
        return np.zeros_like(s)
    pole = TWO_PI * part.gbw / part.open_loop_gain
    return (1.0 + s / pole) / part.open_loop_gain


@dataclass(frozen=True)
class Loop:
    """One op amp's feedback, as coefficients over s (arrays broadcasting to (J, F+1))."""

    beta: np.ndarray  # V- per volt of Vout
    a_minus: dict[str, np.ndarray] = field(default_factory=dict)
    a_plus: dict[str, np.ndarray] = field(default_factory=dict)
    gamma: np.ndarray | float = 0.0  # V+ per volt of Vout (positive feedback path)
    z_minus: np.ndarray | float = 0.0  # DC resistance seen by the - input, ohm
    z_plus: np.ndarray | float = 0.0  # DC resistance seen by the + input, ohm


@dataclass(frozen=True)
class LoopSolution:
    """Transfers from each driving source to the output and + input, and the error gains."""

    output: dict[str, np.ndarray]  # source -> Vout per volt, shape (J, F+1)
    plus: dict[str, np.ndarray]  # source -> V+ per volt
    offset_gain: np.ndarray  # Vout per volt of input offset, at DC, shape (J,)
    bias_plus_gain: np.ndarray  # Vout per ampere into the + input, at DC
    bias_minus_gain: np.ndarray  # Vout per ampere into the - input, at DC
    # the + pin's own error gains at DC: V+ = gamma Vout - Ib+ Z+ (module docstring), so bias
    # current through the resistance at + moves the pin itself, and positive feedback carries
    # every output error back to it
    plus_offset_gain: np.ndarray
    plus_bias_plus_gain: np.ndarray
    plus_bias_minus_gain: np.ndarray


def loop_denominator(loop: Loop, inverse_gain: np.ndarray) -> np.ndarray:
    """1/A + beta - gamma (the module docstring), as solve_loop forms it."""
    denominator = inverse_gain + lifted(loop.beta, inverse_gain)
    return denominator - lifted(loop.gamma, denominator)


def loop_output(loop: Loop, denominator: np.ndarray, source: str) -> np.ndarray:
    """Vout per volt of `source`, as solve_loop forms it: (a_plus - a_minus) / denominator."""
    numerator = loop.a_plus.get(source, 0.0) - loop.a_minus.get(source, 0.0)
    return lifted(numerator, denominator) / denominator


def solve_loop(loop: Loop, inverse_gain: np.ndarray) -> LoopSolution:
    """Close the loop with the finite open-loop gain (see the module docstring)."""
    denominator = loop_denominator(loop, inverse_gain)
    # sorted: the transfers are summed in this order, so it must not follow the hash seed
    sources = sorted(set(loop.a_plus) | set(loop.a_minus))
    output = {k: loop_output(loop, denominator, k) for k in sources}
    plus = {}
    for k in sources:
        swing = loop.gamma * output[k]
        plus[k] = lifted(loop.a_plus.get(k, 0.0), swing) + swing
    dc = np.atleast_2d(denominator)[..., 0].real
    rows = max(
        dc.shape[0],
        *(
            np.atleast_1d(np.asarray(z)[..., 0] if np.ndim(z) == 2 else z).shape[0]
            for z in (loop.z_plus, loop.z_minus)
        ),
    )
    dc = np.broadcast_to(dc, (rows,))  # a driving resistance may vary where the loop does not
    gamma = _column(
        np.atleast_2d(np.broadcast_to(loop.gamma, np.shape(denominator)))[..., 0].real
        if np.ndim(loop.gamma)
        else float(loop.gamma),
        dc.shape,
    )
    z_plus = _column(loop.z_plus, dc.shape)
    bias_plus = -z_plus / dc
    bias_minus = _column(loop.z_minus, dc.shape) / dc
    return LoopSolution(
        output=output,
        plus=plus,
        offset_gain=1.0 / dc,
        bias_plus_gain=bias_plus,
        bias_minus_gain=bias_minus,
        plus_offset_gain=gamma / dc,
        plus_bias_plus_gain=gamma * bias_plus - z_plus,
        plus_bias_minus_gain=gamma * bias_minus,
    )


def _column(value, shape: tuple[int, ...]) -> np.ndarray:
    """A per-corner DC quantity given as scalar, (J,), (J, 1) or (J, F+1) over s (DC first, a
    complex driving impedance), as shape (J,): the real DC part."""
    value = np.asarray(value)
    if value.ndim == 2:
        value = value[:, 0]
    return np.broadcast_to(value.real.astype(float), shape)


def output_window(part: Part, rails: Rails, sourced: float, sunk: float) -> tuple[float, float]:
    """Worst-case output swing: the lowest positive rail less the upper headroom, which grows by
    the output resistance times the current SOURCED at the top; the highest negative rail plus
    the lower headroom, grown by the current SUNK at the bottom (common practice for
    rail-to-rail outputs; each direction on its own, as datasheets give swing per direction)."""
    from railroom.engine.verdict.margins import output_drops

    drop_high, drop_low = output_drops(part, sourced, sunk)
    return (
        rails.negative_range[1] + part.output_headroom[1] + drop_low,
        rails.positive_range[0] - part.output_headroom[0] - drop_high,
    )


def input_window(part: Part, rails: Rails) -> tuple[float, float]:
    """Worst-case input common-mode window; a negative headroom reaches beyond the rail."""
    return (
        rails.negative_range[1] + part.input_headroom[1],
        rails.positive_range[0] - part.input_headroom[0],
    )


def saturated_levels(
    part: Part, rails: Rails, load_conductance: float
) -> tuple[tuple[float, float], tuple[float, float]]:
    """Output levels of an op amp driven hard into each rail: (low min, low max), (high min, high max).

    Without negative feedback the output sits at its swing limit (common practice); the level moves
    with the rail tolerance and drops with the load current through the output resistance.
    """
    pos, neg = rails.positive_range, rails.negative_range
    high_ideal = (pos[0] - part.output_headroom[0], pos[1] - part.output_headroom[0])
    low_ideal = (neg[0] + part.output_headroom[1], neg[1] + part.output_headroom[1])

    def loaded(level: float) -> float:
        # V = V0 - Ro * V / RL  ->  V = V0 / (1 + Ro G); the current limit caps the drop as well
        current = min(
            abs(level) * load_conductance / (1 + part.output_resistance * load_conductance),
            part.output_current,
        )
        return level - np.sign(level) * part.output_resistance * current

    if part.output_headroom_curve:
        from railroom.engine.circuit.part_limits import curve_level

        return (
            (low_ideal[0], float(curve_level(part, low_ideal[1], load_conductance, False))),
            (float(curve_level(part, high_ideal[0], load_conductance, True)), high_ideal[1]),
        )
    high = (min(loaded(high_ideal[0]), high_ideal[0]), high_ideal[1])
    low = (low_ideal[0], max(loaded(low_ideal[1]), low_ideal[1]))
    return (low, high)
