"""How fast the interface answers, for `railroom bench` (never asserted in tests).

first_screen_seconds(): spawns the real `railroom` command (the built-in demo) under a
    pseudo-terminal of 80x24 and measures wall time from the spawn until the terminal output holds
    the verdict words, which the interface paints in the same frame as the rest of its first screen
    (the stage list and detail come from the same result). It then sends `q` and waits for the exit.
edit_repaint_ms(stages): builds a chain of `stages` stages (repeating the demo's linear stages),
    runs the app headless with App.run_test at 100x40, opens the edit form of a gain stage (in
    place of the detail panel, below the live stage list) and times, per edit, from putting new
    text in its rf field (what a keystroke does) until the status line shows the new verdict and
    Textual has processed the repaint: every message the screen had waiting is handled and the
    compositor has drawn the frame (Pilot.pause(0), which ends by painting the screen). Not a bare
    Pilot.pause(): that sleeps until the whole process idles, so it counts its own sleep and the
    background worker's full check, which the user does not wait for. Median of runs.
typing_ms(stages, interval): the same app on a chain of `stages` stages with Sallen-Key and
    multiple-feedback filters (filter_chain_text), the edit form of a Sallen-Key stage open, and
    keystrokes into its r1 field every `interval` seconds (0.33: about 3 a second; 0.1: a fast
    burst) whether or not the check of the previous one is done, so a keystroke lands while the
    previous check still runs and the full check of the file's method starts in the pauses as it
    does for a user. Each keystroke's wait ends at the first frame painted after the status line
    shows the verdict of the chain with that keystroke's text or a later one in the field (the
    screen then shows what the user typed): the app's own "show the check" step is watched, then
    Pilot.pause(0) paints. Returns (median, worst) in ms over the keystrokes.
"""

from __future__ import annotations

import asyncio
import os
import select
import shutil
import statistics
import sys
import tempfile
import time
from pathlib import Path

VERDICT_MARKS = (b"NO-GO", b"GO ")


def railroom_command() -> list[str]:
    found = shutil.which("railroom")
    if found:
        return [found]
    return [sys.executable, "-m", "railroom.tui.cli"]


def first_screen_seconds(timeout: float = 20.0) -> float:
    import fcntl
    import pty
    import struct
    import termios

    command = railroom_command()
    pid, fd = pty.fork()
    if pid == 0:  # the child: become railroom
        os.environ.setdefault("TERM", "xterm-256color")
        os.execv(command[0], command)
    fcntl.ioctl(fd, termios.TIOCSWINSZ, struct.pack("HHHH", 24, 80, 0, 0))
    start = time.perf_counter()
    seen = b""
    try:
        while time.perf_counter() - start < timeout:
            ready, _, _ = select.select([fd], [], [], 0.05)
            if ready:
                try:
                    seen += os.read(fd, 65536)
                except OSError:
                    break
                if any(mark in seen for mark in VERDICT_MARKS):
                    return time.perf_counter() - start
        raise TimeoutError(f"no first screen within {timeout} s")
    finally:
        _stop(pid, fd)


def _stop(pid: int, fd: int) -> None:
    try:
        os.write(fd, b"q")
        deadline = time.perf_counter() + 3
        while time.perf_counter() < deadline:
            done, _ = os.waitpid(pid, os.WNOHANG)
            if done:
                break
            select.select([fd], [], [], 0.05)
            try:
                os.read(fd, 65536)
            except OSError:
                pass
        else:
            os.kill(pid, 9)
            os.waitpid(pid, 0)
    finally:
        os.close(fd)


def long_chain_text(stages: int) -> str:
    """The demo's rails and source with `stages` buffer / unity inverting / filter stages in turn."""
    from railroom.tui.session import demo_path

    demo = demo_path().read_text(encoding="utf-8")
    head = demo[: demo.index("[[stage]]")]
    kinds = [
        ("follower", 'part = "generic-bipolar-15v"\nrails = "analog"\n'),
        ("inverting", 'part = "generic-bipolar-15v"\nrails = "analog"\nrin = "10k 0.1%"\nrf = "10k 0.1%"\n'),
        ("rc_lowpass", 'r = "1k"\nc = "1n"\n'),
    ]
    body = []
    for i in range(stages):
        block, fields = kinds[i % 3]
        body.append(f'[[stage]]\nname = "stage {i + 1}"\nblock = "{block}"\n{fields}')
    return head + "\n".join(body)


def edit_repaint_ms(stages: int = 20, edits: int = 9) -> float:
    folder = Path(tempfile.mkdtemp(prefix="railroom-timing-"))
    try:
        path = folder / "long.toml"
        path.write_text(long_chain_text(stages), encoding="utf-8")
        return asyncio.run(_time_edits(path, edits))
    finally:
        shutil.rmtree(folder, ignore_errors=True)


async def _time_edits(path: Path, edits: int) -> float:
    from textual.widgets import Input
    from railroom.tui.app import TYPING_PAUSE_SECONDS, build_app
    from railroom.tui.widgets.status_line import StatusLine

    app = build_app(path)
    times = []
    async with app.run_test(size=(100, 40)) as pilot:
        await pilot.pause()
        await pilot.press("j", "e")  # stage 2: an inverting stage
        await pilot.pause()
        field = app.screen.query_one("FieldForm #field-rf", Input)
        status = app.screen_stack[0].query_one(StatusLine).query_one("#status-verdict")
        for i in range(edits):
            value = "10k 0.1%" if i % 2 else "100M"  # gain -1e4 clips; -1 does not
            start = time.perf_counter()
            field.value = value
            await _verdict_shown(status, clipping=not i % 2)
            await pilot.pause(0)
            times.append((time.perf_counter() - start) * 1000)
            await asyncio.sleep(TYPING_PAUSE_SECONDS)  # the full check starts after a pause
            await app.workers.wait_for_complete()  # and ends before the next edit
            await pilot.pause()
    return statistics.median(times)


FILTER_KINDS = (
    ("follower", ""),
    ("sallen_key_lowpass", 'r1 = "10k"\nr2 = "10k"\nc1 = "22n 5%"\nc2 = "10n 5%"\n'),
    ("inverting", 'rin = "10k 0.1%"\nrf = "10k 0.1%"\n'),
    ("mfb_lowpass", 'r1 = "10k"\nr2 = "10k"\nr3 = "10k"\nc1 = "22n 5%"\nc2 = "4n7 5%"\n'),
    ("mfb_bandpass", 'r1 = "10k"\nr2 = "20k"\nr3 = "1k"\nc1 = "10n 5%"\nc2 = "10n 5%"\n'),
)
# what is typed into stage 2's r1, one keystroke each: every text a distinct valid resistance
KEYSTROKES = ("1", "12", "12k", "12", "1", "15", "15k", "1", "18", "18k", "1", "22", "22k")


def filter_chain_text(stages: int) -> str:
    """The demo's rails and source with `stages` stages: buffers, unity inverting stages and
    Sallen-Key and multiple-feedback low- and band-pass filters of gain about 1, in turn."""
    from railroom.tui.session import demo_path

    demo = demo_path().read_text(encoding="utf-8")
    head = demo[: demo.index("[[stage]]")]
    body = []
    for i in range(stages):
        block, fields = FILTER_KINDS[i % len(FILTER_KINDS)]
        part = 'part = "generic-bipolar-15v"\nrails = "analog"\n'
        body.append(f'[[stage]]\nname = "stage {i + 1}"\nblock = "{block}"\n{part}{fields}')
    return head + "\n".join(body)


def typing_ms(stages: int = 20, interval: float = 0.33) -> tuple[float, float]:
    folder = Path(tempfile.mkdtemp(prefix="railroom-timing-"))
    try:
        path = folder / "filters.toml"
        path.write_text(filter_chain_text(stages), encoding="utf-8")
        waits = asyncio.run(_time_typing(path, interval))
        return statistics.median(waits), max(waits)
    finally:
        shutil.rmtree(folder, ignore_errors=True)


async def _time_typing(path: Path, interval: float) -> list[float]:
    from textual.widgets import Input
    from railroom.engine import Quantity, parse_value
    from railroom.tui.app import build_app

    app = build_app(path)
    shown: list[float] = []  # r1 of stage 2 in the chain whose verdict was just shown
    waits: list[float] = []
    async with app.run_test(size=(100, 40)) as pilot:
        await pilot.pause()
        await app.workers.wait_for_complete()
        await pilot.press("j", "e")  # stage 2: a Sallen-Key low-pass
        await pilot.pause()
        field = app.screen.query_one("FieldForm #field-r1", Input)
        original = app._show_corners

        def watched(result) -> None:
            original(result)
            r1 = app.open_session.chain.stages[1].values["r1"]
            assert isinstance(r1, Quantity)  # Stage.values holds the parsed fields as objects
            shown.append(r1.value)

        # the bench wraps the app's own method to see each verdict as it is shown
        app._show_corners = watched  # type: ignore[method-assign]
        values = [parse_value(text, "resistance") for text in KEYSTROKES]
        waiting: list[tuple[int, float]] = []  # keystrokes typed, not yet answered on screen
        start = time.perf_counter()
        typed = 0
        deadline = start + interval * len(KEYSTROKES) + 30.0
        while typed < len(KEYSTROKES) or waiting:
            now = time.perf_counter()
            if now > deadline:
                raise RuntimeError("the typed values' verdicts did not all show")
            if typed < len(KEYSTROKES) and now >= start + typed * interval:
                field.value = KEYSTROKES[typed]
                waiting.append((typed, time.perf_counter()))
                typed += 1
            if shown and waiting:
                latest = answered(shown.pop(), values, waiting, typed)
                if latest is not None:
                    await pilot.pause(0)  # the frame with that verdict is painted
                    end = time.perf_counter()
                    waits += [(end - t) * 1000 for i, t in waiting if i <= latest]
                    waiting = [(i, t) for i, t in waiting if i > latest]
                shown.clear()
            await asyncio.sleep(0.001)
        await app.workers.wait_for_complete()
    return waits


def answered(value: float, values: list[float], waiting: list, typed: int) -> int | None:
    """The latest keystroke typed so far whose text gave the value now shown, if it is one of
    those still waiting (texts can repeat a value: the latest one typed is the one shown)."""
    for i in range(typed - 1, -1, -1):
        if values[i] == value:
            return i if i >= waiting[0][0] else None
    return None


async def _verdict_shown(status, clipping: bool, timeout: float = 5.0) -> None:
    """Yield to the event loop until the status line says NO-GO (clipping) or GO."""
    deadline = time.perf_counter() + timeout
    while ("NO-GO" in str(status.content)) != clipping:
        if time.perf_counter() > deadline:
            raise RuntimeError(f"the verdict did not follow the edit: {status.content!r}")
        await asyncio.sleep(0)


if __name__ == "__main__":
    print(f"first screen {first_screen_seconds():.3f} s")
    print(f"edit to verdict {edit_repaint_ms():.1f} ms (20 stages)")
    for words, interval in (("typing, 3 a second", 0.33), ("typing burst, 10 a second", 0.1)):
        median, worst = typing_ms(interval=interval)
        print(f"{words}: median {median:.1f} ms, worst {worst:.1f} ms (20 stages, filters)")
