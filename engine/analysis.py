"""The engine's one entry point: a loaded chain and its parts in, a judged result out.

result = analyse(chain, parts)                  # method, samples, seed, margin from the file
result = analyse(chain, parts, method="rss")    # or overridden by the caller
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any
from collections.abc import Callable, Mapping

from railroom.engine.verdict.judge import chain_cautions
from railroom.engine.methods import Setup, corners
from railroom.engine.methods import run as run_method
from railroom.engine.circuit.model import Chain, Part
from railroom.engine.circuit.nets import net_cautions
from railroom.engine.circuit.blocks.filters import unstable_cautions
from railroom.engine.aids.headroom import headroom_db
from railroom.engine.walks.gain_error import gain_errors
from railroom.engine.walks.preparation import nominal_band, plan_chain
from railroom.engine.verdict.results import ChainResult

RARE_BELOW = 10  # fewer failing Monte Carlo draws: also estimate the small probability


def with_overrides(
    chain: Chain,
    method: str | None = None,
    samples: int | None = None,
    seed: int | None = None,
    margin: float | None = None,
) -> Chain:
    conditions = chain.conditions
    changes: dict[str, Any] = {  # Conditions fields, each of its own type
        k: v
        for k, v in (("method", method), ("samples", samples), ("seed", seed), ("margin", margin))
        if v is not None
    }
    return replace(chain, conditions=replace(conditions, **changes)) if changes else chain


def analyse(
    chain: Chain,
    parts: Mapping[str, Part],
    *,
    method: str | None = None,
    samples: int | None = None,
    seed: int | None = None,
    margin: float | None = None,
    design_aids: bool = True,
    headroom: bool = True,
    progress=None,
    cancelled: Callable[[], bool] | None = None,
) -> ChainResult:
    """Check every stage of the chain; raises InputError for unknown parts. `design_aids`:
    sensitivity ranking and fixes (engine/aids/fixes.py); `headroom`: the headroom_db search. The
    interface turns both off for the instant re-check and fills them in from a worker.
    `progress(fraction) -> bool` hears how far Monte Carlo is; returning False stops it with
    methods.montecarlo.Cancelled. `cancelled() -> bool` is asked between the phases (the band
    grid, the nominal walk, the corners, the layout and linearisation, the method, the headroom
    search, each stage's fixes) and inside Monte Carlo; True stops the run with Cancelled, so a
    caller whose answer went stale (a newer edit) gets its thread back within one phase."""
    stop = Stopper(cancelled)
    if cancelled is not None:
        progress = keep_going(progress, cancelled)
    chain = with_overrides(chain, method, samples, seed, margin)
    plans = plan_chain(chain, parts)
    stop()
    freqs, walked = nominal_band(chain, plans)
    stop()
    # the nominal walk: the one refining the grid made when it added no point (the same call)
    nominal = (
        walked[1]
        if walked is not None
        else corners.walk(corners.prepare(chain, plans, freqs, nominal=True), nominal=True)
    )
    notes = [
        {"nominal": n.measure.output, "gain_error": e} for n, e in zip(nominal, gain_errors(chain, plans))
    ]
    stop()
    prepared = corners.prepare(chain, plans, freqs)
    stop()
    setup = Setup(chain, plans, freqs, prepared, notes=notes)
    corner_stages = corners.run(setup).stages
    stop()
    stages = corner_stages
    method_name = chain.conditions.method
    chain_yield = None
    # The per-circuit layout and its linearisation serve the statistical method and the design
    # aids alike: built once here from the prepared responses rather than once by each.
    layout = lin = None
    if method_name != "corners" or design_aids:
        from railroom.engine.walks.circuit_walk import build_layout

        layout = build_layout(chain, plans, freqs, prepared, corner_stages)
        stop()
    if method_name == "rss" or design_aids:
        from railroom.engine.aids.sensitivity import linearise

        assert layout is not None  # built above: rss is not corners
        lin = linearise(layout, decisive=method_name == "montecarlo")
        stop()
    if method_name != "corners":
        outcome = run_method(replace(setup, corner_stages=corner_stages, layout=layout, lin=lin), progress)
        stages, chain_yield = outcome.stages, outcome.chain_yield
        stop()
    rare = None
    if method_name == "montecarlo" and chain_yield is not None and layout is not None:
        from railroom.engine.methods.rare import estimate, failing_draws

        if failing_draws(chain_yield, chain.conditions.samples) < RARE_BELOW:
            from railroom.engine.aids.sensitivity import linearise

            rare = estimate(layout, lin or linearise(layout), seed=chain.conditions.seed)
            stop()
    headroom_found = headroom_db(prepared, corner_stages, stop=stop) if headroom else None
    stop()
    if design_aids:
        from railroom.engine.aids.fixes import design_aids as aids

        stages = aids(
            chain,
            plans,
            freqs,
            stages,
            corner_stages,
            headroom_found,
            lin=lin,
            baseline=corner_stages if method_name == "montecarlo" else stages,
            stop=stop,
        )
    from railroom.engine.circuit.part_limits import with_limit_cautions

    stages = with_limit_cautions(chain, plans, stages, prepared.responses)
    stages = with_gains(stages, prepared)
    return ChainResult(
        chain=chain,
        method=method_name,
        samples=chain.conditions.samples if method_name == "montecarlo" else None,
        stages=tuple(stages),
        go=all(s.go for s in stages),
        headroom_db=headroom_found,
        cautions=(
            *chain_cautions(chain),
            *net_cautions(chain, plans),
            *corners.summed_cautions(prepared),
            *unstable_cautions(plans, prepared.values),
        ),
        chain_yield=chain_yield,
        rare=rare,
    )


class Stopper:
    """stop(): raises methods.montecarlo.Cancelled once `cancelled()` says so (never without one)."""

    def __init__(self, cancelled: Callable[[], bool] | None):
        self.cancelled = cancelled

    def __call__(self) -> None:
        if self.cancelled is not None and self.cancelled():
            from railroom.engine.methods.montecarlo import Cancelled

            raise Cancelled()


def keep_going(progress, cancelled: Callable[[], bool]):
    """A Monte Carlo progress callback that also says stop once `cancelled()` does."""

    def heard(fraction: float) -> bool:
        if cancelled():
            return False
        return True if progress is None else bool(progress(fraction))

    return heard


def with_gains(stages, prepared) -> list:
    """Each stage's gain and gain from the source (engine/walks/gains.py), over the corners."""
    from railroom.engine.walks.gains import stage_gains

    return [
        replace(s, measure=replace(s.measure, gain=own, gain_from_source=total))
        for s, (own, total) in zip(stages, stage_gains(prepared))
    ]
