"""Small failure probabilities: importance sampling about the most probable failure points.

A board that must show a failure probability of a few parts per million cannot be proved by plain
draws (1e6 draws see about one failure). The draws are made instead in the standard normal space
u of every toleranced value (d = u/3 for normal tolerances, d = 2 Phi(u) - 1 for uniform ones) and
shifted towards the places where a margin is most likely to fail:

1. Design points (first-order reliability method): for each linear check of each stage, the
   linearised margin m(d) = m0 + g.d (engine/aids/sensitivity.py, central differences) is taken into
   u space and the nearest point where it reaches zero is found by the Hasofer-Lind /
   Rackwitz-Fiessler iteration (Hasofer & Lind, J. Eng. Mech. Div. ASCE 100, 1974; Rackwitz &
   Fiessler, Computers & Structures 9, 1978); its distance is the reliability index beta. Under
   uniform tolerances a margin whose linear extreme m0 - sum|g| stays above zero cannot fail.
2. Importance sampling (Melchers, Structural Reliability Analysis and Prediction, 2nd ed., 1999,
   section 3.5): u is drawn from an equal mixture of unit normals centred on the design points
   within 2 of the smallest beta (at most MAX_CENTRES), every draw is walked exactly (the draw
   walk, not the linearisation), and P = mean(1[fail] w) with w = phi(u) / q(u). The interval is
   the estimate +/- 1.96 standard errors of that mean (central limit theorem), floored at 0.

The temperature is drawn as in Monte Carlo (uniform over the range, not shifted). The estimate is
unbiased whatever the design points are; a poor centre only widens the interval. It is the
failure of the chain (any stage leaving its linear regime) and of each stage that is quoted.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from railroom.engine.walks import circuit_walk as dw
from railroom.engine.methods.normal import normal_tail

MAX_CENTRES = 8
BETA_BAND = 2.0  # centres within this of the smallest reliability index
DRAWS = 20_000
CHUNK = 5_000
Z95 = 1.959963984540054  # two-sided 95 % point of the standard normal
NEGLIGIBLE = 1e-12  # quoted as "below" this: no board population makes it observable


@dataclass(frozen=True)
class RareEstimate:
    probability: float  # some stage leaves its linear regime
    low: float  # 95 % interval
    high: float
    draws: int
    stages: tuple[float, ...]  # per stage, the same estimator
    beta: float | None  # smallest reliability index (None: no margin can fail)
    centres: int


def to_deviates(u: np.ndarray, distribution: str) -> np.ndarray:
    """Standard normal u -> the draw walk's deviates d (d = 1 is the full tolerance)."""
    if distribution == "normal":
        return u / 3.0
    # 2 Phi(u) - 1 written through the upper tail, so that d keeps its precision near +/-1
    return np.sign(u) * (1.0 - 2.0 * normal_tail(np.abs(u)))


def _dd_du(u: np.ndarray, distribution: str) -> np.ndarray:
    if distribution == "normal":
        return np.full_like(u, 1.0 / 3.0)
    return 2.0 * np.exp(-0.5 * u * u) / np.sqrt(2.0 * np.pi)


def design_point(
    m0: float, g: np.ndarray, distribution: str, iterations: int = 60
) -> tuple[np.ndarray, float] | None:
    """Nearest u with m0 + g.d(u) = 0 (HL-RF iteration); None when the margin cannot reach 0."""
    if m0 <= 0:
        return np.zeros_like(g), 0.0
    if not np.any(g):
        return None
    if distribution != "normal" and m0 - np.abs(g).sum() >= 0:
        return None  # bounded tolerances: even the worst corner keeps the margin
    u = np.zeros_like(g)
    for _ in range(iterations):
        grad = g * _dd_du(u, distribution)
        value = m0 + g @ to_deviates(u, distribution)
        norm2 = float(grad @ grad)
        if norm2 <= 0:
            return None
        new = (grad @ u - value) / norm2 * grad
        if distribution != "normal":
            new = np.clip(new, -8.0, 8.0)  # d(u) is flat past 8: 2 Phi(8) - 1 = 1 - 1.2e-15
        if np.max(np.abs(new - u)) < 1e-9:
            u = new
            break
        u = new
    if abs(m0 + g @ to_deviates(u, distribution)) > 1e-6 * max(abs(m0), 1e-30):
        return None
    return u, float(np.sqrt(u @ u))


def centres(lin, distribution: str) -> tuple[list[np.ndarray], float | None]:
    """Design points of every linear check of every stage, the nearest ones kept."""
    found = []
    for draws in lin.draws:
        for check, x in draws.margins.items():
            if check == "supply":
                continue
            point = design_point(lin.nominal(x), lin.gradient(x), distribution)
            if point is not None:
                found.append(point)
    if not found:
        return [], None
    found.sort(key=lambda p: p[1])
    beta = found[0][1]
    kept = [u for u, b in found if b <= beta + BETA_BAND][:MAX_CENTRES]
    return kept, beta


def estimate(layout: dw.Layout, lin, draws: int = DRAWS, seed: int = 1, chunk: int = CHUNK) -> RareEstimate:
    """The chain's and each stage's probability of leaving the linear regime, with intervals."""
    chain = layout.chain
    distribution = chain.conditions.distribution
    K = len(layout.variables)
    points, beta = centres(lin, distribution)
    n_stages = len(layout.plans)
    if not points:
        return RareEstimate(0.0, 0.0, 0.0, 0, (0.0,) * n_stages, None, 0)
    C = np.vstack(points)  # (centres, K)
    half_norm2 = 0.5 * np.einsum("ij,ij->i", C, C)
    rng = np.random.default_rng(seed)
    total = total2 = 0.0
    stage_total = np.zeros(n_stages)
    done = 0
    while done < draws:
        rows = min(chunk, draws - done)
        pick = rng.integers(0, len(points), rows)
        u = C[pick] + rng.standard_normal((rows, K))
        # w = phi(u) / mean_c phi(u - c) = 1 / mean_c exp(u.c - |c|^2 / 2), formed stably
        exponent = u @ C.T - half_norm2  # (rows, centres)
        top = exponent.max(axis=1)
        w = np.exp(-top) / np.exp(exponent - top[:, None]).mean(axis=1)
        D = np.asfortranarray(to_deviates(u, distribution))
        dT = dw.row_temperatures(chain, rng.random(rows))
        linear = np.vstack([d.linear for d in dw.walk_draws(layout, D, dT)])
        failed = ~linear.all(axis=0)
        x = np.where(failed, w, 0.0)
        total += float(x.sum())
        total2 += float((x * x).sum())
        stage_total += np.where(~linear, w, 0.0).sum(axis=1)
        done += rows
    p = total / draws
    variance = max(total2 / draws - p * p, 0.0) / draws
    half = Z95 * np.sqrt(variance)
    return RareEstimate(
        p,
        max(p - half, 0.0),
        p + half,
        draws,
        tuple(float(t / draws) for t in stage_total),
        beta,
        len(points),
    )


def wilson(successes: int, n: int) -> tuple[float, float]:
    """95 % Wilson score interval of a binomial share (Wilson, J. Am. Stat. Assoc. 22, 1927)."""
    if n <= 0:
        return 0.0, 1.0
    p = successes / n
    z2 = Z95 * Z95
    centre = (p + z2 / (2 * n)) / (1 + z2 / n)
    half = Z95 * np.sqrt(p * (1 - p) / n + z2 / (4 * n * n)) / (1 + z2 / n)
    return float(max(centre - half, 0.0)), float(min(centre + half, 1.0))


def failing_draws(chain_yield: float, samples: int) -> int:
    """How many of `samples` Monte Carlo draws left the linear regime (the yield is their share)."""
    return int(round((1.0 - chain_yield) * samples))


def yield_words(chain_yield: float, samples: int, rare: RareEstimate | None) -> str:
    """The chain yield as a practitioner quotes it: with its interval, never more digits than
    the draws carry; with no failing draw, that fact and the small-probability estimate."""
    failures = failing_draws(chain_yield, samples)
    if failures == 0:
        words = f"no draw of {samples:,} left the linear regime"
    else:
        low, high = wilson(samples - failures, samples)
        words = (
            f"{chain_yield:.2%} of draws keep every stage linear (95 %: {low:.2%} .. "
            f"{high:.2%}, {samples:,} draws)"
        )
    if rare is not None:
        if rare.beta is None:
            words += "; no failure is possible within the tolerances (the worst case stays linear)"
        elif rare.high < NEGLIGIBLE:
            words += (
                f"; failure probability below {NEGLIGIBLE:g} (nearest failure {rare.beta:.1f} "
                "standard deviations out)"
            )
        else:
            words += (
                f"; failure probability {rare.probability:.2g} (95 %: {rare.low:.2g} .. "
                f"{rare.high:.2g}, importance sampling, {rare.draws:,} draws)"
            )
    return words
