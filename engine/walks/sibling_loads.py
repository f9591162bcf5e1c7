"""A passive stage that feeds several stages: each one meets the passive node loaded by the others.

A divider, RC low-pass or AC coupling drives what it feeds as a Thevenin source (Vth, Z;
blocks/passive.py). With several stages on its output, the stage k meets that source with every
other stage's input on the node: a conductance G (their input conductances added) to a return
Vr (each one's return voltage at its worst, widened by its op amp's offset as for an op-amp
output feeding several stages, bounds_walk.load_behind_stage) and their pins' bias currents I,
either way. Thevenin's and Millman's theorems (Horowitz & Hill, The Art of Electronics, ch. 1)
give what stage k meets:

    Zk  = Z / (1 + Z G)                                  the Thevenin impedance, per frequency
    Vk  = s Vth + (1 - s0) Vr + Zk0 I,   s = 1 / (1 + Z G)   (s0, Zk0: at DC)

Vr and I are DC; each end of their ranges moves Vk by (1 - s0) dVr + Zk0 dI, added as a shift
(the middle) and a +/- error (half the span, and the bias currents whole). The corners take G at
both ends of the others' tolerance (least, largest), as rows of their own beside the passive
stage's (each row of stage k meets the voltage and the impedance of one circuit, as after a
passive stage feeding one; the node voltage is monotonic in G: loaded_bounds). A drawn circuit
takes G per row, each sibling's own conductance in that circuit (InputLoad.rows).

Only loads that are a conductance to a fixed return are read this way: a stage whose input
follows the signal (an RC low-pass, an active filter's first resistor to its output) or blocks
DC (an AC coupling), a passive stage feeding further stages and a converter input feeding further
stages are refused beside a sibling, with a located message.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from railroom.engine.circuit.blocks.base import BlockResponse, InputLoad, Node, thevenin
from railroom.engine.circuit.model import InputError, Problem
from railroom.engine.circuit.opamp import TWO_PI
from railroom.engine.circuit.part_limits import bias_at


@dataclass(frozen=True)
class Others:
    """What the other stages fed by a passive stage draw from its node, one entry per stage
    (its index and its input load: conductance ends, returns widened by its offset), and the
    bias currents of their pins, A."""

    loads: tuple[tuple[int, InputLoad], ...] = ()
    pins: float = 0.0
    # per Laplace point (F+1,): sum over the virtual-earth ones of G |H| / |A| (finite_gain)
    kappa: np.ndarray | None = field(default=None, compare=False, repr=False)
    kappa_freqs: np.ndarray | None = field(default=None, compare=False, repr=False)  # its band grid

    def kappa_at(self, freqs) -> np.ndarray | None:
        """kappa on the band frequencies `freqs` (DC first): its own where it was found there,
        else its largest over its grid (an outside bound)."""
        if self.kappa is None or self.kappa_freqs is None:
            return None
        freqs = np.asarray(freqs, dtype=float)
        if freqs.ndim == 2:  # frequencies per row (circuit_walk.row_freqs): off its grid
            return np.full(freqs.shape[-1] + 1, float(np.max(self.kappa)))
        at = np.searchsorted(self.kappa_freqs, freqs)
        at = np.minimum(at, len(self.kappa_freqs) - 1)
        if len(self.kappa_freqs) and np.allclose(self.kappa_freqs[at], freqs, rtol=1e-12, atol=0.0):
            return self.kappa[np.concatenate(([0], at + 1))]
        return np.full(len(freqs) + 1, float(np.max(self.kappa)))

    @property
    def ends(self) -> tuple[float, float]:
        """Their total conductance at its least and largest, S."""
        return (sum(load.least for _, load in self.loads), sum(load.conductance for _, load in self.loads))

    def weighted(self) -> tuple[float, float]:
        """The least and largest sum of G x Vr over them (each at the ends of its conductance and
        of its returns): Millman's numerator, bounded from outside."""
        low = high = 0.0
        for _, load in self.loads:
            products = [g * r for g in (load.least, load.conductance) for r in load.returns]
            low, high = low + min(products), high + max(products)
        return low, high


@dataclass(frozen=True)
class SiblingView:
    """The passive stage's output as one of the stages it feeds meets it (module docstring):
    rows = reps x the passive stage's rows (variant-major: row g * n + j is G end g with the
    passive stage's row j), the response (the node and its impedance Zk), the passive stage's
    values tiled so, and the per-row shift and error of the returns and pins."""

    response: BlockResponse
    values: dict
    rows: int
    reps: int
    shift: np.ndarray
    error: np.ndarray
    share: float  # largest |s| over rows and frequencies: the slope bound passes through it
    load: Others = Others()  # what the others draw (their conductance ends, returns, pins)
    magnitude: np.ndarray | None = None  # |s| per row and Laplace point (gains.py)
    eps: np.ndarray | None = None  # |Zk| kappa per row and Laplace point (finite_gain)


def passive_feeding_several(plans, responses, parent: int, children) -> bool:
    """Stage `parent` is a passive stage with a Thevenin output (not a converter input) that
    feeds more than one stage."""
    return (
        parent >= 0
        and len(children[parent]) > 1
        and responses[parent] is not None
        and responses[parent].output_impedance is not None
        and not plans[parent].block.window_only
    )


def sibling_load(plans, probe, values, parent: int, child: int, children, rise, hot, nominal) -> Others:
    """What the other stages fed by `parent` draw from its node, as stage `child` meets it.
    `probe`: each stage's response (those fed by `parent` with its plain Thevenin drive)."""
    from railroom.engine.walks.bounds_walk import load_behind_stage

    loads, pins = [], 0.0
    for other in children[parent]:
        refuse_unless_resistive(plans, probe, values, parent, other, children, rise)
        if other == child:
            continue
        only = [list(c) for c in children]
        only[parent] = [other]
        for load in load_behind_stage(plans, probe, parent, rise, values, tuple(map(tuple, only))):
            if load.conductance > 0:
                loads.append((other, load))
        part = plans[other].part
        if part is not None and not nominal:
            pins += 2.0 * bias_at(part, hot)
    return Others(tuple(loads), pins)


def refuse_unless_resistive(plans, probe, values, parent: int, other: int, children, rise) -> None:
    """A located problem unless stage `other` loads its parent's node as a conductance to a
    fixed return (module docstring)."""
    from railroom.engine.walks.bounds_walk import load_behind_stage

    plan = plans[other]
    only = [list(c) for c in children]
    only[parent] = [other]
    loads = load_behind_stage(plans, probe, parent, rise, values, tuple(map(tuple, only)))
    why = None
    if plan.block.window_only and children[other]:
        why = "a converter input fed by a passive stage that feeds several stages must end its branch"
    elif probe[other] is not None and probe[other].output_impedance is not None and children[other]:
        why = "a passive stage beside another stage on a passive output must end its branch"
    elif any(load.follows or load.blocks_dc for load in loads):
        why = (
            f"its input ({plan.block.name}) follows the signal or blocks DC, so it cannot share "
            "a passive output with another stage"
        )
    if why is None:
        return
    stage, source = plan.stage, plans[parent].stage
    raise InputError(
        [
            Problem(
                plan.path,
                stage.lines.get("from", stage.line),
                f"stage.{plan.index}.from",
                f"stage {plan.index} ({stage.name!r}) takes its input from stage {plans[parent].index} "
                f"({source.name!r}, {source.block}) beside another stage: {why}; take the branch "
                "from an op-amp stage, or buffer it",
            )
        ]
    )


def sibling_view(response: BlockResponse, values: dict, rows: int, load: Others) -> SiblingView:
    """The passive stage's Thevenin source as one stage it feeds meets it (corners: G at both
    ends of the others' conductance, one block of rows each)."""
    assert response.output_impedance is not None  # a passive stage: it has one
    z0 = np.atleast_2d(response.output_impedance)
    impedance = np.broadcast_to(z0, (rows, z0.shape[-1]))
    ends = sorted(set(load.ends))
    shares = [1.0 / (1.0 + impedance * g) for g in ends]
    share = np.concatenate(shares, axis=0)
    reps = len(ends)
    tiled = {name: tile_rows(x, rows, reps) for name, x in values.items()}
    transfers = {key: tile_rows(t, rows, reps) * share for key, t in response.output.transfers.items()}
    z = np.concatenate([impedance] * reps, axis=0) * share
    shift, error = return_terms(z, *load.weighted(), load.pins)
    node = Node(transfers=transfers)
    return SiblingView(
        response=BlockResponse(output=node, **thevenin(z)),
        values=tiled,
        rows=rows * reps,
        reps=reps,
        shift=shift,
        error=error,
        share=float(np.max(np.abs(share))),
        load=load,
        magnitude=np.abs(share),
        eps=None if load.kappa is None else np.abs(z) * load.kappa,
    )


def return_terms(impedance: np.ndarray, low, high, pins: float) -> tuple[np.ndarray, np.ndarray]:
    """(shift, error) per row (J,): Zk0 times the middle of Millman's numerator sum G Vr (from
    `low` to `high`), and Zk0 times half its span plus the pins' currents (module docstring)."""
    dc = np.atleast_2d(impedance)[:, 0].real
    return dc * (low + high) / 2.0, dc * ((high - low) / 2.0 + pins)


def tile_rows(x, rows: int, reps: int):
    """A (rows, ...) array as (reps * rows, ...), variant-major; one shared row stays one (it
    broadcasts)."""
    x = np.asarray(x)
    if reps == 1 or x.ndim == 0 or rows == 1 or x.shape[0] != rows:
        return x
    return np.concatenate([x] * reps, axis=0)


def tiled_signal(signal, rows: int, reps: int):
    """The signal that entered the passive stage, on the view's rows."""
    if reps == 1 or rows == 1 or np.ndim(signal.hi) < 2 or signal.hi.shape[0] != rows:
        return signal
    return replace(
        signal,
        hi=tile_rows(signal.hi, rows, reps),
        lo=tile_rows(signal.lo, rows, reps),
        amp_lo=tile_rows(signal.amp_lo, rows, reps),
        amp_hi=tile_rows(signal.amp_hi, rows, reps),
    )


def row_view(response: BlockResponse, values: dict, conductances: dict, k: int, load: Others, rows: int):
    """One drawn circuit per row: the node as stage k meets it with the others' conductances of
    that very circuit (`conductances`: stage -> (J, 1)), their returns at their worst. Returns
    (node, impedance Zk (J, F+1), shift, error)."""
    impedance = np.asarray(response.output_impedance)
    total = np.zeros((rows, 1))
    low = np.zeros((rows, 1))
    high = np.zeros((rows, 1))
    for other, one in load.loads:
        g = conductances[other]
        total = total + g
        low, high = low + g * one.returns[0], high + g * one.returns[1]
    share = 1.0 / (1.0 + impedance * total)
    z = impedance * share
    node = Node(transfers={key: t * share for key, t in response.output.transfers.items()})
    shift, error = return_terms(z, low[:, 0], high[:, 0], load.pins)
    return node, z, shift, error


def family_start(plans, responses, children, first: int) -> int:
    """The first stage to prepare again after a change at `first`: the first stage fed by a
    passive stage feeding several when one of them is at or after `first` (each one's view
    reads the others' loads)."""
    start = first
    for parent, fed in enumerate(children):
        if len(fed) > 1 and parent < len(responses) and min(fed) < first <= max(fed):
            if passive_feeding_several(plans, responses, parent, children):
                start = min(start, min(fed))
    return start


def family_views(plans, values, responses, parent: int, children, rise, nominal, hot, probe_stage, s_grid):
    """The view of every stage fed by the passive stage `parent` (stage index -> SiblingView).
    `probe_stage(c)`: stage c's (values, response) with the passive stage's plain drive."""
    probe = list(responses) + [None] * (len(plans) - len(responses))
    probe_values = list(values) + [None] * (len(plans) - len(values))
    for c in children[parent]:
        probe_values[c], probe[c] = probe_stage(c)
    rows = values[parent]["drive"].shape[0]
    found = {}
    for c in children[parent]:
        load = sibling_load(plans, probe, probe_values, parent, c, children, rise, hot, nominal)
        load = replace(
            load, kappa=finite_gain(plans, probe, load, s_grid), kappa_freqs=s_grid[1:].imag / TWO_PI
        )
        found[c] = sibling_view(responses[parent], values[parent], rows, load)
    return found


VIRTUAL_EARTH = frozenset({"inverting", "summing", "integrator"})
# blocks whose input follows the signal or blocks DC (their InputLoad says so; the loader refuses
# them beside another stage on a passive output: chain_file._check_branches; a test keeps this
# list equal to what the blocks report)
NOT_SHARING = frozenset(
    {"rc_lowpass", "ac_coupling", "sallen_key_lowpass", "sallen_key_highpass", "mfb_lowpass", "mfb_bandpass"}
)


def finite_gain(plans, probe, load: Others, s) -> np.ndarray | None:
    """kappa(s) = sum over the others whose input resistor returns to an op amp's - pin of
    G |H| / |A(s)| (largest G and |H| over their corners). That pin is not held at its
    reference: V- = ref + Vos - Vout / A(s) (opamp.py), with |Vout| <= |H| |Vth| (H its output per
    volt of the passive stage's Thevenin voltage, met alone: the others' loads only lower the
    node); through Zk the node moves by at most |Zk| kappa max|Vth| (the walks add it)."""
    from railroom.engine.circuit.opamp import inverse_open_loop

    total = None
    for other, one in load.loads:
        response = probe[other]
        if plans[other].block.name not in VIRTUAL_EARTH or response is None:
            continue
        gain = np.max(np.abs(np.atleast_2d(response.output.transfers.get("in", 0.0))), axis=0)
        term = one.conductance * gain * np.abs(inverse_open_loop(plans[other].part, s))
        total = term if total is None else total + term
    return total


def drawn_conductances(layout, parent: int, D, dT, drive) -> dict[int, np.ndarray]:
    """Per stage fed by `parent`, its input conductance in each drawn circuit (J, 1): the block's
    own per-row figure (InputLoad.rows) with the row's values (circuit_walk.stage_values)."""
    from railroom.engine.circuit.opamp import inverse_open_loop
    from railroom.engine.walks import circuit_walk as dw
    from railroom.engine.walks.bounds_walk import schmitt_load, tree_children, plan_parents

    children = tree_children(plan_parents(layout.plans))
    s = np.zeros(1, dtype=complex)  # DC: a conductance to a fixed return does not move with s
    found = {}
    for c in children[parent]:
        plan = layout.plans[c]
        v = dw.stage_values(layout, plan, D, dT)
        if plan.block.saturates:
            load = schmitt_load(plan, v)
        elif plan.block.window_only:
            load = InputLoad()
        else:
            v = {**v, "drive": np.asarray(drive)[..., :1]}
            load = plan.block.respond(v, s, inverse_open_loop(plan.part, s), v["drive"], False).input_load
        rows = load.rows if load.rows is not None else np.full((D.shape[0], 1), load.conductance)
        found[c] = np.broadcast_to(rows, (D.shape[0], 1))
    return found


def drawn_view(
    response: BlockResponse, values: dict, fed, conductances: dict, k: int, load: Others, thevenin, freqs
):
    """What stage k meets per drawn circuit from the passive stage `response` (values, the
    signal it was fed `fed`, what it hands on `thevenin`) that feeds several: the node with the
    others' conductances of that circuit on it. Returns (signal, the impedance Zk there)."""
    from railroom.engine.walks.signal_bounds import Signal, single_bounds

    node, z, shift, error = row_view(response, values, conductances, k, load, fed.hi.shape[0])
    out = single_bounds(node, values, fed, error, shift)
    kappa = load.kappa_at(freqs)
    eps = None if kappa is None else np.abs(z) * kappa
    out = widened(out, eps, thevenin.hi, thevenin.lo, thevenin.amp_hi)
    return Signal(hi=out.hi, lo=out.lo, amp_lo=out.amp_lo, amp_hi=out.amp_hi), z


def widened(bounds, eps: np.ndarray | None, thevenin_hi, thevenin_lo, thevenin_amp):
    """The node's bounds widened by the others' finite gain (finite_gain): at each band
    frequency by max(eps at DC, eps there) x max|Vth| on both ends, and the amplitudes by
    eps x Vth's largest amplitude. `eps` (J, F+1); the Thevenin figures (J, F) or (F,)."""
    if eps is None:
        return bounds
    top = np.maximum(np.abs(thevenin_hi), np.abs(thevenin_lo))
    at = eps[:, 1:] if eps.shape[-1] > 1 else eps
    extra = np.maximum(eps[:, :1], at) * top
    swing = at * thevenin_amp
    return replace(
        bounds,
        hi=bounds.hi + extra,
        lo=bounds.lo - extra,
        amp_hi=bounds.amp_hi + swing,
        amp_lo=np.maximum(bounds.amp_lo - swing, 0.0),
    )
