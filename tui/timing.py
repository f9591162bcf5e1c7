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
