"""Passive blocks with no op amp: the resistive divider, the first-order RC low-pass and the
AC coupling (a series capacitor with a resistor to a bias voltage, a first-order RC high-pass).

    divider      Vout = Vin * bottom / (top + bottom),    output resistance top || bottom
    rc_lowpass   Vout = Vin / (1 + s r c),                 corner 1 / (2 pi r c)
    ac_coupling  Vout = Vin s r c / (1 + s r c) + bias,    corner 1 / (2 pi r c)
(Horowitz & Hill, The Art of Electronics, ch. 1.) The driving impedance Zd adds to top and r; a
stage `load` from the output to 0 V sits in parallel with bottom (divider) or with c (low-pass:
Vout = Vin / (1 + r/load + s r c)). A load returning to `load_to` adds Z Vto / load to the output,
Z the Thevenin impedance below (Millman's theorem: the node voltage is the conductance-weighted
mean of what each branch returns to).

Each drives the next stage as a Thevenin source (Thevenin's theorem; Horowitz & Hill ch. 1.2):
the output node is the open-circuit voltage, and the source impedance, per frequency,
    divider     Z = (top + Zd) || bottom || load
    rc_lowpass  Z = 1 / (1/(r + Zd) + 1/load + s c)
sits in series with the next stage's input (a complex impedance, not its DC resistance: an RC
low-pass into an inverting stage with rin = r reads 1/sqrt(5) at the corner, not 1/sqrt(8)).

The AC coupling with its driving impedance Zd in series with c, r' = r || load and the bias
scaled to bias' = bias load / (r + load) (Thevenin of r to bias with load to 0 V):
    Vth = Vin s c r' / (1 + s c (r' + Zd)) + bias' (1 + s c Zd) / (1 + s c (r' + Zd))
    Z   = r' (1 + s c Zd) / (1 + s c (r' + Zd))       (r' || (Zd + 1/(s c)))
At DC the input is blocked (Vth = bias', Z = r'), so the next stage's bias current flows through
r' alone; its input draws AC current only, at most |Vin| / r.
"""

from __future__ import annotations

import numpy as np

from railroom.engine.circuit.blocks.base import (
    Block,
    BlockResponse,
    FieldSpec,
    InputLoad,
    Node,
    junction,
    load_conductance,
    load_return,
    thevenin,
)


class Divider(Block):
    name = "divider"
    summary = "passive resistive divider (no part)"
    ideal = ("out = in bottom/(top + bottom); it drives the next stage through top || bottom",)
    uses_part = False
    fields = {
        "top": FieldSpec("resistance", help="from in to output"),
        "bottom": FieldSpec("resistance", help="from output to 0 V"),
    }

    def respond(self, v, s, inverse_gain, drive, differential):
        top = v["top"] + drive
        bottom = 1.0 / (1.0 / v["bottom"] + load_conductance(v))
        ones = np.ones_like(s) * np.ones_like(bottom)
        ratio = bottom / (top + bottom) * ones
        impedance = top * bottom / (top + bottom) * ones
        output = Node(transfers={"in": ratio, **load_return(v, impedance)})
        return BlockResponse(
            output=output,
            input_node=lambda: junction(v["top"], drive, output),
            **thevenin(impedance),
            input_load=InputLoad(
                conductance=float(np.max(1.0 / (v["top"] + bottom))),
                least=float(np.min(1.0 / (v["top"] + bottom))),
                rows=1.0 / (v["top"] + bottom),
            ),
        )


class RcLowpass(Block):
    name = "rc_lowpass"
    summary = "passive first-order low-pass (no part)"
    ideal = ("H(s) = 1 / (1 + s r c); it drives the next stage through r || 1/(s c)",)
    uses_part = False
    fields = {
        "r": FieldSpec("resistance", help="from in to output"),
        "c": FieldSpec("capacitance", help="from output to 0 V"),
    }

    def respond(self, v, s, inverse_gain, drive, differential):
        r, c, g_load = v["r"] + drive, v["c"], load_conductance(v)
        # Its input draws at most Vin / r (at frequencies far above the corner): conservative.
        impedance = r / (1.0 + r * g_load + s * r * c)
        output = Node(transfers={"in": 1.0 / (1.0 + r * g_load + s * r * c), **load_return(v, impedance)})
        return BlockResponse(
            output=output,
            input_node=lambda: junction(v["r"], drive, output),
            **thevenin(impedance),
            input_load=InputLoad(conductance=float(np.max(1.0 / v["r"])), follows=True),
        )

    def critical_frequencies(self, v):
        r = v["r"] * np.ones_like(v["c"])
        return np.atleast_1d((1.0 + r * load_conductance(v)) / (2 * np.pi * r * v["c"])).ravel()


class AcCoupling(Block):
    name = "ac_coupling"
    summary = "passive AC coupling: series capacitor, r to a bias voltage (no part)"
    ideal = (
        "H(s) = s r c / (1 + s r c) on the signal; out = bias at DC; corner 1 / (2 pi r c)",
        "it drives the next stage through r || (1/(s c) + what drives it)",
    )
    uses_part = False
    fields = {
        "c": FieldSpec("capacitance", help="series capacitor, from in to output"),
        "r": FieldSpec("resistance", help="from output to bias"),
        "bias": FieldSpec("voltage", required=False, default=0.0, help="where r returns, V"),
    }

    def respond(self, v, s, inverse_gain, drive, differential):
        g_load = load_conductance(v)
        r = 1.0 / (1.0 / v["r"] + g_load)  # r || load
        bias_share = 1.0 / (1.0 + v["r"] * g_load)  # bias' = bias load / (r + load)
        sc = s * v["c"]
        den = 1.0 + sc * (r + drive)
        near = 1.0 + sc * drive
        # a load returning to `load_to`: Millman's bias' gains r' Vto / load (load_return)
        to = {k: x * r for k, x in load_return(v).items()}
        output = Node(
            transfers={
                "in": sc * r / den,
                "bias": bias_share * near / den,
                **{k: x * near / den for k, x in to.items()},
            }
        )
        far = Node(transfers={"bias": bias_share * np.ones((1, 1)), **to})
        return BlockResponse(
            output=output,
            # in to the terminal through Zd, then 1/(s c) + r' to bias': share (1 + s c r') / den
            input_node=lambda: junction(None, drive, far, share=(1.0 + sc * r) / den),
            **thevenin(r * near / den),
            # AC current only (the capacitor blocks DC), at most the swing over r
            input_load=InputLoad(conductance=float(np.max(1.0 / v["r"])), blocks_dc=True),
        )

    def critical_frequencies(self, v):
        r = 1.0 / (1.0 / v["r"] + load_conductance(v)) * np.ones_like(v["c"])
        return np.atleast_1d(1.0 / (2 * np.pi * r * v["c"])).ravel()


class ConverterInput(Block):
    """The converter input that ends the chain: the signal must stay inside [low, high].

    Common practice keeps about 10 % of full scale spare; that is the user's `margin` to set.
    """

    name = "adc"
    summary = "converter input window the signal must stay inside"
    ideal = ("low <= in <= high: a window only, nothing is driven",)
    uses_part = False
    window_only = True
    fields = {
        "low": FieldSpec("voltage", help="lowest input the converter reads, V"),
        "high": FieldSpec("voltage", help="highest input the converter reads, V"),
    }

    def respond(self, v, s, inverse_gain, drive, differential):
        # the signal passes on unchanged, and so does what drives it
        ones = np.ones_like(s) * np.ones((1, 1))
        output = Node(transfers={"in": ones})
        return BlockResponse(output=output, input_node=output, **thevenin(drive * ones))
