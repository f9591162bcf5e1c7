"""Brute force over every joint corner of random chains from the whole block catalogue, on the
whole-chain nodal reference (chain_netlist.catalogue_build, imports nothing of railroom here).

Each chain is one linear circuit (a comparator or Schmitt trigger only ends a chain: it is read at
its inputs, the Schmitt trigger's output as a source at either level). By superposition each node
is  sum_i T_i x_i  over the independent sources x_i (source level or common mode and difference,
references, thresholds, fixed inputs, each op amp's offset and the bias current into each of its
pins), plus the AC part  Re(T(f) a e^{j phi}). The toleranced components are enumerated at every
joint corner (a batch of circuits); the sources span a box, so a linear form's largest value over
it is exactly  sum_i max(T_i lo_i, T_i hi_i)  (no enumeration needed); over the AC phase the
largest of  Re(P a e^{j phi})  is  a |P|. The output swing check with an output resistance Ro is
exact too: the upper margin is  pos - hr - max(V, V + Ro I)  (the drop only while sourcing), the
largest of each over the box, the band and the phase (the phasor V + Ro I taken whole).

`run(case)` gives, per stage, the reference's margins per check and its output span, and
`engine(case)` railroom's; `python tests/references/catalogue_brute.py` prints how far outside
(pessimistic) railroom's numbers are, per block and check, over a fixed set of random chains.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field

import numpy as np

from references.chain_netlist import CatalogueNodes, Net, OpAmp, Stage, catalogue_build

RAIL, RAIL_TOL = 1000.0, 0.05  # rails +/-1 kV +/-5 %: far enough that nothing clips
CLIP_RAIL = 5.0  # rails +/-5 V +/-5 % in one chain in three: stages clip (README: Regime)
CLIP_SLACK = 1e-5  # V: a reference margin below -CLIP_SLACK is past a limit
OUT_HR, IN_HR = (1.0, 0.5), (2.0, 1.5)  # the part's output and input headroom (upper, lower), V
SLEW, CURRENT = 1e18, 1e6  # never reached: their needs are compared


@dataclass(frozen=True)
class Value:
    nominal: float
    tolerance: float = 0.0

    @property
    def ends(self) -> tuple[float, float]:
        lo, hi = self.nominal * (1 - self.tolerance), self.nominal * (1 + self.tolerance)
        return (min(lo, hi), max(lo, hi))

    def text(self) -> str:
        if self.tolerance:
            return f'"{self.nominal:.9g} {self.tolerance * 100:g}%"'
        return f'"{self.nominal:.9g}"'


VOLTAGE_FIELDS = ("ref", "threshold", "bias")


@dataclass(frozen=True)
class Spec:
    block: str
    values: dict  # field -> Value; summing: "inputs.N.r", "inputs.N.v"
    flags: dict = field(default_factory=dict)
    load: float | None = None
    nets: dict = field(default_factory=dict)  # voltage field -> the name of the net it reads

    def is_source(self, name: str) -> bool:
        return name in VOLTAGE_FIELDS or name.endswith(".v")


@dataclass(frozen=True)
class NetSpec:
    """A [nets.NAME]: a fixed `value`, or a ratiometric `fraction` of the main rail's positive."""

    name: str
    value: Value | None = None
    fraction: Value | None = None


@dataclass(frozen=True)
class Case:
    specs: tuple[Spec, ...]
    differential: bool
    level: tuple[float, float]  # single: the level; differential: the common mode
    difference: tuple[float, float]
    amplitude: float
    band: tuple[float, float]
    impedance: float
    a0: float
    gbw: float
    offset: float
    bias: float
    ro: float
    rail: float = RAIL  # the rails: +/- rail, RAIL_TOL each
    feeds: tuple = ()  # per stage: None (the stage before), -1 (the source) or j (stage j), `from`
    nets: tuple[NetSpec, ...] = ()


def parents(case: Case) -> list[int]:
    """Per stage the index it takes its input from (-1: the source)."""
    feeds = case.feeds or (None,) * len(case.specs)
    return [k - 1 if f is None else f for k, f in enumerate(feeds)]


OPAMPS = {"instrumentation": 3}
PASSIVE = ("divider", "rc_lowpass", "adc", "ac_coupling")
SATURATING = ("comparator", "schmitt")


def opamp_count(block: str) -> int:
    return 0 if block in PASSIVE else OPAMPS.get(block, 1)


# ---- railroom's side -------------------------------------------------------------------------


def chain_text(case: Case) -> str:
    lines = [
        "format = 1",
        "[conditions]",
        'default_tolerance = "0%"',
        "[rails.main]",
        f'positive = "{case.rail:g}"',
        f'negative = "{-case.rail:g}"',
        f'tolerance = "{RAIL_TOL * 100:g}%"',
        "[source]",
        f'kind = "{"differential" if case.differential else "single"}"',
        f'level = ["{case.level[0]:.9g}", "{case.level[1]:.9g}"]',
        f'amplitude = "{case.amplitude:g}"',
        f'band = ["{case.band[0]:g}", "{case.band[1]:g}"]',
        f'impedance = "{case.impedance:g}"',
    ]
    if case.differential:
        lines.append(f'difference = ["{case.difference[0]:.9g}", "{case.difference[1]:.9g}"]')
    for net in case.nets:
        lines.append(f"[nets.{net.name}]")
        if net.value is not None:
            lines.append(f"value = {net.value.text()}")
        else:
            assert net.fraction is not None
            lines += ['rail = "main"', f"fraction = {net.fraction.text()}"]
    feeds = case.feeds or (None,) * len(case.specs)
    for k, (spec, feed) in enumerate(zip(case.specs, feeds)):
        lines += ["[[stage]]", f'name = "s{k}"', f'block = "{spec.block}"']
        if feed is not None:
            lines.append(f'from = "{"source" if feed < 0 else f"s{feed}"}"')
        if spec.block not in PASSIVE:
            lines.append('part = "p"')
        for name, value in spec.values.items():
            if not name.startswith("inputs."):
                lines.append(f"{name} = {value.text()}")
        for name, net in spec.nets.items():
            if not name.startswith("inputs."):
                lines.append(f'{name} = {{ net = "{net}" }}')
        for name, flag in spec.flags.items():
            lines.append(f"{name} = {'true' if flag else 'false'}")
        if spec.load:
            lines.append(f'load = "{spec.load:g}"')
        fixed = sorted({k.rsplit(".", 1)[0] for k in spec.values if k.startswith("inputs.")})
        if fixed:
            volts = lambda k: (  # noqa: E731
                f'{{ net = "{spec.nets[k + ".v"]}" }}'
                if k + ".v" in spec.nets
                else spec.values[k + ".v"].text()
            )
            pairs = ", ".join(f"{{ r = {spec.values[k + '.r'].text()}, v = {volts(k)} }}" for k in fixed)
            lines.append(f"inputs = [{pairs}]")
    return "\n".join(lines) + "\n"


def the_part(case: Case):
    from railroom.engine.circuit.model import Part

    return Part(
        id="p",
        description="",
        supply=(1.0, 3e5),
        supply_abs_max=3e5,
        output_headroom=OUT_HR,
        output_resistance=case.ro,
        input_headroom=IN_HR,
        gbw=case.gbw,
        slew=SLEW,
        open_loop_gain=case.a0,
        offset=case.offset,
        offset_drift=0.0,
        bias_current=case.bias,
        output_current=CURRENT,
    )


def engine(case: Case):
    """railroom's corners result and the frequencies it evaluates."""
    from railroom.engine.analysis import analyse
    from railroom.engine.walks.preparation import band_grid
    from railroom.engine.formats.chain_file import chain_from_text
    from railroom.engine.walks.preparation import plan_chain

    chain = chain_from_text(chain_text(case))
    parts = {"p": the_part(case)}
    result = analyse(chain, parts, design_aids=False, headroom=False)
    return result, band_grid(chain, plan_chain(chain, parts))


# ---- the reference's side --------------------------------------------------------------------


def ratiometric_nets(case: Case) -> list[NetSpec]:
    return [n for n in case.nets if n.fraction is not None]


def toleranced(case: Case) -> list[tuple]:
    """Every value enumerated at its ends: (stage, field); a ratiometric net's fraction
    ("net", name) and, with one, the positive rail ("rail", "main") that it follows."""
    found: list[tuple] = [
        (k, n)
        for k, s in enumerate(case.specs)
        for n, val in s.values.items()
        if not s.is_source(n) and val.tolerance
    ]
    found += [("net", n.name) for n in ratiometric_nets(case) if n.fraction and n.fraction.tolerance]
    if ratiometric_nets(case):
        found.append(("rail", "main"))
    return found


def ends_of(case: Case, key: tuple) -> tuple[float, float]:
    if key[0] == "rail":
        return (case.rail * (1 - RAIL_TOL), case.rail * (1 + RAIL_TOL))
    if key[0] == "net":
        net = next(n for n in case.nets if n.name == key[1])
        assert net.fraction is not None
        return net.fraction.ends
    return case.specs[key[0]].values[key[1]].ends


def sources(case: Case) -> list[tuple[str, float, float]]:
    """(label, low, high) of every independent DC source."""
    found = (
        [("cm", *case.level), ("diff", *case.difference)] if case.differential else [("level", *case.level)]
    )
    for net in case.nets:  # a fixed net spans a box; a ratiometric one is per joint corner
        found.append((f"net:{net.name}", *(net.value.ends if net.value is not None else (1.0, 1.0))))
    for k, s in enumerate(case.specs):
        for n, val in s.values.items():
            if s.is_source(n):
                found.append((f"{k}:{n}", *val.ends))
        for j in range(opamp_count(s.block)):
            found += [(f"{k}:offset{j}", -case.offset, case.offset)]
            found += [(f"{k}:bias+{j}", -case.bias, case.bias), (f"{k}:bias-{j}", -case.bias, case.bias)]
    return [f for f in found if f[1] or f[2] or f[0] in ("level", "cm", "diff")]


def netlist_stages(case: Case, batch: dict) -> list[Stage]:
    op = OpAmp(case.a0, case.gbw)
    out = []
    feeds = case.feeds or (None,) * len(case.specs)
    for k, (s, feed) in enumerate(zip(case.specs, feeds)):
        values = {n: batch.get((k, n), val.nominal) for n, val in s.values.items() if not s.is_source(n)}
        values.update(s.flags)
        values.update({n: Net(net) for n, net in s.nets.items()})
        out.append(Stage(s.block, values, s.load, op, feed))
    return out


def unit_values(case: Case, batch: dict) -> dict:
    """The value of each source label's unit solve: 1, or a ratiometric net's fraction x rail
    per joint corner (its extremes then come from the enumeration, lo = hi = 1)."""
    units = {}
    for net in ratiometric_nets(case):
        assert net.fraction is not None
        units[f"net:{net.name}"] = (
            batch.get(("net", net.name), net.fraction.nominal) * batch[("rail", "main")]
        )
    return units


def positive_rail(case: Case, batch: dict, rows: int) -> np.ndarray:
    """The positive rail per joint corner: enumerated with a ratiometric net, else its lowest."""
    if ("rail", "main") in batch:
        return np.broadcast_to(batch[("rail", "main")], (rows,))
    return np.full(rows, case.rail * (1 - RAIL_TOL))


def box(T: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Smallest and largest of the linear form T x over the box lo <= x <= hi (last axis)."""
    a, b = T * lo, T * hi
    return np.minimum(a, b).sum(-1), np.maximum(a, b).sum(-1)


def run(case: Case, freqs: np.ndarray) -> list[dict]:
    """Per stage: {"margins": {check: value}, "output": (lo, hi)} by brute force."""
    names = toleranced(case)
    ends = [ends_of(case, key) for key in names]
    combos = np.array(list(itertools.product(*ends))) if names else np.zeros((1, 0))
    batch = {key: combos[:, i] for i, key in enumerate(names)}
    srcs = sources(case)
    lo = np.array([s[1] for s in srcs])
    hi = np.array([s[2] for s in srcs])
    stages = netlist_stages(case, batch)
    impedance = case.impedance
    units = unit_values(case, batch)
    pos = positive_rail(case, batch, len(combos))  # (R,): the upper limits move with it
    # a Schmitt trigger's output sits at either level, anywhere between them for the stages
    # before it (its r1 + r2 load their node): one more source, its box per joint corner
    levels = [f"{k}:level" for k, s in enumerate(case.specs) if s.block == "schmitt"]
    lo = np.broadcast_to(lo, (len(combos), len(lo)))
    hi = np.broadcast_to(hi, (len(combos), len(hi)))
    if levels:
        bottom = -case.rail * (1 + RAIL_TOL) + OUT_HR[1]
        lo = np.hstack([lo, np.full((len(combos), len(levels)), bottom)])
        hi = np.hstack([hi, np.repeat((pos - OUT_HR[0])[:, None], len(levels), axis=1)])
    own = len(srcs)  # the Schmitt trigger's own checks take its level apart (schmitt_inputs)
    srcs = srcs + [(label, np.nan, np.nan) for label in levels]
    unit = lambda label: {label: units.get(label, 1.0)}  # noqa: E731

    def solve(given, f):
        c, nodes = catalogue_build(stages, given, impedance, case.differential)
        return c.analyse(np.asarray(f, float)), nodes

    dc = [solve(unit(label), [0.0]) for label, *_ in srcs]
    nodes: list[CatalogueNodes] = dc[0][1]
    ac_label = "diff" if case.differential else "level"
    ac, _ = solve({ac_label: 1.0}, freqs)
    a = case.amplitude
    w = 2 * np.pi * freqs

    def dc_T(node: str, current: bool = False) -> np.ndarray:  # (R, n_sources)
        cols = [(sol.opamp_currents if current else sol.voltages)[node][..., 0].real for sol, _ in dc]
        return np.stack([np.broadcast_to(c, (len(combos),)) for c in cols], axis=-1)

    def ac_T(node: str, current: bool = False) -> np.ndarray:  # (R, F)
        return np.broadcast_to(
            (ac.opamp_currents if current else ac.voltages)[node], (len(combos), len(freqs))
        )

    neg_max = -case.rail * (1 - RAIL_TOL)
    found = []
    for k, (spec, nd) in enumerate(zip(case.specs, nodes)):
        entry: dict = {"margins": {}}
        if spec.block == "schmitt":
            entry["margins"] = schmitt_inputs(
                case, k, spec, stages, srcs[:own], lo[:, :own], hi[:, :own], ac_label, freqs, units, pos
            )
            found.append(entry)
            continue
        v_lo, v_hi = box(dc_T(nd.out), lo, hi)
        v_ac = a * np.abs(ac_T(nd.out)).max(-1)
        entry["output"] = (float((v_lo - v_ac).min()), float((v_hi + v_ac).max()))
        if spec.block == "adc":
            low, high = spec.values["low"].ends[1], spec.values["high"].ends[0]
            entry["margins"] = {
                "input-high": high - entry["output"][1],
                "input-low": entry["output"][0] - low,
            }
        margins: dict = {}
        for out, plus in nd.opamps:
            p_lo, p_hi = box(dc_T(plus), lo, hi)
            p_ac = a * np.abs(ac_T(plus)).max(-1)
            top, bottom = p_hi + p_ac, p_lo - p_ac
            if spec.block == "comparator":
                thr = spec.values["threshold"].ends
                top, bottom = np.maximum(top, thr[1]), np.minimum(bottom, thr[0])
            m = {
                "input-high": float((pos - IN_HR[0] - top).min()),
                "input-low": float(bottom.min()) - (neg_max + IN_HR[1]),
            }
            if spec.block != "comparator":
                TV, TI = dc_T(out), dc_T(out, current=True)
                Tv, Ti = ac_T(out), ac_T(out, current=True)
                both = TV + case.ro * TI
                b_lo, b_hi = box(both, lo, hi)
                i_lo, i_hi = box(TI, lo, hi)
                o_lo, o_hi = box(TV, lo, hi)
                up = np.maximum(o_hi[:, None] + a * np.abs(Tv), b_hi[:, None] + a * np.abs(Tv + case.ro * Ti))
                down = np.minimum(
                    o_lo[:, None] - a * np.abs(Tv), b_lo[:, None] - a * np.abs(Tv + case.ro * Ti)
                )
                m["output-high"] = float((pos[:, None] - OUT_HR[0] - up).min())
                m["output-low"] = float(down.min()) - (neg_max + OUT_HR[1])
                i_ac = a * np.abs(Ti).max(-1)
                m["current"] = CURRENT - float(np.maximum(i_hi + i_ac, -(i_lo - i_ac)).max())
                m["slew"] = SLEW - float((w * a * np.abs(Tv)).max())
            for check, value in m.items():
                margins[check] = min(margins.get(check, np.inf), value)
        entry["margins"].update(margins)
        found.append(entry)
    return found


def schmitt_inputs(case, k, spec, stages, srcs, lo, hi, ac_label, freqs, units, pos) -> dict:
    """A Schmitt trigger's input checks: its output a source at the level of either state, each
    level at the rail of its own joint corner (`pos`; the high level at the lowest positive
    rail is the worst for the upper check: the + pin moves by r1/(r1 + r2) < 1 of a rail move)."""
    neg_max = -case.rail * (1 - RAIL_TOL)
    levels = (pos - OUT_HR[0], neg_max + OUT_HR[1])
    head = stages[: k + 1]
    a = case.amplitude
    unit = lambda label: {label: units.get(label, 1.0)}  # noqa: E731

    def dc_at(node_of, label_units) -> np.ndarray:
        c, nodes = catalogue_build(head, label_units, case.impedance, case.differential)
        return c.solve(0.0)[node_of(nodes)][..., 0].real

    def spans(node_of) -> tuple[np.ndarray, np.ndarray]:
        T = np.stack(np.broadcast_arrays(*[dc_at(node_of, unit(label)) for label, *_ in srcs]), axis=-1)
        s_lo, s_hi = box(T, lo, hi)
        c, nodes = catalogue_build(head, {ac_label: 1.0}, case.impedance, case.differential)
        s_ac = a * np.abs(c.solve(freqs)[node_of(nodes)]).max(-1)
        return s_lo - s_ac, s_hi + s_ac

    plus = lambda nodes: nodes[k].opamps[0][1]  # noqa: E731
    tops, bottoms = [], []
    low, high = spans(plus)
    for level in levels:
        fixed = dc_at(plus, {f"{k}:level": level})
        tops.append(fixed + high)
        bottoms.append(fixed + low)
    # the other pin: ref (non-inverting), or the signal itself less its bias drop (inverting)
    if spec.flags.get("invert"):
        parent = parents(case)[k]
        low, high = spans(lambda nodes: nodes[parent].out if parent >= 0 else "s_out")
        tops.append(high)
        bottoms.append(low)
    else:
        tops.append(np.array(spec.values["ref"].ends[1]))
        bottoms.append(np.array(spec.values["ref"].ends[0]))
    up = min(float(np.min(pos - IN_HR[0] - t)) for t in tops)
    down = min(float(np.min(b)) for b in bottoms) - (neg_max + IN_HR[1])
    return {"input-high": up, "input-low": down}


# ---- random chains ---------------------------------------------------------------------------

RESISTORS = (1e3, 2.2e3, 4.7e3, 10e3, 22e3, 47e3)
CAPACITORS = (1e-9, 4.7e-9, 10e-9, 47e-9)
LINEAR = (
    "follower", "noninverting", "inverting", "summing", "integrator", "divider", "rc_lowpass",
    "sallen_key_lowpass", "sallen_key_highpass", "mfb_lowpass", "mfb_bandpass", "difference",
    "instrumentation", "ac_coupling",
)  # fmt: skip
ENDS = LINEAR + ("adc", "comparator", "schmitt")
FIELDS = {
    "follower": (),
    "noninverting": ("rf", "rg"),
    "inverting": ("rin", "rf"),
    "summing": ("rin", "rf"),
    "integrator": ("rin", "rf"),
    "divider": ("top", "bottom"),
    "rc_lowpass": ("r",),
    "sallen_key_lowpass": ("r1", "r2"),
    "sallen_key_highpass": ("r1", "r2"),
    "mfb_lowpass": ("r1", "r2", "r3"),
    "mfb_bandpass": ("r1", "r2", "r3"),
    "difference": ("r1", "r2", "r3", "r4"),
    "instrumentation": ("rf", "rg"),
    "schmitt": ("r1", "r2"),
    "ac_coupling": ("r",),
}
CAPS = {
    "ac_coupling": ("c",),
    "integrator": ("c",),
    "rc_lowpass": ("c",),
    "sallen_key_lowpass": ("c1", "c2"),
    "sallen_key_highpass": ("c1", "c2"),
    "mfb_lowpass": ("c1", "c2"),
    "mfb_bandpass": ("c1", "c2"),
}
REFS = ("noninverting", "inverting", "summing", "integrator", "difference", "instrumentation",
        "sallen_key_lowpass", "sallen_key_highpass", "mfb_lowpass", "mfb_bandpass", "schmitt")  # fmt: skip


def spec_from(draw, block: str, nets: tuple[str, ...] = ()) -> Spec:
    """One stage with values drawn by `draw(choices)`: each toleranced at 0, 1 or 5 %; a
    voltage field (ref, a summing input's v, an ac_coupling's bias) reads a net of `nets` in
    one stage in two."""
    tol = lambda: draw((0.0, 0.0, 0.01, 0.05))
    values = {n: Value(draw(RESISTORS), tol()) for n in FIELDS.get(block, ())}
    values.update({n: Value(draw(CAPACITORS), tol()) for n in CAPS.get(block, ())})
    if block == "schmitt":  # hysteresis small against the kilovolt levels: r1 << r2
        values["r2"] = Value(1e6 * draw((1.0, 2.2)), tol())
    if block == "integrator":
        values["rf"] = Value(values["rin"].nominal * draw((1.0, 2.0, 5.0)), values["rf"].tolerance)
    if block.startswith("sallen_key") and draw((False, True)):
        rf = draw((1e3, 2.2e3))  # gain K = 1.1 or 1.22, kept only where the circuit is stable:
        # the s term of the denominator stays positive with room for the tolerances (half of it)
        #   low-pass  c2 (r1 + r2) + r1 c1 (1 - K),   high-pass  r1 (c1 + c2) + r2 c2 (1 - K)
        # (node equations at A and +; for the high-pass: s^2 r1 r2 c1 c2 + s [...] + 1)
        r1, r2, c1, c2 = (values[n].nominal for n in ("r1", "r2", "c1", "c2"))
        low = block.endswith("lowpass")
        damping, pull = (c2 * (r1 + r2), r1 * c1) if low else (r1 * (c1 + c2), r2 * c2)
        if damping - pull * rf / 10e3 > damping / 2:
            values["rf"] = Value(rf, tol())
            values["rg"] = Value(10e3, tol())
    if block in REFS:
        values["ref"] = Value(draw((0.0, 0.5, -1.2)), draw((0.0, 0.02)))
    if block == "summing" and draw((False, True)):
        values["inputs.1.r"] = Value(draw(RESISTORS), tol())
        values["inputs.1.v"] = Value(draw((0.5, -2.0)), draw((0.0, 0.02)))
    if block == "ac_coupling":
        values["bias"] = Value(draw((0.0, 0.5)), draw((0.0, 0.02)))
    if block == "noninverting" and draw((False, False, True)):  # AC-coupled rg
        values["cg"] = Value(10 * draw(CAPACITORS), tol())
    named = {}
    for name in ("ref", "inputs.1.v", "bias"):
        if name in values and nets and block != "schmitt" and draw((False, True)):
            named[name] = draw(nets)
            del values[name]
    if block == "adc":
        values = {"low": Value(-900.0), "high": Value(900.0)}
    if block == "comparator":
        values = {"threshold": Value(draw((0.0, 0.3, -0.7)), draw((0.0, 0.02)))}
    flags = {"invert": draw((False, True))} if block in ("comparator", "schmitt") else {}
    load = draw((None, None, 2.2e3, 10e3)) if block not in ("adc", "comparator", "schmitt") else None
    return Spec(block, values, flags, load, named)


def branches(draw, blocks: list[str], differential: bool, impedance: float) -> tuple:
    """`from` for one stage in four after the first: an earlier op-amp stage that is not the one
    just before (a stage with no op amp feeds one stage at most), or the single-ended source
    when it has no impedance (one with an impedance drives one stage at most, as the loader says)."""
    feeds: list = [None]
    for k in range(1, len(blocks)):
        choices = [j for j in range(k - 1) if blocks[j] not in PASSIVE + SATURATING]
        choices += [] if differential or impedance else [-1]
        feeds.append(draw(tuple(choices)) if choices and draw((False, False, False, True)) else None)
    return tuple(feeds) if any(f is not None for f in feeds) else ()


def nets_for(draw, rail: float) -> tuple[NetSpec, ...]:
    """No net, a fixed one or a ratiometric one on the main rail (0.5 V at its nominal)."""
    kind = draw((None, None, "fixed", "ratiometric"))
    if kind == "fixed":
        return (NetSpec("mid", value=Value(draw((0.5, -1.2)), draw((0.0, 0.02)))),)
    if kind == "ratiometric":
        return (NetSpec("mid", fraction=Value(0.5 / rail, draw((0.0, 0.01)))),)
    return ()


def case_from(draw, count: int) -> Case:
    differential = draw((False, False, True))
    blocks = [draw(("difference", "instrumentation")) if differential else draw(LINEAR)]
    blocks += [draw(LINEAR + ("adc",)) for _ in range(count - 2)]
    blocks.append(draw(ENDS))
    exact = draw((False, True))
    dc_only = draw((False, False, True))
    low = draw((-0.3, 0.0, 0.2))
    rail = draw((RAIL, RAIL, CLIP_RAIL))
    impedance = draw((0.0, 100.0, 1e3)) if not differential else draw((0.0, 1e3))
    nets = nets_for(draw, rail)
    names = tuple(n.name for n in nets)
    return Case(
        specs=tuple(spec_from(draw, b, names) for b in blocks),
        differential=differential,
        level=(low, low + draw((0.0, 0.1))),
        difference=(draw((-0.05, 0.0)), draw((0.0, 0.1))),
        amplitude=draw((0.0, 0.2)) if not dc_only else draw((0.0, 0.2)),
        band=(0.0, 0.0) if dc_only else draw(((10.0, 20e3), (100.0, 50e3))),
        impedance=impedance,
        a0=1e7 if exact else 1e5,
        gbw=1e13 if exact else 1e6,
        offset=draw((0.0, 1e-3)),
        bias=draw((0.0, 1e-7)),
        ro=draw((0.0, 50.0)) if "schmitt" not in blocks else 0.0,
        rail=rail,
        feeds=branches(draw, blocks, differential, impedance),
        nets=nets,
    )


def freqs_for(case: Case, engine_freqs: np.ndarray) -> np.ndarray:
    """The engine's own grid and a dense one across the band (the reference may only peak higher)."""
    if case.band[1] == 0:
        return np.array([0.0])
    dense = np.geomspace(case.band[0], case.band[1], 60)
    return np.unique(np.concatenate([np.asarray(engine_freqs, float), dense]))


def compare(case: Case):
    """(engine result, reference per stage, freqs)."""
    result, grid = engine(case)
    freqs = freqs_for(case, grid)
    return result, run(case, freqs), freqs


def verdicts(case: Case, result, truth: list[dict]) -> tuple[list[int], list[str]]:
    """(the stages whose numbers are checkable: none up their branch clips, by railroom or by
    the reference, whose linear circuit is no longer the board past a clip; and the clipping
    checks failed there: a stage with negative feedback that the reference shows past a limit
    by more than CLIP_SLACK, its unclipped extreme beyond the window, and that railroom does not
    call clipping). A clipping stage's own numbers stay checkable (they are its unclipped ones)."""
    up = parents(case)
    clipped: list[bool] = []  # per stage: it clips, or one up its branch does
    checkable, missed = [], []
    for k, (spec, stage, ref) in enumerate(zip(case.specs, result.stages, truth)):
        before = up[k] >= 0 and clipped[up[k]]
        past = [c for c, value in ref["margins"].items() if value < -CLIP_SLACK]
        if not before:
            checkable.append(k)
            if past and spec.block not in SATURATING + ("adc",) and stage.regime != "clipping":
                missed.append(f"stage {k + 1} ({spec.block}) past {past} but {stage.regime}")
        clipped.append(before or bool(past) or stage.regime == "clipping")
    return checkable, missed


def main(examples: int = 150, seed: int = 11) -> None:
    """Print, per block and check, the largest amount by which railroom's margin is below the
    reference's (pessimism; negative would be optimistic), over `examples` random chains."""
    rng = np.random.default_rng(seed)
    draw = lambda choices: choices[int(rng.integers(len(choices)))]
    worst: dict = {}
    count = optimistic = clipping = 0
    while count < examples:
        case = case_from(draw, int(rng.integers(2, 5)))
        if len(toleranced(case)) > 5:
            continue
        try:
            result, truth, _ = compare(case)
        except Exception as error:  # noqa: BLE001  (a chain railroom refuses: skipped, counted)
            print("skipped:", type(error).__name__, str(error)[:100])
            continue
        checkable, missed = verdicts(case, result, truth)
        clipping += any(s.regime == "clipping" for s in result.stages)
        optimistic += len(missed)
        for text in missed:
            print("not called clipping:", text)
        count += 1
        for k in checkable:
            spec, stage, ref = case.specs[k], result.stages[k], truth[k]
            for check, value in ref["margins"].items():
                if check not in stage.margins:
                    continue
                gap = value - stage.margins[check]
                scale = SLEW if check == "slew" else CURRENT if check == "current" else 1.0
                need = scale - value if check in ("slew", "current") else 1.0
                rel = gap / need if check == "slew" and need > 0 else gap
                key = (spec.block, check)
                low, high = worst.get(key, (np.inf, -np.inf))
                worst[key] = (min(low, rel), max(high, rel))
                optimistic += rel < {"slew": -1e-9, "current": -1e-9}.get(check, -1e-6)
    print(
        f"{count} chains ({clipping} with a clipping stage); {optimistic} margins optimistic by more"
        " than 1 uV (current 1 nA, slew 1e-9) or clipping stages not called clipping"
    )
    print(
        f"{'block':20} {'check':12} {'least':>12} {'most':>12}  pessimism (mV; current uA; slew % of the need)"
    )
    for (block, check), gaps in sorted(worst.items()):
        scale = {"current": 1e6}.get(check, 1e3)
        text = [f"{g:.3%}" if check == "slew" else f"{g * scale:.4f}" for g in gaps]
        print(f"{block:20} {check:12} {text[0]:>12} {text[1]:>12}")


if __name__ == "__main__":
    import sys
    from pathlib import Path

    sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 150)
