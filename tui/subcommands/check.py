"""`railroom check`: the go / no-go for scripts, a readable table for people."""

from __future__ import annotations

import sys
import time
from pathlib import Path

from rich.console import Console
from rich.table import Table
from rich.text import Text

from railroom.engine import ChainResult, StageResult, chain_report, escaped, stage_parents, tree_rows
from railroom.tui.bars import FAILS_GO, LEGEND, MARKS, legend, stage_bar as drawn_bar
from railroom.tui.subcommands.common import (
    CheckRefused,
    check_file,
    command_line_numbers,
    json_text,
    margin_text,
    report_refusal,
)
from railroom.tui.subcommands.exit_codes import GO, INPUT_ERROR, NO_GO


def run_check(args) -> int:
    try:
        margin = command_line_numbers(args)
    except CheckRefused as err:
        report_refusal(err)
        return INPUT_ERROR
    against: str | None = getattr(args, "against", None)
    if getattr(args, "plots", None) and (
        not getattr(args, "markdown", False)
        or args.json
        or len(args.chain) > 1
        or Path(args.chain[0]).is_dir()
    ):
        report_refusal(CheckRefused(["--plots DIR goes with --markdown, for one chain file"]))
        return INPUT_ERROR
    if len(args.chain) > 1 or Path(args.chain[0]).is_dir():
        if against:
            report_refusal(
                CheckRefused(["--against compares one chain file with its old version; give a single CHAIN"])
            )
            return INPUT_ERROR
        if getattr(args, "junit", None):
            from railroom.tui.subcommands.junit import run_batch_junit

            return run_batch_junit(args, margin)
        from railroom.tui.subcommands.batch import run_batch

        return run_batch(args, margin)
    started = time.perf_counter()
    try:
        result = check_file(args.chain[0], args, margin)
        old = None
        if against:
            from railroom.tui.subcommands.against import old_result

            old = old_result(against, args, margin)
        if args.json:
            report = chain_report(result)
            if old is not None:
                from railroom.engine import against_report

                report["against"] = against_report(old, result, against or "")
            output = json_text(report)
        elif getattr(args, "markdown", False):
            from railroom.engine import markdown_report

            output = markdown_report(result)
            if old is not None:
                from railroom.engine import against_markdown

                output += "\n" + against_markdown(old, result, against or "") + "\n"
            if getattr(args, "plots", None):
                from railroom.tui.subcommands.plot import markdown_with_picture

                output = markdown_with_picture(output, args.chain[0], args, result)
        else:
            output = None
    except CheckRefused as err:
        report_refusal(err)
        if getattr(args, "junit", None):
            from railroom.tui.subcommands.junit import refused_entry, write_junit

            write_junit(args.junit, [refused_entry(args.chain[0], err.lines)])
        return INPUT_ERROR
    if getattr(args, "junit", None):
        from railroom.tui.subcommands.junit import result_entry, write_junit

        if not write_junit(args.junit, [result_entry(args.chain[0], result, time.perf_counter() - started)]):
            return INPUT_ERROR
    if output is not None:
        sys.stdout.write(output)
    else:
        colour = not args.no_color
        console = Console(no_color=not colour, highlight=False, soft_wrap=False)
        print_result(console, result, colour)
        if old is not None:
            from railroom.tui.subcommands.against import print_against

            print_against(console, old, result, against or "", colour)
    return GO if result.go else NO_GO


def shown(text: str) -> str:
    """User text for the terminal, whole: what `visible` escapes shown as escapes."""
    return escaped(text)


def gain_text(gain: dict | None) -> str:
    """A gain magnitude for the table: its largest over the band and the corners, 3 significant
    figures (the JSON and Markdown reports give both ends); "-" for a saturated stage."""
    if gain is None:
        return "-"
    return f"{gain['band'][1]:.3g}"


def print_result(console: Console, result: ChainResult, colour: bool = True) -> None:
    verdict = "GO" if result.go else f"NO-GO ({result.failing} of {len(result.stages)} stages fail)"
    header = Text()
    header.append(shown(result.chain.title), style="bold")
    header.append(f"  method {result.method}")
    if result.samples:
        header.append(f" ({result.samples} draws)")
    header.append("  verdict ")
    header.append(verdict, style=("bold green" if result.go else "bold red") if colour else "")
    console.print(header)
    wide = console.width >= 128  # block and part columns, and the gain from the source at 142
    total = console.width >= 142
    table = Table(box=None, pad_edge=False, show_edge=False)
    columns = (
        ("#", "stage", "block", "part", "regime", "gain", *(("from source",) if total else ()))
        + ("limiting margin", "rail span")
        if wide
        else ("#", "stage", "regime", "gain", "limiting margin", "rail span")
    )
    for column in columns:
        table.add_column(
            column, no_wrap=True, overflow="ellipsis", min_width=8 if column == "stage" else None
        )
    # a chain with branches (`from`): rows in signal order, the tree drawn before the names as
    # in the interface's stage list; `#` keeps each stage's place in the file
    tree = tree_rows(stage_parents([s.stage for s in result.stages]))
    prefixes = {k: prefix for k, prefix in tree}
    named = {s.index: prefixes[s.index - 1] + shown(s.stage.name) for s in result.stages}
    # the bar takes what the words leave (two spaces between columns), so no word is cut
    used = (
        sum(
            max([len(label)] + [len(text) for text in column])
            for label, column in (
                ("#", [str(s.index) for s in result.stages]),
                ("stage", list(named.values())),
                ("regime", [s.regime_word for s in result.stages]),
                ("gain", [gain_text(s.measure.gain) for s in result.stages]),
                ("limiting margin", [margin_text(s) for s in result.stages]),
            )
        )
        + 2 * 5
        + 1
    )
    bar_width = 24 if wide else max(12, min(24, console.width - used))
    for stage in (result.stages[k] for k, _ in tree):
        cells: list[str | Text] = [str(stage.index), Text(named[stage.index])]
        if wide:
            cells += [stage.stage.block, Text(shown(stage.stage.part or "-"))]
        cells += [regime_text(stage, colour), gain_text(stage.measure.gain)]
        if total:
            cells.append(gain_text(stage.measure.gain_from_source))
        cells += [margin_text(stage), stage_bar(result, stage, colour, bar_width)]
        table.add_row(*cells)
    console.print(table)
    # the interface's legend words; on two lines when the terminal is narrower than one
    lines = [LEGEND] if console.width >= len(LEGEND) else [legend(MARKS[:4]), legend(MARKS[4:] + (FAILS_GO,))]
    for line in lines:
        console.print(Text(line, style="dim" if colour else ""))
    if result.headroom_db is not None:
        console.print(
            f"headroom: the source amplitude may change by {result.headroom_db:+.2f} dB "
            "before a stage leaves its linear regime"
        )
    if result.chain_yield is not None:
        from railroom.engine import yield_words

        console.print(
            yield_words(result.chain_yield, result.samples or 0, result.rare), markup=False, highlight=False
        )
    for stage in result.stages:
        if stage.reasons:
            console.print(Text(shown(f"stage {stage.index} ({stage.stage.name}): {stage.reason_words()}")))
        print_aids(console, stage)
    for caution in chain_cautions_text(result):
        console.print(Text(shown(f"caution: {caution}"), style="yellow" if colour else ""))


def print_aids(console: Console, stage: StageResult) -> None:
    """Probability, sensitivity and fixes of a failing or tight stage (the ones with fixes)."""
    if stage.measure.probability:
        console.print(Text(f"  leaves the linear regime in {stage.measure.probability:.3%} of draws"))
    if not stage.fixes:
        return
    if stage.sensitivity:
        shares = ", ".join(f"{s.words} {s.share:.0%}" for s in stage.sensitivity[:3])
        console.print(Text(shown(f"  sensitivity ({stage.limiting}): {shares}")))
    for fix in stage.fixes:
        console.print(Text(shown(f"  fix: {fix.text}")))


def regime_text(stage: StageResult, colour: bool) -> Text:
    word = stage.regime_word
    style = {"linear": "green", "clipping": "bold red", "saturated": "cyan"}[stage.regime]
    if (not stage.go or stage.shown_regime == "fed-clipped") and stage.regime != "clipping":
        style = "yellow"
    return Text(word, style=style if colour else "")


def stage_bar(result: ChainResult, stage: StageResult, colour: bool, width: int = 24) -> Text:
    """The bar of the op amp with the least room inside the stage (StageResult.drawn)."""
    return drawn_bar(result.chain, stage, width=width, colour=colour)


def chain_cautions_text(result: ChainResult) -> list[str]:
    texts = list(result.cautions)
    for stage in result.stages:
        texts += [f"stage {stage.index} ({stage.stage.name}): {c}" for c in stage.cautions]
    return texts
