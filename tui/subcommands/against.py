"""`railroom check NEW --against OLD`: the old version checked the same way, and what changed.

OLD is a file, or `REV:PATH` read with `git show` (engine/reports/compare.py). The exit status stays NEW's.
"""

from __future__ import annotations

import warnings

from rich.console import Console
from rich.table import Table
from rich.text import Text

from railroom.engine import (
    ChainResult,
    InputError,
    analyse,
    change_rows,
    compare_results,
    load_against,
    verdict_line,
)
from railroom.tui.subcommands.common import CheckRefused


def old_result(spec: str, args, margin: float | None) -> ChainResult:
    """The old version's result, with the same command-line overrides as NEW; CheckRefused
    (located lines naming `spec`) when it cannot be read or checked."""
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            chain, library = load_against(spec, tuple(args.presets))
            return analyse(
                chain, library.parts, method=args.method, samples=args.samples, seed=args.seed, margin=margin
            )
    except InputError as err:
        raise CheckRefused([f"--against: {p}" for p in err.problems]) from None
    except Exception as err:  # noqa: BLE001 - the same guard as check_file
        raise CheckRefused(
            [f"--against {spec}: the check could not finish ({type(err).__name__}: {err})"]
        ) from None


def print_against(
    console: Console, old: ChainResult, new: ChainResult, label: str, colour: bool = True
) -> None:
    console.print()
    console.print(Text(verdict_line(old, new, label), style="bold" if colour else ""))
    table = Table(box=None, pad_edge=False, show_edge=False)
    for column in ("stage", "change", "check", "before", "after"):
        table.add_column(
            column,
            no_wrap=column != "change",
            overflow="ellipsis",
            min_width={"check": 11, "before": 13, "after": 13}.get(column),
            max_width={"stage": 20, "change": 14}.get(column),
            justify="right" if column in ("before", "after") else "left",
        )
    for row in change_rows(compare_results(old, new)):
        table.add_row(*(Text(cell) for cell in row))
    console.print(table)
