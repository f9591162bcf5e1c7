"""A reader that goes away early (`railroom check --json | head -c1`): the command ends quietly
with its own exit status, never a traceback (issue 12 item 11). The reader here closes its end
before the command writes a byte, so every write meets a broken pipe."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

import railroom.engine.demos
from command_line import X10_CHAIN

DEMOS = Path(railroom.engine.demos.__file__).parent
PUMP, BRIDGE = str(DEMOS / "pump_vibration.toml"), str(DEMOS / "bridge_sensor.toml")
GO_CHAIN = X10_CHAIN


def closed_reader(*args: str, home: Path) -> tuple[int, str]:
    env = {**os.environ, "RAILROOM_PRESETS_HOME": str(home), "COLUMNS": "200"}
    proc = subprocess.Popen(
        [sys.executable, "-m", "railroom.tui.cli", *args],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        stdin=subprocess.DEVNULL,
        env=env,
    )
    proc.stdout.close()
    try:
        _, err = proc.communicate(timeout=120)
    finally:
        proc.kill()
    return proc.returncode, err.decode("utf-8", "replace")


@pytest.fixture
def go_chain(tmp_path):
    path = tmp_path / "go.toml"
    path.write_text(GO_CHAIN, encoding="utf-8")
    return str(path)


@pytest.mark.parametrize(
    "args, status",
    [
        (("check", "{go}", "--json"), 0),
        (("check", "{go}", "--markdown"), 0),
        (("check", "{go}"), 0),
        (("check", PUMP, "--json"), 1),
        (("check", PUMP, "--markdown"), 1),
        (("check", "{go}", PUMP, "--json"), 1),
        (("check", "{go}", BRIDGE), 1),
        (("presets", "list"), 0),
        (("presets", "show", "generic-fast"), 0),
        (("schema", "chain"), 0),
        (("schema", "report"), 0),
        (("--help",), 0),
    ],
    ids=lambda v: " ".join(v) if isinstance(v, tuple) else str(v),
)
def test_a_closed_reader_gives_the_verdicts_exit_status_quietly(args, status, go_chain, tmp_path):
    home = tmp_path / "home"
    home.mkdir()
    code, err = closed_reader(*(a.format(go=go_chain) for a in args), home=home)
    assert "Traceback" not in err and "Exception ignored" not in err, err
    assert err == ""
    assert code == status
