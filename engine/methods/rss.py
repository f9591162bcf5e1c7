"""Root-sum-square: every margin linearised about nominal, quoted at nominal - 3 sigma.

    sigma_m^2 = sum_i (dm/dx_i sigma_i)^2          (ECSS-Q-HB-30-01A, root-sum-square)

with sigma_i = tol_i / sqrt(3) for a uniform tolerance, tol_i / 3 when the tolerance is 3 sigma
(conditions.distribution = "normal"). The derivatives are central differences over the per-circuit
walk (engine/sensitivity.py), taken with temperature drifts over the worst temperature rise.
Output and input spans are quoted the same way: nominal -/+ 3 sigma.
"""

from __future__ import annotations

import numpy as np

from railroom.engine.methods import judged
from railroom.engine.methods.montecarlo import layout_for
from railroom.engine.sensitivity import Linearised, linearise, spread_per_unit

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


def run(chain, plans, freqs, corner_stages, lin: Linearised | None = None):
    lin = lin or linearise(layout_for(chain, plans, freqs, corner_stages, band="full"))
    return results_of(chain, plans, corner_stages, lin.draws, lin)


def results_of(chain, plans, corner_stages, stage_draws, lin: Linearised, clipped_before: bool = False):
    """The quoted results of `plans` from their linearised draws (`lin` reads them; any
    Linearised does); `clipped_before`: a stage before the first of them clips."""
    s = spread_per_unit(chain.conditions.distribution)
    results = []
    for plan, corner, draws in zip(plans, corner_stages, stage_draws):
        amps = []
        for amp in draws.amps:
            stat = {n: quoted(lin, n, x, s) for n, x in amp.items() if n != "spans"}
            stat.update(
                {n: quoted(lin, n, x, s) for n, x in amp["spans"].items() if not n.startswith("window")}
            )
            amps.append(stat)
        out_span = (quoted(lin, "out-low", draws.out_lo, s), quoted(lin, "out-high", draws.out_hi, s))
        window = None
        if plan.block.window_only:
            window = {c: quoted(lin, c, draws.margins[c], s) for c in ("input-high", "input-low")}
        result = judged(plan, corner, amps, out_span, window, chain.conditions.margin, clipped_before)
        clipped_before = clipped_before or result.regime == "clipping"
        results.append(result)
    return results
