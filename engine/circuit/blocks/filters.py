"""Second-order active filters: Sallen-Key low- and high-pass, multiple-feedback low- and band-pass.

Each is solved from its node equations written with admittances, so one solution serves both
members of a family and the source impedance and finite op-amp gain enter exactly (no textbook
shortcut is assumed; the textbook results are what the tests check):

    Sallen-Key low-pass, unity gain   f0 = 1/(2 pi sqrt(r1 r2 c1 c2)), Q = sqrt(r1 r2 c1 c2)/(c2 (r1 + r2))
    multiple-feedback low-pass        H0 = -r2/r1, w0 = 1/sqrt(r2 r3 c1 c2),
                                      Q = sqrt(c1/c2) / ((1/r1 + 1/r2 + 1/r3) sqrt(r2 r3))
(Franco, Design with Operational Amplifiers, ch. 3-4; Sedra & Smith, ch. 17.) Node A is the inner
node both families have: its swing can exceed the output's (V_A = V_out (1 + s r2 c2) in the unity
Sallen-Key low-pass) and is reported as informational. The response peak of every tolerance corner
is added to the frequency grid so the worst case over the band includes it.
"""

from __future__ import annotations

from dataclasses import replace
from collections.abc import Mapping

import numpy as np

from railroom.engine.circuit.blocks.base import (
    Block,
    BlockResponse,
    FieldSpec,
    InputLoad,
    junction,
    OpAmpNodes,
    combined,
    load_conductance,
    load_return,
    opamp_node,
    plus_node,
)
from railroom.engine.circuit.blocks.gain import virtual_earth_load
from railroom.engine.circuit.opamp import (
    TWO_PI,
    Loop,
    mixed_add as add,
    mixed_div as div,
    mixed_mul as mul,
    mixed_sub as sub,
    loop_denominator,
    loop_output,
    solve_loop,
)


def peak_frequencies(w0: np.ndarray, q: np.ndarray, kind: str) -> np.ndarray:
    """f0 and where |H| of a second-order section peaks, per corner.

    Low-pass peaks at f0 sqrt(1 - 1/(2 Q^2)) and high-pass at f0 / sqrt(1 - 1/(2 Q^2)) when
    Q > 1/sqrt(2); a band-pass peaks at f0 (any textbook second-order section, e.g. Franco ch. 3).
    """
    f0 = np.ravel(w0 / TWO_PI)
    q = np.ravel(q) * np.ones_like(f0)
    if kind == "bandpass":
        return f0
    peaking = q * q > 0.5
    shape = np.sqrt(1.0 - 0.5 / (q[peaking] ** 2))
    peaks = f0[peaking] * shape if kind == "lowpass" else f0[peaking] / shape
    return np.concatenate((f0, peaks))


def row_peaks(w0: np.ndarray, q: np.ndarray, kind: str) -> np.ndarray:
    """Each corner's ideal-op-amp peak frequency (peak_frequencies), NaN where it does not peak."""
    f0 = np.ravel(w0 / TWO_PI)
    q = np.ravel(q) * np.ones_like(f0)
    if kind == "bandpass":
        return f0
    with np.errstate(invalid="ignore"):
        shape = np.sqrt(1.0 - 0.5 / (q * q))
    peaks = f0 * shape if kind == "lowpass" else f0 / shape
    return np.where(q * q > 0.5, peaks, np.nan)


def real_peaks(block: Block, v: Mapping[str, np.ndarray], part, ideal: np.ndarray) -> np.ndarray:
    """Where each corner's |H| really peaks with the part's own gain (finite A0, one pole):
    found near its ideal-op-amp peak `ideal` (J,) on the block's own transfer, by three rounds
    of a 21-point log grid (+/-5 %, then narrower) with a parabola through the best three
    points (a vertex in log f). With a 2 MHz part a Q = 8 band-pass peaks some 0.4 % below its
    ideal f0, where a sharp peak is already 0.2 % lower (issue 11 item 4)."""
    from railroom.engine.circuit.opamp import inverse_open_loop

    rows = np.flatnonzero(np.isfinite(ideal))
    if part is None or rows.size == 0:
        return np.empty(0)
    count = ideal.shape[0]
    sub = {k: (x[rows] if np.ndim(x) == 2 and x.shape[0] == count else x) for k, x in v.items()}
    centre, half = np.log(ideal[rows]), 0.05
    steps = np.linspace(-1.0, 1.0, 21)
    for _ in range(3):
        logs = centre[:, None] + half * steps[None, :]
        s = 1j * TWO_PI * np.hstack((np.zeros((rows.size, 1)), np.exp(logs)))
        transfer = output_transfer(block, sub, s, inverse_open_loop(part, s))
        mag = np.abs(np.broadcast_to(transfer, s.shape)[:, 1:])
        best = np.clip(np.argmax(mag, axis=1), 1, len(steps) - 2)
        pick = np.arange(rows.size)
        y0, y1, y2 = (mag[pick, best + d] for d in (-1, 0, 1))
        bend = y0 - 2 * y1 + y2
        offset = np.where(bend < 0, 0.5 * (y0 - y2) / np.where(bend < 0, bend, -1.0), 0.0)
        step = half * (steps[1] - steps[0])
        centre = logs[pick, best] + np.clip(offset, -1.0, 1.0) * step
        half = 2 * step
    return np.exp(centre)


def output_transfer(block: Block, v, s, inverse_gain) -> np.ndarray:
    """respond(v, s, inverse_gain, 0.0, False).output.transfers["in"] of a second-order block,
    bit for bit, with no other node built: the loop the block's respond closes, its "in" output
    as solve_loop forms it (opamp.loop_output). real_peaks needs only this (three rounds per
    filter stage in every band grid); other blocks are asked for their whole response."""
    admittances = getattr(block, "admittances", None)
    if admittances is None:
        return block.respond(v, s, inverse_gain, 0.0, False).output.transfers["in"]
    first, second, third, fourth, fifth = admittances(v, s, 0.0)
    if isinstance(block, SALLEN_KEY):
        loop = sallen_key_loop(first, second, third, fourth, fifth, v)[0]
    else:
        loop = mfb_loop(first, second, third, fourth, fifth)[0]
    return loop_output(loop, loop_denominator(loop, inverse_gain), "in")


# --- Sallen-Key -------------------------------------------------------------------------------

SALLEN_KEY_FEEDBACK = {
    "rf": FieldSpec(
        "resistance",
        required=False,
        default=None,
        help="output to - input (leave rf and rg out for unity gain)",
    ),
    "rg": FieldSpec("resistance", required=False, default=None, help="- input to ref"),
    "ref": FieldSpec("voltage", required=False, default=0.0, help="where rg returns, V"),
}


def gain_network(v: Mapping[str, np.ndarray]) -> tuple[Loop, np.ndarray, dict]:
    """The - input's loop part, and the current the divider draws: (beta, a_minus, z_minus),
    conductance from the output and the transfers of what it returns to."""
    rf, rg = v.get("rf"), v.get("rg")
    if rg is None:  # output straight to - (rf alone only carries the pin's bias current)
        return Loop(beta=np.ones((1, 1)), z_minus=0.0 if rf is None else rf), np.zeros((1, 1)), {}
    if rf is None:  # output tied to -, rg only loads the output
        return Loop(beta=np.ones((1, 1))), 1.0 / rg, {"ref": -1.0 / rg}
    total = rf + rg
    loop = Loop(beta=rg / total, a_minus={"ref": rf / total}, z_minus=rf * rg / total)
    return loop, 1.0 / total, {"ref": -1.0 / total}


def sallen_key_loop(y_in, y_plus, y_out, y_ground, ground: str | None, v):
    """The Sallen-Key loop (sallen_key's node equations), Y = total, and the gain network's
    conductance from the output and its returns. Every product is numpy's own, operand for
    operand: a real (J, 1) operand meeting a complex one is cast first, as numpy would
    (opamp.lifted), which only saves time."""
    total = add(add(y_in, y_plus), y_out)
    det = sub(mul(add(y_plus, y_ground), total), mul(y_plus, y_plus))
    a_plus = {"in": div(mul(y_plus, y_in), det)}
    if ground is not None:
        a_plus[ground] = div(mul(y_ground, total), det)
    minus, divider, divider_return = gain_network(v)
    # resistance the + input sees at DC: the DC column alone divided (elementwise, the same bits)
    z_plus = div(total[:, :1], det[:, :1]).real
    loop = Loop(
        beta=minus.beta,
        a_minus=minus.a_minus,
        a_plus=a_plus,
        gamma=div(mul(y_plus, y_out), det),
        z_minus=minus.z_minus,
        z_plus=z_plus,
    )
    return loop, total, divider, divider_return


def sallen_key(y_in, y_plus, y_out, y_ground, ground: str | None, v, inverse_gain) -> BlockResponse:
    """in -y_in- A -y_plus- (+) -y_ground- `ground`, and A -y_out- output.

    Node +: V+ (y_plus + y_ground) = V_A y_plus + V_g y_ground
    Node A: V_A Y = V_in y_in + V+ y_plus + V_out y_out,        Y = y_in + y_plus + y_out
    so V+ D = y_plus y_in V_in + y_plus y_out V_out + y_ground Y V_g,  D = (y_plus + y_ground) Y - y_plus^2
    """
    loop, total, divider, divider_return = sallen_key_loop(y_in, y_plus, y_out, y_ground, ground, v)
    solution = solve_loop(loop, inverse_gain)
    output = opamp_node(solution, solution.output, 0, 1)
    plus = plus_node(solution, 0, 1)
    node_a = combined(
        [(div(y_plus, total), plus), (div(y_out, total), output)], extra={"in": div(y_in, total)}
    )
    current = combined(
        [(add(add(load_conductance(v), y_out), divider), output), (-y_out, node_a)],
        extra={**divider_return, **load_return(v, -1.0)},
    )
    amp = OpAmpNodes("amplifier", output, plus, current)
    return BlockResponse(output=output, opamps=(amp,), inner={"node A": node_a})


def sallen_key_gain(v: Mapping[str, np.ndarray]) -> np.ndarray | float:
    rf, rg = v.get("rf"), v.get("rg")
    return 1.0 if rf is None or rg is None else 1.0 + rf / rg


class SallenKeyLowpass(Block):
    name = "sallen_key_lowpass"
    summary = "second-order low-pass; rf/rg optional (unity gain without them)"
    ideal = (
        "H(s) = K / (1 + s (c2 (r1 + r2) + r1 c1 (1 - K)) + s^2 r1 r2 c1 c2), K = 1 + rf/rg",
        "f0 = 1 / (2 pi sqrt(r1 r2 c1 c2))",
    )
    fields = {
        "r1": FieldSpec("resistance", help="in to node A"),
        "r2": FieldSpec("resistance", help="node A to + input"),
        "c1": FieldSpec("capacitance", help="node A to the output"),
        "c2": FieldSpec("capacitance", help="+ input to 0 V"),
        **SALLEN_KEY_FEEDBACK,
    }

    @staticmethod
    def admittances(v, s, drive) -> tuple:
        """sallen_key's y_in, y_plus, y_out, y_ground and ground for these values."""
        return div(1.0, add(v["r1"], drive)), 1.0 / v["r2"], mul(s, v["c1"]), mul(s, v["c2"]), None

    def respond(self, v, s, inverse_gain, drive, differential):
        response = sallen_key(*self.admittances(v, s, drive), v, inverse_gain)
        # the input current (Vin - V_A)/r1, at most max |1 - T_A| Vin / r1 (through_r1); node A
        # follows the signal (through c1 to the output): no fixed return (InputLoad.follows)
        load = InputLoad(conductance=through_r1(v["r1"], response.inner["node A"]), follows=True)
        return BlockResponse(
            output=response.output,
            opamps=response.opamps,
            inner=response.inner,
            input_load=load,
            input_node=lambda: junction(v["r1"], drive, response.inner["node A"]),
        )

    @staticmethod
    def ideal_damping(v):
        """w0 and w0/Q of the ideal denominator s^2 + s ((g1 + g2)/c1 + (1 - K) g2/c2) + g1 g2/(c1 c2)."""
        r1, r2, c1, c2 = v["r1"], v["r2"], v["c1"], v["c2"]
        w0 = 1.0 / np.sqrt(r1 * r2 * c1 * c2)
        return w0, (1.0 / r1 + 1.0 / r2) / c1 + (1.0 - sallen_key_gain(v)) / (r2 * c2)

    def critical_frequencies(self, v):
        w0, damping = self.ideal_damping(v)
        return peak_frequencies(w0, w0 / damping, "lowpass")

    def real_critical_frequencies(self, v, part):
        w0, damping = self.ideal_damping(v)
        return real_peaks(self, v, part, row_peaks(w0, w0 / damping, "lowpass"))


class SallenKeyHighpass(Block):
    name = "sallen_key_highpass"
    summary = "second-order high-pass; rf/rg optional (unity gain without them)"
    ideal = (
        "H(s) = K s^2 r1 r2 c1 c2 / (1 + s (r1 (c1 + c2) + r2 c2 (1 - K)) + s^2 r1 r2 c1 c2), K = 1 + rf/rg",
        "f0 = 1 / (2 pi sqrt(r1 r2 c1 c2))",
    )
    fields = {
        "c1": FieldSpec("capacitance", help="in to node A"),
        "c2": FieldSpec("capacitance", help="node A to + input"),
        "r1": FieldSpec("resistance", help="node A to the output"),
        "r2": FieldSpec("resistance", help="+ input to ref"),
        **SALLEN_KEY_FEEDBACK,
        "ref": FieldSpec("voltage", required=False, default=0.0, help="where r2 and rg return, V"),
    }

    @staticmethod
    def admittances(v, s, drive) -> tuple:
        """sallen_key's y_in, y_plus, y_out, y_ground and ground for these values."""
        y_in = s * v["c1"] / (1.0 + s * v["c1"] * drive)  # c1 in series with the driving resistance
        return y_in, s * v["c2"], 1.0 / v["r1"], 1.0 / v["r2"], "ref"

    def respond(self, v, s, inverse_gain, drive, differential):
        response = sallen_key(*self.admittances(v, s, drive), v, inverse_gain)
        # above f0 the input sees r2 to ref through the capacitors; near f0 r1 as well
        ref = np.atleast_1d(v.get("ref", np.zeros(1)))
        load = InputLoad(
            conductance=float(np.max(1.0 / v["r1"] + 1.0 / v["r2"])),
            returns=(float(np.min(ref)), float(np.max(ref))),
            follows=True,  # r1 returns to the output, which follows the signal in band
        )
        share = 1.0 / (1.0 + s * v["c1"] * drive)  # Z_c1 / (Z_c1 + Z)
        return BlockResponse(
            output=response.output,
            opamps=response.opamps,
            inner=response.inner,
            input_load=load,
            input_node=lambda: junction(None, drive, response.inner["node A"], share),
        )

    @staticmethod
    def ideal_damping(v):
        """w0 and w0/Q of the ideal denominator
        s^2 + s ((1 - K)/(r1 c1) + (c1 + c2)/(r2 c1 c2)) + 1/(r1 r2 c1 c2)."""
        r1, r2, c1, c2 = v["r1"], v["r2"], v["c1"], v["c2"]
        w0 = 1.0 / np.sqrt(r1 * r2 * c1 * c2)
        return w0, (1.0 - sallen_key_gain(v)) / (r1 * c1) + (c1 + c2) / (r2 * c1 * c2)

    def critical_frequencies(self, v):
        w0, damping = self.ideal_damping(v)
        return peak_frequencies(w0, w0 / damping, "highpass")

    def real_critical_frequencies(self, v, part):
        w0, damping = self.ideal_damping(v)
        return real_peaks(self, v, part, row_peaks(w0, w0 / damping, "highpass"))


SALLEN_KEY_FIELDS = ("r1", "r2", "c1", "c2", "rf", "rg")


def unstable_cautions(plans, values) -> list[str]:
    """Said for every Sallen-Key stage whose ideal poles are in the right half-plane at some
    corner (w0/Q < 0: the gain K = 1 + rf/rg undoes the damping): there the circuit oscillates
    or latches against its rails and has no sinusoidal steady state, so the linear figures of
    those corners (its gain, node A, the current the stage before drives into r1) describe no
    circuit. A caution only: no bound is changed (a tighter one would need the saturated
    circuit's own bound, not proved here)."""
    found = []
    for plan, v in zip(plans, values):
        damping = getattr(plan.block, "ideal_damping", None)
        if damping is None:
            continue
        names = [name for name in SALLEN_KEY_FIELDS if name in v]
        corners, index = np.unique(np.hstack([v[name] for name in names]), axis=0, return_index=True)
        rows = {name: v[name][index] for name in names}
        unstable = int(np.sum(damping(rows)[1] < 0))
        if not unstable:
            continue
        nominal = {name: np.array([[plan.quantities[name].value]]) for name in names}
        at_nominal = bool(damping(nominal)[1][0, 0] < 0)
        found.append(
            f"stage {plan.index} ({plan.stage.name!r}): with an ideal op amp its poles are in the "
            f"right half-plane at {unstable} of {len(corners)} corners"
            + (", the nominal values included" if at_nominal else "")
            + ": the gain 1 + rf/rg undoes the damping there (1/Q < 0), so the circuit oscillates "
            "or latches against its rails, and the figures of those corners (its gain, node A, the "
            "current the stage before drives into it) are those of no real circuit"
        )
    return found


# --- multiple feedback ------------------------------------------------------------------------


def mfb_fields(r2: str, r3: str, c1: str, c2: str) -> dict[str, FieldSpec]:
    return {
        "r1": FieldSpec("resistance", help="in to node A"),
        "r2": FieldSpec("resistance", help=r2),
        "r3": FieldSpec("resistance", help=r3),
        "c1": FieldSpec("capacitance", help=c1),
        "c2": FieldSpec("capacitance", help=c2),
        "ref": FieldSpec("voltage", required=False, default=0.0, help="drives the + input, V"),
    }


def mfb_loop(y_in, y_out, y_ref, y_minus, y_feedback) -> tuple[Loop, np.ndarray]:
    """The multiple-feedback loop (multiple_feedback's node equations) and Y = total; numpy's
    own products operand for operand, a real operand cast first (see sallen_key_loop)."""
    total = add(add(add(y_in, y_out), y_ref), y_minus)
    det = sub(mul(add(y_minus, y_feedback), total), mul(y_minus, y_minus))
    loop = Loop(
        beta=div(add(mul(y_minus, y_out), mul(y_feedback, total)), det),
        a_minus={"in": div(mul(y_minus, y_in), det), "ref": div(mul(y_minus, y_ref), det)},
        a_plus={"ref": np.ones((1, 1))},
        z_minus=div(total[:, :1], det[:, :1]).real,  # the DC column alone (elementwise: the same)
    )
    return loop, total


def multiple_feedback(y_in, y_out, y_ref, y_minus, y_feedback, v, inverse_gain) -> BlockResponse:
    """in -y_in- A; A -y_out- output; A -y_ref- ref; A -y_minus- (-); (-) -y_feedback- output.

    Node -: V_A y_minus = V- (y_minus + y_feedback) - V_out y_feedback
    Node A: V_A Y = V_in y_in + V_out y_out + V_ref y_ref + V- y_minus
    so V- D = y_minus (y_in V_in + y_ref V_ref) + (y_minus y_out + y_feedback Y) V_out,
    D = (y_minus + y_feedback) Y - y_minus^2; the - input sees Y / D (its Thevenin impedance).
    """
    loop, total = mfb_loop(y_in, y_out, y_ref, y_minus, y_feedback)
    solution = solve_loop(loop, inverse_gain)
    output = opamp_node(solution, solution.output, 0, 1)
    plus = plus_node(solution, 0, 1)
    minus = combined([(loop.beta, output)], extra=loop.a_minus)
    node_a = combined(
        [(div(y_out, total), output), (div(y_minus, total), minus)],
        extra={"in": div(y_in, total), "ref": div(y_ref, total)},
    )
    current = combined(
        [(add(add(load_conductance(v), y_out), y_feedback), output), (-y_out, node_a), (-y_feedback, minus)],
        extra=load_return(v, -1.0),
    )
    amp = OpAmpNodes("amplifier", output, plus, current)
    return BlockResponse(
        output=output,
        opamps=(amp,),
        inner={"node A": node_a},
        # r1 returns to node A, which swings with the signal (no virtual earth): InputLoad.follows
        input_load=replace(
            virtual_earth_load(v["r1"], v), follows=True, conductance=through_r1(v["r1"], node_a)
        ),
    )


def through_r1(r1, node_a) -> float:
    """The input conductance of a stage whose r1 runs from its input to node A: the current is
    (Vin - V_A) / r1 = Vin (1 - T_A) / r1 (Ohm's law, T_A node A's transfer from the input), so
    at most max |1 - T_A| / r1 over the corners and the grid, and no less than 1 / r1. Near a
    high-Q peak node A swings against the input and larger than it (an MFB band-pass of gain
    -32: V_A = Vout / (j w r2 c1), 3.1 times Vin): 1 / r1 alone fell short by 3 mA on 1k."""
    transfer = node_a.transfers.get("in")
    least = float(np.max(1.0 / r1))
    if transfer is None:
        return least
    return max(least, float(np.max(np.abs(1.0 - transfer) / r1)))


def mfb_response(response: BlockResponse, v, drive) -> BlockResponse:
    """A multiple-feedback response with its input terminal (r1 from in to node A)."""
    return replace(response, input_node=lambda: junction(v["r1"], drive, response.inner["node A"]))


class MfbLowpass(Block):
    name = "mfb_lowpass"
    summary = "multiple-feedback low-pass (inverting)"
    ideal = (
        "H(s) = -(r2/r1) / (1 + s c2 (r2 + r3 + r2 r3/r1) + s^2 r2 r3 c1 c2)",
        "f0 = 1 / (2 pi sqrt(r2 r3 c1 c2))",
    )
    fields = mfb_fields(
        r2="node A to the output", r3="node A to the - input", c1="node A to ref", c2="output to the - input"
    )

    @staticmethod
    def admittances(v, s, drive) -> tuple:
        """multiple_feedback's y_in, y_out, y_ref, y_minus and y_feedback for these values."""
        return div(1.0, add(v["r1"], drive)), 1.0 / v["r2"], mul(s, v["c1"]), 1.0 / v["r3"], mul(s, v["c2"])

    def respond(self, v, s, inverse_gain, drive, differential):
        response = mfb_response(multiple_feedback(*self.admittances(v, s, drive), v, inverse_gain), v, drive)
        # the - pin's bias current flows from node A through r3: A sits Ib r3 off the - pin
        return replace(response, input_load=replace(response.input_load, shift=float(np.max(v["r3"]))))

    def critical_frequencies(self, v):
        r1, r2, r3, c1, c2 = v["r1"], v["r2"], v["r3"], v["c1"], v["c2"]
        w0 = 1.0 / np.sqrt(r2 * r3 * c1 * c2)
        q = np.sqrt(c1 / c2) / ((1.0 / r1 + 1.0 / r2 + 1.0 / r3) * np.sqrt(r2 * r3))
        return peak_frequencies(w0, q, "lowpass")

    def real_critical_frequencies(self, v, part):
        r1, r2, r3, c1, c2 = v["r1"], v["r2"], v["r3"], v["c1"], v["c2"]
        w0 = 1.0 / np.sqrt(r2 * r3 * c1 * c2)
        q = np.sqrt(c1 / c2) / ((1.0 / r1 + 1.0 / r2 + 1.0 / r3) * np.sqrt(r2 * r3))
        return real_peaks(self, v, part, row_peaks(w0, q, "lowpass"))


class MfbBandpass(Block):
    name = "mfb_bandpass"
    summary = "multiple-feedback band-pass (inverting)"
    ideal = (
        "H(s) = -s c1 r2 rp/r1 / (1 + s rp (c1 + c2) + s^2 rp r2 c1 c2), rp = r1 r3/(r1 + r3)",
        "f0 = 1 / (2 pi sqrt(rp r2 c1 c2)); centre gain -r2 c1/(r1 (c1 + c2))",
    )
    fields = mfb_fields(
        r2="- input to the output", r3="node A to ref", c1="node A to the - input", c2="node A to the output"
    )

    @staticmethod
    def admittances(v, s, drive) -> tuple:
        """multiple_feedback's y_in, y_out, y_ref, y_minus and y_feedback for these values."""
        return div(1.0, add(v["r1"], drive)), mul(s, v["c2"]), 1.0 / v["r3"], mul(s, v["c1"]), 1.0 / v["r2"]

    def respond(self, v, s, inverse_gain, drive, differential):
        return mfb_response(multiple_feedback(*self.admittances(v, s, drive), v, inverse_gain), v, drive)

    def critical_frequencies(self, v):
        r1, r2, r3, c1, c2 = v["r1"], v["r2"], v["r3"], v["c1"], v["c2"]
        # ideal denominator s^2 c1 c2 + s g2 (c1 + c2) + g2 (g1 + g3): it peaks at w0
        w0 = np.sqrt((1.0 / r1 + 1.0 / r3) / (r2 * c1 * c2))
        return peak_frequencies(w0, np.ones_like(w0), "bandpass")

    def real_critical_frequencies(self, v, part):
        r1, r2, r3, c1, c2 = v["r1"], v["r2"], v["r3"], v["c1"], v["c2"]
        w0 = np.sqrt((1.0 / r1 + 1.0 / r3) / (r2 * c1 * c2))
        return real_peaks(self, v, part, row_peaks(w0, np.ones_like(w0), "bandpass"))


SALLEN_KEY = (SallenKeyLowpass, SallenKeyHighpass)  # output_transfer closes these with sallen_key_loop
