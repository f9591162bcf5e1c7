"""The slow reference for `railroom bench`: one circuit at a time, each stage solved by nodal analysis.

A Python loop over draws; for each draw and stage a modified nodal analysis (MNA: node voltages
plus the op amp's output current as unknowns) is solved at DC and at each band frequency, with
the op amp as a voltage source V_out = A(s) (V+ + Vos - V-), A(s) single-pole (opamp.py), bias
currents at each pin apart (a width either way: |gain| |Ib|, as the draw walk takes them), and
the fixed voltages (ref, level-shift inputs) as ideal sources. Five right-hand sides per solve:
the chain signal at 1 V, the fixed sources at their values, the offset, and each pin's bias. The swing windows, the next stage's input load and
the envelope bounds per circuit follow the README's JSON report as the engine reads it; the
circuit solution is independent of the blocks' feedback formulas. It covers the blocks of the
bench chain: follower, noninverting (with or without cg), inverting, summing, divider,
rc_lowpass, ac_coupling, adc, comparator.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from railroom.engine.walks import circuit_walk as dw
from railroom.engine.verdict.margins import load_currents, supply_margin
from railroom.engine.verdict.margins import opamp_margins as kernel_margins
from railroom.engine.circuit.opamp import TWO_PI, inverse_open_loop, laplace_grid

GROUND = "0"


class Nodal:
    """MNA over a batch of Laplace points: G (P, n, n) x = b (P, n, 5): the signal, the fixed
    sources, the offset, the bias current at the + pin and at the - pin (apart: a width)."""

    def __init__(self, nodes: list[str], s: np.ndarray, sources: int):
        self.index = {name: i for i, name in enumerate(nodes)}
        self.n = len(nodes) + sources
        self.s = s
        self.G = np.zeros((len(s), self.n, self.n), dtype=complex)
        self.b = np.zeros((len(s), self.n, 5), dtype=complex)
        self.branch = len(nodes)

    def admittance(self, a: str, b: str, y) -> None:
        for p, q in ((a, b), (b, a)):
            if p != GROUND:
                i = self.index[p]
                self.G[:, i, i] += y
                if q != GROUND:
                    self.G[:, i, self.index[q]] -= y

    def source(self, node: str, column: int, value: float) -> None:
        """Ideal voltage source from ground to node."""
        k, i = self.branch, self.index[node]
        self.branch += 1
        self.G[:, i, k] += 1
        self.G[:, k, i] += 1
        self.b[:, k, column] = value

    def opamp(self, plus: str, minus: str, out: str, inverse_gain, offset: float) -> int:
        """Row: V+ - V- - V_out / A = -Vos; the op amp's output current enters `out`."""
        k = self.branch
        self.branch += 1
        self.G[:, self.index[out], k] += 1
        self.G[:, k, self.index[plus]] += 1
        self.G[:, k, self.index[minus]] -= 1
        self.G[:, k, self.index[out]] -= inverse_gain
        self.b[:, k, 2] = -offset
        return k

    def inject(self, node: str, current: float, column: int = 2) -> None:
        self.b[:, self.index[node], column] += current

    def solve(self) -> np.ndarray:
        return np.linalg.solve(self.G, self.b)

    def impedance(self, node: str) -> np.ndarray:
        """Thevenin impedance at `node` per Laplace point: its voltage for 1 A injected there
        with every source at zero (Thevenin's theorem)."""
        b = np.zeros((len(self.s), self.n, 1), dtype=complex)
        b[:, self.index[node], 0] = 1.0
        return np.linalg.solve(self.G, b)[:, self.index[node], 0]


def stage_circuit(plan, v: dict, s, drive, offset: float, bias: float, siblings=None):
    """Nodal circuit of one stage (the README's File formats, block topologies); returns (solution, nodes,
    the op amp's branch, the circuit). `drive`: the impedance driving the stage, a resistance or
    one value per Laplace point (the Thevenin impedance of a passive stage before it).
    `siblings`: (G, V) per other stage a passive stage feeds: a conductance from its output to a
    source at V (sibling_node)."""
    block = plan.block.name
    val = {k: float(x) for k, x in v.items()}
    extra = sorted({k.rsplit(".", 1)[0] for k in val if k.startswith("inputs.")})
    returns = ["load_to"] if "load_to" in val else []
    returns += [f"siblings.{n}" for n in range(len(siblings or ()))]
    nodes = ["src", "plus", "minus", "out", "ref", "cg"] + [f"{k}.v" for k in extra] + returns
    opamps = block in ("follower", "noninverting", "inverting", "summing")
    c = Nodal(nodes, s, sources=2 + len(extra) + opamps + len(returns))
    c.source("src", 0, 1.0)
    c.source("ref", 1, val.get("ref", val.get("bias", 0.0)))
    for node in returns:
        c.source(node, 1, val[node] if node == "load_to" else siblings[int(node.split(".")[1])][1])
    for n, (g, _) in enumerate(siblings or ()):
        c.admittance("out", f"siblings.{n}", g)
    if "load" in val:  # to 0 V, or to `load_to` (an ideal source)
        c.admittance("out", "load_to" if "load_to" in val else GROUND, 1.0 / val["load"])
    driven = lambda node, r: c.admittance("src", node, 1.0 / r)  # noqa: E731
    pins = ("plus", "minus", "out")
    if block == "follower":
        driven("plus", np.where(np.abs(drive) < 1e-3, 1e-3, drive))
        pins = ("plus", "out", "out")
    elif block == "noninverting":
        driven("plus", np.where(np.abs(drive) < 1e-3, 1e-3, drive))
        c.admittance("out", "minus", 1.0 / val["rf"])
        if "cg" in val:  # rg from - to node cg, cg from there to ref
            c.admittance("minus", "cg", 1.0 / val["rg"])
            c.admittance("cg", "ref", s * val["cg"])
        else:
            c.admittance("minus", "ref", 1.0 / val["rg"])
    elif block in ("inverting", "summing"):
        driven("minus", drive + val["rin"])
        c.admittance("minus", "out", 1.0 / val["rf"])
        pins = ("ref", "minus", "out")
        for k in extra:
            c.source(f"{k}.v", 1, val[f"{k}.v"])
            c.admittance(f"{k}.v", "minus", 1.0 / val[f"{k}.r"])
    elif block == "divider":
        driven("out", drive + val["top"])
        c.admittance("out", GROUND, 1.0 / val["bottom"])
    elif block == "rc_lowpass":
        driven("out", drive + val["r"])
        c.admittance("out", GROUND, s * val["c"])
    elif block == "ac_coupling":  # drive into node plus, c from there to out, r out to bias
        driven("plus", np.where(np.abs(drive) < 1e-3, 1e-3, drive))
        c.admittance("plus", "out", s * val["c"])
        c.admittance("out", "ref", 1.0 / val["r"])
    elif block == "adc":
        driven("out", 1e-3)
    else:
        raise ValueError(f"the per-draw reference does not cover block {block!r}")
    branch = None
    if opamps:
        branch = c.opamp(*pins, inverse_open_loop(plan.part, s), offset)
        c.inject(pins[1], -abs(bias), 4)  # either sign: envelope takes |gain| |Ib| each way
        c.inject(pins[0], abs(bias), 3)
    for name in ("plus", "minus", "out", "ref", "src", "cg"):
        if not np.any(c.G[0, c.index[name]]):
            c.admittance(name, GROUND, 1.0)  # an unused node, held at 0 V
    return c.solve(), {**c.index, "+": c.index[pins[0]]}, branch, c


def envelope(x: np.ndarray, signal: tuple) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """One circuit's node: x[:, 0] per volt of signal (DC first), x[0, 1] fixed, x[0, 2] the
    offset, x[0, 3:5] per ampere of |Ib| at each pin (a width either way: walks/circuit_walk.py).
    With the incoming (hi, lo, a) over the band: max/min of g dc + |H| a sin (walks/signal_bounds.py)."""
    hi, lo, a = signal
    g = x[0, 0].real
    magnitude = np.abs(x[1:, 0])
    base = x[0, 1].real + x[0, 2].real
    width = abs(x[0, 3].real) + abs(x[0, 4].real)  # the pins' bias currents, either sign
    up, down = (hi, lo) if g >= 0 else (-lo, -hi)
    spare = magnitude - abs(g)
    top = base + width + abs(g) * up + spare * a
    return top, base - width + abs(g) * down - spare * a, magnitude * a


def draw_margins(layout: dw.Layout, D: np.ndarray, dT: float) -> list[dict[str, float]]:
    """Every stage's margins for one drawn circuit (D of shape (1, K))."""
    chain = layout.chain
    s = laplace_grid(layout.freqs)
    a = chain.source.amplitude * np.ones(len(layout.freqs))
    signal = (chain.source.level[1] + a, chain.source.level[0] - a, a)
    found = []
    source = (signal, chain.source.impedance)
    passed: list = []  # per stage: (the signal it passes on, what drives the stages it feeds)
    parents = dw.plan_parents(layout.plans)  # stages form a tree (`from`)
    entered: dict = {}  # a passive stage feeding several: (its values, the signal it was fed)
    for k, plan in enumerate(layout.plans):
        parent = parents[k]
        signal, drive = source if parent < 0 else passed[parent]
        if k in layout.siblings:  # the passive node with the others' inputs on it
            signal, drive = sibling_node(layout, parent, k, entered[parent], s, D, dT, signal)
        entered[k] = (v_of(layout, plan, D, dT), (signal, drive))
        v = {name: x[0, 0] for name, x in dw.stage_values(layout, plan, D, np.array([dT])).items()}
        pos, neg = (float(x[0]) for x in dw.row_rails(layout, plan, D))
        if plan.block.saturates:
            offsets, biases = dw.row_errors(layout, plan, D, np.array([dT]))
            errors = (float(offsets[0, 0]), float(biases[0, 0]), float(np.real(np.ravel(drive)[0])))
            margins, signal = comparator(plan, v, signal, pos, neg, len(layout.freqs), errors)
            found.append(margins)
            assert plan.part is not None  # a comparator is an op amp (preparation)
            passed.append((signal, plan.part.output_resistance))
            continue
        offset = bias = 0.0
        if plan.part is not None:
            offsets, biases = dw.row_errors(layout, plan, D, np.array([dT]))
            offset, bias = float(offsets[0, 0]), float(biases[0, 0])
        x, index, branch, circuit = stage_circuit(plan, v, s, drive, offset, bias)
        if plan.block.name in ("divider", "rc_lowpass", "ac_coupling"):
            drive = circuit.impedance("out")  # the next stage sees it per frequency
        elif not plan.block.window_only:
            drive = 0.0  # an op amp's output (the engine's model)
        out = envelope(x[:, index["out"]], signal)
        margins = {}
        if plan.part is not None:
            margins = opamp_margins(
                plan, x, index, branch, out, signal, layout.loads[k], layout.freqs, pos, neg
            )
        if plan.block.window_only:
            margins = {"input-high": v["high"] - out[0].max(), "input-low": out[1].min() - v["low"]}
        found.append(margins)
        passed.append((out, drive))
    return found


def v_of(layout, plan, D, dT) -> dict:
    return {name: x[0, 0] for name, x in dw.stage_values(layout, plan, D, np.array([dT])).items()}


def input_conductance(plan, v: dict) -> float:
    """What the stage's input draws to its return, S, from its topology (the README's File
    formats): a resistor rin to the - pin; r3 + r4 (difference, single-ended); top in series with
    bottom || load (divider); r1 + r2 (Schmitt trigger, not inverted); nothing otherwise."""
    block = plan.block.name
    if block in ("inverting", "summing", "integrator"):
        return 1.0 / v["rin"]
    if block == "difference":
        return 1.0 / (v["r3"] + v["r4"])
    if block == "divider":
        bottom = 1.0 / (1.0 / v["bottom"] + (1.0 / v["load"] if "load" in v else 0.0))
        return 1.0 / (v["top"] + bottom)
    if block == "schmitt" and not plan.flags.get("invert"):
        return 1.0 / (v["r1"] + v["r2"])
    if block in ("follower", "noninverting", "comparator", "adc", "schmitt"):
        return 0.0
    raise ValueError(f"the per-draw reference does not cover block {block!r} beside another stage")


def sibling_node(layout, parent: int, k: int, entered, s, D, dT, thevenin):
    """Stage k's input from the passive stage `parent` that feeds several: that stage's circuit
    solved again with the other stages' inputs on its output (each one's conductance in this
    drawn circuit to the middle of its returns), the rest of their returns' span and their pins'
    currents as +/- Zk0 (sum G half span + pins) (Millman's theorem), and the impedance Zk there."""
    v_parent, (fed, fed_drive) = entered
    others = layout.siblings[k]
    branches, spread = [], 0.0
    for j, load in others.loads:
        g = input_conductance(layout.plans[j], v_of(layout, layout.plans[j], D, dT))
        low, high = load.returns
        branches.append((g, (low + high) / 2.0))
        spread += g * (high - low) / 2.0
    x, index, _, circuit = stage_circuit(layout.plans[parent], v_parent, s, fed_drive, 0.0, 0.0, branches)
    impedance = circuit.impedance("out")
    hi, lo, a = envelope(x[:, index["out"]], fed)
    error = float(impedance[0].real) * (spread + others.pins)
    kappa = others.kappa_at(layout.freqs)
    if kappa is not None:  # the others' - pins move by Vout / A (the engine's bound)
        eps = np.abs(impedance) * kappa
        top = np.maximum(np.abs(thevenin[0]), np.abs(thevenin[1]))
        extra = np.maximum(eps[0], eps[1:]) * top
        swing = eps[1:] * thevenin[2]
        return (hi + error + extra, lo - error - extra, a + swing), impedance
    return (hi + error, lo - error, a), impedance


def opamp_margins(plan, x, index, branch, out, signal, load, freqs, pos, neg) -> dict[str, float]:
    """The margins of one circuit's op amp, through the engine's margin kernel (the circuit
    solution above is the part that is independent of the blocks)."""
    part = plan.part
    plus = envelope(x[:, index["+"]], signal)  # the + pin with its bias current drop
    current = envelope(-x[:, branch], signal)  # the MNA branch current flows into the op amp
    out_hi, out_lo = out[0].max(), out[1].min()
    sourced, sunk = load_currents(current[0].max(), current[1].min(), out_hi, out_lo, load)
    margins = kernel_margins(
        part,
        pos,
        neg,
        out_hi,
        out_lo,
        plus[0].max(),
        plus[1].min(),
        sourced,
        sunk,
        float(np.max(TWO_PI * freqs * out[2])),
    )
    margins["supply"] = supply_margin(part, pos - neg, pos - neg)
    return {check: float(m) for check, m in margins.items()}


def comparator(plan, v, signal, pos, neg, count, errors=(0.0, 0.0, 0.0)):
    """Open loop: the output sits at the swing limit on the side the input is (common practice).
    `errors`: the draw's signed offset Vos, bias current Ib (into each pin) and the DC resistance
    Rd driving the signal's pin. That pin sits at Vsig - Ib Rd (Ohm's law) and the output flips
    where V+ + Vos = V- (the op amp's input offset, Sedra & Smith ch. 2): at
    Vsig = threshold - Vos + Ib Rd (signal on +), threshold + Vos + Ib Rd (signal on -)."""
    part = plan.part
    conductance = 1.0 / v["load"] if "load" in v else 0.0
    to = v.get("load_to", 0.0)  # where the load returns: Millman's theorem, Ohm's law
    levels = []
    for ideal in (neg + part.output_headroom[1], pos - part.output_headroom[0]):
        current = (ideal - to) * conductance / (1 + part.output_resistance * conductance)
        current = max(min(current, part.output_current), -part.output_current)
        levels.append(ideal - part.output_resistance * current)
    low, high = levels
    offset, bias, rd = errors
    drop = bias * rd
    sig_lo, sig_hi = float(np.min(signal[1])), float(np.max(signal[0]))
    threshold = v["threshold"]
    invert = bool(plan.flags.get("invert"))
    flip = threshold + (offset if invert else -offset) + drop
    above, below = sig_hi > flip, sig_lo < flip
    reach_low, reach_high = (above, below) if invert else (below, above)
    sig_lo, sig_hi = sig_lo - drop, sig_hi - drop  # the signal's pin
    top, bottom = (high if reach_high else low), (low if reach_low else high)
    span = pos - neg
    margins = {
        "input-high": pos - part.input_headroom[0] - max(sig_hi, threshold),
        "input-low": min(sig_lo, threshold) - (neg + part.input_headroom[1]),
        "current": part.output_current - max(abs(high - to), abs(low - to)) * conductance,
        "supply": min(span - part.supply[0], part.supply[1] - span),
    }
    zero = np.zeros(count)
    return margins, (zero + top, zero + bottom, zero)


def run_draws(layout: dw.Layout, D: np.ndarray, dT: np.ndarray) -> list[list[dict[str, float]]]:
    """The reference answer, draw by draw (a Python loop on purpose: this is the slow baseline)."""
    if layout.peaks is None:
        return [draw_margins(layout, D[j : j + 1], float(dT[j])) for j in range(D.shape[0])]
    freqs = dw.row_freqs(layout, D, dT)  # each row on its own frequencies (circuit_walk.RowPeaks)
    plain = replace(layout, peaks=None)
    return [
        draw_margins(dw.with_freqs(plain, freqs[j]), D[j : j + 1], float(dT[j])) for j in range(D.shape[0])
    ]
