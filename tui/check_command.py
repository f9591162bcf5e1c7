"""`railroom check`: the go / no-go for scripts, a readable table for people."""
from __future__ import annotations

import sys
from pathlib import Path

from rich.console import Console
from rich.table import Table
from rich.text import Text

from railroom.engine.analysis import analyse, load_checked
from railroom.engine.model import InputError
from railroom.engine.report import chain_report
from railroom.engine.results import ChainResult, StageResult
from railroom.engine.values import ValueTextError, format_si, parse_value
from railroom.tui.bars import LEGEND, margin_bar
from railroom.tui.cli import EXIT_GO, EXIT_INPUT, EXIT_NO_GO, print_json

UNITS = {"slew": "V/s", "current": "A"}


def run_check(args) -> int:
    margin = None
    if args.margin is not None:
        try:
            margin = parse_value(args.margin, "voltage")
        except ValueTextError as err:
            print(f"railroom: --margin: {err}", file=sys.stderr)
            return EXIT_INPUT
    if len(args.chain) > 1 or Path(args.chain[0]).is_dir():
        from railroom.tui.batch_command import run_batch
        return run_batch(args, margin)
    try:
        chain, library = load_checked(args.chain[0], tuple(args.presets))
        result = analyse(chain, library.parts, method=args.method, samples=args.samples,
                         seed=args.seed, margin=margin)
    except InputError as err:
        for problem in err.problems:
            print(f"railroom: {problem}", file=sys.stderr)
        return EXIT_INPUT
    except NotImplementedError as err:
        print(f"railroom: {err}", file=sys.stderr)
        return EXIT_INPUT
    if args.json:
        print_json(chain_report(result))
    elif getattr(args, "markdown", False):
        from railroom.engine.markdown import markdown_report
        sys.stdout.write(markdown_report(result))
    else:
        colour = not args.no_color
        console = Console(no_color=not colour, highlight=False, soft_wrap=False)
        print_result(console, result, colour)
    return EXIT_GO if result.go else EXIT_NO_GO


def margin_text(result: StageResult) -> str:
    check = result.limiting
    if check is None:
        return "-"
    value = result.margins[check]
    return f"{check} {format_si(value, UNITS.get(check, 'V'))}"


def print_result(console: Console, result: ChainResult, colour: bool = True) -> None:
    verdict = "GO" if result.go else f"NO-GO ({result.failing} of {len(result.stages)} stages fail)"
    header = Text()
    header.append(result.chain.title, style="bold")
    header.append(f"  method {result.method}")
    if result.samples:
        header.append(f" ({result.samples} draws)")
    header.append("  verdict ")
    header.append(verdict, style=("bold green" if result.go else "bold red") if colour else "")
    console.print(header)
    table = Table(box=None, pad_edge=False, show_edge=False)
    for column in ("#", "stage", "block", "part", "regime", "limiting margin", "rail span"):
        table.add_column(column, no_wrap=column != "stage")
    for stage in result.stages:
        table.add_row(str(stage.index), Text(stage.stage.name), stage.stage.block,
                      Text(stage.stage.part or "-"), regime_text(stage, colour),
                      margin_text(stage), stage_bar(result, stage, colour))
    console.print(table)
    console.print(Text(LEGEND, style="dim" if colour else ""))
    if result.headroom_db is not None:
        console.print(f"headroom: the source amplitude may change by {result.headroom_db:+.2f} dB "
                      "before a stage leaves its linear regime")
    for stage in result.stages:
        if stage.reasons:
            console.print(Text(f"stage {stage.index} ({stage.stage.name}): "
                               f"{', '.join(stage.reasons)}"))
    for caution in chain_cautions_text(result):
        console.print(Text(f"caution: {caution}", style="yellow" if colour else ""))


def regime_text(stage: StageResult, colour: bool) -> Text:
    word = stage.regime if stage.go else f"{stage.regime}!"
    style = {"linear": "green", "clipping": "bold red", "saturated": "cyan"}[stage.regime]
    if not stage.go and stage.regime != "clipping":
        style = "yellow"
    return Text(word, style=style if colour else "")


def stage_bar(result: ChainResult, stage: StageResult, colour: bool) -> Text:
    rails = result.chain.rails_for(stage.stage)
    return margin_bar((rails.negative_range[0], rails.positive_range[1]), stage.measure.window,
                      stage.measure.output, colour=colour)


def chain_cautions_text(result: ChainResult) -> list[str]:
    texts = list(result.cautions)
    for stage in result.stages:
        texts += [f"stage {stage.index} ({stage.stage.name}): {c}" for c in stage.cautions]
    return texts
