"""`railroom bench [--json]`: the engine's figures plus the whole-process and interface times."""

from __future__ import annotations

import os
import statistics
import subprocess
import sys
import time

from rich.console import Console
from rich.table import Table

from railroom.tui.subcommands.common import print_json
from railroom.tui.subcommands.exit_codes import GO

CHECK_RUNS = 3
TARGETS = {
    "corners_ms": "<= 20",
    "montecarlo_1e4_ms": "<= 50",
    "montecarlo_1e5_ms": "<= 400",
    "montecarlo_1e6_peak_mb": "<= 300",
    "per_draw_ratio": ">= 100",
    "same_answers": "true",
    "corners_200_ms": "<= 1500",
    "corners_200_failing_ms": "<= 1500",
    "rss_200_ms": "<= 2000",
    "corners_exponent": "<= 1.1",
    "corners_failing_exponent": "<= 1.1",
    "rss_exponent": "<= 1.1",
    "rss_failing_exponent": "<= 1.1",
    "rare_1e6_ms": "<= 2000",
    "rare_1e6_interval_holds": "true",
}


def check_process_seconds(runs: int = CHECK_RUNS) -> float:
    """Median wall time of a `railroom check` process on the built-in demo chain."""
    from railroom.engine import demo_file

    demo = demo_file("pump_vibration")
    command = [sys.executable, "-m", "railroom.tui.cli", "check", str(demo)]
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        subprocess.run(
            command, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, env=dict(os.environ), check=False
        )
        times.append(time.perf_counter() - start)
    return round(statistics.median(times), 3)


def interface_times() -> tuple[float | None, float | None]:
    try:
        from railroom.tui import timing
    except ImportError:
        return None, None
    return (measured(timing.first_screen_seconds, 3), measured(lambda: timing.edit_repaint_ms(stages=20), 1))


def measured(call, digits: int) -> float | None:
    """The interface's own timing; null (and one line on stderr) when it fails."""
    try:
        return round(call(), digits)
    except Exception as err:  # noqa: BLE001 - another layer's failure must not stop the bench
        print(f"railroom bench: interface timing failed: {err}", file=sys.stderr)
        return None


def bench_figures(**engine_options) -> dict:
    from railroom.engine import bench_figures as run

    figures = run(**engine_options)
    figures["check_process_s"] = check_process_seconds()
    figures["interface_first_screen_s"], figures["interface_edit_ms"] = interface_times()
    return figures


def run_bench(args) -> int:
    figures = bench_figures()
    if args.json:
        print_json(figures)
        return GO
    table = Table(box=None, pad_edge=False, show_edge=False)
    for column in ("figure", "value", "target"):
        table.add_column(column)
    for key, value in figures.items():
        table.add_row(key, "-" if value is None else str(value), TARGETS.get(key, ""))
    Console(highlight=False).print(table)
    return GO
