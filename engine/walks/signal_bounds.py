"""Carrying the worst-case signal from stage to stage.

The signal at a stage's input is a DC level plus one sine of the band at a time. For each band
frequency f the state keeps

    hi(f) = max (dc + a(f)),  lo(f) = min (dc - a(f)),  amp_lo(f) <= a(f) <= amp_hi(f)

over everything upstream. A node of a linear stage is  out = g dc + c + |H(f)| a sin(...) + errors
with g the DC gain, c the fixed part (references, level shifts), H the AC gain. Writing
g dc + |H| a = G (dc +/- a) + (|H| - G) a with G = |g| gives the bounds

    max out = c + e + G up(f) + (|H| - G) a_sel(f),   min out = c - e + G down(f) - (|H| - G) a_sel(f)

with up = hi, down = lo for g >= 0 (up = -lo, down = -hi for g < 0) and a_sel = amp_hi where
|H| >= G, amp_lo otherwise. They are exact wherever the stage passes DC and AC alike (|H| = G,
flat gain stages, level shifts, DC alone) and bound the true extremes from outside otherwise
(interval arithmetic: Moore, Interval Analysis, 1966). Independent additive errors (offset, bias)
add exactly: max of a sum of independent terms is the sum of their maxima.
Per Monte Carlo draw the state is one circuit, and the same formulas are exact.

Speed (the formulas are unchanged): per-draw arrays (J, F) come in column-major order, one
contiguous column per band frequency (circuit_walk.start_signal). With thousands of draws and a few
frequencies numpy then runs its inner loops over the draws instead of over the F frequencies of
each row, which is 3-4 times faster for the (J, 1) x (J, F) products here; elementwise results do
not depend on the memory order. A source whose amplitude bounds are one array (amp_lo is amp_hi)
keeps them one array, so a_sel needs no choice.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from railroom.engine.circuit.blocks.base import Node


@dataclass(frozen=True)
class Signal:
    """A single-ended signal: arrays over band frequencies (F,) or (draws, F)."""

    hi: np.ndarray
    lo: np.ndarray
    amp_lo: np.ndarray
    amp_hi: np.ndarray
    fed_clipped: bool = False
    # after a clipping stage: the largest |dV/dt| the clipped waveform can have, V/s (None: not
    # bounded apart from its amplitudes; a sine's slope is 2 pi f a); the draw walk keeps one per
    # row, NaN in the rows that have none (circuit_walk.passed_slope_rows)
    slope: float | np.ndarray | None = None

    @property
    def span(self) -> tuple[float, float]:
        return (float(np.min(self.lo)), float(np.max(self.hi)))


@dataclass(frozen=True)
class DifferentialSignal:
    """The two sides of a differential source: pos = cm + d/2, neg = cm - d/2 (d's AC peak amp)."""

    common: tuple[float, float]
    difference: tuple[float, float]
    amplitude: float


@dataclass(frozen=True)
class NodeBounds:
    lo: np.ndarray  # (J, F) lowest instantaneous value at each frequency
    hi: np.ndarray
    amp_lo: np.ndarray  # (J, F) AC amplitude bounds
    amp_hi: np.ndarray


def fixed_part(node: Node, v: dict[str, np.ndarray], signals: tuple[str, ...]) -> np.ndarray:
    """Sum over fixed voltage sources (references, level-shift inputs) of DC transfer times value."""
    total = 0.0
    for source, transfer in node.transfers.items():
        if source not in signals:
            total = total + transfer[..., 0].real * v[source][..., 0]
    return np.asarray(total, dtype=float)


def error_bound(node: Node, offsets: np.ndarray, bias: float) -> np.ndarray | float:
    """Largest output error from independent +/- offsets and bias currents of each op amp."""
    if node.offset_gain is None:
        return 0.0
    assert node.bias_gain is not None  # set with offset_gain (Node)
    return np.abs(node.offset_gain) @ offsets + np.abs(node.bias_gain).sum(axis=-1) * bias


@dataclass(frozen=True)
class NodeTerms:
    """The terms of a node's single-ended bounds that come from the node alone, not from the
    signal fed in: c + shift, e, g, G = |g|, |H(f)| and |H| - G (module docstring). Found once
    per node they serve every source amplitude the headroom search tries."""

    fixed: np.ndarray | float
    error: np.ndarray | float
    g: np.ndarray | None = None  # None: the node does not see the chain signal
    gain: np.ndarray | None = None
    magnitude: np.ndarray | None = None
    spare: np.ndarray | None = None

    @cached_property
    def positive(self) -> np.ndarray:
        assert self.g is not None
        return np.asarray(self.g >= 0)

    @cached_property
    def rising(self) -> np.ndarray:
        """Where |H| >= G: a_sel = amp_hi there."""
        assert self.spare is not None
        return np.asarray(self.spare >= 0)

    @cached_property
    def sides(self) -> int:
        """1: g >= 0 everywhere, -1: nowhere, 0: both (signed_sides), found once per node."""
        return 1 if self.positive.all() else (-1 if not self.positive.any() else 0)

    @cached_property
    def rising_everywhere(self) -> bool:
        """|H| >= G at every row and frequency: a_sel is amp_hi throughout."""
        return bool(self.rising.all())

    @cached_property
    def low_base(self) -> np.ndarray | float:
        """c - e, the first step of the lower bound, the same for every signal fed."""
        return self.fixed - self.error

    @cached_property
    def high_base(self) -> np.ndarray | float:
        return self.fixed + self.error

    @cached_property
    def negative_gain(self) -> np.ndarray:
        """-G: G (-x) and (-G) x are the same floats (a sign flip is exact), so a node whose
        DC gain is negative everywhere meets the signal without negating its arrays."""
        assert self.gain is not None
        return -self.gain


def single_terms(
    node: Node, v: dict, error: np.ndarray | float, shift: np.ndarray | float = 0.0, order: str = "C"
) -> NodeTerms:
    """`order`: the memory order of the signal arrays the node will meet (see memory_order)."""
    transfer = node.transfers.get("in")
    fixed = as_column(fixed_part(node, v, ("in",)) + shift)
    error = as_column(error)
    if transfer is None:
        return NodeTerms(fixed, error)
    g = transfer[..., :1].real
    magnitude = np.abs(transfer[..., 1:], order=order)  # type: ignore[call-overload]
    gain = np.abs(g)
    return NodeTerms(fixed, error, g, gain, magnitude, magnitude - gain)


def single_bounds(
    node: Node,
    v: dict,
    signal: Signal,
    error: np.ndarray | float,
    shift: np.ndarray | float = 0.0,
    terms: NodeTerms | None = None,
) -> NodeBounds:
    """Bounds of a node fed by a single-ended signal (see the module docstring). `terms`: the
    node's own terms when the caller keeps them (then `error` and `shift` are not read)."""
    if terms is None:
        terms = single_terms(node, v, error, shift, memory_order(signal.hi))
    fixed, error = terms.fixed, terms.error
    if terms.g is None:
        zero = np.zeros_like(signal.hi)
        return NodeBounds(fixed - error + zero, fixed + error + zero, zero, zero)
    magnitude, gain, spare = terms.magnitude, terms.gain, terms.spare
    sides = terms.sides
    if sides == 1:
        up, down = signal.hi, signal.lo
    elif sides == -1:  # G (-lo) = (-G) lo: the same floats (NodeTerms.negative_gain)
        gain, up, down = terms.negative_gain, signal.lo, signal.hi
    else:
        up, down = signed_sides(terms.g, signal, terms.positive, sides)
    one_amplitude = signal.amp_lo is signal.amp_hi
    if one_amplitude:
        a_sel = signal.amp_hi
    elif terms.rising_everywhere and signal.amp_hi.shape == signal.amp_lo.shape:
        a_sel = signal.amp_hi  # np.where would pick amp_hi at every element
    else:
        a_sel = np.where(terms.rising, signal.amp_hi, signal.amp_lo)
    swing = spare * a_sel
    amp_lo = magnitude * signal.amp_lo
    # (c - e) + G down - swing, evaluated left to right as ever; c - e and c + e kept per node
    return NodeBounds(
        lo=terms.low_base + gain * down - swing,
        hi=terms.high_base + gain * up + swing,
        amp_lo=amp_lo,
        amp_hi=amp_lo if one_amplitude else magnitude * signal.amp_hi,
    )


def as_column(x: np.ndarray | float) -> np.ndarray | float:
    """Per-row values (J,) as (J, 1), to meet (J, F) arrays row by row; others as they are."""
    return np.asarray(x)[:, None] if np.ndim(x) == 1 else x


def memory_order(x: np.ndarray) -> str:
    """ "F" for a column-major (J, F) array, else "C" (see the module docstring)."""
    return "F" if x.flags.f_contiguous and not x.flags.c_contiguous else "C"


def signed_sides(
    g: np.ndarray, signal: Signal, positive: np.ndarray | None = None, sides: int | None = None
) -> tuple[np.ndarray, np.ndarray]:
    """(up, down): (hi, lo) where g >= 0, (-lo, -hi) where g < 0. The sign of g is nearly
    always the same for every draw; the choice is then made once, not per element.
    `positive`: g >= 0 when the caller has it; `sides`: NodeTerms.sides of it."""
    positive = g >= 0 if positive is None else positive
    if sides is None:
        sides = 1 if positive.all() else (-1 if not positive.any() else 0)
    if sides == 1:
        return signal.hi, signal.lo
    if sides == -1:
        return -signal.lo, -signal.hi
    return np.where(positive, signal.hi, -signal.lo), np.where(positive, signal.lo, -signal.hi)


def differential_bounds(
    node: Node,
    v: dict,
    signal: DifferentialSignal,
    error: np.ndarray | float,
    shift: np.ndarray | float = 0.0,
) -> NodeBounds:
    """Exact bounds of a node fed by the two sides of a differential source."""
    pos = node.transfers.get("pos", 0.0)
    neg = node.transfers.get("neg", 0.0)
    common = np.asarray(pos + neg)
    diff = np.asarray(pos - neg) / 2.0
    fixed = fixed_part(node, v, ("pos", "neg")) + shift
    fixed = np.reshape(fixed, np.shape(fixed) + (1,) * (np.ndim(fixed) == 1))
    error = np.reshape(error, np.shape(error) + (1,) * (np.ndim(error) == 1))
    if common.ndim == 0:
        common = np.zeros((1, 2))
        diff = np.zeros((1, 2), dtype=complex)
    g_cm, g_d = common[..., :1].real, diff[..., :1].real
    cm_hi = np.maximum(g_cm * signal.common[0], g_cm * signal.common[1])
    cm_lo = np.minimum(g_cm * signal.common[0], g_cm * signal.common[1])
    d_hi = np.maximum(g_d * signal.difference[0], g_d * signal.difference[1])
    d_lo = np.minimum(g_d * signal.difference[0], g_d * signal.difference[1])
    amp = np.abs(diff[..., 1:]) * signal.amplitude
    return NodeBounds(
        lo=fixed - error + cm_lo + d_lo - amp, hi=fixed + error + cm_hi + d_hi + amp, amp_lo=amp, amp_hi=amp
    )


def node_bounds(node: Node, v: dict, signal, error, shift=0.0) -> NodeBounds:
    if isinstance(signal, DifferentialSignal):
        return differential_bounds(node, v, signal, error, shift)
    return single_bounds(node, v, signal, error, shift)


def loaded_bounds(
    node: Node, v: dict, signal, impedance: np.ndarray, load, shift: np.ndarray | float = 0.0
) -> NodeBounds:
    """The voltage at a passive stage's output with the next stage's input on it. The node is
    the open-circuit (Thevenin) voltage Vth, `impedance` the Thevenin impedance Z (J, F+1) and
    `load` what the next stage draws (blocks.base.InputLoad: a conductance G to a return Vr):
        V = Vr + (Vth - Vr) / (1 + Z G)          (a voltage divider, Horowitz & Hill ch. 1)
    bounded from outside over both ends of G (load.least, load.conductance) and of Vr."""
    found = []
    for g in sorted({load.least, load.conductance}):
        share = 1.0 / (1.0 + impedance * g)
        divided = Node(transfers={k: t * share for k, t in node.transfers.items()})
        for vr in sorted(set(load.returns)):
            found.append(node_bounds(divided, v, signal, 0.0, shift + (1.0 - share[..., :1].real) * vr))
    return NodeBounds(
        lo=np.minimum.reduce([b.lo for b in found]),
        hi=np.maximum.reduce([b.hi for b in found]),
        amp_lo=np.minimum.reduce([b.amp_lo for b in found]),
        amp_hi=np.maximum.reduce([b.amp_hi for b in found]),
    )


def merge(bounds: NodeBounds, fed_clipped: bool) -> Signal:
    """Worst case over a stage's own corners: the next stage's input (corners method)."""
    return Signal(
        hi=bounds.hi.max(axis=0),
        lo=bounds.lo.min(axis=0),
        amp_lo=bounds.amp_lo.min(axis=0),
        amp_hi=bounds.amp_hi.max(axis=0),
        fed_clipped=fed_clipped,
    )


def clamp(signal: Signal, window: tuple[float, float], slope: float | None = None) -> Signal:
    """What a clipping stage passes on: its output held inside its swing window, and its slope
    bound (a clipped sine is never steeper than the sine; a slew-limited one than the slew rate)."""
    low, high = window
    half = max((high - low) / 2.0, 0.0)
    return Signal(
        hi=np.clip(signal.hi, low, high),
        lo=np.clip(signal.lo, low, high),
        amp_lo=np.minimum(signal.amp_lo, half),
        amp_hi=np.minimum(signal.amp_hi, half),
        fed_clipped=True,
        slope=slope,
    )


def source_signal(level: tuple[float, float], amplitude: float, freqs: np.ndarray) -> Signal:
    ones = np.ones_like(freqs)
    a = amplitude * ones  # one array for both amplitude bounds (module docstring, Speed)
    return Signal(hi=(level[1] + amplitude) * ones, lo=(level[0] - amplitude) * ones, amp_lo=a, amp_hi=a)
