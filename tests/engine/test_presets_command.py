"""`railroom presets` through the installed command, as a user runs it over SSH."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

from railroom.engine.formats.presets import shipped_folder

OVERRIDE = """\
# our derated copy of a shipped class
[part.generic-fast]
description = "derated fast part"
supply = ["4.5", "12"]
supply_abs_max = "13.2"
output_headroom = ["1.0", "1.0"]
input_headroom = ["1.2", "1.2"]
gbw = "80M"
slew = "150V/us"
open_loop_gain = "80dB"
offset = "2m"
output_current = "60m"
"""

BROKEN = """\
[part.lab-bad]
supply = ["5.5", "2.7"]
supply_abs_max = "6"
output_headroom = ["30m", "30m"]
input_headroom = ["-0.1", "-0.1"]
gbw = "1M"
slew = "fast"
open_loop_gain = "100dB"
offset = "2m"
output_current = "20m"
"""


def railroom(*args: str, home: Path) -> subprocess.CompletedProcess:
    env = {**os.environ, "RAILROOM_PRESETS_HOME": str(home), "COLUMNS": "200"}
    return subprocess.run(
        [sys.executable, "-m", "railroom.tui.cli", "presets", *args],
        capture_output=True,
        text=True,
        env=env,
        timeout=30,
    )


def test_list_shows_folders_and_overrides(tmp_path):
    (tmp_path / "lab.toml").write_text(OVERRIDE, encoding="utf-8")
    done = railroom("list", home=tmp_path)
    assert done.returncode == 0, done.stderr
    lines = done.stdout.splitlines()
    assert f"  1. shipped  {shipped_folder()}" in lines
    assert f"  2. yours    {tmp_path}" in lines
    fast = next(line for line in lines if line.startswith("generic-fast "))
    assert f"{tmp_path / 'lab.toml'}" in fast and f"overrides {shipped_folder() / 'generic.toml'}" in fast
    rro = next(line for line in lines if line.startswith("generic-rro-5v "))
    assert "shipped" in rro and "overrides" not in rro


def test_show_prints_units(tmp_path):
    (tmp_path / "lab.toml").write_text(OVERRIDE, encoding="utf-8")
    done = railroom("show", "generic-fast", home=tmp_path)
    assert done.returncode == 0, done.stderr
    fields = {line.split()[0]: line.split(None, 1)[1] for line in done.stdout.splitlines()[2:]}
    assert fields["gbw"] == "80 MHz" and fields["slew"] == "150 V/µs"
    # 80 dB = 10^(80/20) = 1e4 V/V (definition of the decibel for a voltage ratio)
    assert fields["open_loop_gain"] == "80 dB (1e+04 V/V)"
    assert fields["output_headroom"] == "upper 1 V, lower 1 V"
    missing = railroom("show", "generic-fst", home=tmp_path)
    assert missing.returncode == 2 and "did you mean generic-fast" in missing.stderr


def test_check_names_line_and_field_and_exits_2(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text(BROKEN, encoding="utf-8")
    done = railroom("check", str(bad), home=tmp_path)
    assert done.returncode == 2
    assert f"{bad}:2: part.lab-bad.supply: reversed" in done.stderr
    assert f"{bad}:7: part.lab-bad.slew:" in done.stderr and "Traceback" not in done.stderr
    clean = railroom("check", str(shipped_folder() / "generic.toml"), home=tmp_path)
    assert clean.returncode == 0 and "6 preset(s), no problems" in clean.stdout


def test_list_still_lists_good_presets_beside_a_broken_file(tmp_path):
    (tmp_path / "bad.toml").write_text(BROKEN, encoding="utf-8")
    (tmp_path / "lab.toml").write_text(OVERRIDE, encoding="utf-8")
    done = railroom("list", home=tmp_path)
    assert done.returncode == 0
    assert any(line.startswith("generic-fast ") for line in done.stdout.splitlines())
    assert "lab-bad" not in done.stdout
    assert f"{tmp_path / 'bad.toml'}:7: part.lab-bad.slew" in done.stderr
