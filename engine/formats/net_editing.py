"""Adding and removing a named net ([nets.NAME], the README's File formats) in a chain file's text,
keeping the user's comments and layout (tomlkit), as chain_editing.py does for every other edit.

    text = add_net(text, "mid", value="2.5 0.5%")                  # a fixed net
    text = add_net(text, "half", rail="main", fraction="0.5 0.1%")  # a ratiometric one
    problem = new_net_problem(text, "mid", value="2.5 0.5%")        # what is wrong, located
    text = remove_net(text, "mid")       # NetInUse when a stage still reads it

A new net goes after the last net, or, in a file without nets, before [source] (where the demos
keep them), else at the end.
"""

from __future__ import annotations

import tomlkit
from tomlkit.items import Table

from railroom.engine.circuit.model import InputError, Problem
from railroom.engine.formats.values import has_control

MAX_NAME = 200  # as the loader's (engine/circuit/nets.py)


class NetInUse(ValueError):
    """A net some stage still reads: the message names every field that reads it."""


def add_net(
    text: str, name: str, value: str | None = None, rail: str | None = None, fraction: str | None = None
) -> str:
    """The text with [nets.NAME] added: `value` (fixed), or `rail` and `fraction` (ratiometric)."""
    document = tomlkit.parse(text)
    table = tomlkit.table()
    if value is not None:
        table["value"] = value
    if rail is not None:
        table["rail"] = rail
    if fraction is not None:
        table["fraction"] = fraction
    table.add(tomlkit.nl())
    nets = document.get("nets")
    if isinstance(nets, Table):
        nets.add(name, table)
        return tomlkit.dumps(document)
    nets = tomlkit.table(is_super_table=True)
    nets.add(name, table)
    place = next(
        (i for i, (key, _) in enumerate(document.body) if key is not None and key.key in ("source", "stage")),
        None,
    )
    if place is None:
        document.add("nets", nets)
    else:
        document._insert_at(place, "nets", nets)  # tomlkit's own placement (no public form)
    return tomlkit.dumps(document)


def net_readers(text: str, name: str) -> list[str]:
    """Every stage field that reads the net (`{ net = NAME }`), as "stage N (NAME) FIELD"."""
    document = tomlkit.parse(text)
    found = []
    for index, stage in enumerate(document.get("stage", []), start=1):
        label = f"stage {index} ({stage.get('name', f'stage {index}')})"
        for key, raw in stage.items():
            if _reads(raw, name):
                found.append(f"{label} {key}")
            elif isinstance(raw, list):
                for n, item in enumerate(raw, start=1):
                    if isinstance(item, dict) and any(_reads(x, name) for x in item.values()):
                        found.append(f"{label} {key}.{n}")
    return found


def _reads(raw, name: str) -> bool:
    return isinstance(raw, dict) and list(raw) == ["net"] and raw["net"] == name


def remove_net(text: str, name: str) -> str:
    """The text without [nets.NAME] (and without [nets] once empty); NetInUse when a stage reads it."""
    using = net_readers(text, name)
    if using:
        raise NetInUse(
            f"net {name!r} is read by {', '.join(using)}: give "
            + ("that field" if len(using) == 1 else "those fields")
            + " a value of its own first"
        )
    document = tomlkit.parse(text)
    nets = document.get("nets")
    if not isinstance(nets, Table) or name not in nets:
        raise NetInUse(f"no net named {name!r}")
    del nets[name]
    if not nets:
        del document["nets"]
    return tomlkit.dumps(document)


def new_net_problem(
    text: str,
    name: str,
    value: str | None = None,
    rail: str | None = None,
    fraction: str | None = None,
    path: str = "<chain>",
) -> Problem | None:
    """What is wrong with adding this net, located (file, line, field), or None: the name first
    (not empty, no control characters, not taken), then what the one chain loader says of the
    file with the net in it."""
    from railroom.engine.formats.chain_file import chain_from_text

    where = f"nets.{name}" if name else "nets"
    document = tomlkit.parse(text)
    taken = document.get("nets", {})
    if not name.strip():
        return Problem(path, None, "nets", "a net needs a name (stages read it as net NAME)")
    if has_control(name) or len(name) > MAX_NAME or name != name.strip():
        return Problem(
            path,
            None,
            where,
            f"expected a net name of at most {MAX_NAME} characters, without control characters "
            "or spaces at either end",
        )
    if name in taken:
        return Problem(path, None, where, f"there is a net named {name!r} already")
    if value is None and rail is None and fraction is None:
        return Problem(path, None, where, 'give a value ("2.5 0.5%"), or a rail and a fraction ("0.5 0.1%")')
    if value is not None and (rail is not None or fraction is not None):
        return Problem(
            path, None, where, "a net is fixed (value) or ratiometric (rail and fraction), not both"
        )
    try:
        chain_from_text(add_net(text, name, value, rail, fraction), path)
    except InputError as err:
        ours = [p for p in err.problems if p.field == where or p.field.startswith(where + ".")]
        return (ours or err.problems)[0]
    return None
