"""Property tests: the corners method against a brute-force enumeration of every joint corner.

The brute force here never calls the engine's propagation: each random chain becomes ONE netlist
for the independent nodal solver (tests/references/nodal.py; MNA after Ho, Ruehli and Brennan,
1975), loading between stages included. By superposition (the circuit is linear) each stage's
output is  sum_i T_i x_i  over the sources x_i (source level, references, fixed inputs, op-amp
offsets, bias currents into each pin) plus the AC part  +/- |T_in(f)| a. Every joint corner is
enumerated: each toleranced resistor of every stage at both ends (a batch of nodal solves), and
every combination of source, reference, offset and bias ends (an explicit table of 2^m rows).
For one resistor corner the AC sign and frequency add  +/- a max_f |T_in(f)|  to every DC corner.

Extreme value analysis (ECSS-Q-HB-30-01A): the engine's span must equal the brute force where
walks/signal_bounds.py's docstring says it is exact (DC alone, or stages passing DC and AC alike) and must
contain it everywhere; random samples inside the tolerance box must never fall outside it.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from references.nodal import Circuit
from railroom.engine.analysis import analyse
from railroom.engine.walks.preparation import band_grid
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.circuit.model import Part
from railroom.engine.walks.preparation import plan_chain

RESISTORS = (1e3, 2.2e3, 4.7e3, 10e3, 22e3, 47e3, 100e3)
TOLERANCES = (0.0, 0.001, 0.01, 0.05)
LEVEL_ENDS = (-1.0, -0.3, 0.0, 0.2, 1.0)


def part(exact: bool, offset: float, bias: float) -> Part:
    # exact: the pole far above the band (A0 1e7, GBW 1e13 Hz) so every stage passes DC and AC
    # alike to ~1e-14; otherwise a slow part (A0 1e5, GBW 1 MHz) whose gain falls in the band.
    # Rails, slew and current are out of reach on purpose: no stage may clip (clipping clamps).
    return Part(
        id="p",
        description="",
        supply=(1.0, 3e5),
        supply_abs_max=3e5,
        output_headroom=(1.0, 1.0),
        output_resistance=0.0,
        input_headroom=(1.0, 1.0),
        gbw=1e13 if exact else 1e6,
        slew=1e18,
        open_loop_gain=1e7 if exact else 1e5,
        offset=offset,
        offset_drift=0.0,
        bias_current=bias,
        output_current=1e6,
    )


@dataclass(frozen=True)
class Value:
    nominal: float
    tolerance: float

    @property
    def ends(self) -> tuple[float, float]:
        return tuple(sorted((self.nominal * (1 - self.tolerance), self.nominal * (1 + self.tolerance))))

    def text(self) -> str:
        return (
            f'"{self.nominal:.9g} {self.tolerance * 100:g}%"' if self.tolerance else f'"{self.nominal:.9g}"'
        )


@dataclass(frozen=True)
class StageSpec:
    block: str
    values: dict  # field -> Value ("inputs.1.r", "inputs.1.v" for summing)


@st.composite
def stages(draw):
    block = draw(st.sampled_from(["follower", "noninverting", "inverting", "summing", "divider"]))
    resistor = lambda: Value(draw(st.sampled_from(RESISTORS)), draw(st.sampled_from(TOLERANCES)))
    voltage = lambda: Value(draw(st.sampled_from((0.0, 0.5, -1.2, 2.5))), draw(st.sampled_from((0.0, 0.02))))
    names = {
        "follower": [],
        "noninverting": ["rf", "rg"],
        "inverting": ["rin", "rf"],
        "summing": ["rin", "rf"],
        "divider": ["top", "bottom"],
    }[block]
    values = {name: resistor() for name in names}
    if block in ("noninverting", "inverting", "summing"):
        values["ref"] = voltage()
    if block == "summing" and draw(st.booleans()):
        values["inputs.1.r"] = resistor()
        values["inputs.1.v"] = voltage()
    return StageSpec(block, values)


@st.composite
def chains(draw):
    specs = draw(st.lists(stages(), min_size=2, max_size=3))
    low = draw(st.sampled_from(LEVEL_ENDS))
    high = low + draw(st.sampled_from((0.0, 0.1, 0.7)))
    amplitude = draw(st.sampled_from((0.0, 0.3)))
    band = draw(st.sampled_from(((10.0, 20e3), (100.0, 100e3))))
    impedance = draw(st.sampled_from((0.0, 1e3)))
    offset = draw(st.sampled_from((0.0, 1e-3)))
    bias = draw(st.sampled_from((0.0, 1e-8)))
    return specs, (low, high), amplitude, band, impedance, offset, bias


def chain_text(specs, level, amplitude, band, impedance) -> str:
    lines = [
        "format = 1",
        "[rails.main]",
        'positive = "1e9"',
        'negative = "-1e9"',
        "[source]",
        f'level = ["{level[0]:.9g}", "{level[1]:.9g}"]',
        f'amplitude = "{amplitude:g}"',
        f'band = ["{band[0]:g}", "{band[1]:g}"]',
        f'impedance = "{impedance:g}"',
    ]
    for spec in specs:
        lines += ["[[stage]]", f'block = "{spec.block}"']
        if spec.block != "divider":
            lines.append('part = "p"')
        for name, value in spec.values.items():
            if not name.startswith("inputs."):
                lines.append(f"{name} = {value.text()}")
        if "inputs.1.r" in spec.values:
            r, v = spec.values["inputs.1.r"], spec.values["inputs.1.v"]
            lines.append(f"inputs = [{{ r = {r.text()}, v = {v.text()} }}]")
    return "\n".join(lines) + "\n"


# ---- the brute force ------------------------------------------------------------------------


def resistor_names(specs):
    return [
        (k, name)
        for k, spec in enumerate(specs)
        for name, value in spec.values.items()
        if not (name == "ref" or name.endswith(".v"))
    ]


def voltage_sources(specs, level, offset, bias):
    """(label, low end, high end) of every independent DC source the chain has."""
    found = [("level", *level)]
    for k, spec in enumerate(specs):
        for name, value in spec.values.items():
            if name == "ref" or name.endswith(".v"):
                found.append((f"{k}:{name}", *value.ends))
        if spec.block != "divider":
            found += [
                (f"{k}:offset", -offset, offset),
                (f"{k}:bias+", -bias, bias),
                (f"{k}:bias-", -bias, bias),
            ]
    return [s for s in found if s[1] or s[2] or s[0] == "level"]


def netlist(specs, resistors: dict, impedance: float, units: dict) -> Circuit:
    """The whole chain as one circuit; `units` gives each source's value (others 0)."""
    c = Circuit()
    if impedance:
        c.source("src", units.get("level", 0.0))
        c.resistor("src", "x0", impedance)
    else:
        c.source("x0", units.get("level", 0.0))
    for k, spec in enumerate(specs):
        x, out, minus, plus = f"x{k}", f"x{k + 1}", f"m{k}", f"p{k}"
        r = {name: resistors[(k, name)] for (j, name) in resistors if j == k}
        u = lambda name: units.get(f"{k}:{name}", 0.0)
        if spec.block == "divider":
            c.resistor(x, out, r["top"])
            c.resistor(out, "0", r["bottom"])
            continue
        if spec.block == "follower":
            plus, minus = x, out
        elif spec.block == "noninverting":
            plus = x
            c.source(f"ref{k}", u("ref"))
            c.resistor(out, minus, r["rf"])
            c.resistor(minus, f"ref{k}", r["rg"])
        else:  # inverting, summing: ref drives +
            c.source(plus, u("ref"))
            c.resistor(x, minus, r["rin"])
            c.resistor(minus, out, r["rf"])
            if "inputs.1.r" in r:
                c.source(f"fixed{k}", u("inputs.1.v"))
                c.resistor(f"fixed{k}", minus, r["inputs.1.r"])
        c.opamp(plus, minus, out, units["a0"], units["gbw"], u("offset"))
        for pin, name in ((plus, "bias+"), (minus, "bias-")):
            if u(name):
                c.current(pin, -u(name))  # bias current flows from the node into the pin
    return c


def brute_force(specs, level, amplitude, grid, impedance, op: Part, freqs_ac) -> np.ndarray:
    """(stages, 2): lowest and highest output of every stage over every joint corner.

    Stage k's output is read with the chain cut after stage k, or, for a passive stage, after the
    stage that follows it: the engine shows a passive stage's output with the next stage's input
    on it (the README: that stage taken as it is, unloaded by what comes after it).
    """
    return np.array(
        [
            stage_brute_force(
                specs[: cut(specs, k)], level, amplitude, impedance, op, freqs_ac, read=f"x{k + 1}"
            )
            for k in range(len(specs))
        ]
    )


def cut(specs, k: int) -> int:
    """How many stages to keep when reading stage k (brute_force)."""
    return k + 2 if specs[k].block == "divider" and k + 1 < len(specs) else k + 1


def stage_brute_force(
    specs, level, amplitude, impedance, op: Part, freqs_ac, read: str | None = None
) -> np.ndarray:
    names = resistor_names(specs)
    ends = [specs[k].values[n].ends for k, n in names]
    combos = np.array(list(itertools.product(*ends)))  # (R, n_resistors)
    resistors = {key: combos[:, i] for i, key in enumerate(names)}
    sources = voltage_sources(specs, level, op.offset, op.bias_current)
    model = {"a0": op.open_loop_gain, "gbw": op.gbw}
    out = read or f"x{len(specs)}"
    dc = np.empty((len(combos), len(sources)))
    for i, (label, *_) in enumerate(sources):
        dc[:, i] = netlist(specs, resistors, impedance, model | {label: 1.0}).solve(0.0)[out][..., 0].real
    corners = np.array(list(itertools.product(*[(lo, hi) for _, lo, hi in sources])))
    outputs = dc @ corners.T  # (R, 2^m)
    ac = 0.0
    if amplitude:
        sol = netlist(specs, resistors, impedance, model | {"level": 1.0}).solve(freqs_ac)
        ac = amplitude * np.abs(sol[out]).max(axis=-1)
    return np.array([(outputs.min(axis=-1) - ac).min(), (outputs.max(axis=-1) + ac).max()])


def random_samples(specs, level, amplitude, band, impedance, op: Part, rng, count=200):
    """(stages, count, 4) outputs at random points inside the box, random in-band frequencies and
    phases; each stage read with the chain cut as in brute_force."""
    names = resistor_names(specs)
    resistors = {key: rng.uniform(*specs[key[0]].values[key[1]].ends, count) for key in names}
    sources = voltage_sources(specs, level, op.offset, op.bias_current)
    draws = {label: rng.uniform(lo, hi, count) for label, lo, hi in sources}
    freqs = np.exp(rng.uniform(np.log(band[0]), np.log(band[1]), 4))
    phase = np.exp(1j * rng.uniform(0, 2 * np.pi, (count, 4)))
    model = {"a0": op.open_loop_gain, "gbw": op.gbw}
    found = []
    for k in range(len(specs)):
        head, out = specs[: cut(specs, k)], f"x{k + 1}"
        total = np.zeros(count)
        for label, _, _ in voltage_sources(head, level, op.offset, op.bias_current):
            sol = netlist(head, resistors, impedance, model | {label: 1.0}).solve(0.0)
            total = total + np.broadcast_to(sol[out][..., 0].real, (count,)) * draws[label]
        sol = netlist(head, resistors, impedance, model | {"level": 1.0}).solve(freqs)
        found.append(total[:, None] + (np.broadcast_to(sol[out], (count, 4)) * amplitude * phase).real)
    return np.array(found)


# ---- the properties -------------------------------------------------------------------------


def engine_spans(text: str, op: Part):
    chain = chain_from_text(text)
    result = analyse(chain, {"p": op})
    assert all(s.regime == "linear" for s in result.stages)  # nothing clamped
    freqs = band_grid(chain, plan_chain(chain, {"p": op}))
    return np.array([s.measure.output for s in result.stages]), freqs


def bits(specs, bias, offset) -> tuple[int, int]:
    r = len(resistor_names(specs))
    m = len(voltage_sources(specs, (0.0, 1.0), offset, bias))
    return r, m


@settings(max_examples=90, deadline=None, suppress_health_check=[HealthCheck.filter_too_much])
@given(case=chains(), exact_part=st.booleans(), seed=st.integers(0, 2**16))
def test_corner_spans_equal_every_joint_corner(case, exact_part, seed):
    specs, level, amplitude, band, impedance, offset, bias = case
    r_bits, m_bits = bits(specs, bias, offset)
    assume(r_bits <= 8 and m_bits <= 12)
    # a toleranced divider into the next stage is exact too: the next stage's corners are
    # enumerated jointly with the divider's (each with its own ratio and output resistance)
    assume(exact_part or amplitude == 0)  # where walks/signal_bounds.py says it is exact
    op = part(exact_part, offset, bias)
    text = chain_text(specs, level, amplitude, band, impedance)
    spans, freqs = engine_spans(text, op)
    truth = brute_force(specs, level, amplitude, band, impedance, op, freqs)
    scale = 1e-7 * np.maximum(1.0, np.abs(truth))
    assert np.all(np.abs(spans - truth) <= scale), (text, spans, truth)
    samples = random_samples(specs, level, amplitude, band, impedance, op, np.random.default_rng(seed))
    assert np.all(samples >= spans[:, :1, None] - scale[:, :1, None])
    assert np.all(samples <= spans[:, 1:, None] + scale[:, 1:, None])


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.filter_too_much])
@given(case=chains(), seed=st.integers(0, 2**16))
def test_corner_spans_contain_every_joint_corner_and_sample(case, seed):
    # slow part: the gain falls inside the band, so the engine's span is an outside bound
    specs, level, amplitude, band, impedance, offset, bias = case
    r_bits, m_bits = bits(specs, bias, offset)
    assume(r_bits <= 8 and m_bits <= 12)
    op = part(False, offset, bias)
    text = chain_text(specs, level, amplitude, band, impedance)
    spans, freqs = engine_spans(text, op)
    truth = brute_force(specs, level, amplitude, band, impedance, op, freqs)
    slack = 1e-9 * np.maximum(1.0, np.abs(truth))
    assert np.all(truth[:, 0] >= spans[:, 0] - slack[:, 0]), (text, spans, truth)
    assert np.all(truth[:, 1] <= spans[:, 1] + slack[:, 1]), (text, spans, truth)
    samples = random_samples(specs, level, amplitude, band, impedance, op, np.random.default_rng(seed))
    assert np.all(samples >= spans[:, :1, None] - slack[:, :1, None])
    assert np.all(samples <= spans[:, 1:, None] + slack[:, 1:, None])


def test_toleranced_divider_into_inverting_stage_is_exact():
    # divider 1k 5% / 1k into an inverting -1 stage, 1 V DC. The inverting stage's corners are
    # enumerated jointly with the divider's (methods/corners.stage_values), so the engine's span
    # equals the joint corners of the nodal solver; before, the divider's output resistance was
    # enumerated apart from its ratio (a bound from outside), and before that held at one value
    # (too narrow).
    specs = [
        StageSpec("divider", {"top": Value(1e3, 0.05), "bottom": Value(1e3, 0.0)}),
        StageSpec("inverting", {"rin": Value(1e3, 0.0), "rf": Value(1e3, 0.0), "ref": Value(0.0, 0.0)}),
    ]
    op = part(True, 0.0, 0.0)
    spans, freqs = engine_spans(chain_text(specs, (1.0, 1.0), 0.0, (10.0, 20e3), 0.0), op)
    truth = brute_force(specs, (1.0, 1.0), 0.0, (10.0, 20e3), 0.0, op, freqs)
    assert np.allclose(spans, truth, rtol=1e-7, atol=1e-9), (spans, truth)
