"""A chain file and the preset library it searches, loaded with every stopping problem at once."""

from __future__ import annotations

from collections.abc import Mapping

from railroom.engine.circuit.model import Chain, InputError, Part
from railroom.engine.walks.preparation import plan_chain


def load_checked(path: str, extra_preset_dirs: tuple[str, ...] = (), strict: bool = False):
    """Read a chain file and the preset library it searches; raises InputError on any problem
    that stops the check (a broken preset file only matters when a stage needs its part, but a
    part whose latest definition is broken is never served from an earlier folder).
    `strict` (the check command): a preset folder that is missing (given with --presets or named
    in the chain) or cannot be read stops the check too, since the parts it should hold would
    silently be missing; the interface opens the chain and shows these as a notice instead."""
    from railroom.engine.formats.chain_file import load_chain
    from railroom.engine.formats.presets import load_library, missing_folders, search_order

    missing = missing_folders(extra_preset_dirs) if strict else []
    try:
        chain = load_chain(path, check_folders=strict)
    except InputError as err:  # name unknown parts in the same round as the other problems
        found = [*err.problems, *unknown_parts_in_text(path, extra_preset_dirs)]
        raise InputError([*missing, *sorted(found, key=lambda p: p.line or 0)]) from None
    library = load_library(search_order(chain.preset_dirs, extra_preset_dirs))
    try:
        check_parts(chain, library.parts)
    except InputError as err:
        raise InputError([*missing, *err.problems, *library.problems]) from None
    if strict and (missing or library.fatal):
        raise InputError([*missing, *library.fatal])
    return chain, library


def check_parts(chain: Chain, parts: Mapping[str, Part]) -> None:
    """Every stage that needs a part finds it in `parts`; else InputError, each unknown part
    located (file, line, stage). load_checked's part check, for a chain read from edited text."""
    plan_chain(chain, parts)


def unknown_parts_in_text(path: str, extra_preset_dirs: tuple[str, ...] = ()) -> list:
    """Unknown part ids of a chain file that does not load, read straight from its TOML."""
    from pathlib import Path
    from railroom.engine.circuit.blocks import BLOCKS
    from railroom.engine.walks.preparation import unknown_part
    from railroom.engine.formats.presets import load_library, search_order
    from railroom.engine.formats.fields import FileUnreadable, parse_toml, read_user_file
    from railroom.engine.formats.toml_lines import key_lines

    try:
        text = read_user_file(path).removeprefix("\ufeff")
    except FileUnreadable:
        return []
    data, _ = parse_toml(text, path)
    stages = data.get("stage") if isinstance(data, dict) else None
    if not isinstance(data, dict) or not isinstance(stages, list):
        return []
    named = data.get("presets", [])
    folders = (
        tuple(str(Path(path).parent / p) for p in named if isinstance(p, str))
        if isinstance(named, list)
        else ()
    )
    parts = load_library(search_order(folders, extra_preset_dirs)).parts
    lines = key_lines(text)
    found = []
    for index, stage in enumerate(stages, start=1):
        if not isinstance(stage, dict):
            continue
        block = BLOCKS.get(name) if isinstance(name := stage.get("block"), str) else None
        part = stage.get("part")
        if block is not None and block.uses_part and isinstance(part, str) and part not in parts:
            found.append(unknown_part(path, lines.get(f"stage.{index}.part"), index, part, parts))
    return found
