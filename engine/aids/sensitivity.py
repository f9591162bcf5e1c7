"""Which toleranced quantity moves a stage's limiting margin most: linearisation about nominal.

Every toleranced quantity is a column d of the draw walk (engine/walks/circuit_walk.py). The gradient of
every margin and span over every column, dm/dd_i (the change per full tolerance), comes from
central differences (m(+h) - m(-h)) / 2h in one pass down the chain (walk_linearised): each
stage is walked on its own columns and on a few directions of the state it is fed, and the chain
rule carries the rest, so the cost is linear in stages. plain_gradients is the whole-chain walk
with rows at +/-h on every column (cost columns x stages), kept to check it against.

    worst case:  share_i = |dm/dd_i| / sum_j |dm/dd_j|          (linear extreme value analysis)
    statistical: share_i = (dm/dd_i s)^2 / sum_j (dm/dd_j s)^2  (root-sum-square, ECSS-Q-HB-30-01A)

with s = 1/sqrt(3) for a uniform tolerance and 1/3 for a normal one (tolerance = 3 sigma). A
field's tolerance and temperature coefficient, and an op amp's offset and its drift, are one
quantity each (the thing a designer changes).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from railroom.engine.walks import circuit_walk as dw
from railroom.engine.circuit.blocks.base import BlockResponse
from railroom.engine.circuit.opamp import inverse_open_loop, laplace_grid
from railroom.engine.walks.signal_bounds import Signal
from railroom.engine.verdict.results import Sensitivity
from railroom.engine.walks.bounds_walk import settled_by_next, shows_input

STEP = 1e-3  # h, in units of the full tolerance
DIRECTION_STEP = STEP  # h along the state directions
NOISE = 1e-12  # a chain-rule entry this small beside its terms is rounding
PLAIN_UP_TO = 64  # columns: up to here the plain walk is the cheaper (measured: crossover near 80)
RANK_TOL = 1e-10  # state directions kept: singular values above this share of the largest
SHOWN = 5  # quantities listed per stage
SMALLEST_SHARE = 0.01
TIE = 1e-9  # shares this close (relative) rank as equal


@dataclass(frozen=True)
class Linearised:
    """Every per-row quantity of the draw walk as one array: [m(0), dm/dd_1, ..., dm/dd_K]."""

    layout: dw.Layout
    draws: list[dw.StageDraws]  # each quantity: its nominal value, then its gradient (K,)
    decisive: np.ndarray | None = None  # circuit_walk.decisive_freqs(layout), when asked for
    entering: list | None = None  # what each stage is fed (walk_linearised), to re-walk from it

    def nominal(self, x: np.ndarray) -> float:
        return float(x[0])

    def gradient(self, x: np.ndarray) -> np.ndarray:
        return x[1:]

    @cached_property
    def groups(self) -> tuple[np.ndarray, tuple[dw.Variable, ...]]:
        """Each column's quantity (a field's tolerance and tempco, an op amp's offset and
        drift are one) as an index, groups in first-appearance order, and each group's first
        column's variable."""
        found: dict[str, int] = {}
        first: list[dw.Variable] = []
        index = np.empty(len(self.layout.variables), dtype=np.intp)
        for k, var in enumerate(self.layout.variables):
            if var.label not in found:
                found[var.label] = len(first)
                first.append(var)
            index[k] = found[var.label]
        return index, tuple(first)

    def columns_of(self, stage: int) -> list[int]:
        """The columns of plan index `stage`'s own quantities."""
        return self._columns.get(stage, [])

    @cached_property
    def _columns(self) -> dict[int | None, list[int]]:
        found: dict[int | None, list[int]] = {}
        for k, var in enumerate(self.layout.variables):
            found.setdefault(var.stage, []).append(k)
        return found


def in_one_line(chain) -> bool:
    """No stage takes its input from anywhere but the stage before it, and no named nets: the
    chains the one-pass linearisation (sensitivity.walk_linearised) is built and tested for."""
    return not chain.nets and all(stage.feed is None for stage in chain.stages)


def linearise(layout: dw.Layout, decisive: bool = False) -> Linearised:
    """Margins at nominal and their gradients over every column; drifts over the worst
    temperature rise. `decisive`: also find circuit_walk.decisive_freqs(layout). Up to PLAIN_UP_TO
    columns one whole-chain walk with 2K + 1 rows is the cheaper (plain_gradients, the decisive
    rows sharing it); beyond, the one pass (walk_linearised), whose cost is linear in stages."""
    if len(layout.variables) <= PLAIN_UP_TO or not in_one_line(layout.chain):
        # a tree or shared nets: the one pass carries a stage's state from the stage before it
        # only, so those chains take the whole-chain walk (exact, stages x columns)
        return plain_linearised(layout, decisive)
    entering: list = []
    draws = walk_linearised(layout, entering)
    freqs = dw.decisive_freqs(layout) if decisive else None
    return Linearised(layout, draws, freqs, entering)


def plain_linearised(layout: dw.Layout, decisive: bool = False) -> Linearised:
    """Rows at nominal and at d_i = +/-h for each column in one vectorised walk; with
    `decisive`, the all-high and all-low rows of circuit_walk.decisive_freqs appended (their
    temperature rise is the same, the largest distance from 25 C). Each row is walked on its
    own (circuit_walk module docstring), so sharing the walk changes no row."""
    K = len(layout.variables)
    rows = 2 * K + 1
    extra = 2 if decisive and len(layout.freqs) > 2 else 0
    D = np.zeros((rows + extra, K))
    D[1 + 2 * np.arange(K), np.arange(K)] = STEP
    D[2 + 2 * np.arange(K), np.arange(K)] = -STEP
    if extra:
        D[rows], D[rows + 1] = 1.0, -1.0
    rise = layout.chain.conditions.worst_temperature_rise
    record: list | None = [] if extra else None
    walked = dw.walk_draws(dw.signed_rows(layout), D, np.full(rows + extra, rise), record)
    freqs = layout.freqs if decisive else None
    if record:
        freqs = dw.decisive_from(layout, [np.ravel(r)[[0, rows, rows + 1]] for r in record])
    draws = [_as_gradients(dw.head_rows(d, rows), _differences) for d in walked]
    return Linearised(layout, draws, freqs)


def _differences(x: np.ndarray) -> np.ndarray:
    return np.concatenate([x[:1], (x[1::2] - x[2::2]) / (2 * STEP)])


def plain_gradients(layout: dw.Layout) -> list[dw.StageDraws]:
    """The same arrays by plain central differences: one whole-chain walk with rows at nominal
    and at d_i = +/-h for every column i (2K + 1 rows, cost K x stages)."""
    return plain_linearised(layout).draws


def _as_gradients(draws: dw.StageDraws, convert) -> dw.StageDraws:
    def each(found: dict) -> dict:
        return {k: (each(x) if isinstance(x, dict) else convert(x)) for k, x in found.items()}

    return dw.StageDraws(
        convert(draws.out_lo),
        convert(draws.out_hi),
        tuple(each(a) for a in draws.amps),
        each(draws.margins),
        np.asarray(draws.linear[:1]),
    )


@dataclass(frozen=True)
class _Rows:
    """What the rows of one stage's walk stand for: row 0 nominal; rows 2i+1 / 2i+2 at
    d = +/-h on column local[i] (the input state at nominal); the rows after them at the input
    state +/-h b_j (d at nominal), b_j the columns of the state's basis B (S, r), whose
    coefficients over the columns are the rows of C (r, K): dstate/dd = B C."""

    local: np.ndarray
    C: np.ndarray

    @cached_property
    def steps(self) -> np.ndarray:
        """h along each direction, scaled by its largest coefficient: the state moves no more
        than it does for h on the one column with most of the direction (a step that spans a
        kink, a max of two nearly equal terms, would mix both slopes)."""
        return DIRECTION_STEP * np.abs(self.C).max(axis=1, initial=0.0)

    def gradients(self, X: np.ndarray) -> np.ndarray:
        """(Q, rows) per-row quantities -> (Q, K) gradients (chain rule: own columns directly,
        upstream ones through the input state)."""
        L = len(self.local)
        diff = X[:, 1::2] - X[:, 2::2]
        own, along = diff[:, :L] / (2 * STEP), diff[:, L:] / (2 * self.steps)
        G = along @ self.C
        G[:, self.local] += own
        # what is left of terms that cancel, or of the rounding in C, is no effect: entries
        # under NOISE of their terms are zero (the plain walk gives those exactly zero)
        noise = np.abs(along).sum(axis=1, keepdims=True) + np.zeros((1, G.shape[1]))
        noise[:, self.local] += np.abs(own)
        G[np.abs(G) <= NOISE * noise] = 0.0
        return G


def local_columns(layout: dw.Layout) -> list[np.ndarray]:
    """Per stage, the columns it reads itself: its own quantities and its rails."""
    own: dict = {}
    for k, var in enumerate(layout.variables):
        key = var.stage if var.stage is not None else var.quantity.rsplit(".", 1)[0]
        own.setdefault(key, []).append(k)
    found = []
    for plan in layout.plans:
        columns = own.get(plan.index, []) + (own.get(f"rails.{plan.rails.name}", []) if plan.rails else [])
        found.append(np.array(sorted(columns), dtype=np.intp))
    return found


class _State:
    """The signal handed from stage to stage (and what drives the next stage, when it is an
    impedance per row), packed as one (rows, S) array for the chain rule."""

    def __init__(self, signal, drive, rows: int):
        self.shared = signal.amp_lo is signal.amp_hi
        self.freqs = signal.hi.shape[-1]
        parts = [signal.hi, signal.lo, signal.amp_lo] + ([] if self.shared else [signal.amp_hi])
        self.impedance = not np.isscalar(drive) and np.ndim(drive) > 0
        self.scalar_drive = None if self.impedance else drive
        self.complex = bool(self.impedance and np.iscomplexobj(drive))
        if self.impedance:
            z = np.broadcast_to(drive, (rows, np.shape(drive)[-1]))
            self.drive_width = z.shape[1]
            parts += [z.real, z.imag] if self.complex else [z]
        # after a clipping stage: its slope bound per row, the last column (NaN, no bound, as
        # the nominal row has it: rows that differ from it there sit at a kink)
        self.sloped = signal.slope is not None
        if self.sloped:
            slope = np.broadcast_to(np.asarray(signal.slope, dtype=float), (rows,))
            self.unbounded = bool(np.isnan(slope[0]))
            parts.append(np.nan_to_num(slope)[:, None])
        self.X = np.hstack([np.broadcast_to(p, (rows, np.shape(p)[-1])) for p in parts])

    def rows(self, nominal: np.ndarray, B: np.ndarray, L: int, steps: np.ndarray):
        """(signal, drive) for a stage's rows (see _Rows) from the nominal state and its basis."""
        r = B.shape[1]
        X = np.empty((1 + 2 * (L + r), nominal.shape[0]))
        X[:] = nominal
        X[1 + 2 * L :: 2] += steps[:, None] * B.T
        X[2 + 2 * L :: 2] -= steps[:, None] * B.T
        F, at = self.freqs, 0
        parts = []
        for _ in range(3 if self.shared else 4):
            parts.append(np.asfortranarray(X[:, at : at + F]))
            at += F
        amp_hi = parts[2] if self.shared else parts[3]
        slope = None
        if self.sloped:
            slope = np.full(X.shape[0], np.nan) if self.unbounded else X[:, -1].copy()
        signal = Signal(hi=parts[0], lo=parts[1], amp_lo=parts[2], amp_hi=amp_hi, slope=slope)
        if not self.impedance:
            return signal, self.scalar_drive
        W = self.drive_width
        drive = X[:, at : at + W]
        if self.complex:
            drive = drive + 1j * X[:, at + W : at + 2 * W]
        return signal, drive


def compress(B: np.ndarray, C: np.ndarray, extra: np.ndarray, local: np.ndarray):
    """dstate/dd = B C + extra E (E: unit rows on the columns `local`), that is P M with
    P = [B extra] and M = [C; E], as B' C' with C' of orthonormal rows and B' of the fewest
    columns that carry it (singular values above RANK_TOL of the largest). M = U L^1/2 Q' from
    the eigenvectors of the small Gram matrix M M' = U L U' (Q' orthonormal rows); the right
    singular vectors V of P U L^1/2 are the eigenvectors of its own small Gram matrix, and
    B' = P U L^1/2 V, C' = V' Q' (Golub & Van Loan, Matrix Computations, 4th ed., 2013,
    sections 8.1 and 2.4); a direction is kept by the norm of P U L^1/2 v itself."""
    r, L = C.shape[0], len(local)
    P = np.hstack([B, extra])
    if P.shape[1] == 0:
        return P, C[:0]
    side = C[:, local]
    gram = np.eye(r + L)
    gram[:r, :r] = C @ C.T
    gram[:r, r:] = side
    gram[r:, :r] = side.T
    lam, U = np.linalg.eigh(gram)
    ok = lam > 1e-12 * max(float(lam[-1]), 1.0)
    U, root = U[:, ok], np.sqrt(lam[ok])
    P = P @ (U * root)  # G = P Q' now
    # the right singular vectors from the small Gram matrix P'P (not an SVD of the tall P:
    # LAPACK there runs threaded, and on a loaded machine that costs milliseconds a call);
    # each direction is kept by the norm of P v itself, which rounding does not blur
    V = np.linalg.eigh(P.T @ P)[1]
    Y = P @ V
    norms = np.sqrt(np.einsum("ij,ij->j", Y, Y))
    top = float(norms.max()) if norms.size else 0.0
    order = np.argsort(-norms, kind="stable")
    order = order[norms[order] > RANK_TOL * top] if top > 0 else order[:0]
    T = (V[:, order].T / root) @ U.T  # C' = T M
    found = T[:, :r] @ C
    found[:, local] += T[:, r:]
    return Y[:, order], found


def walk_linearised(
    layout: dw.Layout,
    entering: list | None = None,
    first: int = 0,
    stop: int | None = None,
    start: tuple | None = None,
) -> list[dw.StageDraws]:
    """Every stage's margins and spans with their gradient over every column, in one pass.

    A stage reads its own columns and its rails directly and everything upstream only through
    the state it is fed (circuit_walk.walk_draws: the signal arrays and, after a passive stage, the
    impedance driving it). So by the chain rule dm/dd = dm/dd_own + dm/dstate dstate/dd, and
    dstate/dd is carried from stage to stage as B C: a few state directions (B) and their
    coefficients over the columns (C). Each stage is walked on rows at nominal, at +/-h on its
    own columns and at +/-h along each direction (central differences as before): its rows do
    not grow with the stages upstream, so the pass costs stages x (own columns + directions)
    rows instead of stages x all columns. The rows are circuit_walk's, stage by stage.

    `entering` receives what each stage is fed (its state, directions, coefficients and the
    stage before's response); `first`, `stop`, `start`: walk only stages `first` to `stop` (not
    included), fed `start` (recorded in `entering` by a walk of a chain whose stages before
    `first` are the same). The stages walked are returned."""
    K = len(layout.variables)
    rise = layout.chain.conditions.worst_temperature_rise
    grid = laplace_grid(layout.freqs)
    inverse: dict = {}
    B, C = np.zeros((0, 0)), np.zeros((0, K))
    state: _State | None = None
    drive: np.ndarray | float = layout.chain.source.impedance
    raw: list[tuple[dw.StageDraws, _Rows, _Rows]] = []  # draws, rows of its margins, of its spans
    before = None
    pending: tuple[int, BlockResponse, dict, object] | None = None  # (k, response, v, fed)
    if start is not None:
        state, B, C, before, pending = start
    columns = local_columns(layout)
    # one signed-rows layout for the whole pass (a new one per stage rebuilt its column index
    # each time: quadratic in stages)
    signed = dw.signed_rows(layout)
    stop = len(layout.plans) if stop is None else stop
    for k in range(first, stop):
        plan = layout.plans[k]
        if entering is not None:
            entering.append((state, B, C, before, pending))
        local = columns[k]
        L = len(local)
        rows = 1 + 2 * (L + C.shape[0])
        D = np.zeros((rows, K), order="F")
        D[1 + 2 * np.arange(L), local] = STEP
        D[2 + 2 * np.arange(L), local] = -STEP
        dT = np.full(rows, rise)
        here = _Rows(local, C)
        if state is None:
            signal = dw.start_signal(layout.chain, layout.freqs, rows)
        else:
            signal, drive = state.rows(state.X[0], B, L, here.steps)
        s = dw.per_row(grid, rows)
        v = dw.stage_values(layout, plan, D, dT)
        fed, response = signal, None
        if plan.block.saturates:
            draws, signal = dw.saturated_draws(layout, k, v, D, signal, dT, drive)
            drive = plan.part.output_resistance if plan.part else 0.0
        else:
            if plan.part not in inverse:
                inverse[plan.part] = inverse_open_loop(plan.part, grid)
            ig = dw.per_row(inverse[plan.part], rows)
            response = plan.block.respond(v, s, ig, drive, k == 0 and layout.chain.source.differential)
            draws, signal = dw.linear_draws(signed, k, response, v, D, dT, fed)
            drive = (
                response.output_impedance
                if response.output_impedance is not None
                else response.output_resistance
            )
        if pending is not None and raw:  # (the stage before `first` is not returned)
            passive, margins_rows, _ = raw[-1]
            if k > 0 and shows_input(layout.plans[k - 1 : k + 1], (before, response), 1):
                shown = dw.shown_input(signed, k, response, v, D, dT, fed, passive)
                raw[-1] = (shown, margins_rows, here)
            else:
                raw[-1] = (dw.shown_loaded(layout, *pending, passive), margins_rows, margins_rows)
        pending = None
        if response is not None and settled_by_next(plan, response, layout.loads[k]):
            pending = (k, response, v, fed)
        before = response
        raw.append((draws, here, here))
        if k + 1 < len(layout.plans):
            state = _State(signal, drive, rows)
            X = state.X
            at = 1 + 2 * L
            turned = ((X[at::2] - X[at + 1 :: 2]) / (2 * here.steps[:, None])).T
            own = ((X[1:at:2] - X[2:at:2]) / (2 * STEP)).T
            B, C = compress(turned, C, own, local)
    return [_converted(draws, margins_rows, spans_rows) for draws, margins_rows, spans_rows in raw]


def _converted(draws: dw.StageDraws, margins_rows: _Rows, spans_rows: _Rows) -> dw.StageDraws:
    """A stage's per-row arrays as [nominal, gradient] arrays, the shown span by its own rows."""
    found: list[np.ndarray] = []

    def collect(x) -> int:
        found.append(np.asarray(x, dtype=float).reshape(-1))
        return len(found) - 1

    def each(table: dict) -> dict:
        return {k: (each(x) if isinstance(x, dict) else collect(x)) for k, x in table.items()}

    amps = tuple(each(a) for a in draws.amps)
    margins = each(draws.margins)
    rows = max(len(x) for x in found) if found else 1
    X = np.vstack([np.broadcast_to(x, (rows,)) for x in found]) if found else np.zeros((0, rows))
    G = margins_rows.gradients(X) if found else np.zeros((0, margins_rows.C.shape[1]))
    values = np.hstack([X[:, :1], G])
    spans = np.vstack([np.asarray(draws.out_lo, dtype=float), np.asarray(draws.out_hi, dtype=float)])
    span_values = np.hstack([spans[:, :1], spans_rows.gradients(spans)])

    def rebuilt(table: dict) -> dict:
        return {k: (rebuilt(x) if isinstance(x, dict) else values[x]) for k, x in table.items()}

    return dw.StageDraws(
        span_values[0],
        span_values[1],
        tuple(rebuilt(a) for a in amps),
        rebuilt(margins),
        np.asarray(draws.linear[:1]),
    )


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
    index, first = lin.groups
    shares = np.bincount(index, weights=weight / total, minlength=len(first))
    # equal effects (identical inputs) differ only by rounding noise: shares within TIE of the
    # largest of their run are one rank, in the circuit's own order, so one chain gives one report
    order = np.argsort(-shares, kind="stable")
    ranked: list[int] = []
    run: list[int] = []
    for g in order:
        if len(ranked) + len(run) >= SHOWN and (not run or shares[g] < shares[run[0]] * (1 - TIE)):
            break
        if run and shares[g] < shares[run[0]] * (1 - TIE):
            ranked += sorted(run)
            run = []
        run.append(int(g))
    ranked += sorted(run)
    return tuple(
        Sensitivity(name, float(shares[g]), quantity_words(name))
        for g in ranked[:SHOWN]
        if shares[g] >= SMALLEST_SHARE
        for name in (quantity_name(first[g], stage),)
    )


def direction(lin: Linearised, stage: int, check: str, field: str) -> float:
    """d margin / d value of the stage's own field, per full tolerance (sign says which way helps)."""
    margins = lin.draws[stage - 1].margins
    if check not in margins:
        return 0.0
    grad = lin.gradient(margins[check])
    total = 0.0
    for k in lin.columns_of(stage):
        var = lin.layout.variables[k]
        if var.quantity == field and var.kind == "tolerance":
            total += float(grad[k])
    return total
