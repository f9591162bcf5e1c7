"""`railroom bench [--json] [--quick]`: the engine's figures plus the whole-process and interface
times. Whole process: `railroom check` run as a child process on a temporary copy of each bench
chain with the bench parts as a preset folder, through a small launcher (LAUNCHER) that reports
its wall time and its peak resident memory (resource.getrusage RUSAGE_CHILDREN ru_maxrss)."""

from __future__ import annotations

import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

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
    "check_process_s": "<= 0.6",
    "interface_first_screen_s": "<= 1",
    "interface_edit_ms": "<= 50",
    "filter_montecarlo_1e5_ms": "<= 500",
    "filter_montecarlo_1e6_ms": "<= 5000",
    "filter_montecarlo_1e6_peak_mb": "<= 300",
    "baseline_ratio": ">= 20",
    "montecarlo_exponent": "<= 1.1",
    "montecarlo_failing_exponent": "<= 1.1",
    "corners_exponent_12_200": "<= 1.1",
    "corners_failing_exponent_12_200": "<= 1.1",
    "rss_exponent_12_200": "<= 1.1",
    "rss_failing_exponent_12_200": "<= 1.1",
    "montecarlo_exponent_12_200": "<= 1.1",
    "montecarlo_failing_exponent_12_200": "<= 1.1",
    "typing_median_ms": "<= 50",
    "typing_worst_ms": "<= 100",
    "typing_burst_median_ms": "<= 50",
    "typing_burst_worst_ms": "<= 100",
}
PROCESS_METHODS = ("corners", "rss", "montecarlo")
TYPING_INTERVALS = {"typing": 0.33, "typing_burst": 0.1}  # about 3 keystrokes a second; a burst


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


# A small launcher between the bench and each `railroom check`: a child's peak RSS counts the
# memory of the process it was forked from (Linux carries the high-water mark across exec), so
# the bench, holding its own arrays, would put a floor under every figure; the launcher's floor is
# a bare interpreter's. It prints the check's wall time and RUSAGE_CHILDREN ru_maxrss (kB).
LAUNCHER = """import os, resource, sys, time
start = time.perf_counter()
pid = os.fork()
if pid == 0:
    os.dup2(os.open(os.devnull, os.O_WRONLY), 1)
    os.execv(sys.argv[1], sys.argv[1:])
_, status = os.waitpid(pid, 0)
seconds = time.perf_counter() - start
print(seconds, resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss, os.waitstatus_to_exitcode(status))
"""
CHECK_EXITS = (0, 1)  # GO, NO-GO: the chain was read and checked


def check_child(command: list[str]) -> tuple[float, float]:
    """(wall seconds, peak resident MB) of one `railroom check` process (LAUNCHER); a check
    that could not read its chain (exit 2) or a launcher that failed is an error, not a figure."""
    done = subprocess.run(
        [sys.executable, "-c", LAUNCHER, *command],
        capture_output=True,
        env=dict(os.environ),
        check=False,
        text=True,
    )
    words = done.stdout.split()[-3:] if done.returncode == 0 else []
    if len(words) != 3 or int(words[2]) not in CHECK_EXITS:
        raise RuntimeError(f"railroom bench: {' '.join(command[2:])} failed: {done.stderr.strip()[-500:]}")
    return float(words[0]), float(words[1]) / 1024.0  # Linux gives kB


def process_figures(quick: bool = False) -> dict:
    """`railroom check --method M` as a process on each bench chain (figures.chain_texts): wall
    time and peak RSS, one run each (Monte Carlo at the chain's 10000 draws)."""
    from railroom.engine import bench_chain_texts, bench_presets_text

    folder = Path(tempfile.mkdtemp(prefix="railroom-bench-"))
    figures: dict = {}
    try:
        (folder / "parts").mkdir()
        (folder / "parts" / "bench.toml").write_text(bench_presets_text(), encoding="utf-8")
        for name, text in bench_chain_texts(quick).items():
            path = folder / f"{name}.toml"
            path.write_text(text, encoding="utf-8")
            for method in PROCESS_METHODS:
                command = [sys.executable, "-m", "railroom.tui.cli", "check", str(path), "--no-color"]
                command += ["--method", method, "--presets", str(folder / "parts")]
                if quick and method == "montecarlo":
                    command += ["--samples", "200"]
                seconds, peak = check_child(command)
                key = f"filter_{method}" if name == "filter" else f"{method}_{name}"
                figures[f"{key}_process_s"] = round(seconds, 3)
                figures[f"{key}_process_peak_mb"] = round(peak, 1)
    finally:
        shutil.rmtree(folder, ignore_errors=True)
    return figures


def interface_times(quick: bool = False) -> dict:
    keys = ["interface_first_screen_s", "interface_edit_ms"]
    keys += [f"{name}_{end}_ms" for name in TYPING_INTERVALS for end in ("median", "worst")]
    try:
        from railroom.tui import timing
    except ImportError:
        return dict.fromkeys(keys)
    found = {
        "interface_first_screen_s": measured(timing.first_screen_seconds, 3),
        "interface_edit_ms": measured(lambda: timing.edit_repaint_ms(stages=6 if quick else 20), 1),
    }
    for name, interval in TYPING_INTERVALS.items():
        pair = measured_pair(lambda interval=interval: timing.typing_ms(6 if quick else 20, interval))
        found[f"{name}_median_ms"], found[f"{name}_worst_ms"] = pair
    return found


def measured_pair(call) -> tuple[float | None, float | None]:
    try:
        median, worst = call()
    except Exception as err:  # noqa: BLE001 - another layer's failure must not stop the bench
        print(f"railroom bench: interface timing failed: {err}", file=sys.stderr)
        return None, None
    return round(median, 1), round(worst, 1)


def measured(call, digits: int) -> float | None:
    """The interface's own timing; null (and one line on stderr) when it fails."""
    try:
        return round(call(), digits)
    except Exception as err:  # noqa: BLE001 - another layer's failure must not stop the bench
        print(f"railroom bench: interface timing failed: {err}", file=sys.stderr)
        return None


def bench_figures(quick: bool = False, **engine_options) -> dict:
    from railroom.engine import bench_figures as run

    start = time.perf_counter()
    figures = run(quick=quick, **engine_options)
    figures["check_process_s"] = check_process_seconds(1 if quick else CHECK_RUNS)
    figures.update(process_figures(quick))
    figures.update(interface_times(quick))
    figures["load_average"] = load_average()
    figures["bench_s"] = round(time.perf_counter() - start, 1)
    return figures


def load_average() -> list[float] | None:
    """The 1, 5 and 15 minute load averages when the bench ends (a shared machine's figures
    are only comparable with them)."""
    try:
        return [round(x, 2) for x in os.getloadavg()]
    except OSError:
        return None


def rows(figures: dict, prefix: str = ""):
    """(figure, value) rows; a nested figure (the baseline's agreement) one row per entry."""
    for key, value in figures.items():
        if isinstance(value, dict):
            yield from rows(value, f"{prefix}{key}.")
        else:
            yield f"{prefix}{key}", "-" if value is None else str(value)


def run_bench(args) -> int:
    figures = bench_figures(quick=getattr(args, "quick", False))
    if args.json:
        print_json(figures)
        return GO
    table = Table(box=None, pad_edge=False, show_edge=False)
    for column in ("figure", "value", "target"):
        table.add_column(column)
    for key, value in rows(figures):
        table.add_row(key, value, TARGETS.get(key, ""))
    Console(highlight=False).print(table)
    return GO
