"""Chain files (the README's File formats) -> model, with every problem located by file, line and field."""

from __future__ import annotations

from pathlib import Path

from railroom.engine.circuit.blocks import BLOCKS, COMMON_FIELDS
from railroom.engine.circuit.model import (
    DISTRIBUTIONS,
    METHODS,
    Chain,
    Conditions,
    InputError,
    Rails,
    Source,
    Stage,
    stage_parents,
)
from railroom.engine.formats.fields import MAX_TEXT, FieldReader, FileUnreadable, parse_toml, read_user_file
from railroom.engine.formats.values import Quantity, has_control, visible
from railroom.engine.circuit.nets import net_value, read_nets

TOP_KEYS = ("format", "title", "presets", "conditions", "rails", "source", "stage", "nets")
CONDITION_KEYS = ("temperature", "margin", "method", "samples", "seed", "distribution", "default_tolerance")
SOURCE_KEYS = ("kind", "level", "difference", "amplitude", "band", "impedance")
DEFAULT_TOLERANCE_KINDS = ("resistance", "capacitance")
# Sensible limits (README, "Limits"): a real chain has a handful of stages; the work grows with
# stages x frequency points x corners, so a bound keeps one file from taking minutes and GiB.
MAX_STAGES = 300
MAX_INPUTS = 64  # fixed inputs of one summing stage
ABSOLUTE_ZERO, HOTTEST = -273.15, 1000.0  # C; absolute zero: SI Brochure (2019) 2.3.1


def load_chain(path: str | Path, check_folders: bool = False) -> Chain:
    """Read a chain file; raises InputError with every problem found. `check_folders`: every
    folder named in `presets` must be there."""
    path = Path(path)
    try:
        text = read_user_file(path)
    except FileUnreadable as err:
        raise InputError([err.problem]) from None
    return chain_from_text(text, str(path), check_folders=check_folders)


def chain_from_text(text: str, path: str = "<chain>", check_folders: bool = False) -> Chain:
    """The chain in `text`; `check_folders`: every folder named in `presets` must exist (a
    missing one would silently drop the parts the chain expects from it)."""
    text = text.removeprefix("\ufeff")  # a byte-order mark some editors write
    data, problems = parse_toml(text, path)
    if data is None:
        raise InputError(problems)
    reader = FieldReader(path, text)
    chain = _read_chain(data, reader, path)
    if chain is not None and check_folders:
        for named, folder in zip(data.get("presets", []), chain.preset_dirs):
            if not Path(folder).is_dir():
                reader.problem("presets", f"no preset folder {named!r} (looked for {folder})")
    if reader.problems:
        raise InputError(reader.problems)
    assert chain is not None  # _read_chain: None only with a located problem
    return chain


def _read_chain(data: dict, r: FieldReader, path: str) -> Chain | None:
    r.unknown_keys(data, "", TOP_KEYS, "a chain file")
    if data.get("format", 1) != 1:
        r.problem("format", f"expected 1, got {data.get('format')!r}")
    # Without a title the file name stands in: it is user text like any other, so what a
    # terminal would act on is shown escaped (a name may hold ESC, OSC or a direction override).
    title = r.text_field(data, "", "title", default=visible(Path(path).stem, 200))
    conditions = _read_conditions(_table(data, "conditions", r), r)
    rails = _read_rails(data.get("rails"), r)
    source = _read_source(_table(data, "source", r), r)
    nets = read_nets(data.get("nets"), r, rails)
    # `{ net = NAME }` reads in a stage's voltage fields (FieldReader.net_reference)
    r.nets = {name: None if net is None else net_value(net, rails) for name, net in nets.items()}
    stages = _read_stages(data.get("stage"), r, rails, conditions)
    r.nets = None
    presets = data.get("presets", [])
    if not isinstance(presets, list) or not all(isinstance(p, str) for p in presets):
        r.problem("presets", "expected a list of folder names")
        presets = []
    base = Path(path).parent
    if source is not None and stages and source.differential:
        for k, parent in enumerate(stage_parents(stages)):
            first = BLOCKS.get(stages[k].block)
            if parent < 0 and first is not None and not first.takes_differential:
                r.problem(
                    f"stage.{k + 1}.block",
                    "a differential source must be followed first by a "
                    f"difference or instrumentation stage, got {stages[k].block!r}",
                )
    if source is not None and stages and source.impedance:
        _source_fed_once(stages, source.impedance, r)
    if r.problems or conditions is None or source is None:
        return None
    return Chain(
        title=title or "",
        conditions=conditions,
        rails=rails,
        source=source,
        stages=tuple(stages),
        preset_dirs=tuple(str((base / p).resolve()) for p in presets),
        path=path,
        nets={name: net for name, net in nets.items() if net is not None},
    )


def _tolerance(r: FieldReader, t: dict, w: str, key: str) -> float | None:
    tolerance = r.number(t, w, key, "fraction", default=0.0)
    if tolerance is not None and tolerance >= 1:
        r.problem(f"{w}.{key}", f"expected a tolerance from 0% to below 100%, got {tolerance:.4g}")
        return None
    return tolerance


def _table(data: dict, key: str, r: FieldReader) -> dict:
    value = data.get(key, {})
    if not isinstance(value, dict):
        r.problem(key, f"expected a table [{key}]")
        return {}
    return value


def _read_conditions(t: dict, r: FieldReader) -> Conditions | None:
    w = "conditions"
    r.unknown_keys(t, w, CONDITION_KEYS, "[conditions]")
    default = Conditions()
    tolerance = _tolerance(r, t, w, "default_tolerance")
    margin = r.number(t, w, "margin", "voltage", default=0.0)
    if margin is not None and margin < 0:
        r.problem(f"{w}.margin", f"expected a margin of 0 V or more, got {margin:g}")
    temperature = r.span(t, w, "temperature", "temperature", default.temperature, ordered="coldest, hottest")
    if temperature is not None and not (ABSOLUTE_ZERO <= temperature[0] and temperature[1] <= HOTTEST):
        r.problem(
            f"{w}.temperature",
            f"expected temperatures from {ABSOLUTE_ZERO:g} to "
            f"{HOTTEST:g} C, got [{temperature[0]:g}, {temperature[1]:g}]",
        )
        temperature = None
    return Conditions(
        temperature=temperature or default.temperature,
        margin=max(margin or 0.0, 0.0),
        method=r.text_field(t, w, "method", default="corners", choices=METHODS) or "corners",
        samples=r.integer(t, w, "samples", 10000, 1, 10_000_000) or 10000,
        seed=r.integer(t, w, "seed", 1, 0, 2**32 - 1) or 0,
        distribution=r.text_field(t, w, "distribution", default="uniform", choices=DISTRIBUTIONS)
        or "uniform",
        default_tolerance=tolerance or 0.0,
    )


def _read_rails(raw, r: FieldReader) -> dict[str, Rails]:
    if not isinstance(raw, dict) or not raw:
        r.problem(
            "rails", "missing; expected at least one table such as [rails.main] with positive and negative"
        )
        return {}
    rails = {}
    for name, t in raw.items():
        w = f"rails.{name}"
        if has_control(name) or len(name) > MAX_TEXT:
            r.problem(
                w, f"expected a rails name of at most {MAX_TEXT} characters, without control characters"
            )
            continue
        if not isinstance(t, dict):
            r.problem(w, "expected a table with positive, negative and tolerance")
            continue
        r.unknown_keys(t, w, ("positive", "negative", "tolerance"), f"[{w}]")
        pos = r.number(t, w, "positive", "voltage")
        neg = r.number(t, w, "negative", "voltage", default=0.0)
        tol = _tolerance(r, t, w, "tolerance")
        if pos is None or neg is None or tol is None:
            continue
        if pos <= neg:
            r.problem(
                f"{w}.positive", f"rails reversed: positive ({pos:g} V) must be above negative ({neg:g} V)"
            )
            continue
        rails[name] = Rails(name, pos, neg, tol)
    return rails


def _read_source(t: dict, r: FieldReader) -> Source | None:
    w = "source"
    r.unknown_keys(t, w, SOURCE_KEYS, "[source]")
    kind = r.text_field(t, w, "kind", default="single", choices=("single", "differential"))
    amplitude = r.number(t, w, "amplitude", "voltage", default=0.0)
    impedance = (
        0.0 if t.get("impedance", 0) in (0, "0") else r.number(t, w, "impedance", "resistance", default=0.0)
    )
    band = (
        (0.0, 0.0)
        if t.get("band") in (["0", "0"], [0, 0])
        # a DC-only source
        else r.span(t, w, "band", "frequency", (1.0, 1.0), ordered="lowest, highest")
    )
    if amplitude is not None and amplitude < 0:
        r.problem(f"{w}.amplitude", f"expected a peak amplitude of 0 V or more, got {amplitude:g}")
    if impedance is not None and impedance < 0:
        r.problem(f"{w}.impedance", f"expected 0 ohm or more, got {impedance:g}")
    if kind == "single" and "difference" in t:
        r.problem(f"{w}.difference", "only a differential source has a difference range")
    source = Source(
        kind=kind or "single",
        level=r.span(t, w, "level", "voltage", (0.0, 0.0)) or (0.0, 0.0),
        difference=r.span(t, w, "difference", "voltage", (0.0, 0.0)) or (0.0, 0.0),
        amplitude=amplitude or 0.0,
        band=band or (1.0, 1.0),
        impedance=impedance or 0.0,
        band_given="band" in t,
    )
    return source


def _read_stages(raw, r: FieldReader, rails: dict, conditions: Conditions | None) -> list[Stage]:
    if not isinstance(raw, list) or not raw:
        r.problem("stage", "missing; expected one or more [[stage]] tables")
        return []
    if len(raw) > MAX_STAGES:
        r.problem(
            f"stage.{MAX_STAGES + 1}",
            f"{len(raw):,} stages; railroom checks at most "
            f"{MAX_STAGES} in one chain: split the chain into files",
            label="stage",
        )
        return []
    default_tolerance = conditions.default_tolerance if conditions else 0.0
    stages = [
        s
        for i, t in enumerate(raw, start=1)
        if (s := _read_stage(t, i, r, rails, default_tolerance)) is not None
    ]
    rise = conditions.worst_temperature_rise if conditions else 0.0
    for index, stage in enumerate(stages, start=1):
        _drift_through_zero(stage, index, rise, r)
    if len(stages) == len(raw):  # indices match the file's: every `from` can be located
        _check_branches(stages, r)
    return stages


def _check_branches(stages: list[Stage], r: FieldReader) -> None:
    """`from` (the README's File formats, branches): it names an earlier stage or "source";
    names are unique in a chain that uses it; a converter input fed by a passive stage feeds one
    stage at most."""
    if not any(stage.feed is not None for stage in stages):
        return
    seen: dict[str, int] = {}
    for index, stage in enumerate(stages, start=1):
        if stage.name in seen:
            r.problem(
                f"stage.{index}.name",
                f"stage name {stage.name!r} is also stage {seen[stage.name]}'s; names must be "
                "unique in a chain that uses `from`",
            )
        seen.setdefault(stage.name, index)
    for index, stage in enumerate(stages, start=1):
        feed = stage.feed
        if feed is None or feed == "source":
            continue
        where = f"stage.{index}.from"
        if feed == stage.name:
            r.problem(where, f"stage {index} ({feed!r}) cannot take its input from itself")
        elif feed not in seen:
            names = ", ".join(repr(s.name) for s in stages[: index - 1]) or "none"
            r.problem(where, f'no stage named {feed!r}; expected "source" or an earlier stage ({names})')
        elif seen[feed] > index:
            r.problem(
                where,
                f"{feed!r} is stage {seen[feed]}, after this one (stage {index}); a stage takes "
                "its input from the source or an earlier stage",
            )
    parents = stage_parents(stages)
    for k, stage in enumerate(stages):
        block = BLOCKS.get(stage.block)
        fed = [j for j, parent in enumerate(parents) if parent == k]
        before = BLOCKS.get(stages[parents[k]].block) if parents[k] >= 0 else None
        # a passive stage may feed several (each one meets its node loaded by the others:
        # walks/sibling_loads.py); a converter input passes its input on, so one fed by a
        # passive stage would hand that node on to several without their loads on it
        passive_before = before is not None and not before.uses_part and not before.window_only
        if block is not None and not block.uses_part and not block.window_only and len(fed) > 1:
            _check_siblings(stages, k, fed, r)
        if block is not None and block.window_only and passive_before and len(fed) > 1:
            j = fed[1]
            r.problem(
                f"stage.{j + 1}.from" if stages[j].feed is not None else f"stage.{j + 1}",
                f"stage {k + 1} ({stage.name!r}, {stage.block}) already feeds stage {fed[0] + 1} and "
                f"is fed by a passive stage ({stages[parents[k]].name!r}); a converter input there "
                "drives one stage at most: take this branch from the passive stage itself",
            )


def _source_fed_once(stages: list[Stage], impedance: float, r: FieldReader) -> None:
    """A source with an impedance drives one stage at most: a second stage on it would draw
    current through the impedance that the first one's input voltage drops by (the stages meet
    the source impedance each on its own), as a stage with no op amp drives one stage at most."""
    fed = [k for k, parent in enumerate(stage_parents(stages)) if parent < 0]
    if len(fed) > 1:
        j = fed[1]
        r.problem(
            f"stage.{j + 1}.from",
            f"the source has an impedance ({impedance:g} ohm) and already feeds stage {fed[0] + 1}; "
            "a source with an impedance drives one stage at most (it is not buffered): take this "
            "branch from a buffer after the source, or give the source no impedance",
        )


def _check_siblings(stages: list[Stage], k: int, fed: list[int], r: FieldReader) -> None:
    """A passive stage feeding several: each one must load its node as a conductance to a fixed
    voltage (walks/sibling_loads.py), not follow the signal, block DC or feed further stages."""
    from railroom.engine.walks.sibling_loads import NOT_SHARING

    parents = stage_parents(stages)
    for j in fed:
        block = BLOCKS.get(stages[j].block)
        feeds = any(parent == j for parent in parents)
        if stages[j].block in NOT_SHARING:
            why = f"its input ({stages[j].block}) follows the signal or blocks DC"
        elif block is not None and not block.uses_part and feeds:
            why = "it has no op amp and feeds further stages"
        else:
            continue
        r.problem(
            f"stage.{j + 1}.from" if stages[j].feed is not None else f"stage.{j + 1}",
            f"stage {j + 1} ({stages[j].name!r}) shares the output of stage {k + 1} "
            f"({stages[k].name!r}, {stages[k].block}, no op amp) with another stage, but {why}: "
            "take the branch from an op-amp stage, or buffer it",
        )


def _drift_through_zero(stage: Stage, index: int, rise: float, r: FieldReader) -> None:
    """A temperature coefficient that takes a part's value to zero or below over the temperature
    range (plan.spread: value * (1 - tempco * rise)) has no physical meaning."""
    for key, q in (("load", stage.load), *stage.values.items()):
        if isinstance(q, Quantity) and q.tempco and q.tempco * rise >= 1:
            r.problem(
                f"stage.{index}.{key}",
                f"the temperature coefficient ({q.tempco * 1e6:g}ppm) "
                f"over {rise:g} C from 25 C takes the value through zero",
            )


def _read_stage(t: dict, index: int, r: FieldReader, rails: dict, default_tol: float) -> Stage | None:
    w = f"stage.{index}"
    name = r.text_field(t, w, "name", default=f"stage {index}")
    block_name = r.text_field(t, w, "block", choices=tuple(BLOCKS))
    if block_name is None:
        return None
    block = BLOCKS[block_name]
    r.unknown_keys(t, w, set(COMMON_FIELDS) | set(block.fields), f"block {block_name}")
    part = r.text_field(t, w, "part") if block.uses_part else None
    if not block.uses_part and "part" in t:
        r.problem(f"{w}.part", f"block {block_name} has no op amp, so no part")
    rails_name = r.text_field(t, w, "rails", default=None)
    if rails_name is None and len(rails) > 1 and block.uses_part:
        r.problem(f"{w}.rails", f"expected one of {', '.join(rails)} (there is more than one supply)")
    elif rails_name is not None and rails and rails_name not in rails:
        r.problem(f"{w}.rails", f"no rails named {rails_name!r}; expected one of {', '.join(rails)}")
    load = _component(r, t, w, "load", "resistance", None, default_tol)
    load_capacitance = _component(r, t, w, "load_capacitance", "capacitance", None, default_tol)
    load_to = _component(r, t, w, "load_to", "voltage", None, default_tol)
    if load_to is not None and load is None:
        r.problem(f"{w}.load_to", "load_to is where the stage's `load` returns; give the stage a load")
    feed = r.text_field(t, w, "from", default=None)
    values: dict[str, object] = {}
    for key, spec in block.fields.items():
        if spec.kind == "flag":
            raw = t.get(key, spec.default)
            if not isinstance(raw, bool):
                r.problem(f"{w}.{key}", f"expected true or false, got {raw!r}")
            values[key] = bool(raw)
        elif spec.kind == "inputs":
            values[key] = _read_inputs(t.get(key, []), f"{w}.{key}", r, default_tol)
        else:
            default = spec.default if not spec.required else ...
            q = _component(r, t, w, key, spec.kind, default, default_tol)
            if q is not None:
                values[key] = q
    return Stage(
        name=name or f"stage {index}",
        block=block_name,
        part=part,
        rails=rails_name,
        load=load,
        load_capacitance=load_capacitance,
        load_to=load_to,
        feed=feed,
        values=values,
        line=r.line(w),
        lines={key: r.lines[f"{w}.{key}"] for key in t if f"{w}.{key}" in r.lines},
    )


def _component(r: FieldReader, t: dict, w: str, key: str, kind: str, default, default_tol: float):
    if default is ...:
        q = r.quantity(t, w, key, kind)
    else:
        q = r.quantity(t, w, key, kind, default=default)
    if q is not None and q.tolerance is None and kind in DEFAULT_TOLERANCE_KINDS and key in t:
        q = Quantity(q.value, default_tol, q.tempco)
    return q


def _read_inputs(raw, w: str, r: FieldReader, default_tol: float) -> list[dict[str, Quantity]]:
    if not isinstance(raw, list) or not all(isinstance(item, dict) for item in raw):
        r.problem(w, 'expected a list of tables such as [{r = "10k", v = "2.5"}]')
        return []
    if len(raw) > MAX_INPUTS:
        r.problem(w, f"{len(raw):,} fixed inputs; a summing stage takes at most {MAX_INPUTS}")
        return []
    inputs = []
    for item in raw:
        r.unknown_keys(item, w, ("r", "v"), "a fixed input")
        res = _component(r, item, w, "r", "resistance", ..., default_tol)
        volt = r.quantity(item, w, "v", "voltage")
        if res is not None and volt is not None:
            inputs.append({"r": res, "v": volt})
    return inputs
