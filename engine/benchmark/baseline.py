"""A batched-solve baseline for `railroom bench`: the Monte Carlo margins as a competent numpy
user would compute them, sharing no circuit code with the engine (this module imports numpy only).

What it reads from outside: the chain's parsed numbers (each stage's block name, part, rails and
component values with their tolerance and tempco, the source, the conditions), the frequencies
the engine's Monte Carlo evaluates, the draw matrix D with its column labels (stage, quantity,
kind, op amp) and each row's dT = |T - 25 C|, so that both see identical parameter values. The
circuit math is its own:

- each op-amp stage is a small modified nodal analysis (MNA) written from the README's block
  topologies: node voltages plus the branch currents of the ideal sources and of the op amp,
  the op amp a voltage-controlled source with V_out / A(s) = V+ + Vos - V-, single pole
  A(s) = A0 / (1 + s A0 / (2 pi GBW)) (Sedra & Smith, ch. 2), its bias currents drawn out of the
  pin nodes. One complex matrix per draw and Laplace point (DC first, then the band), stacked
  (J, F+1, n, n) and solved by numpy.linalg.solve for five right-hand sides at once: the signal
  at 1 V, the fixed sources at their drawn values, 1 V of offset, 1 A into each input pin;
- the worst-case signal is carried stage to stage as the README's Method section states it: per
  frequency the highest and lowest instantaneous value and the AC amplitude, through
  max out = c + e + |g| up + (|H| - |g|) a (min likewise), up = hi or -lo by the sign of the DC
  gain g; the offset enters as a signed shift, the bias currents as a width either way, the
  magnitude of each pin's gain times the drawn |Ib| (the pins' currents are not known to share
  a sign);
- a stage whose checks fail passes its output held between its rails less the headroom (the
  highest it can clip at: no output-current drop);
- the margins are the README's checks: output high / low headroom (grown by the part's output
  resistance times the current sourced / sunk), input common mode at the + pin, output current
  (the op amp's own branch current plus each fed stage's input conductance at its worst over
  the tolerance towards its return, the return widened by the fed op amp's worst offset, plus
  the pins' bias currents: README, Method), slew (2 pi f a at most), supply span, and a
  converter input's window.

Blocks covered: follower, noninverting (no cg), inverting, sallen_key_lowpass (with or without
rf/rg), mfb_lowpass, mfb_bandpass, adc (last in the chain). A chain without `from`, nets,
differential source, load_to or output-headroom curves. Anything else raises ValueError.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

TWO_PI = 2.0 * np.pi
GROUND = "0"
SIGNAL, FIXED, OFFSET, BIAS_PLUS, BIAS_MINUS = range(5)
OPAMP_BLOCKS = ("follower", "noninverting", "inverting", "sallen_key_lowpass", "mfb_lowpass", "mfb_bandpass")


@dataclass(frozen=True)
class Envelope:
    """The signal at a node, per draw and band frequency (J, F): extremes and AC amplitude."""

    hi: np.ndarray
    lo: np.ndarray
    amp: np.ndarray


class Stacked:
    """MNA over stacked points: G (J, P, n, n) x = B (J, P, n, 5), ground is node "0"."""

    def __init__(self, nodes: list[str], rows: int, points: int, branches: int):
        self.index = {name: i for i, name in enumerate(nodes)}
        size = len(nodes) + branches
        self.G = np.zeros((rows, points, size, size), dtype=complex)
        self.B = np.zeros((rows, points, size, 5), dtype=complex)
        self.branch = len(nodes)

    def admit(self, a: str, b: str, y) -> None:
        """An admittance y (broadcasting to (J, P)) between nodes a and b."""
        for p, q in ((a, b), (b, a)):
            if p == GROUND:
                continue
            i = self.index[p]
            self.G[:, :, i, i] += y
            if q != GROUND:
                self.G[:, :, i, self.index[q]] -= y

    def source(self, node: str, column: int, value) -> int:
        """An ideal voltage source from ground to `node`; its branch current flows into the node."""
        k, i = self.branch, self.index[node]
        self.branch += 1
        self.G[:, :, i, k] -= 1.0
        self.G[:, :, k, i] += 1.0
        self.B[:, :, k, column] = value
        return k

    def opamp(self, plus: str, minus: str, out: str, inverse_gain) -> int:
        """V+ - V- - V_out / A = -Vos; its output current flows into `out`; the bias currents
        leave the pin nodes (a current out of a node is a negative injection)."""
        k = self.branch
        self.branch += 1
        o = self.index[out]
        self.G[:, :, o, k] -= 1.0
        for node, sign in ((plus, 1.0), (minus, -1.0)):
            if node != GROUND:
                self.G[:, :, k, self.index[node]] += sign
        self.G[:, :, k, o] -= inverse_gain
        self.B[:, :, k, OFFSET] = -1.0
        for node, column in ((plus, BIAS_PLUS), (minus, BIAS_MINUS)):
            if node != GROUND:
                self.B[:, :, self.index[node], column] -= 1.0
        return k

    def solve(self) -> np.ndarray:
        return np.linalg.solve(self.G, self.B)


class Draws:
    """The rows' parameter values, read from the draw matrix by its column labels."""

    def __init__(self, labels, D: np.ndarray, dT: np.ndarray):
        self.columns: dict[tuple, int] = {}
        for k, label in enumerate(labels):
            self.columns.setdefault(label, k)
        self.D, self.dT = D, dT

    def deviate(self, stage, quantity: str, kind: str, amp: int = 0) -> np.ndarray | float:
        k = self.columns.get((stage, quantity, kind, amp))
        return 0.0 if k is None else self.D[:, k]

    def value(self, stage: int, name: str, q) -> np.ndarray:
        tol = self.deviate(stage, name, "tolerance")
        tc = self.deviate(stage, name, "tempco")
        value = q.value * (1 + (q.tolerance or 0.0) * tol) * (1 + (q.tempco or 0.0) * self.dT * tc)
        return np.broadcast_to(np.asarray(value, dtype=float), self.dT.shape)

    def rail(self, rails, side: str) -> np.ndarray:
        nominal = rails.positive if side == "positive" else rails.negative
        d = self.deviate(None, f"rails.{rails.name}.{side}", "rail")
        return np.broadcast_to(nominal * (1 + rails.tolerance * d), self.dT.shape)


def bias_at(part, temperature: float) -> float:
    """The bias current at a temperature: doubling every N C above 25 C (README, preset file)."""
    if part.bias_current_doubling <= 0 or temperature <= 25.0:
        return part.bias_current
    return part.bias_current * 2.0 ** ((temperature - 25.0) / part.bias_current_doubling)


def hot_bias(part, conditions) -> float:
    """The bias current every check uses: at the chain's hottest temperature."""
    return bias_at(part, max(conditions.temperature))


def inverse_gain(part, s: np.ndarray) -> np.ndarray:
    return (1.0 + s * part.open_loop_gain / (TWO_PI * part.gbw)) / part.open_loop_gain


def stage_network(block: str, v: dict, s: np.ndarray, drive: float, part, rows: int):
    """The stage's MNA and the names of its + pin and the op amp's branch (README, blocks)."""
    ref = "ref" if np.any(v.get("ref", 0.0) != 0.0) else GROUND
    into = "in" if drive and block in ("follower", "noninverting") else "src"
    unity = block == "follower" or (block == "sallen_key_lowpass" and not ("rf" in v and "rg" in v))
    inner = {"noninverting": [], "follower": []}.get(block, ["a"] if block != "inverting" else [])
    if block == "sallen_key_lowpass":
        inner.append("plus")
    nodes = ["src", *inner, *([] if unity else ["minus"]), "out"]
    nodes += [name for name in (into, ref) if name not in (GROUND, "src")]
    net = Stacked(nodes, rows, s.shape[-1], branches=2 + (ref != GROUND))
    net.source("src", SIGNAL, 1.0)
    if ref != GROUND:
        net.source(ref, FIXED, v["ref"][:, None])
    if into != "src":
        net.admit("src", into, 1.0 / drive)
    col = lambda name: v[name][:, None]  # noqa: E731 - (J, 1) against the (J, P) points
    S = s if s.ndim == 2 else s[None, :]  # frequencies per row, or one grid for all
    if "load" in v:
        net.admit("out", GROUND, 1.0 / col("load"))
    minus = "out" if unity else "minus"
    if block in ("follower", "noninverting"):
        plus = into
        if block == "noninverting":
            net.admit("out", "minus", 1.0 / col("rf"))
            net.admit("minus", ref, 1.0 / col("rg"))
    elif block == "inverting":
        plus = ref
        net.admit("src", "minus", 1.0 / (col("rin") + drive))
        net.admit("minus", "out", 1.0 / col("rf"))
    elif block == "sallen_key_lowpass":
        plus = "plus"
        net.admit("src", "a", 1.0 / (col("r1") + drive))
        net.admit("a", "plus", 1.0 / col("r2"))
        net.admit("a", "out", S * col("c1"))
        net.admit("plus", GROUND, S * col("c2"))
        if not unity:
            net.admit("out", "minus", 1.0 / col("rf"))
            net.admit("minus", ref, 1.0 / col("rg"))
    elif block == "mfb_lowpass":
        plus = ref
        net.admit("src", "a", 1.0 / (col("r1") + drive))
        net.admit("a", "out", 1.0 / col("r2"))
        net.admit("a", "minus", 1.0 / col("r3"))
        net.admit("a", ref, S * col("c1"))
        net.admit("out", "minus", S * col("c2"))
    else:  # mfb_bandpass
        plus = ref
        net.admit("src", "a", 1.0 / (col("r1") + drive))
        net.admit("minus", "out", 1.0 / col("r2"))
        net.admit("a", ref, 1.0 / col("r3"))
        net.admit("a", "minus", S * col("c1"))
        net.admit("a", "out", S * col("c2"))
    branch = net.opamp(
        plus, minus, "out", inverse_gain(part, s) if s.ndim == 2 else inverse_gain(part, s)[None, :]
    )
    return net, plus, branch


def node_envelope(x: np.ndarray, signal: Envelope, vos: np.ndarray, ib: np.ndarray) -> Envelope:
    """One node's solution x (J, P, 5) driven by `signal` (module docstring)."""
    g = x[:, 0, SIGNAL].real[:, None]
    magnitude = np.abs(x[:, 1:, SIGNAL])
    shift = (x[:, 0, FIXED].real + x[:, 0, OFFSET].real * vos)[:, None]
    width = ((np.abs(x[:, 0, BIAS_PLUS].real) + np.abs(x[:, 0, BIAS_MINUS].real)) * np.abs(ib))[:, None]
    gain = np.abs(g)
    up = np.where(g >= 0, signal.hi, -signal.lo)
    down = np.where(g >= 0, signal.lo, -signal.hi)
    spare = (magnitude - gain) * signal.amp
    return Envelope(
        shift + width + gain * up + spare, shift - width + gain * down - spare, magnitude * signal.amp
    )


def fed_load(chain, plans, k: int) -> tuple[float, tuple[float, float], bool]:
    """What the stage after k draws (README, Method): (conductance at its worst over the
    tolerance, return span widened by that stage's worst offset, whether the return follows
    the signal)."""
    if k + 1 >= len(plans) or plans[k + 1].block.name == "adc":
        return 0.0, (0.0, 0.0), False
    nxt = plans[k + 1]
    low, high = chain.conditions.temperature
    rise = max(abs(low - 25.0), abs(high - 25.0))
    q = nxt.quantities
    block = nxt.block.name
    if block in ("follower", "noninverting"):
        return 0.0, (0.0, 0.0), False
    r = q["rin"] if block == "inverting" else q["r1"]
    least = r.value * (1 - (r.tolerance or 0.0)) * (1 - (r.tempco or 0.0) * rise)
    ref = q["ref"].value if "ref" in q else 0.0
    offset = nxt.part.offset + nxt.part.offset_drift * rise
    if block == "mfb_lowpass":
        r3 = q["r3"]
        offset += (
            r3.value
            * (1 + (r3.tolerance or 0.0))
            * (1 + (r3.tempco or 0.0) * rise)
            * bias_at(nxt.part, 25.0 + rise)
        )
    return 1.0 / least, (ref - offset, ref + offset), block != "inverting"


def pin_currents(chain, plans, k: int) -> float:
    """The bias currents this output supplies besides: the next op amp's two at their hottest
    (its own - pin's drawn current is in the solve's branch current already, BIAS_MINUS:
    counting it here too, at its hottest, took up to 2 Ib more than the circuit draws)."""
    total = 0.0
    if k + 1 < len(plans) and plans[k + 1].part is not None:
        total += 2.0 * hot_bias(plans[k + 1].part, chain.conditions)
    return total


def run(
    chain, plans, labels, freqs: np.ndarray, D: np.ndarray, dT: np.ndarray
) -> list[dict[str, np.ndarray]]:
    """Every stage's margins for every row of D (see the module docstring)."""
    rows = D.shape[0]
    draws = Draws(labels, D, dT)
    freqs = np.asarray(freqs, dtype=float)
    if freqs.ndim == 2:  # per row (circuit_walk.row_freqs)
        s = 1j * TWO_PI * np.hstack((np.zeros((rows, 1)), freqs))
    else:
        s = 1j * TWO_PI * np.concatenate(([0.0], freqs))
    source = chain.source
    if source.differential:
        raise ValueError("the baseline covers single-ended sources")
    a = np.full((rows, freqs.shape[-1]), source.amplitude)
    signal = Envelope(source.level[1] + a, source.level[0] - a, a)
    drive = source.impedance
    found = []
    for k, plan in enumerate(plans):
        block = plan.block.name
        v = {name: draws.value(plan.index, name, q) for name, q in plan.quantities.items()}
        if block == "adc":
            if k != len(plans) - 1:
                raise ValueError("the baseline covers a converter input only at the chain's end")
            found.append(
                {
                    "input-high": v["high"] - signal.hi.max(axis=1),
                    "input-low": signal.lo.min(axis=1) - v["low"],
                }
            )
            continue
        if block not in OPAMP_BLOCKS or plan.stage.feed is not None:
            raise ValueError(f"the baseline does not cover block {block!r}")
        margins, signal = opamp_stage(chain, plans, k, v, s, drive, draws, signal, freqs)
        drive = 0.0  # an op amp's output drives the next stage (ideal closed-loop source)
        found.append(margins)
    return found


def opamp_stage(chain, plans, k, v, s, drive, draws, signal, freqs):
    plan, part = plans[k], plans[k].part
    rows = draws.dT.shape[0]
    net, plus, branch = stage_network(plan.block.name, v, s, drive, part, rows)
    x = net.solve()
    vos = part.offset * draws.deviate(plan.index, "offset", "offset", 0) + part.offset_drift * draws.dT * (
        draws.deviate(plan.index, "offset", "drift", 0)
    )
    ib = hot_bias(part, chain.conditions) * draws.deviate(plan.index, "bias", "bias", 0)
    vos, ib = np.broadcast_to(vos, (rows,)), np.broadcast_to(ib, (rows,))
    out = node_envelope(x[:, :, net.index["out"]], signal, vos, ib)
    if plus == GROUND:
        pin = Envelope(np.zeros_like(out.hi), np.zeros_like(out.lo), np.zeros_like(out.amp))
    else:
        pin = node_envelope(x[:, :, net.index[plus]], signal, vos, ib)
    current = node_envelope(x[:, :, branch], signal, vos, ib)
    pos, neg = draws.rail(plan.rails, "positive"), draws.rail(plan.rails, "negative")
    out_hi, out_lo = out.hi.max(axis=1), out.lo.min(axis=1)
    conductance, (ret_lo, ret_hi), follows = fed_load(chain, plans, k)
    if follows:
        ret_lo, ret_hi = np.minimum(out_lo, ret_lo), np.maximum(out_hi, ret_hi)
    pins = pin_currents(chain, plans, k)
    sourced = np.maximum(current.hi.max(axis=1), 0.0) + conductance * np.maximum(out_hi - ret_lo, 0.0) + pins
    sunk = np.maximum(-current.lo.min(axis=1), 0.0) + conductance * np.maximum(ret_hi - out_lo, 0.0) + pins
    top = pos - part.output_headroom[0] - part.output_resistance * sourced
    bottom = neg + part.output_headroom[1] + part.output_resistance * sunk
    span = pos - neg
    margins = {
        "output-high": top - out_hi,
        "output-low": out_lo - bottom,
        "input-high": pos - part.input_headroom[0] - pin.hi.max(axis=1),
        "input-low": pin.lo.min(axis=1) - (neg + part.input_headroom[1]),
        "slew": part.slew - (TWO_PI * freqs * out.amp).max(axis=1),
        "current": part.output_current - np.maximum(sourced, sunk),
        "supply": np.minimum(span - part.supply[0], part.supply[1] - span),
    }
    clipped = np.zeros(rows, dtype=bool)
    for check, value in margins.items():
        if check != "supply":
            clipped |= value < 0
    # a clipping row's output sits at most at its rails less the headroom, no current drop
    low = (neg + part.output_headroom[1])[:, None]
    high = (pos - part.output_headroom[0])[:, None]
    half = np.maximum((high - low) / 2.0, 0.0)
    pick = clipped[:, None]
    passed = Envelope(
        np.where(pick, np.clip(out.hi, low, high), out.hi),
        np.where(pick, np.clip(out.lo, low, high), out.lo),
        np.where(pick, np.minimum(out.amp, half), out.amp),
    )
    return margins, passed
