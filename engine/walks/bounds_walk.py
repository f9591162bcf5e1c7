"""Walking the prepared chain stage by stage: bounds -> measures -> verdict -> next stage's input.

Used by the corners method (and by the nominal pass, which is corners with no spread and no
offsets). Stages form a tree (`from`): the input of every stage fed by this one loads its output;
each one's conductance to its return voltage adds to the output current before the swing window
is drawn.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from railroom.engine.circuit.blocks.base import BlockResponse, InputLoad, OpAmpNodes, load_conductance
from railroom.engine.verdict.judge import judge
from railroom.engine.verdict.margins import each_load, load_currents, one_load
from railroom.engine.circuit.opamp import TWO_PI, input_window, output_window
from railroom.engine.circuit.part_limits import bias_at, clipped_differential, saturated_differential
from railroom.engine.walks.preparation import StagePlan
from railroom.engine.walks.signal_bounds import (
    DifferentialSignal,
    NodeBounds,
    Signal,
    clamp,
    error_bound,
    loaded_bounds,
    memory_order,
    merge,
    node_bounds,
    single_bounds,
    single_terms,
)
from railroom.engine.circuit.model import stage_parents
from railroom.engine.verdict.results import OpAmpMeasure, StageMeasure, StageResult


# Blocks whose response to the chain signal is a scaled impulse response that never changes sign
# (flat stages, one-pole op amps, first-order passives, cascades of them): the output's slope is then
# at most max |H| times the input's (|y'| <= ||h||_1 |x'|, ||h||_1 = max |H| for h >= 0; Oppenheim &
# Willsky, Signals and Systems, ch. 2, BIBO stability). A clipped signal's slope bound passes through
# them; a second-order filter's may ring, so after one the bound is dropped (its slope is then read
# from its amplitudes, as for a sine).
SLOPE_KEEPING = frozenset(
    {"follower", "noninverting", "inverting", "summing", "difference", "instrumentation"}
    | {"integrator", "divider", "rc_lowpass", "adc"}
)


def largest_gain(node, memo: dict | None = None) -> float:
    """max |H| of a node from the chain signal over the corners and the band (0 when it sees
    none); `memo`: a walk's memo (bounds_once), which keeps it for the next walk."""
    key = ("largest gain", id(node))
    if memo is not None and key in memo:
        return memo[key][1]
    transfer = node.transfers.get("in")
    found = 0.0 if transfer is None else float(np.max(np.abs(transfer)))
    if memo is not None:
        memo[key] = (node, found)  # the node kept beside it: its id stays its own
    return found


def passed_slope(plan: StagePlan, response: BlockResponse, signal, memo: dict | None = None) -> float | None:
    """The slope bound of what a linear stage hands on, from the one it is fed (SLOPE_KEEPING)."""
    slope = getattr(signal, "slope", None)
    if slope is None or plan.block.name not in SLOPE_KEEPING:
        return None
    out = largest_gain(response.output, memo) * slope
    return out if plan.part is None else min(out, plan.part.slew)


def load_behind(
    plans, responses, k: int, rise: float = 0.0, values=None, hot: float = 25.0, children=None
) -> tuple[InputLoad, ...]:
    """load_behind_stage, plus the bias currents of stage k's own - pin and of the two input pins
    of each op-amp stage it feeds (through converter inputs and passive stages) at the hottest
    temperature `hot` (they reach this output at most whole; Kirchhoff's current law adds them).
    `children`: tree_children of the plans (found here when not given)."""
    if children is None:
        children = tree_children(plan_parents(plans))
    loads = load_behind_stage(plans, responses, k, rise, values, children)
    own = plans[k].part
    pins = 0.0 if own is None else bias_at(own, hot)

    def reached(j: int) -> float:  # the op-amp stages fed by stage j, through part-less ones
        total = 0.0
        for c in children[j]:
            total += 2.0 * bias_at(plans[c].part, hot) if plans[c].part is not None else reached(c)
        return total

    pins += reached(k)
    if not pins:
        return loads
    if not loads:
        return (InputLoad(pins=pins),)
    return (replace(loads[0], pins=loads[0].pins + pins), *loads[1:])


def schmitt_load(plan: StagePlan, v: dict) -> InputLoad:
    """A non-inverting Schmitt trigger's input: r1 + r2 to its own output, which sits at either
    level, anywhere between the rails (its other blocks draw only their pins' bias currents)."""
    if plan.block.name != "schmitt" or plan.flags.get("invert"):
        return InputLoad()
    rails = plan.rails
    return InputLoad(
        conductance=float(np.max(1.0 / (v["r1"] + v["r2"]))),
        returns=(rails.negative_range[0], rails.positive_range[1]),
        least=float(np.min(1.0 / (v["r1"] + v["r2"]))),
        rows=1.0 / (v["r1"] + v["r2"]),
    )


def load_behind_stage(
    plans, responses, k: int, rise: float = 0.0, values=None, children=None
) -> tuple[InputLoad, ...]:
    """What stage k's output drives, one load per stage fed: each child's input, or, through a
    converter input (which draws nothing and passes its input on), the inputs of the stages it
    feeds in turn. Each return voltage is widened by that stage's op-amp offset at `rise` above
    25 C (an input resistor returns to the - pin, which sits at ref + Vos, not at ref). A passive
    stage there is loaded by what it feeds in turn: a divider's input conductance is then that of
    top in series with bottom || the inputs after it (`values`: the stages' component values), and
    the passive stage's return reaches the later inputs' return voltages too."""
    if children is None:
        children = tree_children(plan_parents(plans))
    found: list[InputLoad] = []
    for j in children[k]:
        if plans[j].block.window_only:
            found.extend(load_behind_stage(plans, responses, j, rise, values, children))
            continue
        following = responses[j]
        if following is None:
            found.append(schmitt_load(plans[j], values[j]) if values is not None else InputLoad())
            continue
        load = following.input_load
        if following.output_impedance is not None:  # passive: what it drives loads it in turn
            after = load_behind_stage(plans, responses, j, rise, values, children)
            conductance = sum(one.conductance for one in after)
            if conductance > 0:
                returns = (
                    min([load.returns[0], *(one.returns[0] for one in after)]),
                    max([load.returns[1], *(one.returns[1] for one in after)]),
                )
                load = replace(load, returns=returns, follows=True)
                if plans[j].block.name == "divider" and values is not None:
                    v = values[j]
                    bottom = 1.0 / (1.0 / v["bottom"] + load_conductance(v) + conductance)
                    load = replace(load, conductance=float(np.max(1.0 / (v["top"] + bottom))))
                if load.blocks_dc:
                    # ac_coupling: above its corner the capacitor is a short, so the AC part
                    # drives r in parallel with what it feeds (an upper bound on its conductance)
                    load = replace(load, conductance=load.conductance + conductance)
        part = plans[j].part
        if part is not None and load.conductance != 0:
            offset = part.offset_at(25.0 + rise) + load.shift * bias_at(part, 25.0 + rise)
            if load.earth:
                offset += earth_error(part, plans[j].rails)
            load = replace(load, returns=(load.returns[0] - offset, load.returns[1] + offset))
        found.append(load)
    return tuple(found)


def earth_error(part, rails) -> float:
    """How far an op amp's - pin sits from its + pin besides the offset, at DC: Vout / A0
    (V- = V+ + Vos - Vout/A, opamp.py), at most the largest rail over A0 while the stage is
    linear (its output inside the rails). In band the AC current into an inverting input
    resistor is at most Vin/rin: the - pin's AC part, -Vout/A, moves with the signal
    (|1 + T/A| <= 1 for T the closed-loop gain), so only the DC part widens the return."""
    pos, neg = rails.positive_range[1], rails.negative_range[0]
    return max(abs(pos), abs(neg)) / part.open_loop_gain


def span(bounds: NodeBounds) -> tuple[float, float]:
    # the arrays' own reductions: np.min's dispatch costs more than the few elements here
    return (float(bounds.lo.min()), float(bounds.hi.max()))


def bounds_once(node, v: dict, signal, offsets, bias, known: dict, memo: dict | None = None) -> NodeBounds:
    """The node's bounds, found once per stage: a stage's output node is usually its last op
    amp's output node too. `known` holds the node with its bounds so that its id stays its own.
    `memo` keeps each node's own terms (propagation.NodeTerms) across walks of one Prepared:
    the headroom search walks it again and again with only the source amplitude changed."""
    if id(node) in known:
        return known[id(node)][1]
    if memo is None or isinstance(signal, DifferentialSignal):
        bounds = node_bounds(node, v, signal, error_bound(node, offsets, bias))
    else:
        if id(node) not in memo:
            memo[id(node)] = (
                node,
                single_terms(node, v, error_bound(node, offsets, bias), order=memory_order(signal.hi)),
            )
        bounds = single_bounds(node, v, signal, 0.0, terms=memo[id(node)][1])  # error in terms
    known[id(node)] = (node, bounds)
    return bounds


def walk_chain(
    prepared,
    signal,
    nominal: bool = False,
    notes=None,
    first: int = 0,
    entering: list | None = None,
    stop: int | None = None,
    levels: dict | None = None,
    recorded: list | None = None,
    lean: bool = False,
) -> list[StageResult]:
    """Results of stages `first` up to (not including) `stop`, the last by default, fed `signal`
    at stage `first`. Stages form a tree (the README's File formats, `from`): each is fed what
    its parent passes on, and a parent's output is loaded by every stage it feeds. `entering`,
    when given, receives the signal entering each walked stage (the fix search re-walks from
    there); `recorded`: such a list from a full walk, for stages from `first` on whose parent is
    before `first` (or the source); `levels`, stage index -> the bounds per frequency of what
    each linear stage shows (the level picture). `lean`: only each result's regime, margins and
    op amps' limits are read (the headroom search): the span a passive stage shows, its
    limiting check and its cautions are left out (judge(..., lean=True)); every margin and
    every signal handed on is the full walk's."""
    chain = prepared.chain
    plans, responses = prepared.plans, prepared.responses
    shape = walk_shape(prepared, nominal)
    parents, children = shape.parents, shape.children
    rise = chain.conditions.worst_temperature_rise
    hot = max(chain.conditions.temperature) - 25.0  # the bias current is taken there (part_limits)
    # node terms depend on the offsets, which the nominal walk leaves out: one memo for each
    memo = prepared.memo.setdefault(("terms", nominal), {})
    results: dict[int, StageResult] = {}
    handed: dict[int, tuple] = {}  # stage -> what it passes on (see hand_on)
    entered: dict[int, object] = {}  # a passive stage feeding several -> the signal it was fed
    source_input = signal  # with first == 0: what every stage fed by the source takes
    for k in range(first, len(plans) if stop is None else stop):
        plan, parent = plans[k], parents[k]
        if k > first:
            if parent >= first and k in prepared.views:
                signal = view_hand_on(prepared, k, entered[parent], handed[parent])
            elif parent >= first:
                signal = hand_on(handed[parent], k, prepared)
            elif parent < 0 and first == 0:
                signal = source_input
            else:
                assert recorded is not None, "a re-walk needs the signals of a full walk"
                signal = recorded[k]
        if entering is not None:
            entering.append(signal)
        if len(children[k]) > 1 and any(c in prepared.views for c in children[k]):
            entered[k] = signal
        next_load = shape.loads[k]
        v = prepared.values[k]
        if plan.block.saturates:
            measure, passed = saturated_stage(plan, v, signal, rise, nominal, hot_rise=hot)
            bounds, slope = None, None
        else:
            later = shape.shown_later[k]
            measure, bounds = linear_stage(
                plan,
                responses[k],
                v,
                signal,
                prepared.freqs,
                next_load,
                rise,
                nominal,
                memo,
                shown_later=later,
                hot_rise=hot,
            )
            if shape.shows_parent[k] and (levels is not None or not lean):
                # the passive stage before shows the voltage at this stage's input terminal,
                # each of its circuits paired with this stage's own (exact); a lean walk
                # reads neither what it shows nor, without levels, the terminal
                terminal = input_bounds(plan, responses[k], v, signal, rise, nominal, memo, hot_rise=hot)
                shown = span(terminal)
                if levels is not None:
                    levels[parent] = terminal
                if parent in results and not lean:
                    before = results[parent]
                    results[parent] = replace(before, measure=replace(before.measure, output=shown))
            if levels is not None:
                levels[k] = bounds
            passed = None
            slope = passed_slope(plan, responses[k], signal, memo)
            only = children[k][0] if len(children[k]) == 1 else None
            if shape.reads_through[k]:
                assert only is not None
                # a converter input draws nothing: it sees its child's input terminal (the passive
                # stage behind it loaded by that stage), each circuit paired, and so does the
                # passive stage whose output it is. Only with one child (the loader lets a stage
                # with no op amp feed one): one feeding several would show what it is fed, as
                # before, the terminal of one child alone leaving out the others' loads
                fed = getattr(signal, "fed_clipped", False)
                handing = hand_on((k, bounds, None, fed, None, slope, None), only, prepared)
                terminal = input_bounds(
                    plans[only],
                    responses[only],
                    prepared.values[only],
                    handing,
                    rise,
                    nominal,
                    memo,
                    hot_rise=hot,
                )
                measure = replace(measure, output=span(terminal), nominal=span(terminal))
                if parent in results and not lean and shows_input_of(plans, responses, parent, k):
                    before = results[parent]
                    results[parent] = replace(before, measure=replace(before.measure, output=span(terminal)))
            elif converter_loaded(plan, responses[k], next_load) and parent in results:
                if shows_input_of(plans, responses, parent, k):  # the node, loaded, as it shows it
                    before = results[parent]
                    results[parent] = replace(before, measure=replace(before.measure, output=measure.output))
        if notes is not None:
            measure = replace(measure, **notes[k])
        result = judge(measure, plan.part, plan.rails, chain.conditions.margin, lean=lean)
        window = clip_window(plan, measure) if result.regime == "clipping" else None
        clip_slope = None
        if window is not None:
            # the clipped output is no steeper than the unclipped need, nor than the slew rate
            last = measure.opamps[-1] if measure.opamps else None
            clip_slope = None if last is None else min(last.slew_needed, last.slew_available)
        handed[k] = (k, bounds, passed, getattr(signal, "fed_clipped", False), window, slope, clip_slope)
        results[k] = result
    return [results[k] for k in sorted(results)]


def clip_window(plan: StagePlan, measure: StageMeasure) -> tuple[float, float] | None:
    """Where a clipping stage's output may sit, for what it hands on: its output op amp's swing
    at the rails' outer ends with no output current (the clip level rises with the rail and
    falls with the current drawn at it). The stage's own window is the opposite, the narrowest
    (lowest positive rail, the largest current): clamping what it hands on to that read the
    stages after it up to a rail tolerance short, a GO they do not have (a 12 V +/- 5 % rail
    clipping into 1k: handed on up to 9.6 V where it reaches 10.3 V, see
    tests/engine/test_clipped_hand_on.py)."""
    if measure.window is None:
        return None
    part = plan.part
    if part is None or not measure.opamps:
        return measure.window
    low = plan.rails.negative_range[0] + part.output_headroom[1]
    high = plan.rails.positive_range[1] - part.output_headroom[0]
    return min(low, measure.window[0]), max(high, measure.window[1])


def view_hand_on(prepared, k: int, fed_parent, handed: tuple) -> Signal:
    """What stage k meets from the passive stage before it, which feeds several: its node
    loaded by the other stages it feeds (walks/sibling_loads.py), row by row when stage k's
    corners pair with the view's, merged otherwise, with the passive stage's slope bound."""
    from railroom.engine.walks.sibling_loads import tile_rows, tiled_signal, widened

    view = prepared.views[k]
    _, thevenin, _, fed, _, slope, _ = handed
    rows_before = view.rows // view.reps
    signal = tiled_signal(fed_parent, rows_before, view.reps)
    node = view.response.output
    bounds = single_bounds(node, view.values, signal, view.error, view.shift)
    bounds = widened(
        bounds,
        view.eps,
        *(tile_rows(x, rows_before, view.reps) for x in (thevenin.hi, thevenin.lo, thevenin.amp_hi)),
    )
    rows = prepared.values[k]["drive"].shape[0]
    passed = paired(bounds, view.rows, rows, fed) if prepared.joint[k] else merge(bounds, fed)
    return passed if slope is None else replace(passed, slope=slope * view.share)


@dataclass(frozen=True)
class WalkShape:
    """What every walk of one Prepared finds the same, per stage: the tree, what each output
    drives (load_behind: at the walk's temperatures, the pins' bias left out of the nominal
    walk), and which stages show or read through another's input terminal. Found once per
    Prepared and kind of walk (walk_shape) instead of once per walk: the headroom search walks
    the same Prepared again and again."""

    parents: tuple[int, ...]
    children: tuple[tuple[int, ...], ...]
    loads: tuple[tuple[InputLoad, ...], ...]
    shown_later: tuple[bool, ...]  # the one stage it feeds pairs with it and shows its terminal
    shows_parent: tuple[bool, ...]  # it pairs with its passive parent, which shows its terminal
    reads_through: tuple[bool, ...]  # a converter input that reads its one child's terminal


def walk_shape(prepared, nominal: bool) -> WalkShape:
    """The WalkShape of `prepared` for a nominal or a worst-case walk, kept on its memo."""
    key = ("shape", nominal)
    found = prepared.memo.get(key)
    if found is not None:
        return found
    chain, plans, responses = prepared.chain, prepared.plans, prepared.responses
    parents = plan_parents(plans)
    children = tree_children(parents)
    rise = chain.conditions.worst_temperature_rise
    hot = max(chain.conditions.temperature) - 25.0
    loads, later, shows, reads = [], [], [], []
    for k, plan in enumerate(plans):
        load = load_behind(
            plans,
            responses,
            k,
            0.0 if nominal else rise,
            prepared.values,
            25.0 if nominal else 25.0 + hot,
            children,
        )
        if nominal:
            load = tuple(replace(one, pins=0.0) for one in load)
        loads.append(load)
        only = children[k][0] if len(children[k]) == 1 else None
        linear = not plan.block.saturates
        later.append(
            linear and only is not None and prepared.joint[only] and shows_input_of(plans, responses, k, only)
        )
        parent = parents[k]
        shows.append(
            linear and parent >= 0 and shows_input_of(plans, responses, parent, k) and prepared.joint[k]
        )
        reads.append(
            linear and plan.block.window_only and only is not None and reads_through(prepared, k, only)
        )
    found = WalkShape(parents, children, tuple(loads), tuple(later), tuple(shows), tuple(reads))
    prepared.memo[key] = found
    return found


def plan_parents(plans) -> tuple[int, ...]:
    """Per plan the index of the plan it takes its input from (-1: the source)."""
    return stage_parents([plan.stage for plan in plans])


def tree_children(parents: tuple[int, ...]) -> tuple[tuple[int, ...], ...]:
    found: list[list[int]] = [[] for _ in parents]
    for k, parent in enumerate(parents):
        if parent >= 0:
            found[parent].append(k)
    return tuple(tuple(c) for c in found)


def stage_loads(responses, fed: tuple[int, ...]) -> tuple[InputLoad, ...]:
    """What loads a stage's output: the input of every stage it feeds (a saturated stage's
    input, not in the block interface, draws nothing here)."""
    return tuple(responses[c].input_load for c in fed if responses[c] is not None)


def hand_on(handed: tuple, child: int, prepared) -> Signal:
    """What stage k passes to the stage `child` it feeds: a saturated stage its two levels; a
    linear stage its bounds, row by row when the child's corners pair with its own, merged
    otherwise, with its slope bound (passed_slope); held inside its window when it clips."""
    k, bounds, passed, fed, window, slope, clip_slope = handed
    if passed is None:
        passed = (
            paired(
                bounds, prepared.values[k]["drive"].shape[0], prepared.values[child]["drive"].shape[0], fed
            )
            if prepared.joint[child]
            else merge(bounds, fed)
        )
        if slope is not None:
            passed = replace(passed, slope=slope)
    return clamp(passed, window, clip_slope) if window is not None else passed


def paired(bounds: NodeBounds, rows: int, next_rows: int, fed_clipped: bool) -> Signal:
    """A passive stage's bounds handed on row by row to the stage after it, whose row i*n + j
    is its own corner i with this stage's row j (corners.stage_values): each row of the next
    stage meets the voltage of the very circuit whose impedance drives it."""
    reps = next_rows // rows

    def tiled(x: np.ndarray) -> np.ndarray:
        if reps == 1 and x.shape[0] == rows:
            return x
        if x.ndim == 2 and x.shape[0] == rows:  # the same rows, reps times over (copied)
            return np.concatenate((x,) * reps)
        return np.broadcast_to(x, (reps, rows, x.shape[-1])).reshape(next_rows, x.shape[-1])

    return Signal(
        hi=tiled(bounds.hi),
        lo=tiled(bounds.lo),
        amp_lo=tiled(bounds.amp_lo),
        amp_hi=tiled(bounds.amp_hi),
        fed_clipped=fed_clipped,
    )


def linear_stage(
    plan: StagePlan,
    response: BlockResponse,
    v: dict,
    signal,
    freqs: np.ndarray,
    next_load,
    rise: float,
    nominal: bool,
    memo: dict | None = None,
    shown_later: bool = False,
    hot_rise: float = 0.0,
) -> tuple[StageMeasure, NodeBounds]:
    """`shown_later`: the next stage will set what this (passive) stage shows (input_span)."""
    part = plan.part
    count = len(response.opamps)
    offsets = np.full(count, 0.0 if (nominal or part is None) else part.offset_at(25.0 + rise))
    bias = 0.0 if (nominal or part is None) else bias_at(part, 25.0 + hot_rise)
    known: dict = {}
    out = bounds_once(response.output, v, signal, offsets, bias, known, memo)
    amps = tuple(
        opamp_measure(
            plan,
            amp,
            v,
            signal,
            offsets,
            bias,
            freqs,
            next_load if amp.output is response.output else (),
            known,
            memo,
        )
        for amp in response.opamps
    )
    window = amps[-1].window if amps else None
    if plan.block.window_only:
        window = (float(np.max(v["low"])), float(np.min(v["high"])))  # worst over tolerance
    inner = {
        name: span(bounds_once(node, v, signal, offsets, bias, known, memo))
        for name, node in response.inner.items()
    }
    shown = span(out)
    if (passive_output(plan, response, next_load) and not shown_later) or converter_loaded(
        plan, response, next_load
    ):
        # what the stage shows is its output with the next stage's input on it; what it hands
        # on is its Thevenin voltage (the next stage meets the impedance itself). A converter
        # input passes its node on: what the stages after it draw loads that node too (a
        # Schmitt trigger's r1 + r2 to its levels); read through to its child where it can be
        assert response.output_impedance is not None  # passive_output, converter_loaded: it has one
        shown = span(
            loaded_bounds(response.output, v, signal, response.output_impedance, one_load(next_load))
        )
    measure = StageMeasure(
        index=plan.index,
        stage=plan.stage,
        output=shown,
        nominal=shown,
        opamps=amps,
        window=window,
        supply=plan.rails.span_range if part else None,
        fed_clipped=getattr(signal, "fed_clipped", False),
        inner=inner,
        input_differential=clipped_differential(part, response, amps, freqs),
    )
    return measure, out


def reads_through(prepared, k: int, child: int) -> bool:
    """Stage k is a converter input driven through an impedance, paired row by row with the
    stage `child` it feeds, which knows its input terminal: the converter input then sees that
    terminal."""
    plans, responses = prepared.plans, prepared.responses
    return (
        plans[k].block.window_only
        and prepared.joint[child]
        and responses[k] is not None
        and responses[k].output_impedance is not None
        and responses[child] is not None
        and responses[child].input_node is not None
    )


def shows_input(plans, responses, k: int) -> bool:
    """Stage k - 1 is passive (not a converter input, which is checked on what it shows) and
    stage k knows its input terminal: stage k - 1 then shows that terminal's voltage."""
    return k > 0 and shows_input_of(plans, responses, k - 1, k)


def shows_input_of(plans, responses, parent: int, k: int) -> bool:
    """Stage `parent` is passive (not a converter input) and feeds stage k, which knows its
    input terminal: the parent then shows that terminal's voltage."""
    return (
        parent >= 0
        and responses[parent] is not None
        and responses[parent].output_impedance is not None
        and not plans[parent].block.window_only
        and responses[k] is not None
        and responses[k].input_node is not None
    )


def input_span(
    plan: StagePlan,
    response: BlockResponse,
    v: dict,
    signal,
    rise: float,
    nominal: bool,
    memo: dict | None,
    hot_rise: float = 0.0,
) -> tuple[float, float]:
    """The span of the stage's input terminal (BlockResponse.input_node)."""
    return span(input_bounds(plan, response, v, signal, rise, nominal, memo, hot_rise))


def input_bounds(
    plan: StagePlan,
    response: BlockResponse,
    v: dict,
    signal,
    rise: float,
    nominal: bool,
    memo: dict | None,
    hot_rise: float = 0.0,
):
    """The bounds per frequency of the stage's input terminal (BlockResponse.input_node);
    `hot_rise`: the hottest temperature less 25 C, where the bias current is taken (part_limits)."""
    part = plan.part
    count = max(len(response.opamps), 1)
    offsets = np.full(count, 0.0 if (nominal or part is None) else part.offset_at(25.0 + rise))
    bias = 0.0 if (nominal or part is None) else bias_at(part, 25.0 + hot_rise)
    return bounds_once(response.terminal, v, signal, offsets, bias, {}, memo)


def settled_by_next(plan: StagePlan, response: BlockResponse, load) -> bool:
    """A passive stage whose shown span the stage it feeds settles (the per-circuit walks): that
    stage draws current from it, through its input conductance or its pins' bias currents
    alone (a follower's + pin drops Ib times the divider's Thevenin resistance, Ohm's law)."""
    return passive_output(plan, response, load) or (
        response.output_impedance is not None
        and not plan.block.window_only
        and any(one.pins for one in each_load(load))
    )


def converter_loaded(plan: StagePlan, response: BlockResponse, load) -> bool:
    """A converter input driven through an impedance whose node the stages after it load."""
    return (
        plan.block.window_only
        and response.output_impedance is not None
        and sum(one.conductance for one in each_load(load)) > 0
    )


def passive_output(plan: StagePlan, response: BlockResponse, load) -> bool:
    """A passive stage whose shown output differs from its Thevenin voltage: the next stage
    draws current from it (a converter input draws none and passes its input on)."""
    return (
        response.output_impedance is not None
        and not plan.block.window_only
        and sum(one.conductance for one in each_load(load)) > 0
    )


def opamp_measure(
    plan: StagePlan,
    amp: OpAmpNodes,
    v: dict,
    signal,
    offsets,
    bias,
    freqs,
    load,
    known: dict | None = None,
    memo: dict | None = None,
) -> OpAmpMeasure:
    part = plan.part
    assert part is not None  # a block with op amps has its part (preparation)
    known = {} if known is None else known
    out = bounds_once(amp.output, v, signal, offsets, bias, known, memo)
    plus = bounds_once(amp.plus, v, signal, offsets, bias, known, memo)
    current = bounds_once(amp.current, v, signal, offsets, bias, known, memo)
    out_span = span(out)
    sourced, sunk = load_currents(
        float(current.hi.max()), float(current.lo.min()), out_span[1], out_span[0], load
    )
    needed = float(max(sourced, sunk))
    slew = float((TWO_PI * freqs * out.amp_hi).max()) if out.amp_hi.size else 0.0
    slope = getattr(signal, "slope", None)
    if slope is not None:
        # fed a clipped waveform: its amplitudes are no sine's (a sine clipped to half its height
        # keeps its full slope at the crossings), so the need is its slope bound through this op
        # amp's gain; after a filter that may ring, no less than the amplitudes' (SLOPE_KEEPING)
        through = largest_gain(amp.output, memo) * slope
        slew = through if plan.block.name in SLOPE_KEEPING else max(slew, through)
    return OpAmpMeasure(
        label=amp.label,
        output=out_span,
        window=output_window(part, plan.rails, float(sourced), float(sunk)),
        input=span(plus),
        input_window=input_window(part, plan.rails),
        slew_needed=slew,
        slew_available=part.slew,
        current_needed=needed,
        current_available=part.output_current,
    )


def crossed_always(switching, signal, invert: bool) -> tuple[bool, bool]:
    """(low, high): the input crosses the threshold into each state at every joint corner and
    band frequency. At one corner the input swings dc +/- a; dc - a >= lo at every corner, so
    its top dc + a is at least lo + 2 a_lo (and its bottom at most hi - 2 a_lo): the worst
    corner's excursion, per frequency, against the threshold's worst corner."""
    to_high, to_low = switching.thresholds
    if isinstance(signal, Signal):
        top, bottom = signal.lo + 2 * signal.amp_lo, signal.hi - 2 * signal.amp_lo
    else:  # a differential source: its common-mode range
        top = bottom = np.array([signal.common[0], signal.common[1]])
        top, bottom = np.min(top), np.max(bottom)
    if invert:
        return bool(np.all(top > to_low[1])), bool(np.all(bottom < to_high[0]))
    return bool(np.all(bottom < to_low[0])), bool(np.all(top > to_high[1]))


def saturated_stage(
    plan: StagePlan, v: dict, signal, rise: float = 0.0, nominal: bool = False, hot_rise: float = 0.0
) -> tuple[StageMeasure, Signal]:
    """A comparator-like stage: switch levels, thresholds and the two-level signal it passes on."""
    incoming = signal.span if isinstance(signal, Signal) else (signal.common[0], signal.common[1])
    part = plan.part
    assert part is not None  # a comparator is an op amp (preparation)
    offset = 0.0 if nominal else part.offset_at(25.0 + rise)
    bias = 0.0 if nominal else bias_at(part, 25.0 + hot_rise)
    switching = plan.block.switch(v, plan.flags, part, plan.rails, incoming, offset=offset, bias=bias)
    (low_min, low_max), (high_min, high_max) = switching.levels
    reach_low, reach_high = switching.reaches
    top = high_max if reach_high else low_max
    bottom = low_min if reach_low else high_min
    amp = OpAmpMeasure(
        label="comparator",
        output=(bottom, top),
        window=(low_min, high_max),
        input=switching.input_span,
        input_window=input_window(part, plan.rails),
        slew_needed=0.0,
        slew_available=part.slew,
        current_needed=switching.current,
        current_available=part.output_current,
    )
    measure = StageMeasure(
        index=plan.index,
        stage=plan.stage,
        output=(bottom, top),
        nominal=(bottom, top),
        opamps=(amp,),
        window=(low_min, high_max),
        supply=plan.rails.span_range,
        fed_clipped=getattr(signal, "fed_clipped", False),
        saturated=True,
        thresholds=switching.thresholds,
        reaches=switching.reaches,
        input_differential=float(
            np.max(saturated_differential(plan.stage.block, v, plan.flags, incoming, switching.levels))
        ),
        always=crossed_always(switching, signal, bool(plan.flags.get("invert"))),
    )
    freqs_shape = np.shape(signal.hi) if isinstance(signal, Signal) else (1,)
    zero = np.zeros(freqs_shape)
    passed = Signal(
        hi=zero + top,
        lo=zero + bottom,
        amp_lo=zero,
        amp_hi=zero,
        fed_clipped=getattr(signal, "fed_clipped", False),
    )
    return measure, passed
