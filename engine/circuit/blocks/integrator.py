"""Inverting integrator with rf across c: a first-order low-pass with a finite DC gain.

rin from in to -, c from - to the output, rf across c, ref drives + (the README's File formats). With the
ideal op amp (Franco, Design with Operational Amplifiers, ch. 3):

    Vout = -(Zf/rin) Vin + (1 + Zf/rin) Vref,    Zf = rf || 1/(s c)
    DC gain -rf/rin, corner 1/(2 pi rf c); an ideal integrator (rf open) ramps at Vos/(rin c).

rf is what keeps the offset from ramping the output into a rail: at DC the offset sees the noise
gain 1 + rf/rin and the - input's bias current flows through rf; both are part of the worst case.
"""

from __future__ import annotations

import numpy as np

from railroom.engine.circuit.blocks.base import Block, BlockResponse, FieldSpec
from railroom.engine.circuit.blocks.gain import single_opamp, virtual_earth_input, virtual_earth_load
from railroom.engine.circuit.opamp import TWO_PI, Loop


class Integrator(Block):
    name = "integrator"
    summary = "inverting integrator with rf across c (finite DC gain)"
    ideal = ("out - ref = -(rf/rin) / (1 + s rf c) (in - ref)", "DC gain -rf/rin, corner 1/(2 pi rf c)")
    fields = {
        "rin": FieldSpec("resistance", help="input resistor, in to - input"),
        "rf": FieldSpec("resistance", help="across c: sets the DC gain -rf/rin"),
        "c": FieldSpec("capacitance", help="integrating capacitor, - input to output"),
        "ref": FieldSpec("voltage", required=False, default=0.0, help="drives the + input, V"),
    }

    def respond(self, v, s, inverse_gain, drive, differential):
        g_in = 1.0 / (v["rin"] + drive)
        y_feedback = 1.0 / v["rf"] + s * v["c"]
        total = g_in + y_feedback
        loop = Loop(
            beta=y_feedback / total,
            a_minus={"in": g_in / total},
            a_plus={"ref": np.ones((1, 1))},
            z_minus=1.0 / (g_in + 1.0 / v["rf"]),
        )
        amp, _ = single_opamp(loop, inverse_gain, y_feedback, v)
        return BlockResponse(
            output=amp.output,
            opamps=(amp,),
            input_load=virtual_earth_load(v["rin"], v),
            input_node=lambda: virtual_earth_input(v["rin"], drive, amp, inverse_gain),
        )

    def critical_frequencies(self, v):
        return np.ravel(1.0 / (TWO_PI * v["rf"] * v["c"]))
