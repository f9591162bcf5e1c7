"""Which toleranced quantity moves a stage's limiting margin most: linearisation about nominal.

Every toleranced quantity is a column d of the draw walk (engine/walks/circuit_walk.py); the margins are
evaluated at nominal and at d_i = +/-h for each column in one vectorised walk, and the central
difference (m(+h) - m(-h)) / 2h is dm/dd_i: the change of the margin per full tolerance.

    worst case:  share_i = |dm/dd_i| / sum_j |dm/dd_j|          (linear extreme value analysis)
    statistical: share_i = (dm/dd_i s)^2 / sum_j (dm/dd_j s)^2  (root-sum-square, ECSS-Q-HB-30-01A)

with s = 1/sqrt(3) for a uniform tolerance and 1/3 for a normal one (tolerance = 3 sigma). A
field's tolerance and temperature coefficient, and an op amp's offset and its drift, are one
quantity each (the thing a designer changes).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from railroom.engine.walks import circuit_walk as dw
from railroom.engine.verdict.results import Sensitivity

STEP = 1e-3  # h, in units of the full tolerance
SHOWN = 5  # quantities listed per stage
SMALLEST_SHARE = 0.01


@dataclass(frozen=True)
class Linearised:
    layout: dw.Layout
    draws: list[dw.StageDraws]  # row 0 nominal, rows 2i+1 / 2i+2 at d_i = +h / -h
    decisive: np.ndarray | None = None  # draw_walk.decisive_freqs(layout), when asked for

    def nominal(self, x: np.ndarray) -> float:
        return float(x[0])

    def gradient(self, x: np.ndarray) -> np.ndarray:
        return (x[1::2] - x[2::2]) / (2 * STEP)


def linearise(layout: dw.Layout, decisive: bool = False) -> Linearised:
    """Margins at nominal and at +/-h on each column; drifts over the worst temperature rise.

    `decisive`: also find draw_walk.decisive_freqs(layout) in the same walk. Its rows are the
    nominal one (row 0 here already) and the all-high and all-low ones, appended; its
    temperature rise is the same (the largest distance from 25 C). Each row is walked on its own
    (draw_walk module docstring), so sharing the walk changes no row and saves one walk's per-stage overhead."""
    K = len(layout.variables)
    rows = 2 * K + 1
    extra = 2 if decisive and len(layout.freqs) > 2 else 0
    D = np.zeros((rows + extra, K))
    D[1 + 2 * np.arange(K), np.arange(K)] = STEP
    D[2 + 2 * np.arange(K), np.arange(K)] = -STEP
    if extra:
        D[rows], D[rows + 1] = 1.0, -1.0
    rise = layout.chain.conditions.worst_temperature_rise
    if not decisive:
        return Linearised(layout, dw.walk_draws(layout, D, np.full(rows, rise)))
    record: list = []
    draws = dw.walk_draws(layout, D, np.full(rows + extra, rise), record if extra else None)
    freqs = layout.freqs
    if extra:
        freqs = dw.decisive_from(layout, [np.ravel(r)[[0, rows, rows + 1]] for r in record])
        draws = [dw.head_rows(d, rows) for d in draws]
    return Linearised(layout, draws, freqs)


def spread_per_unit(distribution: str) -> float:
    """Standard deviation of d: uniform on [-1, 1] -> 1/sqrt(3); normal with 1 = 3 sigma -> 1/3."""
    return 1.0 / 3.0 if distribution == "normal" else 1.0 / np.sqrt(3.0)


def quantity_name(var: dw.Variable, stage: int) -> str:
    return var.quantity if var.stage == stage else var.label


def quantity_words(name: str) -> str:
    """A quantity id as the detail panel says it: "rails.analog.positive" -> "analog rail +",
    "stage.2.offset" -> "stage 2 offset", "nets.mid" -> "net mid", "inputs.3.r" -> "input 3 r", "bias" -> "bias current"."""
    parts = name.split(".")
    if parts[0] == "rails" and len(parts) == 3:
        return f"{parts[1]} rail {'+' if parts[2] == 'positive' else '-'}"
    if parts[0] == "nets" and len(parts) >= 2:
        return f"net {'.'.join(parts[1:])}"
    prefix = ""
    if parts[0] == "stage" and len(parts) >= 3:
        prefix, parts = f"stage {parts[1]} ", parts[2:]
    if parts[0] == "inputs" and len(parts) == 3:
        own = f"input {parts[1]} {parts[2]}"
    else:
        own = {"bias": "bias current"}.get(".".join(parts), ".".join(parts))
    return prefix + own


def ranking(lin: Linearised, stage: int, check: str | None, statistical: bool) -> tuple[Sensitivity, ...]:
    """The quantities that move `check` of plan index `stage` most, largest share first."""
    margins = lin.draws[stage - 1].margins
    if check is None or check not in margins:
        return ()
    grad = lin.gradient(margins[check])
    weight = grad**2 if statistical else np.abs(grad)
    total = float(weight.sum())
    if total <= 0 or not np.isfinite(total):
        return ()
    shares: dict[str, float] = {}
    for var, w in zip(lin.layout.variables, weight):
        name = quantity_name(var, stage)
        shares[name] = shares.get(name, 0.0) + float(w) / total
    # equal effects (identical inputs) differ only by rounding noise: rank by the share to 12
    # digits, ties in the circuit's own order of quantities, so one chain gives one report
    ordered = sorted(shares.items(), key=lambda item: -round(item[1], 12))
    return tuple(
        Sensitivity(name, share, quantity_words(name))
        for name, share in ordered[:SHOWN]
        if share >= SMALLEST_SHARE
    )


def direction(lin: Linearised, stage: int, check: str, field: str) -> float:
    """d margin / d value of the stage's own field, per full tolerance (sign says which way helps)."""
    margins = lin.draws[stage - 1].margins
    if check not in margins:
        return 0.0
    grad = lin.gradient(margins[check])
    total = 0.0
    for var, g in zip(lin.layout.variables, grad):
        if var.stage == stage and var.quantity == field and var.kind == "tolerance":
            total += float(g)
    return total
