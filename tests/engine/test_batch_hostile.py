"""Many files at once against hostile folders (issue 12 item 13): entries named *.toml that are
not files are skipped with a line, a file that runs too long is stopped at the time limit, and
no worker outlives the batch (stopped by a signal, or killed outright)."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from fuzz_inputs import DEMO_CHAIN
from command_line import railroom as run_railroom

DEMO = DEMO_CHAIN.read_text(encoding="utf-8")
GO_CHAIN = DEMO.replace('amplitude = "200m"', 'amplitude = "20m"')
# Monte Carlo with the most draws a file may ask for (10^7): minutes of work on any machine.
SLOW_CHAIN = GO_CHAIN.replace('method = "corners"', 'method = "montecarlo"\nsamples = 10000000')
GUARD_S = 120  # a hang guard for waiting on processes, not a timing check


def railroom(*args: str, home: Path) -> subprocess.CompletedProcess:
    return run_railroom(*args, home=home, timeout=GUARD_S, columns=None)


def test_the_slow_chain_loads_and_asks_for_ten_million_draws():
    from railroom.engine.formats.chain_file import chain_from_text

    assert chain_from_text(SLOW_CHAIN, "slow.toml").conditions.samples == 10_000_000


def test_entries_that_are_not_files_are_skipped_with_a_line(tmp_path, home):
    boards = tmp_path / "boards"
    boards.mkdir()
    (boards / "a.toml").write_text(GO_CHAIN, encoding="utf-8")
    os.mkfifo(boards / "b.toml")
    (boards / "c.toml").mkdir()
    done = railroom("check", str(boards), home=home)
    assert done.returncode == 0, done.stderr
    assert [line.split()[0] for line in done.stdout.splitlines()] == ["GO"]
    assert (
        f"railroom: {boards / 'b.toml'}: skipped: a FIFO (named pipe), not a regular file"
        in done.stderr.splitlines()
    )
    assert f"railroom: {boards / 'c.toml'}: skipped: a folder, not a regular file" in done.stderr.splitlines()


def test_a_file_past_the_time_limit_is_stopped_and_the_others_checked(tmp_path, home):
    slow, good = tmp_path / "slow.toml", tmp_path / "good.toml"
    slow.write_text(SLOW_CHAIN, encoding="utf-8")
    good.write_text(GO_CHAIN, encoding="utf-8")
    # 5 s: ten million draws take far longer, and the small chain stays well inside it on a
    # loaded machine (with 1 s it once ran out on a machine busy with other jobs)
    done = railroom("check", str(slow), str(good), "--time-limit", "5", home=home)
    assert done.returncode == 2
    lines = done.stdout.splitlines()
    assert lines[0].startswith(f"ERROR  {slow}: not finished within the time limit of 5 s")
    assert lines[1].startswith(f"GO     {good}")
    assert "Traceback" not in done.stderr


def children_of(pid: int) -> set[int]:
    found = set()
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                fields = (entry / "stat").read_text().rsplit(")", 1)[1].split()
            except OSError:
                continue
            if int(fields[1]) == pid and fields[0] != "Z":
                found.add(int(entry.name))
    return found


def alive(pid: int) -> bool:
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except OSError:
        return False
    return state != "Z"


def wait_until(condition, what: str) -> None:
    deadline = time.monotonic() + GUARD_S
    while not condition():
        assert time.monotonic() < deadline, what
        time.sleep(0.05)


@pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="reads /proc (Linux)")
@pytest.mark.parametrize(
    "how", [signal.SIGTERM, signal.SIGINT, signal.SIGKILL], ids=["SIGTERM", "SIGINT", "SIGKILL"]
)
def test_no_worker_outlives_the_batch(tmp_path, home, how):
    paths = []
    for name in ("a.toml", "b.toml"):
        (tmp_path / name).write_text(SLOW_CHAIN, encoding="utf-8")
        paths.append(str(tmp_path / name))
    env = {**os.environ, "RAILROOM_PRESETS_HOME": str(home)}
    batch = subprocess.Popen(
        [sys.executable, "-m", "railroom.tui.cli", "check", *paths],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
        stdin=subprocess.DEVNULL,
        env=env,
    )
    workers: set[int] = set()
    try:
        wait_until(lambda: len(children_of(batch.pid)) >= 1, "no worker started")
        workers = children_of(batch.pid)
        batch.send_signal(how)
        batch.wait(timeout=GUARD_S)
        wait_until(lambda: not any(alive(w) for w in workers), "a worker outlived the batch")
    finally:
        batch.kill()
        for worker in workers | children_of(batch.pid):  # whatever a failure left behind
            if alive(worker):
                os.kill(worker, signal.SIGKILL)
    err = batch.stderr.read().decode()
    assert "Traceback" not in err, err
    if how != signal.SIGKILL:
        assert batch.returncode in (128 + how, -how, 2), batch.returncode
