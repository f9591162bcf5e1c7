"""Running `railroom` as a user does, in a fresh process (the command-line tests share it)."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

# A gain of ten on a shipped bipolar part, comfortably linear: the chain most command tests vary.
X10_CHAIN = """format = 1
[rails.main]
positive = "15"
negative = "-15"
[source]
level = ["-0.1", "0.1"]
[[stage]]
block = "noninverting"
part = "generic-bipolar-15v"
rf = "90k 1%"
rg = "10k 1%"
"""


def railroom(
    *args: str, home: Path, timeout: float = 60, columns: str | None = "200"
) -> subprocess.CompletedProcess:
    """`railroom ARGS` with its own (empty) preset folder `home`, no input, output captured."""
    env = {**os.environ, "RAILROOM_PRESETS_HOME": str(home)}
    if columns is not None:
        env["COLUMNS"] = columns
    return subprocess.run(
        [sys.executable, "-m", "railroom.tui.cli", *args],
        capture_output=True,
        text=True,
        env=env,
        timeout=timeout,
        stdin=subprocess.DEVNULL,
    )
