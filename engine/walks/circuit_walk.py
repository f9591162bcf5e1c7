"""The chain walked once per drawn circuit: the statistical methods' engine (rss, montecarlo).

A row j is one built circuit: its component values, each op amp's signed offset and bias, its
rails and its temperature. Every toleranced quantity is a column of a deviate matrix D (J, K) with
d = +/-1 at the ends of its tolerance:

    value    = nominal (1 + tol d_tol) (1 + tempco dT d_tc)       dT = |T - 25 C| of the row
    offset   = offset d_os + offset_drift dT d_dr      bias = hot bias d_b (part_limits)
    rail     = nominal (1 + tol d)                      (positive and negative rails apart)
    net      = value (1 + tol d_tol) (1 + tempco dT d_tc)   (one column per net, every stage's)
               ratiometric: fraction (1 + tol d_tol) (1 + tempco dT d_tc) x its rail's positive
               (the very column of that rail, so its windows and the net move together)

The signal stays the operating envelope (both ends of the source ranges, +/- the AC peak, every
frequency evaluated), carried per row as Signal arrays (J, F) with no reduction over rows: for one
circuit the bound formulas of walks/signal_bounds.py are exact. Offsets and bias enter as a signed shift.
A row whose stage leaves the linear regime passes its output clamped to its own window.

What drives each stage is the row's own: the source impedance, a saturated stage's output
resistance, or the Thevenin impedance of the passive stage before it per row and frequency
(complex, blocks/passive.py), exact for the circuit. Stages form a tree (`from`): each row of a
stage is fed its parent's same row, and an output is loaded by every stage it feeds. The
conductance a stage's input presents is a single number in the block interface; it is taken at
its worst over the tolerance, as the corners method takes it, so a row never depends on the other
rows beside it.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from functools import cached_property

import numpy as np

from railroom.engine.circuit.blocks.base import InputLoad
from railroom.engine.verdict.margins import load_currents, one_load, opamp_margins, output_drops
from railroom.engine.circuit.model import Chain
from railroom.engine.circuit.opamp import TWO_PI, inverse_open_loop, laplace_grid
from railroom.engine.circuit.part_limits import (
    curve_level,
    differential_margin,
    hot_bias,
    saturated_differential,
)
from railroom.engine.walks.preparation import StagePlan
from railroom.engine.circuit.returned_levels import returned_level
from railroom.engine.walks.sibling_loads import drawn_conductances, drawn_view
from railroom.engine.walks.signal_bounds import DifferentialSignal, Signal, loaded_bounds, node_bounds
from railroom.engine.verdict.results import StageResult
from railroom.engine.walks.bounds_walk import (
    SLOPE_KEEPING,
    converter_loaded,
    load_behind,
    settled_by_next,
    plan_parents,
    shows_input_of,
    tree_children,
)
from railroom.engine.circuit.model import NetValue
from railroom.engine.circuit.nets import used_nets

SATURATED_CHECKS = ("input-high", "input-low", "current")
PEAK_SPREAD = 1.5  # decisive_from: three rows' extremes this close in frequency are one moved peak
PEAK_STEP = 0.002  # decisive_from: the relative spacing kept inside one moved peak's range
BIAS_WIDTH = "bias width"  # bounds_of's `known` key: Layout.bias_width
KEPT_PARTS = 4  # 1/A(s) per row kept for this many parts at once (stages share parts)


@dataclass(frozen=True)
class Variable:
    """One column of the deviate matrix."""

    stage: int | None  # plan index (1-based); None for rails
    quantity: str  # field name, "offset", "bias", or "rails.<name>.positive|negative"
    kind: str  # tolerance | tempco | offset | drift | bias | rail
    scale: float  # the deviation at d = 1: a fraction, or volts / amperes / V per C
    amp: int = 0  # op amp index inside the stage (offset, drift, bias)

    @property
    def label(self) -> str:
        """The quantity as a user names it: the stage field, the part's offset, or the rail."""
        if self.stage is None:
            return self.quantity
        return f"stage.{self.stage}.{self.quantity}"


@dataclass(frozen=True)
class RowPeaks:
    """Where each row reads its own response peaks (row_freqs, fitted by peak_layout): column
    `columns[g]` of the layout's frequencies is, for a row with features x,

        f_g = exp(base[g] + x . slopes[:, g])      clipped to the band `band`

    with x_v = ln(1 + scale_v d_v) for a tolerance column and ln(1 + scale_v dT d_v) for a
    temperature coefficient (`tempco`): the log of the factor that column puts on its value
    (module docstring), so a peak set by a product of powers of the values (w0 of any
    second-order section) is exactly linear in x."""

    columns: np.ndarray  # (G,) indices into Layout.freqs
    base: np.ndarray  # (G,) ln f at d = 0 (plus any offset of a widened peak)
    slopes: np.ndarray  # (V, G) d ln f / d x_v
    used: np.ndarray  # (V,) the variable of each x_v
    scales: np.ndarray  # (V,)
    tempco: np.ndarray  # (V,) bool
    band: tuple[float, float]


@dataclass(frozen=True)
class Layout:
    """Everything fixed across rows: plans, the frequencies walked, columns, worst-case figures."""

    chain: Chain
    plans: list[StagePlan]
    freqs: np.ndarray
    variables: tuple[Variable, ...]
    loads: tuple[tuple[InputLoad, ...], ...]  # per stage what each stage it feeds draws (worst)
    amps: tuple[int, ...]  # op amps per stage
    corner: tuple[StageResult, ...]  # corners results: thresholds and reaches of saturated stages
    # stage fed by a passive stage feeding several -> what the others draw (sibling_loads.py)
    siblings: dict = field(default_factory=dict, compare=False)
    # the bias currents as a width either way per row (bias_width_of; Monte Carlo), or as the
    # signed shift Ib (|g+| + |g-|) linear in the column (the sensitivities of rss: signed_rows)
    bias_width: bool = True
    # Monte Carlo's frequencies per row (row_freqs): the columns of `freqs` that each row moves
    # to its own response peaks; None: every row walks `freqs` itself
    peaks: RowPeaks | None = field(default=None, compare=False)

    def column(self, stage: int | None, quantity: str, kind: str, amp: int = 0) -> int | None:
        return self.columns.get((stage, quantity, kind, amp))

    @cached_property
    def columns(self) -> dict[tuple, int]:
        """(stage, quantity, kind, amp) -> its first column: looked up per stage and chunk."""
        found: dict[tuple, int] = {}
        for k, var in enumerate(self.variables):
            found.setdefault((var.stage, var.quantity, var.kind, var.amp), k)
        return found


@dataclass(frozen=True)
class StageDraws:
    """Per-row results of one stage: arrays of shape (J,)."""

    out_lo: np.ndarray
    out_hi: np.ndarray
    amps: tuple[dict[str, np.ndarray], ...]  # per op amp: check margins, "out"/"in" spans
    margins: dict[str, np.ndarray]  # per check: least over the stage's op amps
    linear: np.ndarray  # bool: no linear check violated (saturated: inputs, current)


def build_layout(
    chain: Chain, plans: list[StagePlan], freqs: np.ndarray, prepared, corner: list[StageResult]
) -> Layout:
    """Columns for every toleranced quantity; drive and load figures from the corners pass."""
    variables: list[Variable] = []
    amps = []
    for plan, response in zip(plans, prepared.responses):
        for name, q in plan.quantities.items():
            if isinstance(q, NetValue):
                continue  # a shared column (below), never the stage's own
            if q.tolerance:
                variables.append(Variable(plan.index, name, "tolerance", q.tolerance))
            if q.tempco:
                variables.append(Variable(plan.index, name, "tempco", q.tempco))
        count = (1 if plan.block.saturates else len(response.opamps)) if plan.part else 0
        amps.append(count)
        for j in range(count):
            part = plan.part
            assert part is not None  # count is 0 without one
            variables += [
                Variable(plan.index, "offset", "offset", part.offset, j),
                Variable(plan.index, "offset", "drift", part.offset_drift, j),
                Variable(plan.index, "bias", "bias", hot_bias(part, chain.conditions), j),
            ]
    for rails in chain.rails.values():
        if rails.tolerance:
            variables += [
                Variable(None, f"rails.{rails.name}.positive", "rail", rails.tolerance),
                Variable(None, f"rails.{rails.name}.negative", "rail", rails.tolerance),
            ]
    for name in used_nets(plans):
        net = chain.nets[name]
        shared = net.value if net.value is not None else net.fraction
        if shared is not None:
            variables += [
                Variable(None, f"nets.{name}", "tolerance", shared.tolerance or 0.0),
                Variable(None, f"nets.{name}", "tempco", shared.tempco or 0.0),
            ]
    variables = [v for v in variables if v.scale]
    children = tree_children(plan_parents(plans))
    rise = chain.conditions.worst_temperature_rise
    hottest = max(chain.conditions.temperature)
    loads = [
        load_behind(plans, prepared.responses, k, rise, prepared.values, hottest, children)
        for k in range(len(plans))
    ]
    return Layout(
        chain,
        plans,
        np.asarray(freqs, dtype=float),
        tuple(variables),
        tuple(loads),
        tuple(amps),
        tuple(corner),
        {k: view.load for k, view in getattr(prepared, "views", {}).items()},
    )


def signed_rows(layout: Layout) -> Layout:
    """The layout with each row's bias currents a signed shift, linear in its column: the
    sensitivities rss takes by differences (aids/sensitivity.py) see the full Ib (|g+| + |g-|)
    per column there, where a width (bias_width_of) has no slope at d = 0."""
    from dataclasses import replace

    return replace(layout, bias_width=False)


def with_freqs(layout: Layout, freqs: np.ndarray) -> Layout:
    from dataclasses import replace

    return replace(layout, freqs=np.asarray(freqs, dtype=float))


def _deviate(layout: Layout, D: np.ndarray, stage, quantity, kind, amp=0) -> np.ndarray | float:
    k = layout.column(stage, quantity, kind, amp)
    return 0.0 if k is None else D[:, k]


def stage_values(layout: Layout, plan: StagePlan, D: np.ndarray, dT: np.ndarray) -> dict:
    """The row's component values as (J, 1) columns."""
    rows = D.shape[0]
    values = {}
    for name, q in plan.quantities.items():
        if isinstance(q, NetValue):
            values[name] = np.broadcast_to(net_rows(layout, q.net, D, dT), (rows,))[:, None]
            continue
        tol = _deviate(layout, D, plan.index, name, "tolerance")
        tc = _deviate(layout, D, plan.index, name, "tempco")
        value = q.value * (1 + (q.tolerance or 0.0) * tol) * (1 + (q.tempco or 0.0) * dT * tc)
        values[name] = np.broadcast_to(np.asarray(value, dtype=float), (rows,))[:, None]
    return values


def net_rows(layout: Layout, name: str, D: np.ndarray, dT: np.ndarray) -> np.ndarray | float:
    """The net's value per row: its own columns, and a ratiometric net's rail column."""
    net = layout.chain.nets[name]
    q = net.value if net.value is not None else net.fraction
    assert q is not None
    tol = _deviate(layout, D, None, f"nets.{name}", "tolerance")
    tc = _deviate(layout, D, None, f"nets.{name}", "tempco")
    value = q.value * (1 + (q.tolerance or 0.0) * tol) * (1 + (q.tempco or 0.0) * dT * tc)
    if net.rail is not None:
        rails = layout.chain.rails[net.rail]
        value = (
            value
            * rails.positive
            * (1 + rails.tolerance * _deviate(layout, D, None, f"rails.{rails.name}.positive", "rail"))
        )
    return value


def row_rails(layout: Layout, plan: StagePlan, D: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    rails = plan.rails
    pos = rails.positive * (
        1 + rails.tolerance * _deviate(layout, D, None, f"rails.{rails.name}.positive", "rail")
    )
    neg = rails.negative * (
        1 + rails.tolerance * _deviate(layout, D, None, f"rails.{rails.name}.negative", "rail")
    )
    shape = (D.shape[0],)
    return np.broadcast_to(pos, shape), np.broadcast_to(neg, shape)


def row_errors(layout: Layout, plan: StagePlan, D: np.ndarray, dT: np.ndarray):
    """Signed offsets (J, n) and bias currents (J, n) of the stage's op amps."""
    part, count, rows = plan.part, layout.amps[plan.index - 1], D.shape[0]
    offsets, bias = np.zeros((rows, count)), np.zeros((rows, count))
    for j in range(count):
        assert part is not None  # count is 0 without one
        offsets[:, j] = part.offset * _deviate(
            layout, D, plan.index, "offset", "offset", j
        ) + part.offset_drift * dT * _deviate(layout, D, plan.index, "offset", "drift", j)
        bias[:, j] = hot_bias(part, layout.chain.conditions) * _deviate(
            layout, D, plan.index, "bias", "bias", j
        )
    return offsets, bias


def shift_of(node, offsets: np.ndarray, bias: np.ndarray) -> np.ndarray | float:
    """A node's output shift for the row's signed offsets (error gains of blocks/base.Node)."""
    if node.offset_gain is None:
        return 0.0
    total = 0.0
    for j in range(offsets.shape[1]):  # op amps of the stage, not draws
        total = total + node.offset_gain[:, j] * offsets[:, j]
    return total


def bias_width_of(node, bias: np.ndarray) -> np.ndarray | float:
    """How far the row's bias currents may move a node either way: sum |bias gain| |Ib|.

    A node's bias gain is |gain from the + pin| + |gain from the - pin| (blocks/base.plus_node),
    not the gain of one circuit: the two pins' currents are not known to share a sign (bipolar
    inputs draw both the same way, a bias-cancelled or FET input either way). Taken as a signed
    shift, Ib (|g+| + |g-|), the row stood for the circuit with opposite pin currents; the one
    with both currents into the pins, Ib (g+ + g-), sits lower on the side that shift raised:
    4 mV on a unity Sallen-Key low-pass (r1 + r2 = 20k, 100 nA), its output-high margin per
    row 2.5 mV above that circuit's (tests/references/test_per_draw_nodal.py). As a width the
    row covers every sign of the pins' currents (at most 2 sum |g| |Ib| pessimistic)."""
    if node.bias_gain is None:
        return 0.0
    total = 0.0
    for j in range(bias.shape[1]):  # op amps of the stage, not draws
        total = total + np.abs(node.bias_gain[:, j]) * np.abs(bias[:, j])
    return total


def start_signal(chain: Chain, freqs: np.ndarray, rows: int):
    """The source per row, column-major and with one amplitude array (walks/signal_bounds.py, Speed)."""
    source = chain.source
    if source.differential:
        return DifferentialSignal(source.level, source.difference, source.amplitude)
    ones = np.ones((rows, np.shape(freqs)[-1]), order="F")
    a = source.amplitude
    amplitude = a * ones
    return Signal(
        hi=(source.level[1] + a) * ones, lo=(source.level[0] - a) * ones, amp_lo=amplitude, amp_hi=amplitude
    )


def walk_draws(layout: Layout, D: np.ndarray, dT: np.ndarray, record: list | None = None) -> list[StageDraws]:
    """Every stage for every row of D (see the module docstring). `record` collects the band
    indices where each checked extreme falls (see decisive_freqs)."""
    rows = D.shape[0]
    D = np.asfortranarray(D)  # each quantity's column contiguous: read column by column below
    if layout.peaks is not None:  # each row on its own frequencies (rows, F) from here on
        layout = replace(layout, freqs=row_freqs(layout, D, dT), peaks=None)
    grid = laplace_grid(layout.freqs)
    s = per_row(grid, rows)
    source = start_signal(layout.chain, layout.freqs, rows)
    parents = plan_parents(layout.plans)
    children = tree_children(parents)
    results: list[StageDraws] = []
    inverse_gains: dict = {}  # 1/A(s) per row, once per part: stages share parts
    passed: dict = {}  # stage -> (the signal it passes on, what drives the stages it feeds)
    pending: dict[int, tuple] = {}  # passive stage -> what settles its shown span once its stage is walked
    # converter input with one child -> (its values, the signal it was fed), until the child is walked
    converters: dict[int, tuple] = {}
    grand_responses: dict = {}  # the response of the stage feeding such a converter input
    feeding: dict = {}  # passive stage feeding several -> (its values, its input, its siblings' conductances)
    for k, plan in enumerate(layout.plans):
        parent = parents[k]
        if parent < 0:
            fed, drive, before = source, layout.chain.source.impedance, None
        else:
            fed, drive, before = passed[parent]
        if parent in feeding:  # the node loaded by the other stages it feeds (sibling_loads.py)
            assert before is not None  # a passive stage feeding several has a response
            its_values, its_input, conductances = feeding[parent]
            fed, drive = drawn_view(
                before, its_values, its_input, conductances, k, layout.siblings[k], fed, layout.freqs
            )
        v = stage_values(layout, plan, D, dT)
        response = None
        if plan.block.saturates:
            draws, signal = saturated_draws(layout, k, v, D, fed, dT, drive)
            out_drive: np.ndarray | float = plan.part.output_resistance if plan.part else 0.0
        else:
            if plan.part not in inverse_gains:
                if len(inverse_gains) >= KEPT_PARTS:  # memory: a few parts' (rows, F+1) arrays
                    inverse_gains.pop(next(iter(inverse_gains)))
                inverse_gains[plan.part] = per_row(inverse_open_loop(plan.part, grid), rows)
            ig = inverse_gains[plan.part]
            response = plan.block.respond(v, s, ig, drive, parent < 0 and layout.chain.source.differential)
            if parent in converters and reads_through(layout.plans[parent], before, response):
                # the converter input before (this stage its only child) sees this stage's input
                # terminal, and passes on what it was fed, held in its window only where that
                # terminal leaves it; a converter input feeding several stages keeps what it shows
                prior, entered = converters[parent]
                results[parent] = converter_through(
                    layout, k, response, v, D, dT, entered, results[parent], prior
                )
                grand = parents[parent]
                if grand >= 0 and shows_input_of(
                    layout.plans, {grand: grand_responses.get(grand), parent: before}, grand, parent
                ):
                    results[grand] = shown_input(layout, k, response, v, D, dT, entered, results[grand])
                fed = entered
                if not results[parent].linear.all():
                    window = (prior["low"][:, 0], prior["high"][:, 0])
                    fed = clamp_rows(entered, window, ~results[parent].linear)
            draws, signal = linear_draws(layout, k, response, v, D, dT, fed, record)
            out_drive = (
                response.output_impedance
                if response.output_impedance is not None
                else response.output_resistance
            )
        if parent in pending:
            if shows_input_of(layout.plans, {parent: before, k: response}, parent, k):
                # the passive stage before shows this stage's input terminal (bounds_walk)
                results[parent] = shown_input(layout, k, response, v, D, dT, fed, results[parent])
            else:  # or its output loaded by this stage's conductance
                _, passive, passive_values, passive_fed = pending[parent]
                results[parent] = shown_loaded(
                    layout, parent, passive, passive_values, passive_fed, results[parent]
                )
            del pending[parent]
        if response is not None and settled_by_next(plan, response, layout.loads[k]):
            pending[k] = (k, response, v, fed)
        passed[k] = (signal, out_drive, response)
        if response is not None and any(c in layout.siblings for c in children[k]):
            feeding[k] = (v, fed, drawn_conductances(layout, k, D, dT, out_drive))
        if plan.block.window_only and len(children[k]) == 1:
            converters[k] = (v, fed)
            grand_responses[parent] = before
        converters.pop(parent, None)
        if parent >= 0 and k == children[parent][-1]:
            del passed[parent]  # every stage it feeds is walked: its rows are no longer needed
        results.append(draws)
    return results


def reads_through(plan, before, response) -> bool:
    """The converter input `plan` (response `before`) is driven through an impedance and the
    stage after it (`response`) knows its input terminal."""
    return (
        plan.block.window_only
        and before is not None
        and before.output_impedance is not None
        and response is not None
        and response.input_node is not None
    )


def converter_through(layout: Layout, k: int, response, v, D, dT, signal, adc: StageDraws, own) -> StageDraws:
    """The converter input's draws read at stage k's input terminal, its window checks again."""
    shown = shown_input(layout, k, response, v, D, dT, signal, adc)
    margins = dict(shown.margins)
    margins["input-high"] = own["high"][:, 0] - shown.out_hi
    margins["input-low"] = shown.out_lo - own["low"][:, 0]
    linear = np.ones(D.shape[0], dtype=bool)
    for check, value in margins.items():
        if check != "supply":
            linear &= value >= 0
    return replace(shown, margins=margins, linear=linear)


def shown_input(layout: Layout, k: int, response, v, D, dT, signal, passive: StageDraws) -> StageDraws:
    """The passive stage's draws with its span read at stage k's input terminal, per row."""
    plan, rows = layout.plans[k], D.shape[0]
    if plan.part is not None:
        offsets, bias = row_errors(layout, plan, D, dT)
    else:
        offsets = bias = np.zeros((rows, max(len(response.opamps), 1)))
    node = bounds_of(response.terminal, v, signal, offsets, bias, {BIAS_WIDTH: layout.bias_width})
    return replace(passive, out_lo=band_min(node.lo), out_hi=band_max(node.hi))


def shown_loaded(layout: Layout, k: int, response, v, signal, passive: StageDraws) -> StageDraws:
    """The passive stage's draws with its span loaded by the next stage's input conductance
    (propagation.loaded_bounds), where the next stage does not report its input terminal."""
    shown = loaded_bounds(response.output, v, signal, response.output_impedance, one_load(layout.loads[k]))
    return replace(passive, out_lo=band_min(shown.lo), out_hi=band_max(shown.hi))


def per_row(grid: np.ndarray, rows: int) -> np.ndarray:
    """A (F+1,) grid over s as a column-major (rows, F+1) array when the rows outnumber the
    frequencies: every (J, 1) x (J, F+1) product in the blocks then comes out column-major too
    (numpy keeps the memory order of the full-size operand), so its inner loops run over the
    rows (walks/signal_bounds.py, Speed). The values are the grid's, repeated; answers do not change."""
    if grid.ndim == 2:  # already per row (row_freqs)
        return np.asfortranarray(grid)
    if rows <= len(grid):
        return grid
    return np.asfortranarray(np.broadcast_to(grid, (rows, len(grid))))


def decisive_freqs(layout: Layout) -> np.ndarray:
    """The band frequencies where some checked extreme falls for the nominal circuit and for the
    all-high and all-low rows, every grid frequency between those of one extreme (when they lie
    within PEAK_SPREAD of each other; else each) and one either side, plus both band ends. A row's extreme over the band sits at a band end or at a response
    peak, and a peak moves with the row's values between where the all-high and all-low rows put
    it. Only the three rows' own frequencies were kept before: a row's band-pass peak between
    them read up to 9.8 mV low on a Q = 5 MFB band-pass, 12 mV after it (48 rows against their
    circuits solved whole, tests/references/test_per_draw_nodal.py)."""
    freqs = layout.freqs
    if len(freqs) <= 2:
        return freqs
    K = len(layout.variables)
    D = np.vstack([np.zeros(K), np.ones(K), -np.ones(K)])
    record: list = []
    walk_draws(layout, D, np.full(3, decisive_rise(layout)), record)
    return decisive_from(layout, record)


def decisive_rise(layout: Layout) -> float:
    low, high = layout.chain.conditions.temperature
    return max(abs(low - 25.0), abs(high - 25.0))


def decisive_from(layout: Layout, record: list) -> np.ndarray:
    """The band frequencies a decisive walk's `record` names (see decisive_freqs)."""
    freqs = layout.freqs
    last = len(freqs) - 1
    named: list = [[0, last]]  # the rows' own extremes and the band ends, always kept
    between: list = [[0]]  # the grid around and between them, thinned to PEAK_STEP
    for r in record:
        r = np.ravel(r).astype(int)
        if not r.size:
            continue
        named.append(r)
        low, high = int(r.min()), int(r.max())
        if freqs[high] <= PEAK_SPREAD * freqs[low]:  # one peak moved by the tolerances: all between
            between.append(np.arange(max(low - 1, 0), min(high + 1, last) + 1))
        else:  # a flat extreme read at far apart points: the neighbours of each
            between.append(np.clip(np.concatenate([r - 1, r + 1]), 0, last))
    around = thinned(freqs, np.unique(np.concatenate(between)).astype(int))
    picked = np.unique(np.concatenate([*named, around]))
    return freqs[picked.astype(int)]


def thinned(freqs: np.ndarray, picked: np.ndarray) -> np.ndarray:
    """`picked` (sorted grid indices) less the points closer than PEAK_STEP (relative) to the
    one kept before them; the last is always kept. (A loop over at most the grid's points.)"""
    kept = [int(picked[0])]
    for i in picked[1:]:
        if freqs[i] >= freqs[kept[-1]] * (1.0 + PEAK_STEP) or i == picked[-1]:
            kept.append(int(i))
    return np.asarray(kept)


class Extremes(list):
    """A walk's `record` (walk_draws) that keeps, for each checked extreme, per row: where it
    falls (argmax), and on a grid even in ln f the vertex of the parabola through the largest
    value and its two neighbours (`at`, a fractional index), its bend (y0 - 2 y1 + y2) and the
    largest value. A plain list record keeps the argmax alone."""


@dataclass(frozen=True)
class Extreme:
    argmax: np.ndarray  # (rows,) int
    at: np.ndarray  # (rows,) the parabola's vertex, in grid steps
    bend: np.ndarray  # (rows,) y0 - 2 y1 + y2 at the largest value (negative at a peak)
    top: np.ndarray  # (rows,) the largest value


def note(record: list, found: list) -> None:
    """Append each (array (rows, F), sign) of `found` to a walk's record: its extreme's index
    (sign +1: the largest, -1: the least) or, for an Extremes record, its Extreme."""
    if not isinstance(record, Extremes):
        record += [x.argmax(-1) if sign > 0 else x.argmin(-1) for x, sign in found]
        return
    for x, sign in found:
        y = np.asarray(x if sign > 0 else -x)
        best = y.argmax(-1)
        if y.shape[-1] < 3:
            zero = np.zeros(len(best))
            record.append(Extreme(best, best.astype(float), zero, y.max(-1)))
            continue
        mid = np.clip(best, 1, y.shape[-1] - 2)
        pick = np.arange(y.shape[0])
        y0, y1, y2 = (y[pick, mid + d] for d in (-1, 0, 1))
        bend = y0 - 2.0 * y1 + y2
        with np.errstate(divide="ignore", invalid="ignore"):
            shift = np.where(bend < 0, 0.5 * (y0 - y2) / np.where(bend < 0, bend, -1.0), 0.0)
        record.append(Extreme(best, mid + np.clip(shift, -1.0, 1.0), bend, y[pick, best]))


def row_freqs(layout: Layout, D: np.ndarray, dT: np.ndarray) -> np.ndarray:
    """The frequencies each row walks (rows, F), column-major: the layout's, with the peak
    columns (Layout.peaks) at the row's own peaks (RowPeaks). Without peaks: layout.freqs."""
    peaks = layout.peaks
    if peaks is None:
        return layout.freqs
    rows = D.shape[0]
    found = np.empty((rows, len(layout.freqs)), order="F")
    found[:] = layout.freqs
    if len(peaks.used):
        d = D[:, peaks.used]
        scale = np.where(peaks.tempco, np.asarray(dT, dtype=float)[:, None], 1.0) * peaks.scales
        logs = peaks.base + np.log1p(scale * d) @ peaks.slopes
    else:
        logs = np.broadcast_to(peaks.base, (rows, len(peaks.base)))
    found[:, peaks.columns] = np.clip(np.exp(logs), *peaks.band)
    return found


PEAK_WINDOW = 1.08  # peak_layout: the fit grid reaches this factor past the three rows' extremes
FIT_STEP = 1e-3  # peak_layout: the fit grid's spacing in ln f
FIT_POINTS = 257  # peak_layout: points at most on one fit grid (wider ones are spaced wider)
PEAK_READ = 1e-5  # peak_layout: the share of its value a peak may read low (columns shared)
FLAT_READ = 5e-5  # peak_layout: the same for a flat peak on fixed columns (flat_columns)
LEAST_SPREAD = 2e-5  # peak_layout: ln f apart that extremes always share one column
MOST_COLUMNS = 9  # peak_layout: columns at most for one peak the linear fit places poorly
TRUSTED = 0.75  # peak_layout: a fit missing by up to this share of the reach takes one column
WIDER = 1.6  # peak_layout: a peak that leaves its fit grid is fitted again this much wider
CHECK_ROWS = 16  # peak_layout: random rows (d uniform in [-1, 1]) the fit is checked on
CHECK_SEED = 20261204  # their generator's seed: the layout is the same on every run
FITTED = ("tolerance", "tempco")


@dataclass(frozen=True)
class _Peak:
    """One checked extreme's peak as fitted: ln f = base + x . slopes, good to `spread`; read
    low by PEAK_READ of its value `reach` off it (ln f); `residual` the fit's miss on the
    all-high and all-low rows."""

    base: float
    slopes: np.ndarray
    reach: float
    residual: float


def peak_layout(layout: Layout, decisive: np.ndarray | None = None) -> Layout:
    """The Monte Carlo layout: each row walks the band ends and the frequencies of its flat
    extremes (shared, decisive_from) and, for every response peak, a column at that row's own
    peak (Layout.peaks, row_freqs), where one shared grid through the peak's range read a
    row's own high-Q peak between its points (6.8 mV low on a Q = 5 MFB band-pass,
    tests/references/test_per_draw_nodal.py).

    The peaks: a checked extreme of the nominal, all-high and all-low rows (decisive_freqs)
    that falls inside the band within PEAK_SPREAD for the three is one moved peak. Its place
    ln f is fitted linear in the rows' features x (RowPeaks) by a walk on a grid FIT_STEP apart
    in ln f around it (the three rows' range widened by PEAK_WINDOW): the nominal row, the
    rows at d = +/-1 on each tolerance and tempco column alone (secant slopes), and the
    all-high and all-low rows, whose miss from the fit is its residual. Each row's peak is the
    vertex of the parabola through its three largest grid values. A peak read delta off in
    ln f reads |y''| delta^2 / 2 low: extremes whose fitted places stay within the reach that
    makes this PEAK_READ of their value share one column (greedy, in order of ln f); a peak
    whose residual is more than half its reach gets up to MOST_COLUMNS columns over +/- the
    residual. A peak the fit cannot follow (its vertex at the grid's edge in some row, or no
    bend) keeps the shared grid of decisive_from. `decisive`: the shared frequencies when
    the caller has them (sensitivity.linearise) and no peak is fitted."""
    freqs = layout.freqs
    if len(freqs) <= 2:
        return with_freqs(layout, freqs if decisive is None else decisive)
    K = len(layout.variables)
    rise = decisive_rise(layout)
    found = Extremes()
    walk_draws(layout, np.vstack([np.zeros(K), np.ones(K), -np.ones(K)]), np.full(3, rise), found)
    record = [e.argmax for e in found]
    last = len(freqs) - 1
    windows: dict[int, tuple[float, float]] = {}
    for e, r in enumerate(record):
        low, high = int(r.min()), int(r.max())
        if freqs[high] <= PEAK_SPREAD * freqs[low] and ((r > 0) & (r < last)).any():
            windows[e] = (float(freqs[low]), float(freqs[high]))
    fitted = fit_peaks(layout, windows, rise) if windows else {}
    if not fitted:
        if decisive is not None:
            return with_freqs(layout, decisive)
        return with_freqs(layout, decisive_from(layout, record))
    shared = decisive_from(layout, [r for e, r in enumerate(record) if e not in fitted])
    used, scales, tempco = fitted_variables(layout)
    bases, slopes = peak_columns([p for found in fitted.values() for p in found], checking_rows(layout, rise))
    columns = np.arange(len(shared), len(shared) + len(bases))
    nominal = np.clip(np.exp(bases), freqs[0], freqs[-1])
    peaks = RowPeaks(columns, bases, slopes, used, scales, tempco, (float(freqs[0]), float(freqs[-1])))
    return replace(layout, freqs=np.concatenate([shared, nominal]), peaks=peaks)


def fitted_variables(layout: Layout) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The columns a peak's place is fitted on (tolerances and temperature coefficients of
    values), their scales, and which are temperature coefficients."""
    used = [k for k, var in enumerate(layout.variables) if var.kind in FITTED]
    scales = np.array([layout.variables[k].scale for k in used], dtype=float)
    tempco = np.array([layout.variables[k].kind == "tempco" for k in used], dtype=bool)
    return np.asarray(used, dtype=np.intp), scales, tempco


def fit_peaks(layout: Layout, ranges: dict[int, tuple[float, float]], rise: float) -> dict[int, list[_Peak]]:
    """Each record entry of `ranges` (where the three rows put it) fitted (peak_layout); the
    ones the fit cannot follow are left out. A peak that leaves its grid in some row is fitted
    again once on a grid WIDER times wider either way."""
    freqs = layout.freqs
    used, scales, tempco = fitted_variables(layout)
    K, V = len(layout.variables), len(used)
    checks = np.random.default_rng(CHECK_SEED).random((CHECK_ROWS, K)) * 2.0 - 1.0
    D = np.vstack([np.zeros((2 * V + 1, K)), np.ones(K), -np.ones(K), checks])
    D[1 + 2 * np.arange(V), used] = 1.0
    D[2 + 2 * np.arange(V), used] = -1.0
    factor = np.where(tempco, rise, 1.0) * scales
    x_hi, x_lo = np.log1p(factor), np.log1p(-factor)
    X = np.log1p(factor * D[2 * V + 1 :, used])  # the checking rows' features
    fitted: dict[int, list[_Peak]] = {}
    widen = PEAK_WINDOW
    for round in range(2):
        windows = {
            e: (max(lo / widen, freqs[0]), min(hi * widen, freqs[-1])) for e, (lo, hi) in ranges.items()
        }
        again: dict[int, tuple[float, float]] = {}
        for start, stop, entries in merged_windows(windows):
            n = min(max(int(np.ceil(np.log(stop / start) / FIT_STEP)) + 1, 5), FIT_POINTS)
            step = np.log(stop / start) / (n - 1)
            found = Extremes()
            grid = with_freqs(layout, np.exp(np.log(start) + step * np.arange(n)))
            walk_draws(grid, D, np.full(len(D), rise), found)
            for e in entries:
                peak = found[e]
                inside = (peak.argmax > 0) & (peak.argmax < n - 1) & (peak.bend < 0)
                if not inside[0]:
                    continue  # the nominal row has no peak inside its grid: the shared grid
                logs = np.log(start) + step * peak.at
                if not inside.all():
                    if round == 0:
                        again[e] = ranges[e]  # the peak leaves the grid in some row
                    else:  # fixed columns over where the rows put it (a flat peak, moved far)
                        fitted[e] = flat_columns(peak, inside, logs, step, np.log(start), np.log(stop), V)
                    continue
                slopes = (logs[1 : 2 * V + 1 : 2] - logs[2 : 2 * V + 2 : 2]) / (x_hi - x_lo)
                base = float(logs[0])
                residual = float(np.max(np.abs(base + X @ slopes - logs[2 * V + 1 :])))
                curvature = -peak.bend / step**2  # |y''| per (ln f)^2, per row
                reach = float(np.min(np.sqrt(2.0 * PEAK_READ * np.abs(peak.top) / curvature)))
                reach = max(reach, LEAST_SPREAD)
                if residual > TRUSTED * reach and 1 + 2 * int(np.ceil(residual / reach)) > MOST_COLUMNS:
                    # the linear fit misses by too many reaches: fixed columns where rows put it
                    fitted[e] = flat_columns(peak, inside, logs, step, np.log(start), np.log(stop), V)
                    continue
                fitted[e] = [_Peak(base, slopes, reach, residual)]
        ranges, widen = again, widen * WIDER
        if not ranges:
            break
    return fitted


def flat_columns(peak: Extreme, inside: np.ndarray, logs, step: float, start: float, stop: float, V: int):
    """A peak that leaves even the wider fit grid in some rows (a flat one, set by a Q whose
    peak runs off towards DC as it falls to 1/sqrt(2)): fixed columns from the lowest to the
    highest place the fit rows put it (a row off the grid: that edge), 2 x its reach apart
    (reach from the sharpest row inside, for FLAT_READ), at most MOST_COLUMNS of them."""
    curvature = -peak.bend[inside] / step**2
    reach = max(float(np.min(np.sqrt(2.0 * FLAT_READ * np.abs(peak.top[inside]) / curvature))), LEAST_SPREAD)
    places = np.where(inside, logs, np.where(peak.argmax == 0, start, stop))
    low, high = float(places.min()), float(places.max())
    count = min(int(np.ceil((high - low) / (2 * reach))) + 1, MOST_COLUMNS)
    return [_Peak(float(f), np.zeros(V), reach, 0.0) for f in np.linspace(low, high, count)]


def checking_rows(layout: Layout, rise: float) -> np.ndarray:
    """The features x (RowPeaks) of the rows a fit is checked on: all-high, all-low, and
    CHECK_ROWS rows with d uniform in [-1, 1] (fit_peaks walks the same)."""
    used, scales, tempco = fitted_variables(layout)
    K = len(layout.variables)
    checks = np.random.default_rng(CHECK_SEED).random((CHECK_ROWS, K)) * 2.0 - 1.0
    D = np.vstack([np.ones(K), -np.ones(K), checks])
    return np.log1p(np.where(tempco, rise, 1.0) * scales * D[:, used])


def merged_windows(windows: dict[int, tuple[float, float]]) -> list[tuple[float, float, list[int]]]:
    """The fit ranges joined where they overlap: (start, stop, the entries inside)."""
    merged: list[tuple[float, float, list[int]]] = []
    for e, (lo, hi) in sorted(windows.items(), key=lambda item: item[1]):
        if merged and lo <= merged[-1][1]:
            start, stop, entries = merged[-1]
            merged[-1] = (start, max(stop, hi), entries + [e])
        else:
            merged.append((lo, hi, [e]))
    return merged


def peak_columns(peaks: list[_Peak], X: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(base (G,), slopes (V, G)) of the peak columns. A peak whose fit misses by its residual r
    takes m = 1 + 2 ceil(r / reach) places over +/- r (one where r <= reach / 2), each within
    half their spacing of the rows' peak; a place shares a column already taken where the two
    fitted places stay within its reach less that on the checking rows X (their features; the
    greedy grouping of peak_layout)."""
    bases: list[float] = []
    slopes: list[np.ndarray] = []
    for peak in sorted(peaks, key=lambda p: p.base):
        count = (
            1 if peak.residual <= TRUSTED * peak.reach else 1 + 2 * int(np.ceil(peak.residual / peak.reach))
        )
        covered = peak.residual if count == 1 else peak.residual / (count - 1)
        room = peak.reach - covered
        for offset in np.linspace(-peak.residual, peak.residual, count) if count > 1 else [0.0]:
            place = peak.base + float(offset)
            for g in range(len(bases)):
                if float(np.max(np.abs(bases[g] - place + X @ (slopes[g] - peak.slopes)))) <= room:
                    break
            else:
                bases.append(place)
                slopes.append(peak.slopes)
    return np.asarray(bases), np.stack(slopes, axis=1) if slopes else np.zeros((X.shape[1], 0))


def head_rows(draws: StageDraws, rows: int) -> StageDraws:
    """The first `rows` rows of a stage's draws (views)."""

    def cut(found: dict) -> dict:
        return {k: (cut(x) if isinstance(x, dict) else x[:rows]) for k, x in found.items()}

    return StageDraws(
        draws.out_lo[:rows],
        draws.out_hi[:rows],
        tuple(cut(a) for a in draws.amps),
        cut(draws.margins),
        draws.linear[:rows],
    )


def row_temperatures(chain: Chain, uniform: np.ndarray) -> np.ndarray:
    """dT = |T - 25| for T uniform over the temperature range (u in [0, 1))."""
    low, high = chain.conditions.temperature
    return np.abs(low + (high - low) * uniform - 25.0)


def slew_needed(freqs: np.ndarray, amp_hi: np.ndarray) -> np.ndarray:
    """Largest 2 pi f a(f) over the band: the sine's steepest slope (V/s)."""
    return band_max(TWO_PI * freqs * amp_hi) if amp_hi.shape[-1] else np.zeros(len(amp_hi))


def band_max(x: np.ndarray) -> np.ndarray:
    """Largest over the band (last axis). Column by column: numpy reduces a short last axis of a
    tall array some 50 times slower than it compares two columns."""
    if x.shape[-1] > 16:
        return x.max(axis=-1)
    found = x[..., 0]
    for column in range(1, x.shape[-1]):
        found = np.maximum(found, x[..., column])
    return found


def band_min(x: np.ndarray) -> np.ndarray:
    return -band_max(-x)


def bounds_of(node, v, signal, offsets, bias, known: dict):
    """The node's per-row bounds, found once per stage (`known`: see bounds_walk.bounds_once; its
    BIAS_WIDTH entry, from the layout, picks how the bias currents enter: Layout.bias_width;
    without it they are the signed shift)."""
    if id(node) not in known:
        shift = shift_of(node, offsets, bias)
        if known.get(BIAS_WIDTH, False):
            width = bias_width_of(node, bias)
        else:
            width = 0.0
            if node.bias_gain is not None:
                for j in range(bias.shape[1]):  # op amps of the stage, not draws
                    shift = shift + node.bias_gain[:, j] * bias[:, j]
        known[id(node)] = (node, node_bounds(node, v, signal, width, shift))
    return known[id(node)][1]


def row_gain(node, rows: int) -> np.ndarray:
    """max |H| per row of a node from the chain signal over the band (bounds_walk.largest_gain)."""
    transfer = node.transfers.get("in")
    if transfer is None:
        return np.zeros(rows)
    return np.broadcast_to(np.abs(transfer).max(axis=-1), (rows,))


def clipped_slew(need: np.ndarray, amp, slope, keeping: bool) -> np.ndarray:
    """A row fed a clipped signal (its slope bound, per row, NaN where it has none) needs its
    slope bound through this op amp's gain, not the sine's read from held amplitudes; after a
    filter that may ring, no less than the amplitudes' (bounds_walk.opamp_measure, per row)."""
    if slope is None:
        return need
    through = row_gain(amp.output, need.shape[0]) * np.nan_to_num(slope)
    return np.where(np.isnan(slope), need, through if keeping else np.maximum(need, through))


def opamp_draws(
    part,
    amp,
    v,
    signal,
    offsets,
    bias,
    freqs,
    load,
    pos,
    neg,
    record: list | None,
    known: dict,
    keeping=False,
):
    """One op amp's margins per row (the per-row twin of bounds_walk.opamp_measure)."""
    out = bounds_of(amp.output, v, signal, offsets, bias, known)
    plus = bounds_of(amp.plus, v, signal, offsets, bias, known)
    current = bounds_of(amp.current, v, signal, offsets, bias, known)
    out_hi, out_lo = band_max(out.hi), band_min(out.lo)
    if record is not None:
        note(
            record,
            [
                (out.hi, 1),
                (out.lo, -1),
                (plus.hi, 1),
                (plus.lo, -1),
                (np.maximum(np.abs(current.hi), np.abs(current.lo)), 1),
                (freqs * out.amp_hi, 1),
            ],
        )
    sourced, sunk = load_currents(band_max(current.hi), band_min(current.lo), out_hi, out_lo, load)
    drop_high, drop_low = output_drops(part, sourced, sunk)
    low, high = neg + part.output_headroom[1] + drop_low, pos - part.output_headroom[0] - drop_high
    in_hi, in_lo = band_max(plus.hi), band_min(plus.lo)
    need = clipped_slew(slew_needed(freqs, out.amp_hi), amp, getattr(signal, "slope", None), keeping)
    margins = opamp_margins(part, pos, neg, out_hi, out_lo, in_hi, in_lo, sourced, sunk, need)
    spans = {
        "out-low": out_lo,
        "out-high": out_hi,
        "in-low": in_lo,
        "in-high": in_hi,
        "window-low": low,
        "window-high": high,
        # where the row's output sits when it clips (bounds_walk.clip_window): its rails less
        # the headroom, no current drop (the drop at its unclipped extreme is the largest)
        "window-clip-low": neg + part.output_headroom[1],
        "window-clip-high": pos - part.output_headroom[0],
    }
    return margins, spans


def stage_margins(amps: list[dict], plan: StagePlan, pos, neg) -> dict[str, np.ndarray]:
    margins: dict[str, np.ndarray] = {}
    for found in amps:
        for check, value in found.items():
            margins[check] = value if check not in margins else np.minimum(margins[check], value)
    if plan.part is not None:
        span = pos - neg
        margins["supply"] = np.minimum(span - plan.part.supply[0], plan.part.supply[1] - span)
    return margins


def linear_draws(layout: Layout, k: int, response, v, D, dT, signal, record=None):
    plan = layout.plans[k]
    rows = D.shape[0]
    if plan.part is not None:
        offsets, bias = row_errors(layout, plan, D, dT)
    else:
        offsets = bias = np.zeros((rows, len(response.opamps)))
    known: dict = {BIAS_WIDTH: layout.bias_width}
    out = bounds_of(response.output, v, signal, offsets, bias, known)
    pos, neg = row_rails(layout, plan, D)
    found = [
        opamp_draws(
            plan.part,
            amp,
            v,
            signal,
            offsets,
            bias,
            layout.freqs,
            layout.loads[k] if amp.output is response.output else (),
            pos,
            neg,
            record,
            known,
            plan.block.name in SLOPE_KEEPING,
        )
        for amp in response.opamps
    ]
    margins = stage_margins([m for m, _ in found], plan, pos, neg)
    out_hi, out_lo = band_max(out.hi), band_min(out.lo)
    if record is not None:
        note(record, [(out.hi, 1), (out.lo, -1)])
    window = (
        (found[-1][1]["window-clip-low"], found[-1][1]["window-clip-high"]) if found else None
    )  # what it hands on
    if plan.block.window_only:
        window = (v["low"][:, 0], v["high"][:, 0])
        if converter_loaded(plan, response, layout.loads[k]):  # its node loaded (bounds_walk)
            shown = loaded_bounds(
                response.output, v, signal, response.output_impedance, one_load(layout.loads[k])
            )
            out_hi, out_lo = band_max(shown.hi), band_min(shown.lo)
        margins["input-high"], margins["input-low"] = window[1] - out_hi, out_lo - window[0]
    linear = np.ones(rows, dtype=bool)
    for check, value in margins.items():
        if check != "supply":
            linear &= value >= 0
    passed = Signal(
        hi=out.hi,
        lo=out.lo,
        amp_lo=out.amp_lo,
        amp_hi=out.amp_hi,
        slope=passed_slope_rows(plan, response, signal),
    )
    if window is not None and not linear.all():
        clip = None
        if found:  # the clipped output is no steeper than the unclipped need, nor the slew rate
            assert plan.part is not None  # `found` holds op-amp margins
            clip = plan.part.slew - np.maximum(found[-1][0]["slew"], 0.0)
        passed = clamp_rows(passed, window, ~linear, clip)
    draws = StageDraws(out_lo, out_hi, tuple(m | {"spans": s} for m, s in found), margins, linear)
    return draws, passed


def passed_slope_rows(plan: StagePlan, response, signal):
    """Per row, the slope bound a linear stage hands on from the one it is fed (NaN: none; None:
    no row has one), through a stage whose impulse response keeps one sign (SLOPE_KEEPING)."""
    slope = getattr(signal, "slope", None)
    if slope is None:
        return None
    if plan.block.name not in SLOPE_KEEPING:
        return np.full(np.shape(slope), np.nan)
    out = row_gain(response.output, np.shape(slope)[0]) * slope
    return out if plan.part is None else np.minimum(out, plan.part.slew)


def clamp_rows(signal: Signal, window, rows: np.ndarray, slope=None) -> Signal:
    """What each clipping row passes on: its output held inside its own window, and its slope
    bound `slope` per row where given (the rows that do not clip keep the one they had)."""
    low = np.broadcast_to(window[0], rows.shape)[:, None]
    high = np.broadcast_to(window[1], rows.shape)[:, None]
    half = np.maximum((high - low) / 2.0, 0.0)
    pick = rows[:, None]
    amp_lo = np.where(pick, np.minimum(signal.amp_lo, half), signal.amp_lo)
    amp_hi = (
        np.where(pick, np.minimum(signal.amp_hi, half), signal.amp_hi)
        if signal.amp_lo is not signal.amp_hi
        else amp_lo
    )  # one stays one (walks/signal_bounds.py)
    kept = signal.slope
    if slope is not None:
        before = np.full(rows.shape, np.nan) if kept is None else kept
        kept = np.where(rows, np.broadcast_to(slope, rows.shape), before)
    return Signal(
        hi=np.where(pick, np.clip(signal.hi, low, high), signal.hi),
        lo=np.where(pick, np.clip(signal.lo, low, high), signal.lo),
        amp_lo=amp_lo,
        amp_hi=amp_hi,
        slope=kept,
    )


def saturated_levels_rows(part, pos, neg, conductance, to=None):
    """opamp.saturated_levels for one circuit per row: the loaded level at each rail; `to`: where
    the load returns per row when the stage has `load_to` (returned_levels.returned_level)."""
    if to is not None and np.any(to != 0.0):
        high_ideal, low_ideal = pos - part.output_headroom[0], neg + part.output_headroom[1]
        return returned_level(part, low_ideal, conductance, to), returned_level(
            part, high_ideal, conductance, to
        )

    def loaded(level):
        current = np.minimum(
            np.abs(level) * conductance / (1 + part.output_resistance * conductance), part.output_current
        )
        return level - np.sign(level) * part.output_resistance * current

    high_ideal, low_ideal = pos - part.output_headroom[0], neg + part.output_headroom[1]
    if part.output_headroom_curve:
        return curve_level(part, low_ideal, conductance, False), curve_level(
            part, high_ideal, conductance, True
        )
    return np.maximum(loaded(low_ideal), low_ideal), np.minimum(loaded(high_ideal), high_ideal)


def comparator_rows(threshold: np.ndarray, offset: np.ndarray, bias: np.ndarray, drive, invert: bool):
    """(flip level, pin shift) of a plain comparator per row (blocks/comparator.py): the row's
    signed offset Vos and bias current Ib, drawn into the signal's pin through the resistance Rd
    that drives it, put that pin at Vsig - Ib Rd, and the output flips where V+ + Vos = V-:
        invert = false:  Vsig = threshold - Vos + Ib Rd      invert = true:  Vsig = threshold + Vos + Ib Rd
    `drive`: a resistance, or a passive stage's Thevenin impedance per row and s (DC first)."""
    rd = np.asarray(drive)
    if rd.ndim == 2:
        rd = rd[:, 0]
    drop = bias * np.real(rd)
    return threshold + (offset if invert else -offset) + drop, drop


def saturated_draws(layout: Layout, k: int, v, D, signal, dT=None, drive=0.0):
    """A saturated-by-design stage per row: levels from the row's rails, inputs against the window.
    A comparator flips at its threshold moved by the row's own offset and bias current through
    the resistance driving it (comparator_rows); blocks without a single `threshold` field use
    the corners thresholds and reaches (the errors there at their worst sign)."""
    plan, corner = layout.plans[k], layout.corner[k].measure
    part, rows = plan.part, D.shape[0]
    assert part is not None  # a comparator is an op amp (preparation)
    pos, neg = row_rails(layout, plan, D)
    conductance = 1.0 / v["load"][:, 0] if "load" in v else np.zeros(rows)
    to = v["load_to"][:, 0] if "load_to" in v else 0.0  # where the load returns (returned_levels)
    low, high = saturated_levels_rows(part, pos, neg, conductance, to)
    if isinstance(signal, Signal):
        sig_lo, sig_hi = band_min(signal.lo), band_max(signal.hi)
    else:
        sig_lo, sig_hi = np.full(rows, signal.common[0]), np.full(rows, signal.common[1])
    if "threshold" in v:
        offsets, biases = row_errors(layout, plan, D, np.zeros(rows) if dT is None else dT)
        invert = bool(plan.flags.get("invert"))
        flip, drop = comparator_rows(v["threshold"][:, 0], offsets[:, 0], biases[:, 0], drive, invert)
        above, below = sig_hi > flip, sig_lo < flip
        reach_low, reach_high = (above, below) if invert else (below, above)
        # the pins: the signal's moved by the bias drop, the threshold's a stiff source
        thr_lo = thr_hi = v["threshold"][:, 0]
        sig_lo, sig_hi = sig_lo - drop, sig_hi - drop
    else:
        # the corners walk's saturated_stage sets both
        assert corner.thresholds is not None and corner.reaches is not None
        (rise_lo, rise_hi), (fall_lo, fall_hi) = corner.thresholds
        thr_lo, thr_hi = min(rise_lo, fall_lo), max(rise_hi, fall_hi)
        reach_low, reach_high = (np.full(rows, r) for r in corner.reaches)
    in_lo, in_hi = np.minimum(sig_lo, thr_lo), np.maximum(sig_hi, thr_hi)
    margins = {
        "input-high": pos - part.input_headroom[0] - in_hi,
        "input-low": in_lo - (neg + part.input_headroom[1]),
        "current": part.output_current - np.maximum(np.abs(high - to), np.abs(low - to)) * conductance,
    }
    margins.update(
        differential_margin(
            part,
            saturated_differential(
                plan.stage.block, v, plan.flags, (sig_lo, sig_hi), ((low, low), (high, high))
            ),
        )
    )
    amp = dict(margins)
    margins = stage_margins([margins], plan, pos, neg)
    linear = np.ones(rows, dtype=bool)
    for check in SATURATED_CHECKS:
        linear &= margins[check] >= 0
    top = np.where(reach_high, high, low)
    bottom = np.where(reach_low, low, high)
    zero = np.zeros((rows, layout.freqs.shape[-1]), order="F")  # column-major: walks/signal_bounds.py, Speed
    spans = {
        "out-low": bottom,
        "out-high": top,
        "in-low": in_lo,
        "in-high": in_hi,
        "window-low": low,
        "window-high": high,
    }
    passed = Signal(hi=zero + top[:, None], lo=zero + bottom[:, None], amp_lo=zero, amp_hi=zero)
    return StageDraws(bottom, top, (amp | {"spans": spans},), margins, linear), passed
