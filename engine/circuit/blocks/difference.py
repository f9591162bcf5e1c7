"""Four-resistor difference amplifier.

r1 from the negative input to -, r2 from - to the output, r3 from the positive input to +, r4 from
+ to ref (the README's File formats). With the ideal op amp (Sedra & Smith, Microelectronic Circuits, ch. 2):

    Vout = (1 + r2/r1) (r4/(r3 + r4)) Vpos + (1 + r2/r1) (r3/(r3 + r4)) Vref - (r2/r1) Vneg

which is (r2/r1) (Vpos - Vneg) + Vref when r2/r1 = r4/r3; any mismatch lets the common mode
through, and the corners method finds it because each resistor keeps its own tolerance.
Fed by a differential source the inputs are its two sides ("pos", "neg"), each behind the source
impedance; after a single-ended stage `in` drives r3 and r1 returns to ref.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from railroom.engine.circuit.blocks.base import Block, BlockResponse, FieldSpec, InputLoad, junction
from railroom.engine.circuit.blocks.gain import single_opamp
from railroom.engine.circuit.opamp import Loop


def difference_loop(r1, r2, r3, r4, positive: str, negative: str) -> Loop:
    """The op amp's loop with the inputs named `positive` (through r3) and `negative` (r1)."""
    minus_total, plus_total = r1 + r2, r3 + r4
    a_minus = {negative: r2 / minus_total}
    a_plus = {positive: r4 / plus_total}
    a_plus["ref"] = a_plus.get("ref", 0.0) + r3 / plus_total
    return Loop(
        beta=r1 / minus_total,
        a_minus=a_minus,
        a_plus=a_plus,
        z_minus=r1 * r2 / minus_total,
        z_plus=r3 * r4 / plus_total,
    )


def input_names(differential: bool) -> tuple[str, str]:
    """Which sources drive the two input sides: the differential source, or `in` against ref."""
    return ("pos", "neg") if differential else ("in", "ref")


class Difference(Block):
    name = "difference"
    summary = "four-resistor difference amplifier; r1/r2 on the inverting side"
    ideal = (
        "out = (1 + r2/r1) (r4 in+ + r3 ref)/(r3 + r4) - (r2/r1) in-",
        "r1 = r3 and r2 = r4 gives out = (r2/r1)(in+ - in-) + ref",
    )
    takes_differential = True
    fields = {
        "r1": FieldSpec("resistance", help="negative input to the - input"),
        "r2": FieldSpec("resistance", help="- input to the output"),
        "r3": FieldSpec("resistance", help="positive input to the + input"),
        "r4": FieldSpec("resistance", help="+ input to ref"),
        "ref": FieldSpec("voltage", required=False, default=0.0, help="where r4 returns, V"),
    }

    def respond(self, v, s, inverse_gain, drive, differential):
        positive, negative = input_names(differential)
        # the source impedance sits in series with each driven side; ref is a stiff voltage
        r1 = v["r1"] + (drive if differential else 0.0)
        r3 = v["r3"] + drive
        loop = difference_loop(r1, v["r2"], r3, v["r4"], positive, negative)
        amp, _ = single_opamp(loop, inverse_gain, 1.0 / v["r2"], v)
        return BlockResponse(
            output=amp.output,
            opamps=(amp,),
            input_load=InputLoad() if differential else divider_load(v),
            input_node=None if differential else (lambda: junction(v["r3"], drive, amp.plus)),
        )


def divider_load(v: Mapping[str, np.ndarray]) -> InputLoad:
    """Single-ended, `in` sees r3 + r4 returning to ref (the + input draws no current)."""
    ref = np.atleast_1d(v.get("ref", np.zeros(1)))
    return InputLoad(
        conductance=float(np.max(1.0 / (v["r3"] + v["r4"]))),
        returns=(float(np.min(ref)), float(np.max(ref))),
        least=float(np.min(1.0 / (v["r3"] + v["r4"]))),
        rows=1.0 / (v["r3"] + v["r4"]),
    )
