"""Per-draw whole-chain nodal reference: each Monte Carlo row solved as ONE circuit (issue 11).

The engine's draw walk (walks/circuit_walk.py) gives one margin per drawn circuit. Here the same
drawn circuit -- every component value, each op amp's signed offset and bias current, the rails
and the row's temperature read from the very draw matrix D -- is built as a single netlist
(chain_netlist.catalogue_build: every stage loaded by the next, the next stage's pins drawing
their own drawn bias currents, the source through its impedance) and solved by numpy.linalg
(references/nodal.py, modified nodal analysis, Ho, Ruehli and Brennan 1975). Nothing of the
engine's circuit code is used: only its draw matrix, its column labels and the frequencies it
walks, so that both see identical parameter values.

For one circuit every node is  F + T L + Re(a H(f) e^{j phi})  (superposition): F the fixed
sources at their drawn values (offsets, bias currents, refs), L the source level anywhere in its
range, a the source's AC amplitude at any frequency f of the band and any phase. Each extreme is
then exact: F + max(T lo, T hi) + a max_f |H(f)|. The output swing with an output resistance Ro is
taken jointly (README, Method: the upper headroom grows with the current sourced): the upper
margin is pos - hr - max over L, f, phi of (V + Ro max(I, 0)); its largest is at most
max(V_hi, (V + Ro I)_hi) (the phasor V + Ro I taken whole), which is what is used (an exact value
when Ro I adds). The band is read on the engine's frequencies and on a dense log grid besides
(the reference may only find a higher peak there).

Scope: the single-ended chains of the blocks chain_netlist.catalogue_build knows, one line, all
stages linear (the test chains are built so; a clipping row is not a linear circuit).
"""

from __future__ import annotations

import numpy as np

from references.chain_netlist import OpAmp, Stage, catalogue_build

TWO_PI = 2.0 * np.pi


def draw_value(q, d_tol, d_tc, dT):
    """A component's value in a row: nominal (1 + tol d_tol)(1 + tempco dT d_tc) (the draw
    matrix's definition, circuit_walk module docstring)."""
    return q.value * (1 + (q.tolerance or 0.0) * d_tol) * (1 + (q.tempco or 0.0) * dT * d_tc)


class Columns:
    """The draw matrix read by its labels (stage, quantity, kind, op amp) -> column."""

    def __init__(self, variables, D: np.ndarray, dT: np.ndarray):
        self.index: dict[tuple, int] = {}
        self.scale: dict[tuple, float] = {}
        for k, var in enumerate(variables):
            key = (var.stage, var.quantity, var.kind, var.amp)
            self.index.setdefault(key, k)
            self.scale.setdefault(key, var.scale)
        self.D, self.dT = D, dT

    def d(self, stage, quantity, kind, amp=0):
        k = self.index.get((stage, quantity, kind, amp))
        return np.zeros(self.D.shape[0]) if k is None else self.D[:, k]


def rows_reference(
    chain, plans, variables, freqs, D, dT, pins=(1.0, 1.0), dense: int = 80, spans: bool = False
) -> list[dict]:
    """Every stage's margins per row of D (arrays (J,)), from one whole-chain netlist per row.
    `pins`: the signs of the currents into the + and - pins for the row's drawn bias Ib (both
    into the pins as bipolar inputs draw them: (1, 1); opposite, an offset current: (1, -1)).
    `spans`: each op-amp stage's entry also holds its output's extremes over the band
    ("span-low", "span-high": the lowest and highest instantaneous output, V)."""
    cols = Columns(variables, D, dT)
    J = D.shape[0]
    band = chain.source.band
    grid = np.unique(np.concatenate([np.asarray(freqs, float), np.geomspace(band[0], band[1], dense)]))
    stages, units = [], {}
    for k, plan in enumerate(plans):
        i = plan.index
        values = {}
        for name, q in plan.quantities.items():
            x = draw_value(q, cols.d(i, name, "tolerance"), cols.d(i, name, "tempco"), dT)
            if name == "ref":
                units[f"{k}:ref"] = x
            elif name not in ("load",):
                values[name] = x
        part = plan.part
        op = OpAmp()
        if part is not None:
            op = OpAmp(part.open_loop_gain, part.gbw)
            units[f"{k}:offset0"] = part.offset * cols.d(
                i, "offset", "offset"
            ) + part.offset_drift * dT * cols.d(i, "offset", "drift")
            ib = cols.scale.get((i, "bias", "bias", 0), 0.0) * cols.d(i, "bias", "bias")
            units[f"{k}:bias+0"] = pins[0] * ib  # amps INTO each pin (chain_netlist.OpAmp)
            units[f"{k}:bias-0"] = pins[1] * ib
        load = None
        if "load" in plan.quantities:
            q = plan.quantities["load"]
            load = draw_value(q, cols.d(i, "load", "tolerance"), cols.d(i, "load", "tempco"), dT)
        stages.append(Stage(plan.block.name, values, load, op))
    impedance = chain.source.impedance

    def solve(given, f):
        c, nodes = catalogue_build(stages, given, impedance)
        return c.analyse(np.asarray(f, float)), nodes

    fixed, nodes = solve(units, [0.0])
    unit, _ = solve({"level": np.ones(J)}, [0.0])
    ac, _ = solve({"level": np.ones(J)}, grid)
    lo_level, hi_level = chain.source.level
    a = chain.source.amplitude
    w = TWO_PI * grid

    def extremes(kind: str, node: str, ro_with: str | None = None, ro: float = 0.0):
        pick = lambda sol: getattr(sol, kind)[node]  # noqa: E731
        F, T, H = pick(fixed)[:, 0].real, pick(unit)[:, 0].real, pick(ac)
        if ro_with is not None:  # V + Ro I, the phasor taken whole
            F = F + ro * fixed.opamp_currents[ro_with][:, 0].real
            T = T + ro * unit.opamp_currents[ro_with][:, 0].real
            H = H + ro * ac.opamp_currents[ro_with]
        swing = a * np.abs(H).max(axis=-1)
        top = F + np.maximum(T * lo_level, T * hi_level) + swing
        bottom = F + np.minimum(T * lo_level, T * hi_level) - swing
        return bottom, top, np.abs(H)

    found = []
    for plan, nd in zip(plans, nodes):
        part = plan.part
        if part is None:
            if plan.block.name == "adc":
                low, high = extremes("voltages", nd.out)[:2]
                vals = {
                    n: draw_value(q, cols.d(plan.index, n, "tolerance"), 0.0, dT)
                    for n, q in plan.quantities.items()
                }
                found.append({"input-high": vals["high"] - high, "input-low": low - vals["low"]})
            else:
                found.append({})
            continue
        pos = plan.rails.positive * (
            1 + plan.rails.tolerance * cols.d(None, f"rails.{plan.rails.name}.positive", "rail")
        )
        neg = plan.rails.negative * (
            1 + plan.rails.tolerance * cols.d(None, f"rails.{plan.rails.name}.negative", "rail")
        )
        (out, plus), ro = nd.opamps[0], part.output_resistance
        v_lo, v_hi, h = extremes("voltages", out)
        i_lo, i_hi, _ = extremes("opamp_currents", out)
        b_lo, b_hi, _ = extremes("voltages", out, out, ro)
        p_lo, p_hi, _ = extremes("voltages", plus)
        span = pos - neg
        found.append(
            {
                "output-high": pos - part.output_headroom[0] - np.maximum(v_hi, b_hi),
                "output-low": np.minimum(v_lo, b_lo) - (neg + part.output_headroom[1]),
                "input-high": pos - part.input_headroom[0] - p_hi,
                "input-low": p_lo - (neg + part.input_headroom[1]),
                "slew": part.slew - (w * a * h).max(axis=-1),
                "current": part.output_current - np.maximum(i_hi, -i_lo),
                "supply": np.minimum(span - part.supply[0], part.supply[1] - span),
            }
        )
        if spans:
            found[-1].update({"span-low": v_lo, "span-high": v_hi})
    return found
