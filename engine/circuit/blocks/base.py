"""What every block provides, and the node description the methods propagate.

A block turns its component values (numpy arrays over corners or draws, shape (J, 1)) and the
Laplace grid s (shape (F+1,), DC first) into transfers: for each node it reports, the voltage per
volt of every driving source ("in" for the chain signal, "pos"/"neg" for the two sides of a
differential source, or a fixed voltage field such as "ref"), plus the gains from each op amp's
offset and bias currents. The methods never look inside a block; they only combine transfers.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from typing import TYPE_CHECKING, ClassVar
from collections.abc import Callable, Mapping

import numpy as np

from railroom.engine.circuit.opamp import LoopSolution, lifted

if TYPE_CHECKING:  # comparator.py imports this module
    from railroom.engine.circuit.blocks.comparator import Switching
    from railroom.engine.circuit.model import Part, Rails

Transfers = dict[str, np.ndarray]  # source -> complex array (J, F+1); index 0 along F is DC


@dataclass(frozen=True)
class FieldSpec:
    kind: str  # a value kind of values.py, or "flag" / "inputs"
    required: bool = True
    default: float | bool | None = None
    help: str = ""


@dataclass(frozen=True)
class Node:
    """A voltage (or a current) inside a block, as transfers plus op-amp error gains."""

    transfers: Transfers
    # both or neither (None: no op amp's errors reach the node)
    offset_gain: np.ndarray | None = None  # (J, n_opamps): per volt of each op amp's offset
    bias_gain: np.ndarray | None = None  # (J, n_opamps): per ampere, |+ input| + |- input|


@dataclass(frozen=True)
class OpAmpNodes:
    """The three things checked on each op amp inside a block."""

    label: str  # "amplifier", "upper input op amp", ...
    output: Node
    plus: Node  # non-inverting input, for the common-mode window
    current: Node  # current the op amp delivers into its network and load, A


@dataclass(frozen=True)
class InputLoad:
    """What the block draws from the stage before it: a conductance to a return voltage."""

    conductance: float = 0.0  # largest over the tolerance, S
    returns: tuple[float, float] = (0.0, 0.0)
    least: float = 0.0  # smallest over the tolerance and band (0: not known), S
    # a series capacitor first (ac_coupling): no DC current, only the AC part of the driving
    # output through at most `conductance` (margins.load_currents)
    blocks_dc: bool = False
    # the return node follows the signal (an RC low-pass's capacitor, a weighted mean of what
    # drove it, pulled towards 0 V by its load): it may sit anywhere between that span and returns
    follows: bool = False
    # bias currents the driving op amp supplies besides (its own - pin, the next stage's input
    # pins), either direction, A
    pins: float = 0.0
    # the return node also moves by the stage's bias current times this resistance, ohm (an MFB
    # low-pass's node A sits Ib r3 from its - pin)
    shift: float = 0.0
    # the return is an op amp's - pin (a virtual earth): it sits Vout/A0 off the + pin as well
    # (V- = V+ + Vos - Vout/A, opamp.py), which the walk bounds by the largest rail over A0
    earth: bool = False
    # the conductance per row (corner or drawn circuit), (J, 1), where the block knows it: a
    # passive stage feeding several reads each sibling's own per drawn circuit (sibling_loads.py)
    rows: np.ndarray | None = field(default=None, compare=False, repr=False)


@dataclass(frozen=True)
class BlockResponse:
    output: Node
    opamps: tuple[OpAmpNodes, ...] = ()
    inner: Mapping[str, Node] = field(default_factory=dict)  # informational internal nodes
    output_resistance: float = 0.0  # drives the next stage's input
    output_resistance_span: tuple[float, float] | None = None  # its (min, max) over the corners
    input_load: InputLoad = InputLoad()
    # a passive block's Thevenin impedance per corner and frequency, complex (J, F+1), DC first:
    # the next stage is driven through it (None: the real output_resistance at every frequency)
    output_impedance: np.ndarray | None = None
    # the voltage at the block's input terminal when a Thevenin source drives it (the node
    # between the driving impedance and the block's first element; None: not known), or a
    # function that builds it, called only when a passive stage before asks (`terminal`)
    input_node: Node | Callable[[], Node] | None = None

    @cached_property
    def terminal(self) -> Node | None:
        """The input terminal's node, built once on first use (input_node)."""
        return self.input_node() if callable(self.input_node) else self.input_node


class Block:
    """Base for every block; a subclass is one small module with its formulas and citations."""

    name: ClassVar[str]
    summary: ClassVar[str]
    ideal: ClassVar[tuple[str, ...]] = ()  # ideal-op-amp formulas, shown by `railroom blocks NAME`
    fields: ClassVar[dict[str, FieldSpec]] = {}
    uses_part: ClassVar[bool] = True
    saturates: ClassVar[bool] = False  # saturated by design (comparator, Schmitt trigger)
    takes_differential: ClassVar[bool] = False
    window_only: ClassVar[bool] = False  # a converter input: only a window to stay inside

    def respond(
        self,
        v: Mapping[str, np.ndarray],
        s: np.ndarray,
        inverse_gain: np.ndarray,
        drive: np.ndarray | float,  # what drives the input: 0, a resistance or a (J, F+1) impedance
        differential: bool,
    ) -> BlockResponse:
        raise NotImplementedError

    def switch(
        self,
        v: Mapping[str, np.ndarray],
        flags: Mapping[str, object],
        part: Part,
        rails: Rails,
        signal: tuple[float, float],
        offset: float = 0.0,
        bias: float = 0.0,
    ) -> Switching:
        """A saturating block's (saturates = True) levels and thresholds for the span it is fed."""
        raise NotImplementedError

    def critical_frequencies(self, v: Mapping[str, np.ndarray]) -> np.ndarray:
        """Frequencies where the response may peak (added to the band grid)."""
        return np.empty(0)

    def real_critical_frequencies(self, v: Mapping[str, np.ndarray], part) -> np.ndarray:
        """Where the response peaks with the part's own gain (filters: found on the transfer)."""
        return np.empty(0)


def opamp_node(solution: LoopSolution, transfers: Transfers, index: int, count: int) -> Node:
    """A node driven by op amp `index` of `count`: error gains placed in that op amp's column."""
    rows = solution.offset_gain.shape[0]
    offset = np.zeros((rows, count))
    bias = np.zeros((rows, count))
    offset[:, index] = solution.offset_gain
    bias[:, index] = np.abs(solution.bias_plus_gain) + np.abs(solution.bias_minus_gain)
    return Node(transfers=transfers, offset_gain=offset, bias_gain=bias)


def plus_node(solution: LoopSolution, index: int, count: int) -> Node:
    """The + input pin of op amp `index` of `count`, with the bias current through the resistance
    at that pin (and, with positive feedback, the output's errors) as its error gains."""
    rows = solution.offset_gain.shape[0]
    offset = np.zeros((rows, count))
    bias = np.zeros((rows, count))
    offset[:, index] = solution.plus_offset_gain
    bias[:, index] = np.abs(solution.plus_bias_plus_gain) + np.abs(solution.plus_bias_minus_gain)
    return Node(transfers=solution.plus, offset_gain=offset, bias_gain=bias)


def scaled(node: Node, factor: np.ndarray | float, extra: Transfers | None = None) -> Node:
    """factor * node (+ extra transfers), keeping the error gains consistent."""
    factor = np.asarray(factor)
    transfers = {k: lifted(factor, t) * lifted(t, factor) for k, t in node.transfers.items()}
    for k, t in (extra or {}).items():
        before = transfers.get(k, 0.0)
        transfers[k] = lifted(before, t) + lifted(t, before)
    dc = np.abs(np.atleast_2d(factor)[..., 0].real)[:, None] if factor.ndim else abs(float(factor))
    offset = None if node.offset_gain is None else node.offset_gain * dc
    bias = None if node.bias_gain is None else node.bias_gain * dc
    return Node(transfers=transfers, offset_gain=offset, bias_gain=bias)


def dc_resistance(drive) -> np.ndarray | float:
    """The DC part of a driving impedance: a (J, F+1) complex impedance (DC first) as its real
    (J, 1) DC column; a resistance (scalar or (J, 1)) as it is. Bias currents meet this one."""
    drive = np.asarray(drive)
    if drive.ndim == 2:
        drive = drive[:, :1]
    return drive.real if np.iscomplexobj(drive) else drive


def thevenin(impedance: np.ndarray) -> dict:
    """BlockResponse fields of a passive block from its Thevenin impedance (J, F+1): the
    impedance itself and its DC resistance (largest, and range over the corners)."""
    resistance = np.asarray(impedance)[..., 0].real
    return {
        "output_impedance": impedance,
        "output_resistance": float(np.max(resistance)),
        "output_resistance_span": (float(np.min(resistance)), float(np.max(resistance))),
    }


def junction(series, drive, far: Node | None, share=None) -> Node:
    """The input terminal of a block driven from the source "in" through the impedance `drive`
    into its first element `series` (an impedance, per row and s) whose far end is the node
    `far`: J = (series Vin + Z V_far) / (series + Z), a voltage divider (Horowitz & Hill ch. 1).
    `far` None: the far end draws nothing (J = Vin). `share`: series / (series + Z) when the
    caller has it in a form finite at DC (a series capacitor)."""
    if far is None or (np.ndim(drive) == 0 and drive == 0):  # nothing drops across Z
        return Node(transfers={"in": np.ones((1, 1))})
    share = series / (series + drive) if share is None else share
    return combined([(1.0 - share, far)], extra={"in": share})


def minus_pin(plus: Node, output: Node, inverse_gain, index: int = 0, count: int = 1) -> Node:
    """An op amp's - pin from its + pin: V- = V+ + Vos - Vout / A (opamp.py's loop form)."""
    assert output.offset_gain is not None
    rows = output.offset_gain.shape[0]
    offset = np.zeros((rows, count))
    offset[:, index] = 1.0
    own = Node(transfers={}, offset_gain=offset, bias_gain=np.zeros_like(offset))
    return combined([(1.0, plus), (-inverse_gain, output), (1.0, own)])


def load_conductance(v: Mapping[str, np.ndarray]) -> np.ndarray:
    """1 / load, zero when the stage has no load field."""
    load = v.get("load")
    return np.zeros((1, 1)) if load is None else 1.0 / load


def load_return(v: Mapping[str, np.ndarray], scale=1.0) -> Transfers:
    """The part of a current or voltage set by where the stage's `load` returns (`load_to`, a
    fixed voltage field): {"load_to": scale * G_load}, nothing when it returns to 0 V. An op
    amp's output current into the load is (Vout - Vto) G_load (Ohm's law): the current node
    takes scale = -1; a passive output, Vout = Z (Vin / R_series + Vto G_load) (Thevenin /
    Millman), takes scale = Z."""
    if "load_to" not in v or "load" not in v:
        return {}
    return {"load_to": scale * (1.0 / v["load"]) * np.ones((1, 1))}


def combined(terms: list[tuple[np.ndarray | float, Node]], extra: Transfers | None = None) -> Node:
    """sum_k factor_k * node_k (+ extra transfers): a node built from other nodes of the block.

    Offset gains add with their sign (one op amp's offset reaches a node by several paths); bias
    gains are magnitudes already, so they add as magnitudes (an outside bound).
    """
    transfers: Transfers = {}
    offset = bias = None
    for factor, node in terms:
        factor = np.asarray(factor)
        for k, t in node.transfers.items():
            term = lifted(factor, t) * lifted(t, factor)
            transfers[k] = lifted(transfers.get(k, 0.0), term) + term
        if node.offset_gain is None:
            continue
        dc = np.atleast_2d(factor)[..., :1].real if factor.ndim else float(factor.real)
        offset = (0.0 if offset is None else offset) + dc * node.offset_gain
        bias = (0.0 if bias is None else bias) + np.abs(dc) * node.bias_gain
    for k, t in (extra or {}).items():
        before = transfers.get(k, 0.0)
        transfers[k] = lifted(before, t) + lifted(t, before)
    return Node(transfers=transfers, offset_gain=offset, bias_gain=bias)
