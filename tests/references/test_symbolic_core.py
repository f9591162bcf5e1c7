"""The engine's block transfers against sympy's solution of each block's node equations.

Source of truth: Kirchhoff's current law at every node, written here from the README's File formats "Block
topologies", solved symbolically with sympy.solve; the ideal op amp is V+ = V- (Sedra & Smith ch. 2)
and the finite-gain one Vout = A (V+ - V-). Substituted at random values and compared with the
engine's transfers (an ideal op amp: inverse gain 0; finite A: inverse gain 1/A at DC).
"""

import numpy as np
import pytest
import sympy as sp

from railroom.engine.circuit.blocks.gain import Follower, Inverting, Noninverting, Summing
from railroom.engine.circuit.blocks.passive import Divider, RcLowpass
from railroom.engine.circuit.opamp import laplace_grid

vin, vref, v1, v2, vout, vm, vp, A, s = sp.symbols("vin vref v1 v2 vout vm vp A s")
rf, rg, rin, r1, r2, top, bottom, r, c = sp.symbols("rf rg rin r1 r2 top bottom r c", positive=True)


def solve_output(equations, unknowns, gain=None):
    """Vout from the node equations; `gain` None is the ideal op amp (V+ = V-)."""
    amp = [sp.Eq(vp, vm)] if gain is None else [sp.Eq(vout, gain * (vp - vm))]
    found = sp.solve(list(equations) + amp, list(unknowns) + [vout], dict=True)
    assert len(found) == 1
    return sp.simplify(found[0][vout])


def symbolic(block: str, gain=None):
    if block == "follower":  # in to +; output to -
        return solve_output([sp.Eq(vp, vin), sp.Eq(vm, vout)], [vp, vm], gain)
    if block == "noninverting":  # rf output to -, rg - to ref
        kcl = sp.Eq((vout - vm) / rf + (vref - vm) / rg, 0)
        return solve_output([sp.Eq(vp, vin), kcl], [vp, vm], gain)
    if block == "inverting":  # rin in to -, rf - to output, ref on +
        kcl = sp.Eq((vin - vm) / rin + (vout - vm) / rf, 0)
        return solve_output([sp.Eq(vp, vref), kcl], [vp, vm], gain)
    if block == "summing":  # as inverting plus r1 from v1 and r2 from v2 to -
        kcl = sp.Eq((vin - vm) / rin + (vout - vm) / rf + (v1 - vm) / r1 + (v2 - vm) / r2, 0)
        return solve_output([sp.Eq(vp, vref), kcl], [vp, vm], gain)
    if block == "divider":  # top in to out, bottom out to 0 V
        return sp.solve(sp.Eq((vin - vout) / top - vout / bottom, 0), vout)[0]
    if block == "rc_lowpass":  # r in to out, c out to 0 V (admittance s c)
        return sp.solve(sp.Eq((vin - vout) / r - vout * s * c, 0), vout)[0]
    raise ValueError(block)


ENGINE = {
    "follower": Follower(),
    "noninverting": Noninverting(),
    "inverting": Inverting(),
    "summing": Summing(),
    "divider": Divider(),
    "rc_lowpass": RcLowpass(),
}
# engine field -> symbol; sources: engine transfer name -> symbol
FIELDS = {
    "rf": rf,
    "rg": rg,
    "rin": rin,
    "inputs.1.r": r1,
    "inputs.2.r": r2,
    "top": top,
    "bottom": bottom,
    "r": r,
    "c": c,
}
SOURCES = {"in": vin, "ref": vref, "inputs.1.v": v1, "inputs.2.v": v2}
NEEDS = {
    "follower": [],
    "noninverting": ["rf", "rg"],
    "inverting": ["rin", "rf"],
    "summing": ["rin", "rf", "inputs.1.r", "inputs.2.r"],
    "divider": ["top", "bottom"],
    "rc_lowpass": ["r", "c"],
}


def engine_transfers(block: str, values: dict, freq: float, inverse_gain: float):
    sgrid = laplace_grid(np.array([freq]))
    v = {k: np.array([[x]]) for k, x in values.items()}
    v.update({k: np.zeros((1, 1)) for k in ("ref", "inputs.1.v", "inputs.2.v")})
    got = ENGINE[block].respond(v, sgrid, np.full(sgrid.shape, inverse_gain, dtype=complex), 0.0, False)
    return got.output.transfers


def random_values(rng, block):
    values = {k: float(10 ** rng.uniform(2.5, 6)) for k in NEEDS[block]}
    if "c" in values:
        values["c"] = float(10 ** rng.uniform(-10, -6))
    return values


@pytest.mark.parametrize("block", list(ENGINE))
@pytest.mark.parametrize("seed", range(4))
def test_ideal_transfers_match_symbolic_node_equations(block, seed):
    rng = np.random.default_rng(seed)
    values = random_values(rng, block)
    freq = float(10 ** rng.uniform(0, 6))
    expression = symbolic(block)
    numbers = {FIELDS[k]: x for k, x in values.items()} | {s: 2j * np.pi * freq}
    transfers = engine_transfers(block, values, freq, 0.0)
    present = [name for name, sym in SOURCES.items() if expression.has(sym)]
    assert set(present) == {k for k in transfers if np.any(transfers[k] != 0)}
    for name in present:
        coefficient = complex(sp.diff(expression, SOURCES[name]).subs(numbers))
        # index 1 is the frequency (0 is DC); the ideal gain stages are flat, rc_lowpass is not
        assert complex(np.ravel(transfers[name])[1]) == pytest.approx(coefficient, rel=1e-12)
        dc = complex(sp.diff(expression, SOURCES[name]).subs(numbers | {s: 0}))
        assert complex(np.ravel(transfers[name])[0]) == pytest.approx(dc, rel=1e-12)


@pytest.mark.parametrize("block", ["follower", "noninverting", "inverting", "summing"])
def test_finite_gain_transfers_match_symbolic_node_equations(block):
    # Vout = A (V+ - V-): the symbolic form of Black's feedback formula
    rng = np.random.default_rng(7)
    values = random_values(rng, block)
    gain = 2.0e3
    expression = symbolic(block, gain=A)
    numbers = {FIELDS[k]: x for k, x in values.items()} | {A: gain}
    transfers = engine_transfers(block, values, 1.0, 1.0 / gain)
    for name, sym in SOURCES.items():
        if expression.has(sym):
            coefficient = complex(sp.diff(expression, sym).subs(numbers))
            assert complex(np.ravel(transfers[name])[0]) == pytest.approx(coefficient, rel=1e-12)


def test_symbolic_noninverting_is_black_formula():
    # Black's feedback formula (Sedra & Smith, Microelectronic Circuits, ch. 2): G = A/(1 + A beta), beta = rg/(rf + rg); the ideal limit 1 + rf/rg
    expression = sp.diff(symbolic("noninverting", gain=A), vin)
    beta = rg / (rf + rg)
    assert sp.simplify(expression - A / (1 + A * beta)) == 0
    assert sp.simplify(sp.limit(expression, A, sp.oo) - (1 + rf / rg)) == 0
