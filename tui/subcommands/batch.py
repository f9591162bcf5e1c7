"""`railroom check A.toml B.toml boards/`: many chains, checked in parallel, one line each.

For continuous integration: every chain file given (a folder stands for its `*.toml` files) is
checked in its own worker process; the summary keeps the order given, and the exit status is the
worst of them (2 unreadable > 1 NO-GO > 0 GO). Problems of unreadable files go to stderr in full.
"""

from __future__ import annotations

import os
import signal
import stat
import sys
import time
from dataclasses import dataclass
from typing import Any
from pathlib import Path

from railroom.engine import check_unit, visible
from railroom.tui.subcommands.common import CheckRefused, capped, check_file, json_text, margin_text
from railroom.tui.subcommands.exit_codes import GO, INPUT_ERROR, NO_GO, stopped_by


@dataclass(frozen=True)
class Options:
    """What each worker needs from the command line (picklable, unlike argparse's namespace)."""

    presets: tuple[str, ...]
    method: str | None
    samples: int | None
    seed: int | None
    margin: float | None
    output: str  # "summary" | "json" | "markdown"
    time_limit: float | None = None  # seconds per file; the worker is stopped past it


@dataclass(frozen=True)
class Outcome:
    path: str
    status: int  # GO, NO_GO or INPUT_ERROR
    summary: str  # the one line after the verdict word
    problems: tuple[str, ...] = ()
    report: dict | None = None
    markdown: str = ""


VERDICT_WORDS = {GO: "GO", NO_GO: "NO-GO", INPUT_ERROR: "ERROR"}


DEFAULT_TIME_LIMIT_S = 300.0


def chain_paths(targets: list[str], skipped: list[str] | None = None) -> tuple[list[str], list[str]]:
    """The files to check, in the order given (a folder's *.toml sorted), and what was not found.
    `skipped` (when given) receives a line for each *.toml in a folder that is not a regular
    file (a FIFO, a device, a folder): such an entry is left out, never read."""
    paths, missing = [], []
    for target in targets:
        folder = Path(target)
        if folder.is_dir():
            found = []
            for path in sorted(folder.glob("*.toml")):
                kind = _not_regular(path)
                if kind is None:
                    found.append(str(path))
                elif skipped is not None:
                    skipped.append(f"{path}: skipped: {kind}, not a regular file")
            if not found:
                missing.append(f"{target}: no chain files (*.toml) in this folder")
            paths += found
        else:
            paths.append(target)
    return paths, missing


def _not_regular(path: Path) -> str | None:
    try:
        mode = os.stat(path).st_mode
    except OSError as err:
        return f"cannot be read ({err.strerror or err})"
    if stat.S_ISREG(mode):
        return None
    return (
        "a folder"
        if stat.S_ISDIR(mode)
        else "a FIFO (named pipe)"
        if stat.S_ISFIFO(mode)
        else "a device"
        if stat.S_ISCHR(mode) or stat.S_ISBLK(mode)
        else "not a plain file"
    )


def check_one(path: str, options: Options) -> Outcome:
    """One chain, in a worker process: never raises (the check command's guard turns every
    failure into located lines)."""
    args = _Namespace(options)
    try:
        result = check_file(path, args, options.margin)
        report = markdown = None
        if options.output == "json":
            from railroom.engine import chain_report

            report = chain_report(result)
        elif options.output == "markdown":
            from railroom.engine import markdown_report

            markdown = markdown_report(result)
    except CheckRefused as err:
        first = err.lines[0] if err.lines else "cannot be checked"
        more = f" (+{len(err.lines) - 1} more)" if len(err.lines) > 1 else ""
        return Outcome(path, INPUT_ERROR, first + more, tuple(err.lines))
    stages = len(result.stages)
    if result.go:
        worst = min(result.stages, key=_volts_of_room, default=None)
        detail = (
            f"{stages} stages; least room: stage {worst.index} ({worst.stage.name}) {margin_text(worst)}"
            if worst is not None and worst.limiting
            else f"{stages} stages"
        )
    else:
        failing = [
            f"stage {s.index} ({s.stage.name}): {', '.join(s.reasons)}" for s in result.stages if not s.go
        ]
        detail = f"{result.failing} of {stages} stages fail: " + "; ".join(failing)
    return Outcome(
        path,
        GO if result.go else NO_GO,
        f"{path}  {result.chain.title}  ({detail})",
        report=report,
        markdown=markdown or "",
    )


def _volts_of_room(stage) -> float:
    """The limiting margin when it is in volts, to name the tightest stage of a GO chain."""
    if stage.limiting is None or check_unit(stage.limiting) != "V":
        return float("inf")
    return stage.margins[stage.limiting]


class _Namespace:
    def __init__(self, options: Options) -> None:
        self.presets = list(options.presets)
        self.method, self.samples, self.seed = options.method, options.samples, options.seed


def check_all(paths: list[str], options: Options, workers: int | None = None) -> list[Outcome]:
    """Every path in its own worker process, at most `workers` at a time; a worker that dies or
    runs past `options.time_limit` takes only its own file down. Every worker is stopped when
    the batch ends for any reason (an interrupt, a signal), and dies with it on Linux."""
    workers = workers or min(len(paths), os.cpu_count() or 1)
    if workers <= 1 and options.time_limit is None:
        return [check_one(p, options) for p in paths]
    import multiprocessing
    from multiprocessing.connection import wait

    context = multiprocessing.get_context()
    outcomes: list[Outcome | None] = [None] * len(paths)
    waiting = list(range(len(paths)))
    running: dict[int, tuple[Any, Any, float]] = {}  # index -> (process, connection, started)
    try:
        while waiting or running:
            while waiting and len(running) < workers:
                index = waiting.pop(0)
                receive, send = context.Pipe(duplex=False)
                process = context.Process(
                    target=_work, args=(paths[index], options, send, os.getpid()), daemon=True
                )
                process.start()
                send.close()
                running[index] = (process, receive, time.monotonic())
            wait([c for _, c, _ in running.values()], timeout=_next_deadline(running, options))
            for index in list(running):
                outcome = _collect(paths[index], *running[index], options)
                if outcome is not None:
                    outcomes[index] = outcome
                    del running[index]
    finally:
        for process, connection, _ in running.values():
            process.kill()
            process.join()
            connection.close()
    return [o for o in outcomes if o is not None]


def _next_deadline(running: dict, options: Options) -> float | None:
    if options.time_limit is None:
        return None
    now = time.monotonic()
    return max(0.0, min(started + options.time_limit - now for _, _, started in running.values()))


def _collect(path: str, process, connection, started: float, options: Options) -> Outcome | None:
    """The worker's outcome when it has one; a stopped or overdue worker's outcome says so."""
    if connection.poll():
        try:
            outcome = connection.recv()
        except (EOFError, OSError):
            outcome = None
        process.join()
        connection.close()
        if outcome is not None:
            return outcome
        return Outcome(
            path,
            INPUT_ERROR,
            f"{path}: the worker checking this file stopped unexpectedly",
            (f"{path}: worker stopped",),
        )
    limit = options.time_limit
    if limit is not None and time.monotonic() - started > limit:
        process.kill()
        process.join()
        connection.close()
        return Outcome(
            path,
            INPUT_ERROR,
            f"{path}: not finished within the time limit of {limit:g} s per file; stopped",
            (f"{path}: not finished within the time limit of {limit:g} s per file (--time-limit); stopped",),
        )
    return None


def _work(path: str, options: Options, connection, parent: int) -> None:
    """One file in a worker process: the outcome goes back through the pipe."""
    _die_with(parent)
    connection.send(check_one(path, options))
    connection.close()


def _die_with(parent: int) -> None:
    """Ask Linux to kill this worker when the batch process dies, even by SIGKILL
    (prctl(2), PR_SET_PDEATHSIG); elsewhere the batch's own clean-up stops it."""
    signal.signal(signal.SIGTERM, signal.SIG_DFL)
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # the batch decides; it kills us
    try:
        import ctypes

        libc = ctypes.CDLL(None, use_errno=True)
        libc.prctl(1, signal.SIGKILL)  # 1 = PR_SET_PDEATHSIG
    except (OSError, AttributeError):
        pass
    if os.getppid() != parent:  # the batch died before prctl took hold
        os._exit(1)


class _Stopped(Exception):
    def __init__(self, signum: int) -> None:
        self.signum = signum


def _stop(signum, frame):
    raise _Stopped(signum)


def run_batch(args, margin: float | None) -> int:
    skipped: list[str] = []
    paths, missing = chain_paths(args.chain, skipped)
    output = "json" if args.json else "markdown" if getattr(args, "markdown", False) else "summary"
    limit = getattr(args, "time_limit", None)
    options = Options(
        tuple(args.presets),
        args.method,
        args.samples,
        args.seed,
        margin,
        output,
        DEFAULT_TIME_LIMIT_S if limit is None else (limit or None),
    )
    for line in skipped:
        print(f"railroom: {visible(line, 2000)}", file=sys.stderr)
    handlers = {}
    for signum in (signal.SIGTERM, signal.SIGHUP):
        try:
            handlers[signum] = signal.signal(signum, _stop)
        except (ValueError, OSError):  # not the main thread: the workers still die with us
            pass
    try:
        outcomes = check_all(paths, options) if paths else []
    except _Stopped as stop:
        return stopped_by(stop.signum)  # the shell's status for a process ended by a signal
    finally:
        for signum, handler in handlers.items():
            signal.signal(signum, handler)
    for line in missing:
        print(f"railroom: {visible(line, 2000)}", file=sys.stderr)
    print_outcomes(outcomes, output)
    worst = max([o.status for o in outcomes] + [INPUT_ERROR if missing else GO])
    return worst


def print_outcomes(outcomes: list[Outcome], output: str) -> None:
    if output == "json":
        files = [
            {
                "file": o.path,
                "exit": o.status,
                "verdict": {GO: "go", NO_GO: "no-go"}.get(o.status, "unreadable"),
                "problems": list(o.problems),
                "report": o.report,
            }
            for o in outcomes
        ]
        sys.stdout.write(json_text({"format": 1, "files": files}))
        return
    for o in outcomes:
        if output == "markdown" and o.status != INPUT_ERROR:
            sys.stdout.write(o.markdown + "\n---\n\n")
            continue
        print(visible(f"{VERDICT_WORDS[o.status]:<6} {o.summary}", 2000))
        for line in capped(list(o.problems)):
            print(f"railroom: {visible(line, 2000)}", file=sys.stderr)
