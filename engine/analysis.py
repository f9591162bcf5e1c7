"""The engine's one entry point: a loaded chain and its parts in, a judged result out.

    result = analyse(chain, parts)                  # method, samples, seed, margin from the file
    result = analyse(chain, parts, method="rss")    # or overridden by the caller
"""
from __future__ import annotations

from dataclasses import replace
from typing import Mapping

import numpy as np

from railroom.engine.checks import chain_cautions
from railroom.engine.methods import corners
from railroom.engine.model import Chain, InputError, Part
from railroom.engine.plan import frequency_grid, plan_chain
from railroom.engine.results import ChainResult

HEADROOM_LIMIT_DB = 120.0


def with_overrides(chain: Chain, method: str | None = None, samples: int | None = None,
                   seed: int | None = None, margin: float | None = None) -> Chain:
    conditions = chain.conditions
    changes = {k: v for k, v in (("method", method), ("samples", samples), ("seed", seed),
                                 ("margin", margin)) if v is not None}
    return replace(chain, conditions=replace(conditions, **changes)) if changes else chain


def band_grid(chain: Chain, plans) -> np.ndarray:
    from railroom.engine.methods.corners import corner_values
    rise = chain.conditions.worst_temperature_rise
    critical = [p.block.critical_frequencies(corner_values(p, rise)) for p in plans
                if not p.block.saturates]
    return frequency_grid(chain, critical, chain.source.amplitude)


def analyse(chain: Chain, parts: Mapping[str, Part], *, method: str | None = None,
            samples: int | None = None, seed: int | None = None,
            margin: float | None = None, design_aids: bool = True) -> ChainResult:
    """Check every stage of the chain; raises InputError for unknown parts. `design_aids`:
    sensitivity ranking and fixes (engine/fixes.py)."""
    chain = with_overrides(chain, method, samples, seed, margin)
    plans = plan_chain(chain, parts)
    freqs = band_grid(chain, plans)
    nominal = corners.run(corners.prepare(chain, plans, freqs, nominal=True), nominal=True)
    notes = [{"nominal": n.measure.output, "gain_error": e}
             for n, e in zip(nominal, gain_errors(chain, plans))]
    prepared = corners.prepare(chain, plans, freqs)
    stages = corners.run(prepared, notes=notes)
    method_name = chain.conditions.method
    chain_yield = None
    corner_stages = stages
    if method_name != "corners":
        from railroom.engine.methods import run_statistical
        stages, chain_yield = run_statistical(method_name, chain, plans, freqs, stages)
    headroom = headroom_db(prepared)
    if design_aids:
        from railroom.engine.fixes import design_aids as aids
        stages = aids(chain, plans, freqs, stages, corner_stages, headroom)
    return ChainResult(
        chain=chain, method=method_name,
        samples=chain.conditions.samples if method_name == "montecarlo" else None,
        stages=tuple(stages), go=all(s.go for s in stages),
        headroom_db=headroom, cautions=tuple(chain_cautions(chain)),
        chain_yield=chain_yield,
    )


def gain_errors(chain: Chain, plans) -> list[float | None]:
    """Closed-loop gain shortfall at the top of the band against the ideal op amp, nominal values."""
    from railroom.engine.methods.corners import corner_values
    from railroom.engine.opamp import inverse_open_loop, laplace_grid
    s = laplace_grid(np.array([chain.source.band[1]]))
    errors: list[float | None] = []
    differential = chain.source.differential
    for plan in plans:
        if plan.block.saturates or plan.part is None:
            errors.append(None)
            differential = False
            continue
        v = corner_values(plan, 0.0, nominal=True)
        real = plan.block.respond(v, s, inverse_open_loop(plan.part, s), 0.0, differential).output
        ideal = plan.block.respond(v, s, inverse_open_loop(None, s), 0.0, differential).output
        signal = ("pos", "neg") if differential else ("in",)
        h_real = sum(real.transfers.get(k, 0) * (-1) ** i for i, k in enumerate(signal))
        h_ideal = sum(ideal.transfers.get(k, 0) * (-1) ** i for i, k in enumerate(signal))
        magnitude = abs(complex(np.ravel(h_ideal)[-1]))
        errors.append(None if magnitude == 0 else
                      float(1.0 - abs(complex(np.ravel(h_real)[-1])) / magnitude))
        differential = False
    return errors


def headroom_db(prepared: corners.Prepared) -> float | None:
    """dB the source AC amplitude may rise (negative: must fall) before a stage leaves the linear
    regime; None without an AC part or when DC alone already fails. Bisection on the amplitude."""
    if prepared.chain.source.amplitude <= 0:
        return None

    def linear(db: float) -> bool:
        results = corners.run(prepared, scale=10 ** (db / 20))
        return all(r.regime != "clipping" for r in results)

    low, high = -HEADROOM_LIMIT_DB, HEADROOM_LIMIT_DB
    if not linear(low):
        return None
    if linear(high):
        return high
    while high - low > 0.01:
        middle = (low + high) / 2
        low, high = (middle, high) if linear(middle) else (low, middle)
    return round(low, 2)


def load_checked(path: str, extra_preset_dirs: tuple[str, ...] = ()):
    """Read a chain file and the preset library it searches; raises InputError on any problem
    that stops the check (a broken preset file only matters when a stage needs its part)."""
    from railroom.engine.files import load_chain
    from railroom.engine.presets import load_library, search_order
    chain = load_chain(path)
    library = load_library(search_order(chain.preset_dirs, extra_preset_dirs))
    try:
        plan_chain(chain, library.parts)
    except InputError as err:
        raise InputError([*err.problems, *library.problems]) from None
    return chain, library
