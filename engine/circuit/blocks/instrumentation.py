"""Three-op-amp instrumentation amplifier: two input op amps with rg between their - inputs, then a
unity difference stage of four equal resistors rdiff with ref at its r4 end (the README's File formats).

First-stage outputs (Sedra & Smith, Microelectronic Circuits, ch. 2; Franco, ch. 2):

    upper = V_cm + (1 + 2 rf/rg) V_d/2,   lower = V_cm - (1 + 2 rf/rg) V_d/2,   Vout = Vref + G V_d

The first stage passes the common mode at unity, so an input op amp can reach its swing limit while
the output still sits comfortably inside its window: each op amp is checked on its own.

Finite gain: both rf share one field, so the first stage is symmetric and splits exactly into a
common mode (no current in rg: each op amp a follower, 1/(1/A + 1)) and a difference mode (the
middle of rg is a virtual ground: each half a non-inverting amplifier with rf and rg/2,
1/(1/A + beta_d), beta_d = (rg/2)/(rf + rg/2)). Bias current into a - input splits the same way:
rf per ampere in common mode, rf || (rg/2) times the difference-mode gain in difference mode.
After a single-ended stage `in` drives the upper op amp and the lower op amp's + input sits on ref
(as the difference block's r1 returns to ref).
"""

from __future__ import annotations

import numpy as np

from railroom.engine.circuit.blocks.base import (
    Block,
    BlockResponse,
    FieldSpec,
    Node,
    OpAmpNodes,
    combined,
    dc_resistance,
)
from railroom.engine.circuit.blocks.difference import difference_loop, input_names
from railroom.engine.circuit.blocks.gain import single_opamp

LABELS = ("first stage, upper op amp", "first stage, lower op amp", "difference stage")
OPAMPS = len(LABELS)


def dc(transfer: np.ndarray) -> np.ndarray:
    """The DC column of a transfer, shape (J, 1)."""
    return transfer[:, :1].real


def first_stage(
    rf, rg, inverse_gain, positive: str, negative: str, drives: tuple[float, float]
) -> tuple[Node, Node]:
    """Outputs of the upper and lower input op amps, with their offset and bias gains."""
    half = rg / 2.0
    difference = 1.0 / (inverse_gain + half / (rf + half))
    common = 1.0 / (inverse_gain + 1.0) + 0.0 * difference
    same, cross = (common + difference) / 2.0, (common - difference) / 2.0
    shunt = rf * half / (rf + half)
    minus_same = np.abs(rf * dc(common) + shunt * dc(difference)) / 2.0
    minus_cross = np.abs(rf * dc(common) - shunt * dc(difference)) / 2.0
    zero = np.zeros_like(dc(same))
    upper = Node(
        transfers={positive: same, negative: cross},
        offset_gain=np.hstack((dc(same), dc(cross), zero)),
        bias_gain=np.hstack(
            (np.abs(drives[0] * dc(same)) + minus_same, np.abs(drives[1] * dc(cross)) + minus_cross, zero)
        ),
    )
    lower = Node(
        transfers={positive: cross, negative: same},
        offset_gain=np.hstack((dc(cross), dc(same), zero)),
        bias_gain=np.hstack(
            (np.abs(drives[0] * dc(cross)) + minus_cross, np.abs(drives[1] * dc(same)) + minus_same, zero)
        ),
    )
    return upper, lower


def own_errors(node: Node, index: int) -> Node | None:
    """A single-op-amp node's error gains moved into column `index` of the block's op amps."""
    if node.offset_gain is None:
        return None
    assert node.bias_gain is not None  # set with offset_gain (Node)
    offset = np.zeros((node.offset_gain.shape[0], OPAMPS))
    bias = np.zeros_like(offset)
    offset[:, index] = node.offset_gain[:, 0]
    bias[:, index] = node.bias_gain[:, 0]
    return Node(transfers={}, offset_gain=offset, bias_gain=bias)


def substitute(node: Node, inputs: dict[str, Node], index: int) -> Node:
    """A difference-stage node in terms of the block's sources: its inputs replaced by the
    first-stage nodes that drive them, its own op amp's errors in column `index`."""
    terms: list[tuple[np.ndarray | float, Node]] = [
        (node.transfers[k], inputs[k]) for k in inputs if k in node.transfers
    ]
    own = own_errors(node, index)
    if own is not None:
        terms.append((1.0, own))
    extra = {k: t for k, t in node.transfers.items() if k not in inputs}
    return combined(terms, extra)


def input_minus(output: Node, inverse_gain, source: str, index: int) -> Node:
    """V- = V+ + Vos - Vout / A of an input op amp (no pin current)."""
    assert output.offset_gain is not None  # an op amp's output carries its own errors
    offset = np.zeros((output.offset_gain.shape[0], OPAMPS))
    offset[:, index] = 1.0
    own = Node(transfers={}, offset_gain=offset, bias_gain=np.zeros_like(offset))
    return combined([(-inverse_gain, output), (1.0, own)], extra={source: np.ones_like(inverse_gain)})


def input_pin(source: str, ones: np.ndarray, drive, index: int) -> Node:
    """An input op amp's + pin: the source side itself, moved by its bias current through the
    source's own resistance `drive`."""
    rows = ones.shape[0]
    offset = np.zeros((rows, OPAMPS))
    bias = np.zeros_like(offset)
    bias[:, index] = np.broadcast_to(np.asarray(drive, dtype=float).reshape(-1), (rows,))
    return Node(transfers={source: ones}, offset_gain=offset, bias_gain=bias)


class Instrumentation(Block):
    name = "instrumentation"
    summary = "three-op-amp instrumentation amplifier, gain 1 + 2 rf/rg, unity difference stage"
    ideal = ("out = (1 + 2 rf/rg)(in+ - in-) + ref",)
    takes_differential = True
    fields = {
        "rg": FieldSpec("resistance", help="gain resistor between the two input op amps' - inputs"),
        "rf": FieldSpec("resistance", help="feedback resistor of each input op amp"),
        "ref": FieldSpec(
            "voltage",
            required=False,
            default=0.0,
            help="reference of the difference stage (its output's zero), V",
        ),
        "rdiff": FieldSpec(
            "resistance", required=False, default=10e3, help="the difference stage's four equal resistors"
        ),
    }

    def respond(self, v, s, inverse_gain, drive, differential):
        rf, rg, rdiff = v["rf"], v["rg"], v["rdiff"]
        drive = dc_resistance(drive)  # only the bias currents meet it: the + pins draw nothing
        positive, negative = input_names(differential)
        upper, lower = first_stage(
            rf, rg, inverse_gain, positive, negative, (drive, drive if differential else 0.0)
        )
        loop = difference_loop(rdiff, rdiff, rdiff, rdiff, "upper", "lower")
        amp, _ = single_opamp(loop, inverse_gain, 1.0 / rdiff, v, LABELS[2])
        inputs = {"upper": upper, "lower": lower}
        output = substitute(amp.output, inputs, 2)
        diff_plus = substitute(amp.plus, inputs, 2)
        diff_minus = combined([(loop.beta, output), (loop.a_minus["lower"], lower)])
        conductance = 1.0 / rf + 1.0 / rdiff
        upper_current = combined(
            [
                (conductance, upper),
                (-1.0 / rdiff, diff_plus),
                (-1.0 / rf, input_minus(upper, inverse_gain, positive, 0)),
            ]
        )
        lower_current = combined(
            [
                (conductance, lower),
                (-1.0 / rdiff, diff_minus),
                (-1.0 / rf, input_minus(lower, inverse_gain, negative, 1)),
            ]
        )
        ones = np.ones_like(upper.transfers[positive])
        opamps = (
            OpAmpNodes(LABELS[0], upper, input_pin(positive, ones, drive, 0), upper_current),
            OpAmpNodes(
                LABELS[1], lower, input_pin(negative, ones, drive if differential else 0.0, 1), lower_current
            ),
            OpAmpNodes(LABELS[2], output, diff_plus, substitute(amp.current, inputs, 2)),
        )
        return BlockResponse(
            output=output, opamps=opamps, input_node=None if differential else opamps[0].plus
        )
