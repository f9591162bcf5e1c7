"""The engine's closed-form block transfers against the independent nodal solver (tests/references).

Source of truth: modified nodal analysis (Ho, Ruehli and Brennan, IEEE Trans. CAS, 1975) solved with
numpy.linalg.solve in references/nodal.py, netlists worded as the README's File formats "Block topologies" in
references/block_circuits.py. Random component values, random frequencies, finite open-loop gain
with a single pole; DC and AC; op-amp output current; offset and bias error gains at DC.
"""

import numpy as np
import pytest

from references.block_circuits import (
    OpAmpModel,
    divider,
    follower,
    inverting,
    noninverting,
    rc_lowpass,
    summing,
)
from references.nodal import Circuit
from railroom.engine.circuit.blocks.gain import Follower, Inverting, Noninverting, Summing
from railroom.engine.circuit.blocks.passive import Divider, RcLowpass
from railroom.engine.circuit.model import Part
from railroom.engine.circuit.opamp import inverse_open_loop, laplace_grid

DRAWS = 64
SEEDS = range(6)


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


def resistors(rng, n=DRAWS) -> np.ndarray:
    return 10 ** rng.uniform(2.5, 6, n)  # 316 ohm .. 1 Mohm


def setting(seed: int):
    rng = np.random.default_rng(seed)
    a0 = 10 ** rng.uniform(3, 7)
    gbw = 10 ** rng.uniform(5, 8)
    freqs = np.sort(10 ** rng.uniform(0, 6.5, 7))
    return rng, a0, gbw, np.concatenate(([0.0], freqs))


def engine(block, values: dict, grid: np.ndarray, op: Part | None, drive=0.0):
    """The block's response over the draws: grid[0] must be DC (laplace_grid prepends it)."""
    s = laplace_grid(grid[1:])
    v = {k: np.asarray(x, dtype=float)[:, None] for k, x in values.items()}
    return block.respond(v, s, inverse_open_loop(op, s), drive, False)


def close(engine_value, nodal_value, rel=1e-9):
    engine_value, nodal_value = np.asarray(engine_value), np.asarray(nodal_value)
    scale = np.maximum(np.abs(nodal_value), 1e-12)
    assert np.max(np.abs(engine_value - nodal_value) / scale) < rel


@pytest.mark.parametrize("seed", SEEDS)
def test_noninverting_transfers_current_and_errors(seed):
    rng, a0, gbw, grid = setting(seed)
    rf, rg, load = resistors(rng), resistors(rng), resistors(rng)
    op = OpAmpModel(open_loop_gain=a0, gbw=gbw)
    r = engine(
        Noninverting(), {"rf": rf, "rg": rg, "ref": np.zeros(DRAWS), "load": load}, grid, part(a0, gbw)
    )
    amp = r.opamps[0]
    for source, (v_in, ref) in {"in": (1.0, 0.0), "ref": (0.0, 1.0)}.items():
        sol = noninverting(rf, rg, ref, v_in=v_in, opamp=op, load=load, freqs=grid)
        close(r.output.transfers[source], sol["out"])
        close(amp.plus.transfers.get(source, 0 * grid), sol["plus"])
        # current the op amp delivers into its output node (rf network plus load)
        close(amp.current.transfers[source], sol.opamp_currents["out"])


@pytest.mark.parametrize("seed", SEEDS)
def test_inverting_transfers_current_and_errors(seed):
    rng, a0, gbw, grid = setting(seed)
    rin, rf, load = resistors(rng), resistors(rng), resistors(rng)
    op = OpAmpModel(open_loop_gain=a0, gbw=gbw)
    r = engine(Inverting(), {"rin": rin, "rf": rf, "ref": np.zeros(DRAWS), "load": load}, grid, part(a0, gbw))
    amp = r.opamps[0]
    for source, (v_in, ref) in {"in": (1.0, 0.0), "ref": (0.0, 1.0)}.items():
        sol = inverting(rin, rf, ref, v_in=v_in, opamp=op, load=load, freqs=grid)
        close(r.output.transfers[source], sol["out"])
        close(amp.current.transfers[source], sol.opamp_currents["out"])


@pytest.mark.parametrize("seed", SEEDS)
def test_summing_transfers_current_and_errors(seed):
    rng, a0, gbw, grid = setting(seed)
    rin, rf, r1, r2, load = (resistors(rng) for _ in range(5))
    op = OpAmpModel(open_loop_gain=a0, gbw=gbw)
    zero = np.zeros(DRAWS)
    values = {
        "rin": rin,
        "rf": rf,
        "ref": zero,
        "inputs.1.r": r1,
        "inputs.1.v": zero,
        "inputs.2.r": r2,
        "inputs.2.v": zero,
        "load": load,
    }
    r = engine(Summing(), values, grid, part(a0, gbw))
    amp = r.opamps[0]
    units = {"in": (1, 0, 0, 0), "ref": (0, 1, 0, 0), "inputs.1.v": (0, 0, 1, 0), "inputs.2.v": (0, 0, 0, 1)}
    for source, (v_in, ref, v1, v2) in units.items():
        sol = summing(rin, rf, ref, [(r1, v1), (r2, v2)], v_in=v_in, opamp=op, load=load, freqs=grid)
        close(r.output.transfers[source], sol["out"])
        close(amp.current.transfers[source], sol.opamp_currents["out"])


@pytest.mark.parametrize("seed", SEEDS)
def test_follower_transfer_and_current(seed):
    rng, a0, gbw, grid = setting(seed)
    load = resistors(rng)
    r = engine(Follower(), {"load": load}, grid, part(a0, gbw))
    sol = follower(opamp=OpAmpModel(open_loop_gain=a0, gbw=gbw), load=load, freqs=grid)
    close(r.output.transfers["in"] * np.ones((DRAWS, 1)), sol["out"])
    close(r.opamps[0].current.transfers["in"] * np.ones((DRAWS, 1)), sol.opamp_currents["out"])


@pytest.mark.parametrize("seed", SEEDS)
def test_error_gains_at_dc(seed):
    # offset in series with +, bias currents into the pins: nodal DC solve per unit source
    rng = np.random.default_rng(100 + seed)
    a0 = 10 ** rng.uniform(3, 7)
    rin, rf, drive = resistors(rng), resistors(rng), resistors(rng)
    grid = np.array([0.0, 1.0])
    cases = {
        "noninverting": (
            Noninverting(),
            {"rf": rf, "rg": rin},
            lambda m, d: noninverting_driven(rf, rin, d, m),
        ),
        "inverting": (
            Inverting(),
            {"rin": rin, "rf": rf},
            lambda m, d: inverting(rin + d, rf, v_in=0.0, opamp=m)["out"],
        ),
        "follower": (Follower(), {}, lambda m, d: follower_driven(d, m)),
        "summing": (
            Summing(),
            {"rin": rin, "rf": rf, "inputs.1.r": drive + rf, "inputs.1.v": np.zeros(DRAWS)},
            lambda m, d: summing(rin + d, rf, 0.0, [(drive + rf, 0.0)], v_in=0.0, opamp=m)["out"],
        ),
    }
    for _name, (block, values, build) in cases.items():
        for d in (0.0, float(drive[0])):  # the engine passes the driving resistance as a float
            node = engine(block, values | {"ref": np.zeros(DRAWS)}, grid, part(a0, 1e6), drive=d).output
            offset = build(OpAmpModel(open_loop_gain=a0, offset=1.0), d)[..., 0].real
            plus = build(OpAmpModel(open_loop_gain=a0, bias_plus=1.0), d)[..., 0].real
            minus = build(OpAmpModel(open_loop_gain=a0, bias_minus=1.0), d)[..., 0].real
            ones = np.ones(DRAWS)
            close(node.offset_gain[:, 0] * ones, offset * ones)
            close(node.bias_gain[:, 0] * ones, (np.abs(plus) + np.abs(minus)) * ones)


def noninverting_driven(rf, rg, drive, model):
    """noninverting with the source impedance `drive` in series with the + input."""
    c = Circuit()
    source_behind(c, drive, "plus")
    c.resistor("out", "minus", rf)
    c.resistor("minus", "0", rg)
    bias(c, model, "plus", "minus", "out")
    return c.solve(0.0)["out"]


def follower_driven(drive, model):
    c = Circuit()
    source_behind(c, drive, "plus")
    bias(c, model, "plus", "out", "out")
    return c.solve(0.0)["out"]


def source_behind(c: Circuit, drive, node: str, volts: float = 0.0) -> None:
    """A source at `node`, through the resistance `drive` when there is one."""
    if np.any(drive):
        c.source("src", volts)
        c.resistor("src", node, drive)
    else:
        c.source(node, volts)


def bias(c: Circuit, model: OpAmpModel, plus, minus, out):
    c.opamp(plus, minus, out, model.open_loop_gain, model.gbw, model.offset)
    for pin, amps in ((plus, model.bias_plus), (minus, model.bias_minus)):
        if amps:
            c.current(pin, -amps)


@pytest.mark.parametrize("seed", SEEDS)
def test_divider_and_rc_lowpass_with_drive_and_load(seed):
    # passive blocks: a driving resistance in series with the input, a load from output to 0 V
    rng, _, _, grid = setting(seed)
    top, bottom, drive, load = (resistors(rng) for _ in range(4))
    cap = 10 ** rng.uniform(-10, -6, DRAWS)
    close(
        engine(Divider(), {"top": top, "bottom": bottom}, grid, None).output.transfers["in"],
        divider(top, bottom, freqs=grid)["out"],
    )
    close(
        engine(RcLowpass(), {"r": top, "c": cap}, grid, None).output.transfers["in"],
        rc_lowpass(top, cap, freqs=grid)["out"],
    )
    for d, rl in ((float(drive[0]), None), (float(drive[1]), load), (0.0, load)):
        values = {"top": top, "bottom": bottom} | ({} if rl is None else {"load": rl})
        got = engine(Divider(), values, grid, None, drive=d)
        close(got.output.transfers["in"], driven(d, top, bottom, None, rl, grid))
        values = {"r": top, "c": cap} | ({} if rl is None else {"load": rl})
        got = engine(RcLowpass(), values, grid, None, drive=d)
        close(got.output.transfers["in"], driven(d, top, None, cap, rl, grid))


def driven(drive, r, bottom, cap, load, grid):
    c = Circuit()
    source_behind(c, drive, "in", 1.0)
    c.resistor("in", "out", r)
    if bottom is not None:
        c.resistor("out", "0", bottom)
    if cap is not None:
        c.capacitor("out", "0", cap)
    if load is not None:
        c.resistor("out", "0", load)
    return c.solve(grid)["out"]
