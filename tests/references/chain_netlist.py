"""Whole-chain nodal reference: the chain as ONE netlist, so every stage is loaded by the next.

Imports nothing of railroom (only numpy and the independent MNA solver in references/nodal.py).
Partial scope (issue 11): single-ended source with its impedance, and the stages follower,
noninverting (with `cg`: a capacitor in series with rg), inverting, summing (fixed inputs as
`inputs`: [(r, volts)]), divider, rc_lowpass and ac_coupling (c in to out, r out to `bias`), with
the topologies as railroom's README describes them. Op amps: finite A0 and one pole, offset at +, bias current into both inputs.
Branches (issue 13): a stage may take its input from any earlier stage's output or from the
source (`feed`); a branch is one more node fed by the same output, so that output carries every
stage hung on it. A stage's load may return to a fixed voltage (`load_to`, an ideal source).
Named DC nets: a `ref` or a fixed input's volts written `Net("mid")` connects to ONE source node
shared by every stage that names it, at the value `build(..., nets={"mid": 2.5})` gives it (a
ratiometric net is that source at fraction x the rail's value: `ratiometric`).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from references.nodal import Circuit


@dataclass(frozen=True)
class OpAmp:
    open_loop_gain: float | None = None  # None: ideal
    gbw: float | None = None
    offset: float = 0.0
    bias: float = 0.0  # amps flowing INTO each input pin


@dataclass(frozen=True)
class Net:
    """A stage voltage taken from the shared source node of the named net."""

    name: str


def ratiometric(fraction: float, rail: float) -> float:
    """A ratiometric net's value: the divider's ratio times its rail's positive voltage."""
    return fraction * rail


@dataclass(frozen=True)
class Stage:
    block: str
    values: dict = field(default_factory=dict)
    load: float | None = None  # ohms to 0 V (or to load_to)
    opamp: OpAmp = OpAmp()
    feed: int | None = None  # the 0-based stage it takes its input from, -1: the source; None: the one before
    load_to: float = 0.0  # volts the load returns to


def build(
    stages: list[Stage], source_volts: complex, impedance: float, nets: dict | None = None
) -> tuple[Circuit, list[str]]:
    """One circuit for the whole chain; returns it and the output node of each stage. `nets`:
    name -> volts of each shared net source."""
    c = Circuit()
    c.source("src", source_volts)
    for name, volts in (nets or {}).items():
        c.source(f"net_{name}", volts)
    node = "src"
    if impedance > 0:
        c.resistor("src", "s_out", impedance)
        node = "s_out"
    source_node = node
    outs: list[str] = []
    for k, st in enumerate(stages):
        feed = k - 1 if st.feed is None else st.feed
        node = _stage(c, st, source_node if feed < 0 else outs[feed], f"n{k}")
        if st.load:
            back = "0"
            if st.load_to:
                back = f"n{k}_load_to"
                c.source(back, st.load_to)
            c.resistor(node, back, st.load)
        outs.append(node)
    return c, outs


def _opamp(c: Circuit, op: OpAmp, plus: str, minus: str, out: str) -> None:
    c.opamp(plus, minus, out, op.open_loop_gain, op.gbw, op.offset)
    if op.bias:
        c.current(plus, -op.bias)  # bias flows from the circuit into the pin
        c.current(minus, -op.bias)


def _stage(c: Circuit, st: Stage, inp: str, p: str) -> str:
    v, out = st.values, f"{p}_out"
    if st.block == "follower":
        _opamp(c, st.opamp, inp, out, out)
    elif st.block == "noninverting":  # rg from - to ref, rf from out to -
        ref = _ref(c, v, p)
        if "cg" in v:  # rg from - to node g, cg from g to ref
            c.resistor(f"{p}_m", f"{p}_g", v["rg"])
            c.capacitor(f"{p}_g", ref, v["cg"])
        else:
            c.resistor(f"{p}_m", ref, v["rg"])
        c.resistor(out, f"{p}_m", v["rf"])
        _opamp(c, st.opamp, inp, f"{p}_m", out)
    elif st.block == "inverting":  # rin from input to -, ref drives +
        ref = _ref(c, v, p)
        c.resistor(inp, f"{p}_m", v["rin"])
        c.resistor(out, f"{p}_m", v["rf"])
        _opamp(c, st.opamp, ref, f"{p}_m", out)
    elif st.block == "summing":  # inverting, plus each fixed input r from v to -
        ref = _ref(c, v, p)
        c.resistor(inp, f"{p}_m", v["rin"])
        c.resistor(out, f"{p}_m", v["rf"])
        for k, (r, volts) in enumerate(v.get("inputs", ())):
            c.resistor(_volts(c, volts, f"{p}_in{k}"), f"{p}_m", r)
        _opamp(c, st.opamp, ref, f"{p}_m", out)
    elif st.block == "divider":
        c.resistor(inp, out, v["top"])
        c.resistor(out, "0", v["bottom"])
    elif st.block == "rc_lowpass":
        c.resistor(inp, out, v["r"])
        c.capacitor(out, "0", v["c"])
    elif st.block == "ac_coupling":  # c from in to out, r from out to bias
        bias = _volts(c, v.get("bias", 0.0), f"{p}_bias")
        c.capacitor(inp, out, v["c"])
        c.resistor(out, bias, v["r"])
    else:
        raise ValueError(f"block {st.block!r} not in this reference yet")
    return out


def _ref(c: Circuit, v: dict, p: str) -> str:
    """The node the stage's ref sits at: its own source, or the shared net's."""
    return _volts(c, v.get("ref", 0.0), f"{p}_ref")


def _volts(c: Circuit, volts, node: str) -> str:
    """The node a fixed voltage sits at: the net's shared source, or a source of its own."""
    if isinstance(volts, Net):
        return f"net_{volts.name}"
    c.source(node, volts)
    return node


def response(stages: list[Stage], freqs: np.ndarray, impedance: float = 0.0) -> list[np.ndarray]:
    """Complex output of every stage per 1 V AC at the source (DC terms zeroed: superposition)."""
    ac = [
        Stage(
            s.block,
            {
                **s.values,
                "ref": 0.0,
                "bias": 0.0,
                "inputs": [(r, 0.0) for r, _ in s.values.get("inputs", ())],
            },
            s.load,
            OpAmp(s.opamp.open_loop_gain, s.opamp.gbw),
            s.feed,
        )
        for s in stages
    ]
    c, outs = build(ac, 1.0, impedance)
    sol = c.solve(np.asarray(freqs, float))
    return [sol[o] for o in outs]


def dc(stages: list[Stage], level: float, impedance: float = 0.0, nets: dict | None = None) -> list[float]:
    """DC output of every stage with offsets, bias currents, refs and nets in place."""
    c, outs = build(stages, level, impedance, nets)
    sol = c.solve(np.array([0.0]))
    return [float(np.real(sol[o][0])) for o in outs]


def peak(
    stages: list[Stage], band: tuple[float, float], impedance: float = 0.0, points: int = 400
) -> list[float]:
    """Largest |V| of each stage over the band: dense log grid, then golden-section refinement."""
    grid = np.geomspace(band[0], band[1], points)
    mags = [np.abs(r) for r in response(stages, grid, impedance)]
    best = []
    for k, m in enumerate(mags):
        i = int(np.argmax(m))
        lo, hi = np.log(grid[max(i - 1, 0)]), np.log(grid[min(i + 1, points - 1)])
        f = lambda x: -abs(response(stages, np.array([np.exp(x)]), impedance)[k][0])
        g = (np.sqrt(5) - 1) / 2
        for _ in range(40):
            a, b = hi - g * (hi - lo), lo + g * (hi - lo)
            lo, hi = (lo, b) if f(a) < f(b) else (a, hi)
        best.append(max(float(m[i]), -f((lo + hi) / 2)))
    return best


# ---- the whole catalogue (issue 11, property tests) -------------------------------------------
# A separate builder, so the builder above stays as it is. Every value may be a numpy array (a
# batch of circuits, one per joint corner of the toleranced components). Every independent source
# is a named unit: `units[label]` is its value (0 when absent), so that by superposition a caller
# can solve once per source. Labels: "level" (single-ended source), "cm" and "diff" (differential:
# pos = cm + diff/2, neg = cm - diff/2, each behind the source impedance), and per stage k:
# "k:ref", "k:threshold", "k:inputs.N.v" (summing), "k:offsetJ", "k:bias+J", "k:bias-J" for its
# op amp J (bias flows from the circuit INTO the pin), "k:level" (a Schmitt trigger's output level).
# Topologies: railroom's README, File formats, the block table, word for word.
# Branches: a stage's `feed` (None: the stage before, -1: the source, j: stage j's output) is one
# more element on that node, so the output carries every stage hung on it. Named nets: a field
# whose value is `Net(NAME)` (a ref, a summing input's volts, an ac_coupling's bias) connects to
# ONE source node shared by every stage that names it, valued `units["net:NAME"]`.


@dataclass(frozen=True)
class CatalogueNodes:
    """Where to read a stage: its output node and, per op amp, (output node, + pin node)."""

    out: str
    opamps: tuple[tuple[str, str], ...] = ()


def catalogue_build(
    stages: list[Stage], units: dict, impedance, differential: bool = False
) -> tuple[Circuit, list[CatalogueNodes]]:
    c = Circuit()
    u = lambda label: units.get(label, 0.0)
    if differential:
        sides = []
        for name, sign in (("pos", 1.0), ("neg", -1.0)):
            value = u("cm") + sign * u("diff") / 2
            if np.any(np.asarray(impedance) != 0):
                c.source(f"src_{name}", value)
                c.resistor(f"src_{name}", f"s_{name}", impedance)
            else:
                c.source(f"s_{name}", value)
            sides.append(f"s_{name}")
        node: str | tuple[str, str] = (sides[0], sides[1])
    else:
        if np.any(np.asarray(impedance) != 0):
            c.source("src", u("level"))
            c.resistor("src", "s_out", impedance)
        else:
            c.source("s_out", u("level"))
        node = "s_out"
    source_node = node
    found: list[CatalogueNodes] = []
    shared: set[str] = set()

    def volts(label: str, value, own: str, k: int) -> str:
        """The node a stage's fixed voltage sits at: a net's shared source, or its own."""
        if isinstance(value, Net):
            name = f"net_{value.name}"
            if name not in shared:
                shared.add(name)
                c.source(name, u(f"net:{value.name}"))
            return name
        c.source(own, u(f"{k}:{label}"))
        return own

    for k, st in enumerate(stages):
        feed = k - 1 if st.feed is None else st.feed
        inp = source_node if feed < 0 else found[feed].out
        nodes = _catalogue_stage(
            c, st, inp, f"n{k}", lambda label, k=k: u(f"{k}:{label}"), lambda *a, k=k: volts(*a, k)
        )
        if st.load is not None and np.any(np.asarray(st.load) != 0):  # a value or one per row
            c.resistor(nodes.out, "0", st.load)
        found.append(nodes)
    return c, found


def _pin_bias(c: Circuit, node: str, amps) -> None:
    if np.any(np.asarray(amps) != 0):
        c.current(node, -np.asarray(amps))


def _catalogue_opamp(c: Circuit, st: Stage, u, j: int, plus: str, minus: str, out: str) -> tuple[str, str]:
    c.opamp(plus, minus, out, st.opamp.open_loop_gain, st.opamp.gbw, u(f"offset{j}"))
    _pin_bias(c, plus, u(f"bias+{j}"))
    _pin_bias(c, minus, u(f"bias-{j}"))
    return (out, plus)


def _catalogue_stage(c: Circuit, st: Stage, inp, p: str, u, volts) -> CatalogueNodes:
    v, out, m, plus, a = st.values, f"{p}_out", f"{p}_m", f"{p}_p", f"{p}_a"
    ref = f"{p}_ref"
    b = st.block
    if b in ("difference", "instrumentation"):  # single-ended: in on the positive side, ref on the other
        ref = volts("ref", v.get("ref"), ref)
        pos, neg = inp if isinstance(inp, tuple) else (inp, ref)
        if b == "difference":
            c.resistor(neg, m, v["r1"])
            c.resistor(m, out, v["r2"])
            c.resistor(pos, plus, v["r3"])
            c.resistor(plus, ref, v["r4"])
            return CatalogueNodes(out, (_catalogue_opamp(c, st, u, 0, plus, m, out),))
        um, lm, uo, lo = f"{p}_um", f"{p}_lm", f"{p}_uo", f"{p}_lo"
        rdiff = v.get("rdiff", 10e3)
        c.resistor(uo, um, v["rf"])
        c.resistor(lo, lm, v["rf"])
        c.resistor(um, lm, v["rg"])
        c.resistor(lo, m, rdiff)
        c.resistor(m, out, rdiff)
        c.resistor(uo, plus, rdiff)
        c.resistor(plus, ref, rdiff)
        amps = (
            _catalogue_opamp(c, st, u, 0, pos, um, uo),
            _catalogue_opamp(c, st, u, 1, neg, lm, lo),
            _catalogue_opamp(c, st, u, 2, plus, m, out),
        )
        return CatalogueNodes(out, amps)
    assert isinstance(inp, str), f"{b} takes a single-ended signal"
    if b == "ac_coupling":  # c from in to out, r from out to bias
        bias = volts("bias", v.get("bias"), f"{p}_bias")
        c.capacitor(inp, out, v["c"])
        c.resistor(out, bias, v["r"])
        return CatalogueNodes(out)
    if b in ("follower", "divider", "rc_lowpass", "noninverting"):
        if b == "follower":
            return CatalogueNodes(out, (_catalogue_opamp(c, st, u, 0, inp, out, out),))
        if b == "divider":
            c.resistor(inp, out, v["top"])
            c.resistor(out, "0", v["bottom"])
            return CatalogueNodes(out)
        if b == "rc_lowpass":
            c.resistor(inp, out, v["r"])
            c.capacitor(out, "0", v["c"])
            return CatalogueNodes(out)
        ref = volts("ref", v.get("ref"), ref)
        c.resistor(out, m, v["rf"])
        if "cg" in v:  # rg from - to node g, cg from g to ref (AC-coupled rg)
            c.resistor(m, f"{p}_g", v["rg"])
            c.capacitor(f"{p}_g", ref, v["cg"])
        else:
            c.resistor(m, ref, v["rg"])
        return CatalogueNodes(out, (_catalogue_opamp(c, st, u, 0, inp, m, out),))
    if b == "adc":
        return CatalogueNodes(inp)
    if b == "comparator":  # open loop: only its inputs are read (the signal pin carries a bias current)
        _pin_bias(c, inp, u("bias+0"))
        return CatalogueNodes(inp, ((inp, inp),))
    if b == "schmitt":  # the output as a source at one of its levels ("k:level")
        c.source(out, u("level"))
        if v.get("invert"):
            c.source(ref, u("ref"))
            c.resistor(plus, ref, v["r1"])
            _pin_bias(c, inp, u("bias-0"))
        else:
            c.resistor(inp, plus, v["r1"])
        c.resistor(plus, out, v["r2"])
        _pin_bias(c, plus, u("bias+0"))
        return CatalogueNodes(out, ((out, plus),))
    ref = volts("ref", v.get("ref"), ref)  # every other block: ref drives +
    if b in ("inverting", "summing", "integrator"):
        c.resistor(inp, m, v["rin"])
        c.resistor(m, out, v["rf"])
        if b == "integrator":
            c.capacitor(m, out, v["c"])
        for key in sorted(k for k in v if k.startswith("inputs.") and k.endswith(".r")):
            fixed = volts(key[:-2] + ".v", v.get(key[:-2] + ".v"), f"{p}_{key[:-2]}")
            c.resistor(fixed, m, v[key])
        return CatalogueNodes(out, (_catalogue_opamp(c, st, u, 0, ref, m, out),))
    if b.startswith("sallen_key"):
        if b == "sallen_key_lowpass":
            c.resistor(inp, a, v["r1"])
            c.resistor(a, plus, v["r2"])
            c.capacitor(a, out, v["c1"])
            c.capacitor(plus, "0", v["c2"])
        else:
            c.capacitor(inp, a, v["c1"])
            c.capacitor(a, plus, v["c2"])
            c.resistor(a, out, v["r1"])
            c.resistor(plus, ref, v["r2"])
        if "rf" in v:
            c.resistor(out, m, v["rf"])
            c.resistor(m, ref, v["rg"])
            return CatalogueNodes(out, (_catalogue_opamp(c, st, u, 0, plus, m, out),))
        return CatalogueNodes(out, (_catalogue_opamp(c, st, u, 0, plus, out, out),))
    if b == "mfb_lowpass":
        c.resistor(inp, a, v["r1"])
        c.resistor(a, out, v["r2"])
        c.resistor(a, m, v["r3"])
        c.capacitor(a, ref, v["c1"])
        c.capacitor(out, m, v["c2"])
        return CatalogueNodes(out, (_catalogue_opamp(c, st, u, 0, ref, m, out),))
    if b == "mfb_bandpass":
        c.resistor(inp, a, v["r1"])
        c.resistor(a, ref, v["r3"])
        c.capacitor(a, m, v["c1"])
        c.capacitor(a, out, v["c2"])
        c.resistor(m, out, v["r2"])
        return CatalogueNodes(out, (_catalogue_opamp(c, st, u, 0, ref, m, out),))
    raise ValueError(f"block {b!r} not in this reference")
