"""The catalogue blocks' node voltages and currents against the independent nodal solver.

Source of truth: modified nodal analysis (Ho, Ruehli and Brennan, IEEE Trans. CAS, 1975) solved with
numpy.linalg.solve in references/nodal.py, netlists worded as the README's File formats "Block topologies" in
references/block_circuits.py. Random component values and frequencies, finite open-loop gain with
a single pole; each driving source in turn at 1 V (superposition); DC error gains from the solver
with a 1 V offset or a 1 A bias current on one op amp at a time.
"""

import numpy as np
import pytest

from references.block_circuits import (
    OpAmpModel,
    difference,
    instrumentation,
    integrator,
    mfb_bandpass,
    mfb_lowpass,
    sallen_key_highpass,
    sallen_key_lowpass,
)
from railroom.engine.circuit.blocks.difference import Difference
from railroom.engine.circuit.blocks.filters import (
    MfbBandpass,
    MfbLowpass,
    SallenKeyHighpass,
    SallenKeyLowpass,
)
from railroom.engine.circuit.blocks.instrumentation import Instrumentation
from railroom.engine.circuit.blocks.integrator import Integrator
from railroom.engine.circuit.model import Part
from railroom.engine.circuit.opamp import inverse_open_loop, laplace_grid

DRAWS = 48
SEEDS = range(4)


def part(a0: float, gbw: float) -> Part:
    return Part(
        id="p",
        description="",
        supply=(1, 40),
        supply_abs_max=44,
        output_headroom=(1, 1),
        output_resistance=0.0,
        input_headroom=(1, 1),
        gbw=gbw,
        slew=1e6,
        open_loop_gain=a0,
        offset=1e-3,
        offset_drift=0.0,
        bias_current=1e-9,
        output_current=0.02,
    )


def setting(seed: int):
    rng = np.random.default_rng(seed)
    a0 = 10 ** rng.uniform(3, 7)
    gbw = 10 ** rng.uniform(5, 8)
    freqs = np.sort(10 ** rng.uniform(0, 6, 7))
    return rng, a0, gbw, np.concatenate(([0.0], freqs))


def resistors(rng) -> np.ndarray:
    return 10 ** rng.uniform(2.5, 5.5, DRAWS)


def capacitors(rng) -> np.ndarray:
    return 10 ** rng.uniform(-10, -6, DRAWS)


def engine(block, values: dict, grid: np.ndarray, op: Part, differential=False, drive=0.0):
    s = laplace_grid(grid[1:])
    v = {k: np.asarray(x, dtype=float)[:, None] for k, x in values.items()}
    return block.respond(v, s, inverse_open_loop(op, s), drive, differential)


def close(engine_value, nodal_value, rel=1e-8, atol=1e-10):
    """Agreement relative to the largest value of each draw's response (a transfer may pass
    through zero at some frequency); `atol` covers the solver's round-off where the true value
    is 0 (use about 1e-14 for currents, A per V)."""
    nodal_value = np.asarray(nodal_value)
    engine_value = np.asarray(engine_value) * np.ones(nodal_value.shape)
    scale = np.max(np.abs(nodal_value), axis=-1, keepdims=True)
    assert np.all(np.abs(engine_value - nodal_value) <= rel * scale + atol)


@pytest.mark.parametrize("seed", SEEDS)
@pytest.mark.parametrize("differential", [True, False])
def test_difference_amplifier(seed, differential):
    rng, a0, gbw, grid = setting(seed)
    r1, r2, r3, r4, load = (resistors(rng) for _ in range(5))
    op = OpAmpModel(open_loop_gain=a0, gbw=gbw)
    r = engine(
        Difference(),
        {"r1": r1, "r2": r2, "r3": r3, "r4": r4, "ref": 0 * r1, "load": load},
        grid,
        part(a0, gbw),
        differential,
    )
    amp = r.opamps[0]
    # single-ended (README, File formats): in drives r3, r1 returns to ref -> the nodal "neg" side sits on ref
    units = (
        {"pos": (1, 0, 0), "neg": (0, 1, 0), "ref": (0, 0, 1)}
        if differential
        else {"in": (1, 0, 0), "ref": (0, 1, 1)}
    )
    for source, (p, n, ref) in units.items():
        sol = difference(r1, r2, r3, r4, ref, v_pos=p, v_neg=n, opamp=op, load=load, freqs=grid)
        close(r.output.transfers[source], sol["out"])
        close(amp.plus.transfers[source], sol["plus"])
        close(amp.current.transfers[source], sol.opamp_currents["out"], atol=1e-14)


@pytest.mark.parametrize("seed", SEEDS)
def test_instrumentation_amplifier_every_op_amp(seed):
    rng, a0, gbw, grid = setting(seed)
    rg, rf, rdiff, load = (resistors(rng) for _ in range(4))
    op = OpAmpModel(open_loop_gain=a0, gbw=gbw)
    r = engine(
        Instrumentation(),
        {"rg": rg, "rf": rf, "rdiff": rdiff, "ref": 0 * rg, "load": load},
        grid,
        part(a0, gbw),
        differential=True,
    )
    upper, lower, diff = r.opamps
    assert diff.output is r.output
    for source, (p, n, ref) in {"pos": (1, 0, 0), "neg": (0, 1, 0), "ref": (0, 0, 1)}.items():
        sol = instrumentation(rg, rf, ref, rdiff, v_pos=p, v_neg=n, opamp=op, load=load, freqs=grid)
        for amp, out, plus in (
            (upper, "upper_out", "upper_plus"),
            (lower, "lower_out", "lower_plus"),
            (diff, "out", "diff_plus"),
        ):
            close(amp.output.transfers.get(source, 0.0), sol[out])
            close(amp.plus.transfers.get(source, 0.0), sol[plus])
            close(amp.current.transfers.get(source, 0.0), sol.opamp_currents[out], atol=1e-14)


@pytest.mark.parametrize("seed", SEEDS)
def test_instrumentation_error_gains_at_dc(seed):
    rng, a0, _, _ = setting(seed)
    rg, rf, rdiff = (resistors(rng) for _ in range(3))
    grid = np.array([0.0, 1.0])
    r = engine(
        Instrumentation(),
        {"rg": rg, "rf": rf, "rdiff": rdiff, "ref": 0 * rg},
        grid,
        part(a0, 1e6),
        differential=True,
    )
    for k in range(3):

        def solve(**error):
            models = [OpAmpModel(open_loop_gain=a0)] * 3
            models[k] = OpAmpModel(open_loop_gain=a0, **error)
            return instrumentation(rg, rf, 0.0, rdiff, v_pos=0.0, v_neg=0.0, opamp=models)

        offset, plus, minus = solve(offset=1.0), solve(bias_plus=1.0), solve(bias_minus=1.0)
        for amp, node in zip(r.opamps, ("upper_out", "lower_out", "out")):
            close(amp.output.offset_gain[:, k : k + 1], offset[node].real)
            exact = np.abs(plus[node].real) + np.abs(minus[node].real)
            if node == "out":
                # bias gains of a node built from other nodes add as magnitudes: an outside bound
                assert np.all(amp.output.bias_gain[:, k : k + 1] >= exact * (1 - 1e-9))
            else:
                close(amp.output.bias_gain[:, k : k + 1], exact)


FILTERS = {
    "sallen_key_lowpass": (SallenKeyLowpass(), sallen_key_lowpass, ("r1", "r2", "c1", "c2")),
    "sallen_key_highpass": (SallenKeyHighpass(), sallen_key_highpass, ("c1", "c2", "r1", "r2")),
    "mfb_lowpass": (MfbLowpass(), mfb_lowpass, ("r1", "r2", "r3", "c1", "c2")),
    "mfb_bandpass": (MfbBandpass(), mfb_bandpass, ("r1", "r2", "r3", "c1", "c2")),
}


def filter_values(rng, names, gain: bool) -> dict:
    values = {n: capacitors(rng) if n.startswith("c") else resistors(rng) for n in names}
    if gain:
        values |= {"rf": resistors(rng), "rg": resistors(rng)}
    return values


@pytest.mark.parametrize("seed", SEEDS)
@pytest.mark.parametrize(
    "name,gain",
    [
        ("sallen_key_lowpass", False),
        ("sallen_key_lowpass", True),
        ("sallen_key_highpass", False),
        ("sallen_key_highpass", True),
        ("mfb_lowpass", False),
        ("mfb_bandpass", False),
    ],
)
def test_filter_nodes_inner_node_and_current(seed, name, gain):
    block, reference, names = FILTERS[name]
    rng, a0, gbw, grid = setting(seed)
    values = filter_values(rng, names, gain)
    load = resistors(rng)
    op = OpAmpModel(open_loop_gain=a0, gbw=gbw)
    r = engine(block, values | {"ref": 0 * load, "load": load}, grid, part(a0, gbw))
    amp = r.opamps[0]
    for source, (v_in, ref) in {"in": (1.0, 0.0), "ref": (0.0, 1.0)}.items():
        sol = reference(**values, ref=ref, v_in=v_in, opamp=op, load=load, freqs=grid)
        close(r.output.transfers.get(source, 0.0), sol["out"])
        close(r.inner["node A"].transfers.get(source, 0.0), sol["a"])
        close(amp.plus.transfers.get(source, 0.0), sol["plus"])
        close(amp.current.transfers.get(source, 0.0), sol.opamp_currents["out"], atol=1e-14)


@pytest.mark.parametrize("seed", SEEDS)
@pytest.mark.parametrize("name", list(FILTERS) + ["integrator"])
def test_single_op_amp_error_gains_at_dc(seed, name):
    rng, a0, _, _ = setting(100 + seed)
    grid = np.array([0.0, 1.0])
    if name == "integrator":
        values = {"rin": resistors(rng), "rf": resistors(rng), "c": capacitors(rng)}
        block, reference = (
            Integrator(),
            (lambda ref=0.0, **kw: integrator(values["rin"], values["rf"], values["c"], ref, **kw)),
        )
    else:
        block, build, names = FILTERS[name]
        values = filter_values(rng, names, gain=name.startswith("sallen"))
        reference = lambda ref=0.0, **kw: build(**values, ref=ref, **kw)  # noqa: E731
    node = engine(block, values | {"ref": np.zeros(DRAWS)}, grid, part(a0, 1e6)).output

    def dc(**error):
        return reference(v_in=0.0, opamp=OpAmpModel(open_loop_gain=a0, **error))["out"].real

    close(node.offset_gain, dc(offset=1.0))
    close(node.bias_gain, np.abs(dc(bias_plus=1.0)) + np.abs(dc(bias_minus=1.0)))


@pytest.mark.parametrize("seed", SEEDS)
def test_integrator_response_and_current(seed):
    rng, a0, gbw, grid = setting(seed)
    rin, rf, load, c = resistors(rng), resistors(rng), resistors(rng), capacitors(rng)
    op = OpAmpModel(open_loop_gain=a0, gbw=gbw)
    r = engine(Integrator(), {"rin": rin, "rf": rf, "c": c, "ref": 0 * c, "load": load}, grid, part(a0, gbw))
    for source, (v_in, ref) in {"in": (1.0, 0.0), "ref": (0.0, 1.0)}.items():
        sol = integrator(rin, rf, c, ref, v_in=v_in, opamp=op, load=load, freqs=grid)
        close(r.output.transfers[source], sol["out"])
        close(r.opamps[0].current.transfers[source], sol.opamp_currents["out"], atol=1e-14)
