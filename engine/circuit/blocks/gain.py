"""Follower, non-inverting and inverting amplifiers: the single-op-amp gain stages.

Formulas (Sedra & Smith, Microelectronic Circuits, ch. 2; Franco, ch. 1):
    non-inverting  G = 1 + rf/rg, rg returning to ref:  Vout = G Vin - (rf/rg) Vref
    inverting      G = -rf/rin about ref:               Vout = -(rf/rin) Vin + (1 + rf/rin) Vref
    noise gain     1/beta = 1 + rf/rg (non-inverting) = 1 + rf/rin (inverting)
    AC-coupled rg  cg in series with rg: Zg = rg + 1/(s cg), G(s) = 1 + rf/Zg
                   = 1 + s rf cg / (1 + s rg cg): 1 at DC, 1 + rf/rg above 1/(2 pi rg cg)
The finite open-loop gain enters through opamp.solve_loop (Black's feedback formula).
Any resistance driving the stage (source impedance, a divider before it) is in series with its input.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import replace

import numpy as np

from railroom.engine.circuit.blocks.base import (
    Block,
    BlockResponse,
    FieldSpec,
    InputLoad,
    Node,
    OpAmpNodes,
    junction,
    load_conductance,
    load_return,
    minus_pin,
    opamp_node,
    plus_node,
    scaled,
)
from railroom.engine.circuit.opamp import Loop, solve_loop


def single_opamp(
    loop: Loop,
    inverse_gain: np.ndarray,
    feedback_conductance: np.ndarray,
    v: Mapping[str, np.ndarray],
    label: str = "amplifier",
) -> tuple[OpAmpNodes, object]:
    """Close one loop and build the three checked nodes.

    The op amp's output current is Vout G_load plus the feedback resistor's (Vout - V-) G_f, with
    V- = beta Vout + sum_k a_minus[k] V_k taken from the loop itself (no pin current flows), so the
    current stays exact when the finite gain leaves V- away from a virtual earth.
    """
    solution = solve_loop(loop, inverse_gain)
    output = opamp_node(solution, solution.output, 0, 1)
    plus = plus_node(solution, 0, 1)
    extra = {k: -feedback_conductance * t for k, t in loop.a_minus.items()}
    for k, t in load_return(v, -1.0).items():  # the load's own return (load_to)
        extra[k] = extra.get(k, 0.0) + t
    factor = load_conductance(v) + feedback_conductance * (1.0 - loop.beta)
    current = scaled(output, factor, extra)
    return OpAmpNodes(label, output, plus, current), solution


class Follower(Block):
    name = "follower"
    summary = "unity-gain buffer"
    ideal = ("out = in",)

    def respond(self, v, s, inverse_gain, drive, differential):
        one = np.ones((1, 1))
        loop = Loop(beta=one, a_plus={"in": one}, z_plus=drive)
        amp, _ = single_opamp(loop, inverse_gain, np.zeros((1, 1)), v)
        return BlockResponse(output=amp.output, opamps=(amp,), input_node=amp.plus)


class Noninverting(Block):
    name = "noninverting"
    summary = "gain 1 + rf/rg, rg returning to ref"
    ideal = (
        "out = (1 + rf/rg) in - (rf/rg) ref",
        "with cg: G(s) = 1 + s rf cg / (1 + s rg cg), 1 at DC, 1 + rf/rg above 1/(2 pi rg cg)",
    )
    fields = {
        "rf": FieldSpec("resistance", help="feedback resistor, output to - input"),
        "rg": FieldSpec("resistance", help="gain resistor, - input to ref"),
        "ref": FieldSpec("voltage", required=False, default=0.0, help="where rg returns, V"),
        "cg": FieldSpec(
            "capacitance",
            required=False,
            default=None,
            help="capacitor in series with rg (AC-coupled rg): DC gain 1",
        ),
    }

    def respond(self, v, s, inverse_gain, drive, differential):
        rf, rg = v["rf"], v["rg"]
        if "cg" in v:
            # rg + 1/(s cg) as an admittance, finite at DC: Yg = s cg / (1 + s rg cg)
            yg = s * v["cg"] / (1.0 + s * rg * v["cg"])
            loop = Loop(
                beta=1.0 / (1.0 + rf * yg),
                a_plus={"in": np.ones_like(rf)},
                a_minus={"ref": rf * yg / (1.0 + rf * yg)},
                z_plus=drive,
                z_minus=rf / (1.0 + rf * yg),  # rf at DC: bias current sees rf alone
            )
            amp, _ = single_opamp(loop, inverse_gain, 1.0 / rf, v)
            return BlockResponse(output=amp.output, opamps=(amp,), input_node=amp.plus)
        total = rf + rg
        loop = Loop(
            beta=rg / total,
            a_plus={"in": np.ones_like(rf)},
            a_minus={"ref": rf / total},
            z_plus=drive,
            z_minus=rf * rg / total,
        )
        amp, _ = single_opamp(loop, inverse_gain, 1.0 / rf, v)
        return BlockResponse(output=amp.output, opamps=(amp,), input_node=amp.plus)


class Inverting(Block):
    name = "inverting"
    summary = "gain -rf/rin about ref"
    ideal = ("out = -(rf/rin) in + (1 + rf/rin) ref",)
    fields = {
        "rin": FieldSpec("resistance", help="input resistor, in to - input"),
        "rf": FieldSpec("resistance", help="feedback resistor, - input to output"),
        "ref": FieldSpec("voltage", required=False, default=0.0, help="drives the + input, V"),
    }

    def respond(self, v, s, inverse_gain, drive, differential):
        rin, rf = v["rin"] + drive, v["rf"]
        total = rin + rf
        one = np.ones_like(rf)
        loop = Loop(
            beta=rin / total, a_minus={"in": rf / total}, a_plus={"ref": one}, z_minus=rin * rf / total
        )
        amp, _ = single_opamp(loop, inverse_gain, 1.0 / rf, v)
        return BlockResponse(
            output=amp.output,
            opamps=(amp,),
            input_load=virtual_earth_load(v["rin"], v),
            input_node=lambda: virtual_earth_input(v["rin"], drive, amp, inverse_gain),
        )


class Summing(Block):
    name = "summing"
    summary = "inverting summer: the signal through rin plus fixed DC inputs (level shift)"
    ideal = (
        "out = -rf (in/rin + sum v/r) + (1 + rf/rin + sum rf/r) ref",
        "each fixed input: r from the voltage v to the - input",
    )
    fields = {
        "rin": FieldSpec("resistance", help="signal input resistor"),
        "rf": FieldSpec("resistance", help="feedback resistor"),
        "ref": FieldSpec("voltage", required=False, default=0.0, help="drives the + input, V"),
        "inputs": FieldSpec(
            "inputs",
            required=False,
            default=None,
            help="fixed inputs [{r, v}]: r from the voltage v to the - input",
        ),
    }

    def respond(self, v, s, inverse_gain, drive, differential):
        rin, rf = v["rin"] + drive, v["rf"]
        extra = sorted({k.rsplit(".", 1)[0] for k in v if k.startswith("inputs.")})
        summed = sum(1.0 / v[f"{k}.r"] for k in extra)
        if SUMMED_AC in v:  # inputs taken together (corners.summed_inputs): the band at its own Y
            band = np.arange(np.shape(s)[-1]) > 0
            summed = np.where(band, v[SUMMED_AC], summed)
        total = 1.0 / rin + 1.0 / rf + summed
        minus = {"in": (1.0 / rin) / total}
        minus.update({f"{k}.v": (1.0 / v[f"{k}.r"]) / total for k in extra})
        one = np.ones_like(rf)
        loop = Loop(beta=(1.0 / rf) / total, a_minus=minus, a_plus={"ref": one}, z_minus=1.0 / total)
        amp, _ = single_opamp(loop, inverse_gain, 1.0 / rf, v)
        terminal = lambda: virtual_earth_input(v["rin"], drive, amp, inverse_gain)  # noqa: E731
        if SUMMED_AC in v:
            amp = replace(amp, current=largest_bias_share(amp.current, v, rin, rf, inverse_gain))
            plain = terminal
            terminal = lambda: outermost_terminal(plain(), v, rin, rf, inverse_gain)  # noqa: E731
        return BlockResponse(
            output=amp.output,
            opamps=(amp,),
            input_load=virtual_earth_load(v["rin"], v),
            input_node=terminal,
        )


# corners.summed_inputs: per row, the fixed inputs' summed conductance the band frequencies are
# solved at, and the least and largest it takes
SUMMED_AC, SUMMED_LOW, SUMMED_HIGH = "summed inputs g in band", "summed inputs g low", "summed inputs g high"


def largest_bias_share(current: Node, v, rin, rf, inverse_gain) -> Node:
    """The output current's bias-current gain at its largest over the summed conductance's range
    (corners.summed_inputs). single_opamp forms it as |load + (1 - beta)/rf| / (T/A0 + 1/rf)
    with beta = 1/(rf T): f(T) = (a T - b) / (T (c T + d)), a = load + 1/rf, b = 1/rf^2,
    c = 1/A0, d = 1/rf, which is not monotone in T for every c: its derivative has the sign of
    -a c T^2 + 2 b c T + b d, zero at T* = (b c + sqrt(b^2 c^2 + a b c d)) / (a c). The largest
    of f at both ends of T and at T* inside them holds for every Y between."""
    assert current.bias_gain is not None
    base = np.real(np.atleast_2d(1.0 / rin)[:, :1]) + 1.0 / rf  # T less the summed inputs, at DC
    a = np.abs(load_conductance(v) + 1.0 / rf)
    b, c, d = 1.0 / rf**2, float(np.real(np.ravel(inverse_gain)[0])), 1.0 / rf
    low, high = base + v[SUMMED_LOW], base + v[SUMMED_HIGH]
    points = [low, high]
    if c > 0:
        top = (b * c + np.sqrt((b * c) ** 2 + a * b * c * d)) / (a * c)
        points.append(np.clip(top, low, high))
    largest = np.max([np.abs(a * t - b) / (t * (c * t + d)) for t in points], axis=0)
    # never below the block's own figure at the row's own Y (rounding)
    bias = np.maximum(current.bias_gain, largest * (1.0 + 1e-12))
    return replace(current, bias_gain=bias)


def outermost_terminal(node: Node, v, rin, rf, inverse_gain) -> Node:
    """The input terminal with its band gains at their largest (rows solved at the least summed
    conductance) or smallest (at the largest) over the summed conductance's range
    (corners.summed_inputs). The terminal is J = P + (1 - P) V-, P = rin / (rin + Z), and
    V- = (1/rin') / (T + 1/(rf / A)) per volt in (rin' = rin + Z): J(Y) = (P Y + Q) / (Y + c)
    with c = 1/rin' + 1/rf + A/rf and Q = P c + (1 - P)/rin', so |J|^2 = N(Y) / D(Y), two
    quadratics, whose derivative is zero where (a e - b) Y^2 + 2 (a f - k) Y + (b f - k e) = 0
    (N = a Y^2 + b Y + k, D = Y^2 + e Y + f). Unlike the output's, |J| need not be monotone in Y:
    the largest and smallest of it at both ends and at those roots inside them hold for every Y
    between. Only the band columns change, their phase kept (the walk reads magnitudes there)."""
    transfer = node.transfers.get("in")
    ig = np.ravel(inverse_gain)[1:]
    if transfer is None or np.shape(transfer)[-1] < 2 or not np.all(ig != 0):
        return node
    band = np.asarray(transfer)[..., 1:]
    series = np.broadcast_to(np.asarray(rin, dtype=complex), np.shape(rin)[:-1] + (len(ig) + 1,))[..., 1:]
    share = np.asarray(v["rin"]) / series
    kappa = 1.0 / series
    c = kappa + 1.0 / rf + 1.0 / (rf * ig)
    q = share * c + (1.0 - share) * kappa
    a, b, k = np.abs(share) ** 2, 2.0 * np.real(np.conj(share) * q), np.abs(q) ** 2
    e, f = 2.0 * np.real(c), np.abs(c) ** 2
    low, high = v[SUMMED_LOW], v[SUMMED_HIGH]
    a2, b2, c2 = a * e - b, 2.0 * (a * f - k), b * f - k * e
    with np.errstate(divide="ignore", invalid="ignore"):
        root = np.sqrt(b2 * b2 - 4.0 * a2 * c2)
        half = -0.5 * (b2 + np.copysign(root, b2))
        points = [low, high, np.clip(half / a2, low, high), np.clip(c2 / half, low, high)]
        gains = np.array([np.sqrt((a * y * y + b * y + k) / (y * y + e * y + f)) for y in points])
    largest, smallest = np.nanmax(gains, axis=0), np.nanmin(gains, axis=0)
    target = np.where(v[SUMMED_AC] <= low, largest * (1 + 1e-9), smallest * (1 - 1e-9))
    size = np.abs(band)
    scaled_band = np.where(size > 0, band * (target / np.where(size > 0, size, 1.0)), target)
    full = np.concatenate(
        [np.broadcast_to(transfer[..., :1], scaled_band.shape[:-1] + (1,)), scaled_band], axis=-1
    )
    return replace(node, transfers={**node.transfers, "in": full})


def virtual_earth_input(rin, drive, amp: OpAmpNodes, inverse_gain) -> Node:
    """The input terminal of a stage whose input resistor rin returns to the - pin."""
    if np.ndim(drive) == 0 and drive == 0:
        return junction(rin, drive, None)
    return junction(rin, drive, minus_pin(amp.plus, amp.output, inverse_gain))


def virtual_earth_load(rin: np.ndarray, v: Mapping[str, np.ndarray]) -> InputLoad:
    """An inverting input resistor loads the stage before it to the - input, at the + input's
    voltage (ref) less Vout/A0 (InputLoad.earth; the walk adds the offset and that term)."""
    ref = np.atleast_1d(v.get("ref", np.zeros(1)))
    return InputLoad(
        conductance=float(np.max(1.0 / rin)),
        returns=(float(np.min(ref)), float(np.max(ref))),
        least=float(np.min(1.0 / rin)),
        earth=True,
        rows=1.0 / rin,
    )
