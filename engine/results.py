"""What the methods measure and what the checks conclude, as frozen values for the views."""

from __future__ import annotations

from dataclasses import dataclass, field

from railroom.engine.model import Chain, Stage

Span = tuple[float, float]

VOLTAGE_CHECKS = ("output-high", "output-low", "input-high", "input-low")
CHECKS = (*VOLTAGE_CHECKS, "slew", "current", "supply", "input-differential")


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
    # small-signal gain magnitudes {"dc": (min, max), "band": (min, max)} (engine/gains.py):
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
        """shown_regime with "!" when the stage is not GO ("fed-clipped" never is: no mark)."""
        word = self.shown_regime
        return word if self.go or word == "fed-clipped" else f"{word}!"

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
    rare: object | None = None  # montecarlo, few failing draws: methods.rare.RareEstimate

    @property
    def failing(self) -> int:
        """Stages that fail on their own: a stage fed by a clipping one is not GO either
        (reason "fed-clipped"), but it is not counted as one more failure."""
        return sum(not s.go and list(s.reasons) != ["fed-clipped"] for s in self.stages)
