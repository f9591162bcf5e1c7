"""Netlists of railroom's blocks, built exactly as the README's File formats "Block topologies" words them.

Each builder solves its circuit and returns a `Solution`: `sol["out"]` is a node voltage, and
`sol.source_currents["in"]` / `sol.opamp_currents["out"]` are the currents delivered into those
nodes. Node names: "in" (source), "out", "plus", "minus", "ref", "a" (a filter's inner node A);
difference and instrumentation take "pos" and "neg" instead of "in". Pins tied straight to another
node appear under both names (a follower's "minus" is its "out").
The caller picks the analysis: AC phasors with offset and bias left at 0, or DC at freqs = 0.
"""

from __future__ import annotations

from dataclasses import dataclass
from collections.abc import Sequence

import numpy as np

from .nodal import GROUND, Circuit, Solution, Value


@dataclass(frozen=True, eq=False)
class OpAmpModel:
    """open_loop_gain=None and gbw=None is ideal; offset in series with +; bias flows into the pins."""

    open_loop_gain: Value | None = None
    gbw: Value | None = None
    offset: Value = 0.0
    bias_plus: Value = 0.0
    bias_minus: Value = 0.0


IDEAL = OpAmpModel()
OpAmps = OpAmpModel | Sequence[OpAmpModel]


def _opamp(c: Circuit, model: OpAmpModel, plus: str, minus: str, out: str) -> None:
    c.opamp(plus, minus, out, model.open_loop_gain, model.gbw, model.offset)
    # bias current leaves the circuit node into the pin
    for pin, amps in ((plus, model.bias_plus), (minus, model.bias_minus)):
        if pin != GROUND and np.any(np.asarray(amps) != 0):
            c.current(pin, -np.asarray(amps))


def _finish(c: Circuit, freqs: Value, load: Value | None, aliases: dict[str, str]) -> Solution:
    if load is not None:
        c.resistor("out", GROUND, load)
    sol = c.analyse(freqs)
    for alias, node in aliases.items():
        sol.voltages[alias] = sol.voltages[node]
    return sol


def follower(
    *, v_in: Value = 1.0, opamp: OpAmpModel = IDEAL, load: Value | None = None, freqs: Value = 0.0
) -> Solution:
    """in to +; output to -."""
    c = Circuit()
    c.source("in", v_in)
    _opamp(c, opamp, "in", "out", "out")
    return _finish(c, freqs, load, {"plus": "in", "minus": "out"})


def noninverting(
    rf: Value,
    rg: Value,
    ref: Value = 0.0,
    *,
    v_in: Value = 1.0,
    opamp: OpAmpModel = IDEAL,
    load: Value | None = None,
    freqs: Value = 0.0,
) -> Solution:
    """in to +; rf from output to -; rg from - to ref."""
    c = Circuit()
    c.source("in", v_in)
    c.source("ref", ref)
    c.resistor("out", "minus", rf)
    c.resistor("minus", "ref", rg)
    _opamp(c, opamp, "in", "minus", "out")
    return _finish(c, freqs, load, {"plus": "in"})


def _inverting_core(c: Circuit, rin: Value, rf: Value, ref: Value, v_in: Value, opamp: OpAmpModel) -> None:
    c.source("in", v_in)
    c.source("plus", ref)
    c.resistor("in", "minus", rin)
    c.resistor("minus", "out", rf)
    _opamp(c, opamp, "plus", "minus", "out")


def inverting(
    rin: Value,
    rf: Value,
    ref: Value = 0.0,
    *,
    v_in: Value = 1.0,
    opamp: OpAmpModel = IDEAL,
    load: Value | None = None,
    freqs: Value = 0.0,
) -> Solution:
    """rin from in to -; rf from - to output; ref drives +."""
    c = Circuit()
    _inverting_core(c, rin, rf, ref, v_in, opamp)
    return _finish(c, freqs, load, {"ref": "plus"})


def summing(
    rin: Value,
    rf: Value,
    ref: Value = 0.0,
    inputs: Sequence[tuple[Value, Value]] = (),
    *,
    v_in: Value = 1.0,
    opamp: OpAmpModel = IDEAL,
    load: Value | None = None,
    freqs: Value = 0.0,
) -> Solution:
    """As inverting, plus each extra input (r, v): r from the fixed voltage v (node fixed_k) to -."""
    c = Circuit()
    _inverting_core(c, rin, rf, ref, v_in, opamp)
    for k, (r, v) in enumerate(inputs):
        c.source(f"fixed_{k}", v)
        c.resistor(f"fixed_{k}", "minus", r)
    return _finish(c, freqs, load, {"ref": "plus"})


def difference(
    r1: Value,
    r2: Value,
    r3: Value,
    r4: Value,
    ref: Value = 0.0,
    *,
    v_pos: Value,
    v_neg: Value,
    opamp: OpAmpModel = IDEAL,
    load: Value | None = None,
    freqs: Value = 0.0,
) -> Solution:
    """r1 from neg to -; r2 from - to output; r3 from pos to +; r4 from + to ref."""
    c = Circuit()
    c.source("pos", v_pos)
    c.source("neg", v_neg)
    c.source("ref", ref)
    c.resistor("neg", "minus", r1)
    c.resistor("minus", "out", r2)
    c.resistor("pos", "plus", r3)
    c.resistor("plus", "ref", r4)
    _opamp(c, opamp, "plus", "minus", "out")
    return _finish(c, freqs, load, {})


def instrumentation(
    rg: Value,
    rf: Value,
    ref: Value = 0.0,
    rdiff: Value = 10e3,
    *,
    v_pos: Value,
    v_neg: Value,
    opamp: OpAmps = IDEAL,
    load: Value | None = None,
    freqs: Value = 0.0,
) -> Solution:
    """Three op amps; `opamp` is one model for all or (upper, lower, difference).

    Upper + = pos, lower + = neg; rf from each input op amp's output to its own -; rg between the
    two - inputs; difference stage of four rdiff: lower_out -> diff_minus -> out,
    upper_out -> diff_plus -> ref.
    """
    upper, lower, diff = (opamp,) * 3 if isinstance(opamp, OpAmpModel) else tuple(opamp)
    c = Circuit()
    c.source("pos", v_pos)
    c.source("neg", v_neg)
    c.source("ref", ref)
    c.resistor("upper_out", "upper_minus", rf)
    c.resistor("lower_out", "lower_minus", rf)
    c.resistor("upper_minus", "lower_minus", rg)
    _opamp(c, upper, "pos", "upper_minus", "upper_out")
    _opamp(c, lower, "neg", "lower_minus", "lower_out")
    c.resistor("lower_out", "diff_minus", rdiff)
    c.resistor("diff_minus", "out", rdiff)
    c.resistor("upper_out", "diff_plus", rdiff)
    c.resistor("diff_plus", "ref", rdiff)
    _opamp(c, diff, "diff_plus", "diff_minus", "out")
    return _finish(c, freqs, load, {"upper_plus": "pos", "lower_plus": "neg"})


def integrator(
    rin: Value,
    rf: Value,
    c: Value,
    ref: Value = 0.0,
    *,
    v_in: Value = 1.0,
    opamp: OpAmpModel = IDEAL,
    load: Value | None = None,
    freqs: Value = 0.0,
) -> Solution:
    """rin from in to -; c from - to output; rf across c; ref drives +."""
    circuit = Circuit()
    _inverting_core(circuit, rin, rf, ref, v_in, opamp)
    circuit.capacitor("minus", "out", c)
    return _finish(circuit, freqs, load, {"ref": "plus"})


def _sallen_key_feedback(c: Circuit, rf: Value | None, rg: Value | None, opamp: OpAmpModel) -> dict[str, str]:
    """Output to - for unity gain, or rf from output to - and rg from - to ref."""
    if rf is None and rg is None:
        _opamp(c, opamp, "plus", "out", "out")
        return {"minus": "out"}
    if rf is None or rg is None:
        raise ValueError("give both rf and rg, or neither for unity gain")
    c.resistor("out", "minus", rf)
    c.resistor("minus", "ref", rg)
    _opamp(c, opamp, "plus", "minus", "out")
    return {}


def sallen_key_lowpass(
    r1: Value,
    r2: Value,
    c1: Value,
    c2: Value,
    rf: Value | None = None,
    rg: Value | None = None,
    ref: Value = 0.0,
    *,
    v_in: Value = 1.0,
    opamp: OpAmpModel = IDEAL,
    load: Value | None = None,
    freqs: Value = 0.0,
) -> Solution:
    """r1 from in to A; r2 from A to +; c1 from A to output; c2 from + to 0 V."""
    c = Circuit()
    c.source("in", v_in)
    c.source("ref", ref)
    c.resistor("in", "a", r1)
    c.resistor("a", "plus", r2)
    c.capacitor("a", "out", c1)
    c.capacitor("plus", GROUND, c2)
    aliases = _sallen_key_feedback(c, rf, rg, opamp)
    return _finish(c, freqs, load, aliases)


def sallen_key_highpass(
    c1: Value,
    c2: Value,
    r1: Value,
    r2: Value,
    rf: Value | None = None,
    rg: Value | None = None,
    ref: Value = 0.0,
    *,
    v_in: Value = 1.0,
    opamp: OpAmpModel = IDEAL,
    load: Value | None = None,
    freqs: Value = 0.0,
) -> Solution:
    """c1 from in to A; c2 from A to +; r1 from A to output; r2 from + to ref."""
    c = Circuit()
    c.source("in", v_in)
    c.source("ref", ref)
    c.capacitor("in", "a", c1)
    c.capacitor("a", "plus", c2)
    c.resistor("a", "out", r1)
    c.resistor("plus", "ref", r2)
    aliases = _sallen_key_feedback(c, rf, rg, opamp)
    return _finish(c, freqs, load, aliases)


def mfb_lowpass(
    r1: Value,
    r2: Value,
    r3: Value,
    c1: Value,
    c2: Value,
    ref: Value = 0.0,
    *,
    v_in: Value = 1.0,
    opamp: OpAmpModel = IDEAL,
    load: Value | None = None,
    freqs: Value = 0.0,
) -> Solution:
    """r1 from in to A; r2 from A to output; r3 from A to -; c1 from A to ref; c2 output to -."""
    c = Circuit()
    c.source("in", v_in)
    c.source("plus", ref)
    c.resistor("in", "a", r1)
    c.resistor("a", "out", r2)
    c.resistor("a", "minus", r3)
    c.capacitor("a", "plus", c1)
    c.capacitor("out", "minus", c2)
    _opamp(c, opamp, "plus", "minus", "out")
    return _finish(c, freqs, load, {"ref": "plus"})


def mfb_bandpass(
    r1: Value,
    r2: Value,
    r3: Value,
    c1: Value,
    c2: Value,
    ref: Value = 0.0,
    *,
    v_in: Value = 1.0,
    opamp: OpAmpModel = IDEAL,
    load: Value | None = None,
    freqs: Value = 0.0,
) -> Solution:
    """r1 from in to A; r3 from A to ref; c1 from A to -; c2 from A to output; r2 - to output."""
    c = Circuit()
    c.source("in", v_in)
    c.source("plus", ref)
    c.resistor("in", "a", r1)
    c.resistor("a", "plus", r3)
    c.capacitor("a", "minus", c1)
    c.capacitor("a", "out", c2)
    c.resistor("minus", "out", r2)
    _opamp(c, opamp, "plus", "minus", "out")
    return _finish(c, freqs, load, {"ref": "plus"})


def divider(
    top: Value, bottom: Value, *, v_in: Value = 1.0, load: Value | None = None, freqs: Value = 0.0
) -> Solution:
    """top from in to output; bottom from output to 0 V."""
    c = Circuit()
    c.source("in", v_in)
    c.resistor("in", "out", top)
    c.resistor("out", GROUND, bottom)
    return _finish(c, freqs, load, {})


def rc_lowpass(
    r: Value, c: Value, *, v_in: Value = 1.0, load: Value | None = None, freqs: Value = 0.0
) -> Solution:
    """r from in to output; c from output to 0 V."""
    circuit = Circuit()
    circuit.source("in", v_in)
    circuit.resistor("in", "out", r)
    circuit.capacitor("out", GROUND, c)
    return _finish(circuit, freqs, load, {})
