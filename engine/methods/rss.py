"""Root-sum-square: every margin linearised about nominal, quoted at nominal - 3 sigma.

    sigma_m^2 = sum_i (dm/dx_i sigma_i)^2          (ECSS-Q-HB-30-01A, root-sum-square)

with sigma_i = tol_i / sqrt(3) for a uniform tolerance, tol_i / 3 when the tolerance is 3 sigma
(conditions.distribution = "normal"). The derivatives are central differences over the per-circuit
walk (engine/aids/sensitivity.py), taken with temperature drifts over the worst temperature rise.
Output and input spans are quoted the same way: nominal -/+ 3 sigma.
"""

from __future__ import annotations

import numpy as np

from railroom.engine.methods import Outcome, Progress, Setup, judged
from railroom.engine.methods.montecarlo import layout_for
from railroom.engine.aids.sensitivity import Linearised, linearise, spread_per_unit
from railroom.engine.walks.bounds_walk import plan_parents

SIGMAS = 3.0


def three_sigma(lin: Linearised, x: np.ndarray, s: float) -> tuple[float, float]:
    """(nominal, 3 sigma) of a per-row quantity, never wider than the extreme value of the same
    linear model, sum |dm/dx_i| tol_i: 3 sigma of a uniform tolerance is sqrt(3) = 1.73 times
    the tolerance itself, which no circuit can reach (root-sum-square never exceeds the extreme
    values: sqrt(sum (S_i t_i)^2) <= sum |S_i t_i|)."""
    gradient = lin.gradient(x)
    width = SIGMAS * float(np.sqrt(np.sum((gradient * s) ** 2)))
    return lin.nominal(x), min(width, float(np.sum(np.abs(gradient))))


def quoted(lin: Linearised, name: str, x: np.ndarray, s: float) -> float:
    """Margins and lower spans at nominal - 3 sigma; upper spans at nominal + 3 sigma."""
    nominal, width = three_sigma(lin, x, s)
    return (
        nominal + width
        if name.endswith("high") and not name.startswith(("output", "input"))
        else nominal - width
    )


def within_corners(stat: dict, worst) -> dict:
    """rss never quotes a margin below the worst case (the README's rss rule): the linear
    model's extreme can pass the exact corners by a cross term the corners keep (a ratiometric
    net is fraction x rail: the product's corner lies inside the linear extreme by
    tol_f tol_rail x value), so each quoted margin is held at or above the corners'. Spans are
    quoted as the linear model gives them."""
    floors = {
        "output-high": worst.window[1] - worst.output[1],
        "output-low": worst.output[0] - worst.window[0],
        "input-high": worst.input_window[1] - worst.input[1],
        "input-low": worst.input[0] - worst.input_window[0],
        "slew": worst.slew_available - worst.slew_needed,
        "current": worst.current_available - worst.current_needed,
    }
    return {name: max(value, floors[name]) if name in floors else value for name, value in stat.items()}


def run(setup: Setup, progress: Progress | None = None) -> Outcome:
    """Stage results at nominal -/+ 3 sigma of the linearisation (`setup.lin`, built here when
    the caller has none); rss measures no yield."""
    chain, plans, corner_stages = setup.chain, setup.plans, setup.corner_stages
    lin = setup.lin or linearise(layout_for(chain, plans, setup.freqs, corner_stages, band="full"))
    s = spread_per_unit(chain.conditions.distribution)
    results = []
    clipping: list[bool] = []  # per stage: it clips, or a stage up its branch does
    parents = plan_parents(plans)
    for k, (plan, corner) in enumerate(zip(plans, corner_stages)):
        clipped_before = parents[k] >= 0 and clipping[parents[k]]
        draws = lin.draws[k]
        amps = []
        for amp in draws.amps:
            stat = {n: quoted(lin, n, x, s) for n, x in amp.items() if n != "spans"}
            stat.update(
                {n: quoted(lin, n, x, s) for n, x in amp["spans"].items() if not n.startswith("window")}
            )
            amps.append(stat)
        amps = [within_corners(stat, worst) for stat, worst in zip(amps, corner.measure.opamps)]
        out_span = (quoted(lin, "out-low", draws.out_lo, s), quoted(lin, "out-high", draws.out_hi, s))
        window = None
        if plan.block.window_only:
            window = {
                c: max(quoted(lin, c, draws.margins[c], s), corner.margins.get(c, -np.inf))
                for c in ("input-high", "input-low")
            }
        result = judged(plan, corner, amps, out_span, window, chain.conditions.margin, clipped_before)
        clipping.append(clipped_before or result.regime == "clipping")
        results.append(result)
    return Outcome(results)
