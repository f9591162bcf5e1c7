"""What the methods measure and what the checks conclude, as frozen values for the views."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from railroom.engine.circuit.model import Chain, Part, Stage
from railroom.engine.formats.values import format_si

if TYPE_CHECKING:  # methods.rare imports the walks, which import this module
    from railroom.engine.methods.rare import RareEstimate

Span = tuple[float, float]


@dataclass(frozen=True)
class Check:
    """One row of the table of checks: what every view (the check table, the interface's detail,
    Markdown, JUnit, --against) shows of a check."""

    name: str
    unit: str  # of its margin and of what it compares: V, V/s (slew rate) or A
    words: str = ""  # why a stage fails it, for the Markdown report ("" : the name says it)
    converter_words: str = ""  # the same for a converter input (no op amp): its signal and window
    # what its margin is measured against (judge.check_scale): "rails", the rail span, or the
    # part's own "slew", "current" or "supply" limit
    scale: str = "rails"


CHECK_TABLE: dict[str, Check] = {
    c.name: c
    for c in (
        Check(
            "output-high",
            "V",
            "output comes too close to the upper rail",
        ),
        Check("output-low", "V", "output comes too close to the lower rail"),
        Check(
            "input-high",
            "V",
            "input common mode above the part's range",
            "signal above the converter's input range",
        ),
        Check(
            "input-low",
            "V",
            "input common mode below the part's range",
            "signal below the converter's input range",
        ),
        Check("slew", "V/s", "needs more slew rate than the part has", scale="slew"),
        Check("current", "A", "needs more output current than the part's limit", scale="current"),
        Check("supply", "V", "rails outside the part's allowed supply span", scale="supply"),
        Check("input-differential", "V"),  # engine/circuit/part_limits.py: largest |V+ - V-|
    )
}
VOLTAGE_CHECKS = ("output-high", "output-low", "input-high", "input-low")
CHECKS = tuple(CHECK_TABLE)


def check_unit(check: str) -> str:
    """The unit of a check's margin (volts for a name outside the table)."""
    row = CHECK_TABLE.get(check)
    return row.unit if row else "V"


def margin_words(check: str, value: float) -> str:
    """'output-high 1.2 V', 'slew 300 mV/µs': a check's margin as every view writes it."""
    return f"{check} {format_si(value, check_unit(check))}"


@dataclass(frozen=True)
class OpAmpMeasure:
    """The worst case seen by one op amp inside a stage."""

    label: str
    output: Span  # worst-case output span, V
    window: Span  # allowed output swing at the worst-case current, V
    input: Span  # common-mode span at the + input, V
    input_window: Span
    slew_needed: float  # V/s
    slew_available: float
    current_needed: float  # A, magnitude
    current_available: float


@dataclass(frozen=True)
class Sensitivity:
    quantity: str  # "rf", "rails.main.positive", "stage.2.offset", ... (an id)
    share: float  # fraction of the limiting margin's spread it explains
    label: str = ""  # the same in words: "rf", "main rail +", "stage 2 offset"

    @property
    def words(self) -> str:
        return self.label or self.quantity


@dataclass(frozen=True)
class Fix:
    text: str  # one sentence a practitioner can act on
    field: str | None = None  # the stage field to change, when it is a value change
    value: float | None = None
    series: tuple[str, ...] = ()  # the IEC 60063 series the new value belongs to (a value change)


@dataclass(frozen=True)
class StageMeasure:
    """A method's measurement of one stage, before any verdict."""

    index: int
    stage: Stage
    output: Span
    nominal: Span
    opamps: tuple[OpAmpMeasure, ...] = ()
    window: Span | None = None  # the stage's allowed output window (op amp or converter)
    gain_error: float | None = None
    supply: Span | None = None  # smallest and largest total supply, V
    fed_clipped: bool = False
    saturated: bool = False  # a saturated-by-design block
    thresholds: tuple[Span, Span] | None = None  # saturating blocks: to go high, to go low
    reaches: tuple[bool, bool] | None = None  # (low, high): reached at some corner
    always: tuple[bool, bool] | None = None  # (low, high): crossed at every joint corner
    inner: dict[str, Span] = field(default_factory=dict)
    input_differential: float | None = None  # saturating blocks: largest |V+ - V-|, V
    phase_margin_deg: float | None = None  # with a load_capacitance: the loop's estimate
    # small-signal gain magnitudes {"dc": (min, max), "band": (min, max)} (engine/walks/gains.py):
    # the stage's own, and from the source to its output; None for a saturated stage
    gain: dict[str, Span] | None = None
    gain_from_source: dict[str, Span] | None = None
    probability: float | None = None  # montecarlo: share of draws leaving the linear regime
    percentiles: dict[str, dict[str, float]] | None = None


@dataclass(frozen=True)
class StageResult:
    measure: StageMeasure
    regime: str  # linear | clipping | saturated
    go: bool
    reasons: tuple[str, ...]
    margins: dict[str, float]
    limiting: str | None
    failing_nodes: dict[str, str]  # check -> op amp label, for multi-op-amp stages
    cautions: tuple[str, ...] = ()
    sensitivity: tuple[Sensitivity, ...] = ()
    fixes: tuple[Fix, ...] = ()

    @property
    def stage(self) -> Stage:
        return self.measure.stage

    @property
    def index(self) -> int:
        return self.measure.index

    @property
    def shown_regime(self) -> str:
        """The regime word lists show: "fed-clipped" for a stage that does not clip itself but
        is fed by one that does (its regime stays linear or saturated in the report)."""
        return "fed-clipped" if self.measure.fed_clipped and self.regime != "clipping" else self.regime

    @property
    def regime_word(self) -> str:
        """shown_regime with "!" when the stage fails its own checks (a fed-clipped stage too)."""
        word = self.shown_regime
        return word if self.go else f"{word}!"

    @property
    def drawn(self) -> tuple[Span, Span | None, str | None]:
        """(span, window, op amp label) to draw for the stage: the op amp inside it with the least
        room to its swing window, so a clipping first stage shows even when the output looks fine."""
        m = self.measure
        if m.saturated or len(m.opamps) < 2:
            return m.output, m.window, None
        worst = min(m.opamps, key=lambda a: min(a.window[1] - a.output[1], a.output[0] - a.window[0]))
        if min(worst.window[1] - worst.output[1], worst.output[0] - worst.window[0]) >= min(
            (m.window[1] - m.output[1], m.output[0] - m.window[0]) if m.window else (0.0,)
        ):
            return m.output, m.window, None
        return worst.output, worst.window, worst.label

    def reason_words(self) -> str:
        """The failing checks, each with the op amp that fails it inside a multi-op-amp block."""
        words = []
        for reason in self.reasons:
            node = self.failing_nodes.get(reason) if len(self.measure.opamps) > 1 else None
            words.append(f"{reason} ({node})" if node else reason)
        return ", ".join(words)


@dataclass(frozen=True)
class ChainResult:
    chain: Chain
    method: str
    samples: int | None
    stages: tuple[StageResult, ...]
    go: bool
    headroom_db: float | None
    cautions: tuple[str, ...]
    chain_yield: float | None = None  # montecarlo: share of draws with every stage linear
    rare: RareEstimate | None = None  # montecarlo, few failing draws

    @property
    def failing(self) -> int:
        """Stages that fail their own checks (a stage fed by a clipping one is GO when its own
        checks pass on the clipped signal: "fed-clipped" is a marker in its reasons)."""
        return sum(not s.go for s in self.stages)


Figure = float | tuple[float, float] | None  # a value, a (low, high) span, or none known


def needed_and_limit(
    stage: StageResult, check: str, part: Part | None, chain: Chain
) -> tuple[Figure, Figure]:
    """What the stage asks of the part for `check` and what the part gives, as measured (in the
    check's unit, check_unit): for the supply both are spans, for a converter input the signal's
    end against its window's. The op amp is the one that fails the check inside a multi-op-amp
    block, else the first."""
    m = stage.measure
    label = stage.failing_nodes.get(check)
    amp = next((a for a in m.opamps if a.label == label), m.opamps[0] if m.opamps else None)
    if check == "supply":
        return m.supply or chain.rails_for(m.stage).span_range, part.supply if part else None
    if check == "input-differential":  # engine/circuit/part_limits.py: largest |V+ - V-|
        return m.input_differential, part.input_differential_max if part else None
    side = 1 if check.endswith("high") else 0
    if amp is None:  # a converter input: its input-high/low are the signal against its window
        window = m.window or (float("nan"), float("nan"))
        return m.output[side], window[side]
    if check == "slew":
        return amp.slew_needed, amp.slew_available
    if check == "current":
        return amp.current_needed, amp.current_available
    reached, allowed = (
        (amp.output, amp.window) if check.startswith("output") else (amp.input, amp.input_window)
    )
    return reached[side], allowed[side]
