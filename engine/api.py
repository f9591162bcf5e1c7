"""The Python API behind `import railroom` (the top-level package, engine/_package/).

import railroom
chain = railroom.load("board.toml")          # InputError: every problem, located
result = railroom.analyse(chain)             # parts from the chain's preset search order
railroom.to_dict(result)                     # the JSON report, plain dicts and lists
railroom.rows(result)                        # one flat dict per stage, for a table
"""

from __future__ import annotations

from collections.abc import Mapping

from railroom.engine.circuit.model import Chain, Part
from railroom.engine.verdict.results import CHECKS, ChainResult, StageResult


def load(path: str, presets: tuple[str, ...] | list[str] = ()) -> Chain:
    """Read and check a chain file (its parts must be found in the preset search order, with
    `presets` folders searched last); raises InputError naming file, line and field."""
    from railroom.engine.formats.loading import load_checked

    chain, _ = load_checked(str(path), tuple(str(p) for p in presets))
    return chain


def parts_for(chain: Chain, presets: tuple[str, ...] | list[str] = ()) -> Mapping[str, Part]:
    """The part presets the chain sees: shipped, your own folder, the chain's, then `presets`."""
    from railroom.engine.formats.presets import load_library, search_order

    return load_library(search_order(chain.preset_dirs, tuple(str(p) for p in presets))).parts


def analyse(
    chain: Chain,
    parts: Mapping[str, Part] | None = None,
    *,
    presets: tuple[str, ...] | list[str] = (),
    method: str | None = None,
    samples: int | None = None,
    seed: int | None = None,
    margin: float | None = None,
) -> ChainResult:
    """Check every stage; `parts` default to parts_for(chain, presets). The keywords override
    the chain file's conditions, as on the command line."""
    from railroom.engine.analysis import analyse as engine_analyse

    return engine_analyse(
        chain,
        parts_for(chain, presets) if parts is None else parts,
        method=method,
        samples=samples,
        seed=seed,
        margin=margin,
    )


def to_dict(result: ChainResult | StageResult) -> dict:
    """A chain's JSON report (as `railroom check --json` prints it), or one stage's entry."""
    from railroom.engine.reports.json_report import chain_report, stage_report

    return chain_report(result) if isinstance(result, ChainResult) else stage_report(result)


def row(stage: StageResult) -> dict:
    """One stage as a flat dict: identity, regime, verdict, limiting check and margin, output
    span and window (V), and every check's margin under its own name (None where it has none)."""
    m = stage.measure
    flat = {
        "index": stage.index,
        "name": stage.stage.name,
        "block": stage.stage.block,
        "part": stage.stage.part,
        "regime": stage.regime,
        "go": stage.go,
        "reasons": ", ".join(stage.reasons),
        "limiting": stage.limiting,
        "margin": _rounded(stage.margins.get(stage.limiting) if stage.limiting else None),
        "output_min": _rounded(m.output[0]),
        "output_max": _rounded(m.output[1]),
        "window_low": _rounded(m.window[0]) if m.window else None,
        "window_high": _rounded(m.window[1]) if m.window else None,
    }
    flat.update({check: _rounded(stage.margins.get(check)) for check in CHECKS})
    return flat


def rows(result: ChainResult) -> list[dict]:
    """Every stage's row (see `row`), in chain order: `pandas.DataFrame(rows(result))` works."""
    return [row(s) for s in result.stages]


def _rounded(value: float | None) -> float | None:
    from railroom.engine.reports.json_report import _number

    return _number(value)


def load_text(text: str, name: str = "<chain>") -> Chain:
    """A chain from TOML text (a notebook cell, say); `name` stands for the file in messages."""
    from railroom.engine.formats.chain_file import chain_from_text

    return chain_from_text(text, name)
