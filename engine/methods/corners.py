"""Extreme value analysis: every corner of each stage's tolerance box, carried stage to stage.

Each stage enumerates the 2^k corners of its own toleranced values (resistor tolerance and tempco
over the worst temperature, toleranced references); offsets and bias currents are independent
+/- terms added exactly; rails enter at both ends through the windows; the source at both ends of
each range and the AC part at +/- its peak over every band frequency. The signal between stages is
carried as bounds (see propagation.py): exact for DC and flat-band stages, outside bounds
otherwise (ECSS-Q-HB-30-01A, extreme value analysis).
"""
from __future__ import annotations

import itertools
from dataclasses import dataclass, field

import numpy as np

from railroom.engine.blocks.base import BlockResponse
from railroom.engine.model import Chain, InputError, Problem
from railroom.engine.opamp import inverse_open_loop, laplace_grid
from railroom.engine.plan import StagePlan, spread
from railroom.engine.propagation import DifferentialSignal, Signal, source_signal
from railroom.engine.stage_walk import walk_chain

MAX_CORNER_BITS = 14          # 16384 corners of one stage's own values


@dataclass(frozen=True)
class Prepared:
    """Everything that does not depend on the source amplitude: computed once per change."""

    chain: Chain
    plans: list[StagePlan]
    freqs: np.ndarray
    values: list[dict[str, np.ndarray]]
    responses: list[BlockResponse | None]
    # what walks of this Prepared may keep for the next walk (stage_walk: node terms)
    memo: dict = field(default_factory=dict, compare=False, repr=False)


class TooManyCorners(InputError):
    """A stage with more toleranced values than its corners can be enumerated for."""

    def __init__(self, plan: StagePlan, count: int):
        stage = plan.stage
        super().__init__([Problem(
            plan.path, stage.line, f"stage.{plan.index}",
            f"stage {plan.index} ({stage.name!r}) has {count} toleranced values (with the source "
            f"impedance and tempcos); the worst case enumerates every corner of at most "
            f"{MAX_CORNER_BITS} per stage ({2 ** MAX_CORNER_BITS} corners) and never holds one "
            "fixed: give fewer values a tolerance, or split the stage")])


def corner_values(plan: StagePlan, temperature_rise: float, nominal: bool = False,
                  drive: tuple[float, float] | None = None) -> dict[str, np.ndarray]:
    """Every corner of the stage's own toleranced values as column arrays (J, 1).

    `drive` is the range of the resistance driving the stage (a toleranced divider before it):
    its ends are enumerated as one more corner, key "drive", independent of the divider's own
    values, which bounds the true extremes from outside."""
    ends = {name: ((q.value, q.value) if nominal else spread(q, temperature_rise))
            for name, q in plan.quantities.items()}
    if drive is not None:
        ends["drive"] = drive
    varying = [name for name, (lo, hi) in ends.items() if lo != hi]
    if len(varying) > MAX_CORNER_BITS:
        # never hold a toleranced value fixed: a value left at one end can hide the worst case
        raise TooManyCorners(plan, len(varying))
    count = 2 ** len(varying)
    values = {name: np.full((count, 1), ends[name][0]) for name in ends}
    if varying:
        bits = np.array(list(itertools.product((0, 1), repeat=len(varying))), dtype=bool)
        for column, name in enumerate(varying):
            lo, hi = ends[name]
            values[name] = np.where(bits[:, column], hi, lo)[:, None]
    return values


def prepare(chain: Chain, plans: list[StagePlan], freqs: np.ndarray, nominal: bool = False,
            ideal: bool = False, reuse: Prepared | None = None, first: int = 0) -> Prepared:
    """Corner values and block responses of every stage. `reuse`: a Prepared of the same chain
    whose stages before `first` are unchanged: theirs are kept and only `first` onwards are
    recomputed (what a stage drives depends only on the stages before it)."""
    rise = chain.conditions.worst_temperature_rise
    s = laplace_grid(freqs)
    values, responses = [], []
    drive = (chain.source.impedance, chain.source.impedance)
    differential = chain.source.differential
    if reuse is not None and first > 0:
        values, responses = list(reuse.values[:first]), list(reuse.responses[:first])
        before, response = plans[first - 1], reuse.responses[first - 1]
        if response is not None:
            drive = response.output_resistance_span or (response.output_resistance,) * 2
        else:
            drive = (before.part.output_resistance if before.part else 0.0,) * 2
        differential = False
    for plan in plans[len(values):]:
        v = corner_values(plan, rise, nominal, drive)
        inverse_gain = inverse_open_loop(None if ideal else plan.part, s)
        response = None
        if not plan.block.saturates:
            response = plan.block.respond(v, s, inverse_gain, v["drive"], differential)
            drive = response.output_resistance_span or (response.output_resistance,) * 2
        else:
            drive = (plan.part.output_resistance if plan.part else 0.0,) * 2
        differential = False
        values.append(v)
        responses.append(response)
    return Prepared(chain, plans, freqs, values, responses)


def start_signal(chain: Chain, freqs: np.ndarray, scale: float = 1.0) -> Signal | DifferentialSignal:
    source = chain.source
    if source.differential:
        return DifferentialSignal(source.level, source.difference, source.amplitude * scale)
    return source_signal(source.level, source.amplitude * scale, freqs)


def run(prepared: Prepared, scale: float = 1.0, nominal: bool = False, notes=None,
        entering: list | None = None):
    """Stage measures and verdicts for one source amplitude scale; `notes` are per-stage measure
    fields known beforehand (nominal span, gain error); `entering` receives each stage's input."""
    return walk_chain(prepared, start_signal(prepared.chain, prepared.freqs, scale), nominal, notes,
                      entering=entering)


def run_from(prepared: Prepared, first: int, signal, stop: int | None = None) -> list:
    """Verdicts of stages `first` to `stop` (not included; the last by default), fed `signal`
    (recorded by `run(..., entering=...)`)."""
    return walk_chain(prepared, signal, first=first, stop=stop)
