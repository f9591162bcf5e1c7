"""`railroom check A.toml B.toml boards/`: many chains, checked in parallel, one line each.

For continuous integration: every chain file given (a folder stands for its `*.toml` files) is
checked in its own worker process; the summary keeps the order given, and the exit status is the
worst of them (2 unreadable > 1 NO-GO > 0 GO). Problems of unreadable files go to stderr in full.
"""
from __future__ import annotations

import os
import sys
from concurrent.futures import ProcessPoolExecutor
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass
from pathlib import Path

from railroom.engine.values import visible
from railroom.tui.cli import EXIT_GO, EXIT_INPUT, EXIT_NO_GO, json_text


@dataclass(frozen=True)
class Options:
    """What each worker needs from the command line (picklable, unlike argparse's namespace)."""

    presets: tuple[str, ...]
    method: str | None
    samples: int | None
    seed: int | None
    margin: float | None
    output: str            # "summary" | "json" | "markdown"


@dataclass(frozen=True)
class Outcome:
    path: str
    status: int            # EXIT_GO, EXIT_NO_GO or EXIT_INPUT
    summary: str           # the one line after the verdict word
    problems: tuple[str, ...] = ()
    report: dict | None = None
    markdown: str = ""


VERDICT_WORDS = {EXIT_GO: "GO", EXIT_NO_GO: "NO-GO", EXIT_INPUT: "ERROR"}


def chain_paths(targets: list[str]) -> tuple[list[str], list[str]]:
    """The files to check, in the order given (a folder's *.toml sorted), and what was not found."""
    paths, missing = [], []
    for target in targets:
        folder = Path(target)
        if folder.is_dir():
            found = sorted(str(p) for p in folder.glob("*.toml") if p.is_file())
            if not found:
                missing.append(f"{target}: no chain files (*.toml) in this folder")
            paths += found
        else:
            paths.append(target)
    return paths, missing


def check_one(path: str, options: Options) -> Outcome:
    """One chain, in a worker process: never raises (the check command's guard turns every
    failure into located lines)."""
    from railroom.tui.check_command import CheckRefused, check_file, margin_text
    args = _Namespace(options)
    try:
        result = check_file(path, args, options.margin)
        report = markdown = None
        if options.output == "json":
            from railroom.engine.report import chain_report
            report = chain_report(result)
        elif options.output == "markdown":
            from railroom.engine.markdown import markdown_report
            markdown = markdown_report(result)
    except CheckRefused as err:
        first = err.lines[0] if err.lines else "cannot be checked"
        more = f" (+{len(err.lines) - 1} more)" if len(err.lines) > 1 else ""
        return Outcome(path, EXIT_INPUT, first + more, tuple(err.lines))
    stages = len(result.stages)
    if result.go:
        worst = min(result.stages, key=_volts_of_room, default=None)
        detail = (f"{stages} stages; least room: stage {worst.index} ({worst.stage.name}) "
                  f"{margin_text(worst)}" if worst is not None and worst.limiting else
                  f"{stages} stages")
    else:
        failing = [f"stage {s.index} ({s.stage.name}): {', '.join(s.reasons)}"
                   for s in result.stages if not s.go]
        detail = f"{result.failing} of {stages} stages fail: " + "; ".join(failing)
    return Outcome(path, EXIT_GO if result.go else EXIT_NO_GO,
                   f"{path}  {result.chain.title}  ({detail})", report=report,
                   markdown=markdown or "")


def _volts_of_room(stage) -> float:
    """The limiting margin when it is in volts, to name the tightest stage of a GO chain."""
    if stage.limiting is None or stage.limiting in ("slew", "current"):
        return float("inf")
    return stage.margins[stage.limiting]


class _Namespace:
    def __init__(self, options: Options) -> None:
        self.presets = list(options.presets)
        self.method, self.samples, self.seed = options.method, options.samples, options.seed


def check_all(paths: list[str], options: Options, workers: int | None = None) -> list[Outcome]:
    """Every path in its own process; a worker that dies takes only its own file down."""
    workers = workers or min(len(paths), os.cpu_count() or 1)
    if workers <= 1:
        return [check_one(p, options) for p in paths]
    outcomes: list[Outcome] = []
    with ProcessPoolExecutor(max_workers=workers) as pool:
        futures = [pool.submit(check_one, p, options) for p in paths]
        for path, future in zip(paths, futures):
            try:
                outcomes.append(future.result())
            except BrokenProcessPool:
                outcomes.append(Outcome(path, EXIT_INPUT, f"{path}: the worker checking this file "
                                        "stopped unexpectedly", (f"{path}: worker stopped",)))
    return outcomes


def run_batch(args, margin: float | None) -> int:
    paths, missing = chain_paths(args.chain)
    output = "json" if args.json else "markdown" if getattr(args, "markdown", False) else "summary"
    options = Options(tuple(args.presets), args.method, args.samples, args.seed, margin, output)
    outcomes = check_all(paths, options) if paths else []
    for line in missing:
        print(f"railroom: {visible(line, 2000)}", file=sys.stderr)
    print_outcomes(outcomes, output)
    worst = max([o.status for o in outcomes] + [EXIT_INPUT if missing else EXIT_GO])
    return worst


def print_outcomes(outcomes: list[Outcome], output: str) -> None:
    if output == "json":
        files = [{"file": o.path, "exit": o.status,
                  "verdict": {EXIT_GO: "go", EXIT_NO_GO: "no-go"}.get(o.status, "unreadable"),
                  "problems": list(o.problems), "report": o.report} for o in outcomes]
        sys.stdout.write(json_text({"format": 1, "files": files}))
        return
    for o in outcomes:
        if output == "markdown" and o.status != EXIT_INPUT:
            sys.stdout.write(o.markdown + "\n---\n\n")
            continue
        print(visible(f"{VERDICT_WORDS[o.status]:<6} {o.summary}", 2000))
        from railroom.tui.check_command import capped
        for line in capped(list(o.problems)):
            print(f"railroom: {visible(line, 2000)}", file=sys.stderr)
