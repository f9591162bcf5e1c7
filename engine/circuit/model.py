"""The chain as the engine sees it: frozen values that flow from the file loader to the methods.

Every number is SI (volts, amperes, ohms, farads, hertz, seconds, degrees Celsius). Values that may
carry a tolerance are kept as `Quantity` so each method can decide how to spread them.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from collections.abc import Mapping

from railroom.engine.formats.values import Quantity, escaped

METHODS = ("corners", "rss", "montecarlo")
DISTRIBUTIONS = ("uniform", "normal")


@dataclass(frozen=True)
class Problem:
    """One thing wrong in a user's file, located for the message."""

    file: str
    line: int | None
    field: str
    message: str

    def __str__(self) -> str:
        # The file name is user text too: what a terminal would act on is shown as escapes.
        where = f"{self.file}:{self.line}" if self.line else self.file
        return escaped(f"{where}: {self.field}: {self.message}")


class InputError(Exception):
    """Raised with every problem found in the user's files at once."""

    def __init__(self, problems: list[Problem] | tuple[Problem, ...]):
        self.problems = tuple(problems)
        super().__init__("\n".join(str(p) for p in self.problems))


@dataclass(frozen=True)
class Part:
    """A part preset: the limits an op amp is checked against (the README's File formats, preset file)."""

    id: str
    description: str
    supply: tuple[float, float]  # allowed total supply span, V
    supply_abs_max: float  # damage threshold for the total span, V
    output_headroom: tuple[float, float]  # (upper, lower) closest approach at no load, V
    output_resistance: float  # headroom grows by this times the output current, ohm
    input_headroom: tuple[float, float]  # (upper, lower) common-mode limit inside the rails, V
    gbw: float  # Hz
    slew: float  # V/s
    open_loop_gain: float  # V/V at DC
    offset: float  # V, maximum at 25 C
    offset_drift: float  # V per C
    bias_current: float  # A, maximum
    output_current: float  # A, limit
    origin: str = ""  # file it was read from
    overrides: tuple[str, ...] = ()  # earlier files whose preset of the same id this replaces
    # datasheet limits (engine/circuit/part_limits.py); the defaults leave the checks as they were
    temperature_range: tuple[float, float] | None = None  # rated ambient [low, high], C
    bias_current_doubling: float = 0.0  # C per doubling of the bias current above 25 C; 0: none
    input_differential_max: float = 0.0  # largest |V+ - V-|, V; 0: not rated
    phase_reversal: bool = False  # the output inverts beyond the common-mode range
    output_headroom_curve: tuple[tuple[float, float, float], ...] = ()  # (A, upper V, lower V)

    def offset_at(self, temperature: float) -> float:
        """Worst offset magnitude at a temperature: initial plus drift away from 25 C."""
        return self.offset + self.offset_drift * abs(temperature - 25.0)


@dataclass(frozen=True)
class Rails:
    name: str
    positive: float
    negative: float
    tolerance: float = 0.0
    # the positive voltage held at one value: one joint corner of the shared values (a
    # ratiometric net follows this rail, so its windows and the net take the same end)
    pinned: float | None = None
    # the negative voltage held at one value (corners.rail_pinned_walks: a clipping stage's
    # clip level and the windows of the stages after it on the same rail, at one rail value)
    pinned_negative: float | None = None

    # the ranges are read in every walk of every stage: found once per Rails (frozen)
    @cached_property
    def positive_range(self) -> tuple[float, float]:
        if self.pinned is not None:
            return (self.pinned, self.pinned)
        ends = (self.positive * (1 - self.tolerance), self.positive * (1 + self.tolerance))
        return (min(ends), max(ends))

    @cached_property
    def negative_range(self) -> tuple[float, float]:
        if self.pinned_negative is not None:
            return (self.pinned_negative, self.pinned_negative)
        ends = (self.negative * (1 - self.tolerance), self.negative * (1 + self.tolerance))
        return (min(ends), max(ends))

    @cached_property
    def span_range(self) -> tuple[float, float]:
        """Smallest and largest total supply (positive minus negative) over the tolerance."""
        pos, neg = self.positive_range, self.negative_range
        return (pos[0] - neg[1], pos[1] - neg[0])


@dataclass(frozen=True)
class Conditions:
    temperature: tuple[float, float] = (25.0, 25.0)
    margin: float = 0.0
    method: str = "corners"
    samples: int = 10000
    seed: int = 1
    distribution: str = "uniform"
    default_tolerance: float = 0.0

    @property
    def worst_temperature_rise(self) -> float:
        """Largest distance from 25 C in the range: drifts are taken as +/- (sign unknown)."""
        return max(abs(t - 25.0) for t in self.temperature)


@dataclass(frozen=True)
class Source:
    kind: str = "single"  # single | differential
    level: tuple[float, float] = (0.0, 0.0)  # single: DC level; differential: common mode
    difference: tuple[float, float] = (0.0, 0.0)  # differential only: DC difference
    amplitude: float = 0.0  # AC peak (of the difference when differential)
    band: tuple[float, float] = (1.0, 1.0)  # Hz
    impedance: float = 0.0  # ohm, in series with each source side
    band_given: bool = True  # False: no band in the file (1 Hz assumed)

    @property
    def differential(self) -> bool:
        return self.kind == "differential"


@dataclass(frozen=True)
class Net:
    """A named DC voltage shared by the stages that use it (the README's File formats, [nets]):
    a fixed reference (`value`) or a ratiometric one (`fraction` of `rail`'s positive voltage)."""

    name: str
    value: Quantity | None = None  # a fixed reference: value, tolerance, tempco
    rail: str | None = None  # ratiometric: the rails table it follows
    fraction: Quantity | None = None  # ratiometric: the divider's ratio with its tolerance
    line: int | None = None

    @property
    def ratiometric(self) -> bool:
        return self.rail is not None


@dataclass(frozen=True)
class NetValue(Quantity):
    """A voltage field written `{ net = "NAME" }`: the net's nominal value with a tolerance that
    covers every end of it (its own and, for a ratiometric net, the rail's), so a path that
    treats it as a stage's own value bounds it from outside; the walks that know nets give it
    one value shared by every stage (methods/corners.py, walks/circuit_walk.py)."""

    net: str = ""


@dataclass(frozen=True)
class Stage:
    name: str
    block: str
    part: str | None = None
    rails: str | None = None
    load: Quantity | None = None
    load_capacitance: Quantity | None = None  # from the output to 0 V: the phase-margin estimate
    load_to: Quantity | None = None  # the voltage `load` returns to (None: 0 V)
    feed: str | None = None  # `from`: the stage name it takes its input from, "source"; None: the one before
    values: Mapping[str, object] = field(default_factory=dict)  # the block's own fields, parsed
    line: int | None = None  # where the [[stage]] starts
    lines: Mapping[str, int] = field(default_factory=dict)  # field -> line, for messages

    def quantity(self, name: str) -> Quantity | None:
        value = self.values.get(name)
        return value if isinstance(value, Quantity) else None


@dataclass(frozen=True)
class Chain:
    title: str
    conditions: Conditions
    rails: Mapping[str, Rails]
    source: Source
    stages: tuple[Stage, ...]
    preset_dirs: tuple[str, ...] = ()
    path: str = "<chain>"
    nets: Mapping[str, Net] = field(default_factory=dict)

    @property
    def parents(self) -> tuple[int, ...]:
        """Per stage (0-based) the index of the stage it takes its input from, -1 for the source
        (the README's File formats, `from`): the stage before it unless `from` names another.
        The loader has checked every `from` names an earlier stage."""
        return stage_parents(self.stages)

    @property
    def children(self) -> tuple[tuple[int, ...], ...]:
        """Per stage the stages that take its output, in file order."""
        found: list[list[int]] = [[] for _ in self.stages]
        for k, parent in enumerate(self.parents):
            if parent >= 0:
                found[parent].append(k)
        return tuple(tuple(c) for c in found)

    def rails_for(self, stage: Stage) -> Rails:
        if stage.rails is not None:
            return self.rails[stage.rails]
        return next(iter(self.rails.values()))


def stage_parents(stages) -> tuple[int, ...]:
    """Per stage the 0-based index it takes its input from (-1: the source): `from` by name
    among the stages before it, else the stage just before. An unknown name counts as the one
    before (the loader reports it)."""
    parents = []
    for k, stage in enumerate(stages):
        feed = getattr(stage, "feed", None)
        if feed is None:
            parents.append(k - 1)
        elif feed == "source":
            parents.append(-1)
        else:
            earlier = [j for j in range(k) if stages[j].name == feed]
            parents.append(earlier[-1] if earlier else k - 1)
    return tuple(parents)
