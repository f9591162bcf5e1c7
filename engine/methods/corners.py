"""Extreme value analysis: every corner of each stage's tolerance box, carried stage to stage.

Each stage enumerates the 2^k corners of its own toleranced values (resistor tolerance and tempco
over the worst temperature, toleranced references); offsets and bias currents are independent
+/- terms added exactly; rails enter at both ends through the windows; values several stages
share (named nets, and the rail a ratiometric net follows) take one value per walk: the chain is
walked once per joint corner of them and the envelope kept (methods/joint.py); the source at both ends of
each range and the AC part at +/- its peak over every band frequency. The signal between stages is
carried as bounds (see walks/signal_bounds.py): exact for DC and flat-band stages, outside bounds
otherwise (ECSS-Q-HB-30-01A, extreme value analysis).
"""

from __future__ import annotations

import itertools
from collections.abc import Callable
from functools import partial
from dataclasses import dataclass, field, replace

import numpy as np

from railroom.engine.circuit.blocks.base import BlockResponse
from railroom.engine.circuit.blocks.gain import SUMMED_AC, SUMMED_HIGH, SUMMED_LOW
from railroom.engine.circuit.model import Chain, InputError, Problem
from railroom.engine.circuit.opamp import inverse_open_loop, laplace_grid
from railroom.engine.walks.preparation import StagePlan, spread
from railroom.engine.walks.signal_bounds import DifferentialSignal, Signal, source_signal
from railroom.engine.walks.bounds_walk import plan_parents, tree_children, walk_chain
from railroom.engine.walks.sibling_loads import family_start, family_views, passive_feeding_several
from railroom.engine.methods.joint import envelope
from railroom.engine.walks import reuse as kept
from railroom.engine.circuit.nets import joint_plans

MAX_CORNER_BITS = 14  # 16384 corners of one stage's own values


@dataclass(frozen=True)
class Prepared:
    """Everything that does not depend on the source amplitude: computed once per change."""

    chain: Chain
    plans: list[StagePlan]
    freqs: np.ndarray
    values: list[dict[str, np.ndarray]]
    responses: list[BlockResponse | None]
    # per stage: its rows pair with every row of the passive stage before it (joint corners of
    # the two: the walk hands that stage's bounds on row by row instead of merged)
    joint: tuple[bool, ...] = ()
    # stage -> how it meets the passive stage before it when that one feeds several stages
    # (walks/sibling_loads.py: the node loaded by the others)
    views: dict = field(default_factory=dict, compare=False, repr=False)
    # what walks of this Prepared may keep for the next walk (walks/bounds_walk.py: node terms)
    memo: dict = field(default_factory=dict, compare=False, repr=False)
    # one Prepared per joint corner of the values stages share (named nets, the rails that
    # ratiometric nets follow: engine/circuit/nets.py); `run` walks each and takes the envelope
    joint_walks: tuple[Prepared, ...] = ()


class TooManyCorners(InputError):
    """A stage with more toleranced values than its corners can be enumerated for."""

    def __init__(self, plan: StagePlan, count: int, drives: int = 1):
        stage = plan.stage
        driven = (
            f" met by each of {drives} driving impedances (the corners of the passive stages before it)"
            if drives > 1
            else ""
        )
        super().__init__(
            [
                Problem(
                    plan.path,
                    stage.line,
                    f"stage.{plan.index}",
                    f"stage {plan.index} ({stage.name!r}) has {count} toleranced values{driven}; the "
                    f"worst case enumerates every corner of at most {MAX_CORNER_BITS} per stage "
                    f"({2**MAX_CORNER_BITS} corners) and never holds one fixed: give fewer values a "
                    "tolerance, or split the stage",
                )
            ]
        )


def corner_values(
    plan: StagePlan,
    temperature_rise: float,
    nominal: bool = False,
    drive: np.ndarray | tuple[float, float] | None = None,
    summed: bool = True,
) -> dict[str, np.ndarray]:
    """Every corner of the stage's own toleranced values as column arrays (J, 1); past the
    limit a summing stage's fixed inputs taken together (summed_inputs) unless `summed` is False.

    `drive` holds the impedances that may drive the stage (drive_candidates: the Thevenin
    impedance of a passive stage before it at each of its corners, rows (n, F+1) over s, or a
    resistance range (lo, hi)); each is enumerated against every corner of the stage's own
    values, key "drive" (J, F+1), independent of the stage before, which bounds the true
    extremes from outside."""
    ends = {
        name: ((q.value, q.value) if nominal else spread(q, temperature_rise))
        for name, q in plan.quantities.items()
    }
    varying = [name for name, (lo, hi) in ends.items() if lo != hi]
    candidates = None
    if drive is not None:
        candidates = (
            np.unique(np.atleast_1d(np.asarray(drive, dtype=float)))[:, None]
            if isinstance(drive, tuple)
            else np.asarray(drive)
        )
    choices = 1 if candidates is None else candidates.shape[0]
    groups = exchangeable_inputs(plan, ends, varying)
    if groups:
        columns, table = grouped_table(varying, groups)
    else:
        columns, table = varying, None
    count = 2 ** len(varying) if table is None else table.shape[0]
    if count * choices > 2**MAX_CORNER_BITS:
        together = summed_inputs(plan, ends, varying, choices) if summed else None
        if together is None:
            # never hold a toleranced value fixed: a value left at one end can hide the worst case
            raise TooManyCorners(plan, len(varying), choices)
        values, count = together
    else:
        values = corner_table(ends, varying, columns, table, count)
    if candidates is not None:
        # the driving impedance varies fastest: own corner i meets every candidate in turn
        values = {name: np.repeat(x, choices, axis=0) for name, x in values.items()}
        values["drive"] = np.tile(candidates, (count, 1))
    return values


def corner_table(
    ends: dict[str, tuple[float, float]],
    varying: list[str],
    columns: list[str],
    table: np.ndarray | None,
    count: int,
) -> dict[str, np.ndarray]:
    """The corner rows of `columns` (True: the high end; every corner when `table` is None)."""
    values = {name: np.full((count, 1), ends[name][0]) for name in ends}
    if varying:
        if table is None:
            table = np.array(list(itertools.product((0, 1), repeat=len(varying))), dtype=bool)
        for column, name in enumerate(columns):
            lo, hi = ends[name]
            values[name] = np.where(table[:, column], hi, lo)[:, None]
    return values


def summed_inputs(
    plan: StagePlan, ends: dict[str, tuple[float, float]], varying: list[str], choices: int
) -> tuple[dict[str, np.ndarray], int] | None:
    """A summing stage's corner rows with its fixed inputs taken together, for when their
    corners are too many to enumerate (None for any other stage, or still too many).

    The block reads its fixed inputs only through Y = sum 1/r and sum v/r (blocks/gain.py,
    Summing), that is through Y and S = sum (v - ref0)/r, ref0 the nominal ref (the current
    into a - pin held at ref0). Each is a sum of independent per-input terms, so every true
    (Y, S) lies in the box [sum of the least 1/r, sum of the largest] x [sum of the least
    (v - ref0)/r, sum of the largest] (each r and v at its spread ends, tempcos included); the
    output's numerator is affine in (T, S) as in (T, sum v/r). For the rest of the stage fixed, every
    DC figure the walk reads (the output's fixed part, gain, offset and bias terms, the - pin,
    the output current's fixed, signal and offset terms) is affine in u = 1/D0 with
    D0 = T/A0 + 1/rf, T = 1/rin + 1/rf + Y (their transfers share that denominator), u is
    monotone in Y, and the per-row bounds are convex in u and affine in S (interval sums of
    affine terms, |H| - G times the larger or smaller amplitude): their extremes over the box
    sit at its 4 corners. The AC gains |H(f)| fall with Y (|T/A(f) + 1/rf| grows with T when
    Re(1/A) > 0 and Re T > 0) and enter the bounds only rising with |H|, so each corner is taken
    with the band frequencies solved at both ends of Y (SUMMED_AC): the largest gain with the
    worst DC part of any Y, and the smallest for the lower amplitude bound. The one term not
    affine in u, the bias current's share of the output current, is taken at its largest over
    the Y range in every row, and the input terminal's band gain (a passive stage before reads
    it), which need not be monotone in Y, at its largest or smallest over it (Summing.respond). Every input is written r = n/Y, v = S/Y + ref0,
    which sums back to (Y, S). 8 rows per corner of the other values: an outside bound (summed_cautions)."""
    if "inputs" not in plan.block.fields:
        return None
    members = sorted({name.rsplit(".", 1)[0] for name in ends if name.startswith("inputs.")})
    others = [name for name in varying if not name.startswith("inputs.")]
    count = 2 ** len(others) * 8
    if not members or count * choices > 2**MAX_CORNER_BITS:
        return None
    r = np.array([ends[f"{m}.r"] for m in members])  # (n, 2): least and largest
    v = np.array([ends[f"{m}.v"] for m in members])
    g = 1.0 / r[:, ::-1]  # least and largest conductance
    # the current each input drives into the - pin held at the + input's nominal voltage: the
    # ideal output reads only this sum (out = ref + rf (ref - vin)/rin + rf sum (ref - v)/r),
    # so its box is far narrower than that of sum v/r, which moves with Y at ref != 0
    at = plan.quantities["ref"].value if "ref" in plan.quantities else 0.0
    terms = (v[:, :, None] - at) / r[:, None, :]  # every end of v over every end of r
    flat = terms.reshape(len(members), -1)
    n = len(members)
    eps = np.finfo(float).eps
    # outward by more than the rounding of a sum of n terms (and of the block summing them back)
    g_slack = 8 * n * eps * g[:, 1].sum()
    s_slack = 8 * n * eps * (np.abs(flat).max(axis=1).sum() + abs(at) * g[:, 1].sum())
    g_ends = (g[:, 0].sum() - g_slack, g[:, 1].sum() + g_slack)
    s_ends = (flat.min(axis=1).sum() - s_slack, flat.max(axis=1).sum() + s_slack)
    box = np.array(list(itertools.product(g_ends, s_ends, g_ends)))  # (8, 3): Y at DC, S, Y in band
    base = corner_table(ends, others, others, None, 2 ** len(others))
    values = {name: np.repeat(x, 8, axis=0) for name, x in base.items()}
    rows = np.tile(box, (2 ** len(others), 1))
    y_dc, s_sum, y_ac = rows[:, :1], rows[:, 1:2], rows[:, 2:]
    for m in members:
        values[f"{m}.r"] = n / y_dc
        values[f"{m}.v"] = s_sum / y_dc + at
    values[SUMMED_AC] = y_ac
    values[SUMMED_LOW] = np.full_like(y_ac, g_ends[0])
    values[SUMMED_HIGH] = np.full_like(y_ac, g_ends[1])
    return values, count


def summed_cautions(prepared: Prepared) -> list[str]:
    """Said for every stage whose fixed inputs were taken together (summed_inputs)."""
    found = []
    rise = prepared.chain.conditions.worst_temperature_rise
    for plan, values in zip(prepared.plans, prepared.values):
        if SUMMED_AC not in values:
            continue
        ends = [spread(q, rise) for q in plan.quantities.values()]
        count = sum(lo != hi for lo, hi in ends)
        inputs = sum(name.startswith("inputs.") and name.endswith(".r") for name in plan.quantities)
        found.append(
            f"stage {plan.index} ({plan.stage.name!r}): {count} toleranced values have more "
            f"corners than the worst case enumerates ({2**MAX_CORNER_BITS} per stage), so its "
            f"{inputs} fixed inputs are taken together: their summed conductance and summed "
            "current each at both ends, in every combination. That is an outside bound: this "
            "stage's spans may be wider and its margins smaller than the true worst case"
        )
    return found


def exchangeable_inputs(
    plan: StagePlan, ends: dict[str, tuple[float, float]], varying: list[str]
) -> list[list[tuple[str, ...]]]:
    """Groups (two or more) of a summing stage's fixed inputs that are interchangeable: the same
    ends of r and of v. The block reads its fixed inputs only through sums over them
    (blocks/gain.py: 1/r and v/r summed at the - input), so its response at a corner depends
    only on how many of a group's members sit in each state, not on which: the multisets of
    states are every distinct corner, C(m + s - 1, s - 1) of them for m members of s states
    instead of s^m, which is exact. Each member is the tuple of its varying names."""
    if "inputs" not in plan.block.fields:
        return []
    by_key: dict[tuple, list[tuple[str, ...]]] = {}
    for name in ends:
        if name.startswith("inputs.") and name.endswith(".r"):
            member = name[: -len(".r")]
            key = (ends[name], ends[f"{member}.v"])  # both ends of both, varying or not
            names = tuple(n for n in (name, f"{member}.v") if n in varying)
            if names:
                by_key.setdefault(key, []).append(names)
    return [group for group in by_key.values() if len(group) >= 2]


def grouped_table(varying: list[str], groups: list[list[tuple[str, ...]]]) -> tuple[list[str], np.ndarray]:
    """Columns and corner rows (True: the high end) with each group of exchangeable inputs
    enumerated by its multisets of member states (exchangeable_inputs) and every other varying
    value at both ends."""
    grouped = {name for group in groups for member in group for name in member}
    factors: list[tuple[list[str], np.ndarray]] = [
        ([name], np.array([[False], [True]])) for name in varying if name not in grouped
    ]
    for group in groups:
        width = len(group[0])  # varying names per member: r, v or both
        states = np.array(list(itertools.product((False, True), repeat=width)), dtype=bool)
        picks = np.array(
            list(itertools.combinations_with_replacement(range(len(states)), len(group))), dtype=int
        )
        names = [name for member in group for name in member]
        factors.append((names, states[picks].reshape(len(picks), -1)))
    columns: list[str] = []
    table = np.zeros((1, 0), dtype=bool)
    for names, patterns in factors:
        n = patterns.shape[0]
        table = np.hstack([np.repeat(table, n, axis=0), np.tile(patterns, (table.shape[0], 1))])
        columns += names
    return columns, table


def drive_candidates(impedance: np.ndarray) -> np.ndarray:
    """The distinct driving impedances over the corners of the stage before, rows (n, W).

    A real impedance flat over frequency (a divider behind resistances) keeps its two ends as
    (n, 1) rows, as a series resistance moves every response one way; a frequency-dependent one
    (a Thevenin impedance with a capacitor in it) keeps every distinct corner's curve."""
    z = np.atleast_2d(np.asarray(impedance))
    scale = float(np.max(np.abs(z))) or 1.0
    flat = np.allclose(z, z[:, :1], rtol=1e-12, atol=1e-12 * scale)
    if flat and not np.any(np.abs(z.imag) > 1e-12 * scale):
        resistance = z[:, 0].real
        return np.unique([resistance.min(), resistance.max()])[:, None]
    key = np.round(np.hstack((z.real, z.imag)) / scale, 12)
    _, first = np.unique(key, axis=0, return_index=True)
    return z[np.sort(first)]


def next_drive(plan: StagePlan, response: BlockResponse | None) -> np.ndarray:
    """What drives the stage after this one, taken apart from this stage's corners: its
    distinct impedances (drive_candidates)."""
    if response is None:  # saturated by design: the op amp's own output resistance
        return np.array([[plan.part.output_resistance if plan.part else 0.0]])
    if response.output_impedance is not None:
        return drive_candidates(response.output_impedance)
    low, high = response.output_resistance_span or (response.output_resistance,) * 2
    return np.unique([low, high])[:, None]


def stage_values(
    plan: StagePlan, rise: float, nominal: bool, before: BlockResponse | None, before_rows: int, drive
) -> tuple[dict[str, np.ndarray], bool]:
    """The stage's corner values and whether they pair with every row of the passive stage
    before it. After a passive stage (its Thevenin impedance known per row) the stage's own
    corners are enumerated jointly with that stage's: row i*n + j is own corner i with the
    passive stage's row j, its voltage and its impedance together, which is exact. When the
    joint count passes the limit the impedance is enumerated apart (`drive()`: its distinct
    values, found only then), a bound from outside. A saturated stage never pairs. The stage's
    own corners are taken together (summed_inputs) only when neither way enumerates them."""
    impedance = None
    if before is not None and before.output_impedance is not None and not plan.block.saturates:
        impedance = np.atleast_2d(before.output_impedance)
        impedance = np.broadcast_to(impedance, (before_rows, impedance.shape[-1]))
        try:
            return corner_values(plan, rise, nominal, impedance, summed=False), True
        except TooManyCorners:
            pass
    candidates = drive()
    try:
        return corner_values(plan, rise, nominal, candidates, summed=False), False
    except TooManyCorners:
        if impedance is not None:
            try:
                return corner_values(plan, rise, nominal, impedance), True
            except TooManyCorners:
                pass
        return corner_values(plan, rise, nominal, candidates), False


def prepare(
    chain: Chain,
    plans: list[StagePlan],
    freqs: np.ndarray,
    nominal: bool = False,
    ideal: bool = False,
    reuse: Prepared | None = None,
    first: int = 0,
    stop: int | None = None,
) -> Prepared:
    """Corner values and block responses of every stage. `reuse`: a Prepared of the same chain
    whose stages before `first` are unchanged: theirs are kept and only `first` onwards are
    recomputed (what a stage drives depends only on the stages before it); `stop`: with
    `reuse`, stages from `stop` on keep reuse's too (for a walk that ends before them)."""
    rise = chain.conditions.worst_temperature_rise
    hot = 25.0 if nominal else max(chain.conditions.temperature)  # where bias currents are taken
    s = laplace_grid(freqs)
    values, responses, joint = [], [], []
    source = np.array([[chain.source.impedance]])
    parents = plan_parents(plans)
    children = tree_children(parents)
    views: dict = {}
    handed: set = set()  # the responses this Prepared holds (walks/reuse.py)
    if reuse is not None and first > 0:
        first = family_start(plans, reuse.responses, children, first)
        values, responses = list(reuse.values[:first]), list(reuse.responses[:first])
        handed.update(id(r) for r in responses)
        joint = list(reuse.joint[:first])
        views = {k: view for k, view in reuse.views.items() if k < first}
    # with `reuse` and `stop` on a chain in one line, stages from `stop` on keep reuse's (the walk
    # ends before them); on a tree every later stage is prepared (a branch may hang anywhere)
    in_line = all(parent == k - 1 for k, parent in enumerate(parents))
    last = (
        len(plans)
        if reuse is None or stop is None or not in_line
        else max(min(stop, len(plans)), len(values))
    )
    if reuse is not None and last < len(plans):
        handed.update(id(r) for r in reuse.responses[last:])
    for k in range(len(values), last):
        plan, parent = plans[k], parents[k]
        if parent < 0:  # fed by the source
            before, rows, differential = None, 1, chain.source.differential
            drive: Callable[[], np.ndarray] = partial(np.asarray, source)
        else:  # fed by an earlier stage, whatever else it feeds
            before, rows, differential = responses[parent], values[parent]["drive"].shape[0], False
            if passive_feeding_several(plans, responses, parent, children):
                if k not in views:  # the node as each stage it feeds meets it (sibling_loads.py)
                    probe = partial(
                        probe_stage, plans, parent, values[parent], responses[parent], rise, nominal, s
                    )
                    views.update(
                        family_views(plans, values, responses, parent, children, rise, nominal, hot, probe, s)
                    )
                before, rows = views[k].response, views[k].rows
            drive = partial(next_drive, plans[parent], before)
        v, paired = stage_values(plan, rise, nominal, before, rows, drive)
        inverse_gain = inverse_open_loop(None if ideal else plan.part, s)
        response = None
        if not plan.block.saturates:  # kept from an earlier check with the same inputs (reuse.py)
            response = kept.respond(plan.block, plan.part, v, s, inverse_gain, differential, handed)
        values.append(v)
        responses.append(response)
        joint.append(paired)
    if reuse is not None and last < len(plans):
        values, responses = values + list(reuse.values[last:]), responses + list(reuse.responses[last:])
        joint += list(reuse.joint[last:])
    walks: tuple[Prepared, ...] = ()
    if not nominal and reuse is None:
        variants = joint_plans(chain, plans) or []
        walks = tuple(prepare(chain, pinned, freqs, nominal, ideal) for pinned in variants)
    return Prepared(chain, plans, freqs, values, responses, tuple(joint), joint_walks=walks, views=views)


def probe_stage(plans, parent: int, before_values, before, rise, nominal, s, k: int):
    """Stage k's corner values and response with the passive stage's plain Thevenin drive:
    what its input draws (sibling_loads.family_views)."""
    plan = plans[k]
    rows = before_values["drive"].shape[0]
    v, _ = stage_values(plan, rise, nominal, before, rows, partial(next_drive, plans[parent], before))
    if plan.block.saturates:
        return v, None
    return v, plan.block.respond(v, s, inverse_open_loop(plan.part, s), v["drive"], False)


def start_signal(chain: Chain, freqs: np.ndarray, scale: float = 1.0) -> Signal | DifferentialSignal:
    source = chain.source
    if source.differential:
        return DifferentialSignal(source.level, source.difference, source.amplitude * scale)
    return source_signal(source.level, source.amplitude * scale, freqs)


MAX_PINNED_BITS = 4  # rail_pinned_walks: at most 16 walks of the chain


def run(setup, progress=None):
    """The corners verdicts of every stage (methods.Setup in, methods.Outcome out)."""
    from railroom.engine.methods import Outcome

    stages = walk(setup.prepared, notes=setup.notes)
    pinned = rail_pinned_walks(setup.prepared, stages)
    if pinned:
        chain = setup.prepared.chain
        walks = [walk_chain(p, start_signal(chain, p.freqs), False, setup.notes) for p in pinned]
        stages = envelope(walks, setup.prepared.plans, chain.conditions.margin)
    return Outcome(stages)


def rail_pinned_walks(prepared: Prepared, stages) -> list[Prepared] | None:
    """The chain once per joint end of each toleranced rail that a clipping stage and a stage
    it feeds (however far down its branch) both use, each walk with those rails held at one
    value; None when there is none (or nets already walk joint corners, or too many ends).

    A clipping stage hands on its output at the levels it can clip at, its rails' outer ends
    (bounds_walk.clip_window), and a stage after it on the same rail takes its windows at that
    rail's worst end: apart, the two read a clip at 5.22 V against an input limit of 4.85 V on a
    5 V +/- 5 % rail, where at any one rail value the clip sits 130 mV under the limit
    (tests/chains/alarms_nogo.toml). Walked at each end and enveloped (methods/joint.py) both
    take the same rail value, as on the board; every other figure is the same as one walk's,
    as each is monotone in a rail (the worst over both ends is the worst over the range)."""
    if prepared.joint_walks or not any(r.regime == "clipping" for r in stages):
        return None
    plans = prepared.plans
    parents = plan_parents(plans)
    shared: set[str] = set()
    for k, plan in enumerate(plans):
        j = parents[k]
        while j >= 0:
            if (
                stages[j].regime == "clipping"
                and plans[j].part is not None
                and plans[j].rails.name == plan.rails.name
            ):
                shared.add(plan.rails.name)
            j = parents[j]
    rails = {plan.rails.name: plan.rails for plan in plans if plan.rails.name in shared}
    ends = []
    for name in sorted(rails):
        rail = rails[name]
        for side, span in (("positive", rail.positive_range), ("negative", rail.negative_range)):
            if span[0] != span[1]:
                ends.append((name, side, span))
    if not ends or len(ends) > MAX_PINNED_BITS:
        return None
    variants = []
    for corner in itertools.product((0, 1), repeat=len(ends)):
        held = dict(rails)
        for (name, side, span), bit in zip(ends, corner):
            if side == "positive":
                held[name] = replace(held[name], pinned=span[bit])
            else:
                held[name] = replace(held[name], pinned_negative=span[bit])
        variants.append([replace(p, rails=held.get(p.rails.name, p.rails)) for p in plans])
    return [prepare(prepared.chain, v, prepared.freqs) for v in variants]


def walk(
    prepared: Prepared,
    scale: float = 1.0,
    nominal: bool = False,
    notes=None,
    entering: list | None = None,
    lean: bool = False,
):
    """Stage measures and verdicts for one source amplitude scale; `notes` are per-stage measure
    fields known beforehand (nominal span, gain error); `entering` receives each stage's input.
    With shared values (nets) the chain is walked once per joint corner and the envelope taken;
    `entering` (the fix search's re-walks) takes the walk with each net at every end of its
    own, stage by stage, an outside bound. `lean`: for a caller that reads only regimes,
    margins and the op amps' limits (bounds_walk.walk_chain)."""
    if prepared.joint_walks and entering is None:
        walks = [
            walk_chain(p, start_signal(p.chain, p.freqs, scale), nominal, notes, lean=lean)
            for p in prepared.joint_walks
        ]
        return envelope(walks, prepared.plans, prepared.chain.conditions.margin, lean=lean)
    return walk_chain(
        prepared,
        start_signal(prepared.chain, prepared.freqs, scale),
        nominal,
        notes,
        entering=entering,
        lean=lean,
    )


def run_from(prepared: Prepared, first: int, entering: list, stop: int | None = None) -> list:
    """Verdicts of stages `first` to `stop` (not included; the last by default), fed the
    signals a full walk recorded (`walk(..., entering=...)`) where their parent is not walked."""
    return walk_chain(prepared, entering[first], first=first, stop=stop, recorded=entering)
