"""Hostile files through the real command (issue 12 items 8, 9): a FIFO, a device, a huge file,
nesting 500 deep. Each gives a located line and exit 2 (or is skipped with a line), never a hang
(the subprocess timeout is a guard against one, not a timing check) or a traceback."""

from __future__ import annotations

import os
import subprocess
from pathlib import Path

import pytest

import railroom.engine.demos as demos_package
from railroom.engine.formats.presets import shipped_folder
from command_line import railroom

DEMO = Path(demos_package.__file__).parent / "pump_vibration.toml"
DEMO_TEXT = DEMO.read_text(encoding="utf-8")
SHIPPED = (shipped_folder() / "generic.toml").read_text(encoding="utf-8")
DEEP = 500


def assert_clean(done: subprocess.CompletedProcess) -> None:
    assert "Traceback" not in done.stderr + done.stdout
    assert "railroom bug" not in done.stderr


def test_a_fifo_as_the_chain_file_is_refused(tmp_path, home):
    fifo = tmp_path / "board.toml"
    os.mkfifo(fifo)
    done = railroom("check", str(fifo), home=home)
    assert done.returncode == 2
    assert done.stderr.startswith(f"railroom: {fifo}: (file): not read: a FIFO"), done.stderr
    assert_clean(done)


def test_a_fifo_in_the_preset_folder_is_skipped_with_a_line(tmp_path, home):
    os.mkfifo(home / "lab.toml")
    (home / "folder.toml").mkdir()
    done = railroom("check", str(DEMO), home=home)
    assert done.returncode == 1, done.stderr  # the demo's own verdict: NO-GO
    assert_clean(done)
    listed = railroom("presets", "list", home=home)
    assert listed.returncode == 0
    assert f"railroom: {home / 'lab.toml'}: (file): not read: a FIFO" in listed.stderr
    assert f"railroom: {home / 'folder.toml'}: (file): not read: a folder" in listed.stderr
    assert_clean(listed)
    checked = railroom("presets", "check", str(home / "lab.toml"), home=home)
    assert checked.returncode == 2 and "not read: a FIFO" in checked.stderr


def test_dev_zero_is_refused_at_once(home):
    done = railroom("check", "/dev/zero", home=home)
    assert done.returncode == 2
    assert done.stderr == "railroom: /dev/zero: (file): not read: a device, not a regular file\n"


def test_a_file_past_the_size_limit_is_refused(tmp_path, home):
    from railroom.engine.formats.fields import MAX_FILE_BYTES

    big = tmp_path / "big.toml"
    big.write_text(DEMO_TEXT + "#" * MAX_FILE_BYTES, encoding="utf-8")
    done = railroom("check", str(big), home=home)
    assert done.returncode == 2
    assert f"{big}: (file): too large" in done.stderr and f"{MAX_FILE_BYTES:,}" in done.stderr
    assert_clean(done)


NESTED = {
    "array": "x = " + "[" * DEEP + "]" * DEEP + "\n",
    "inline table": "x = " + "{a = " * DEEP + "1" + "}" * DEEP + "\n",
    "dotted header": "[" + ".".join(["a"] * DEEP) + "]\nb = 1\n",
}


@pytest.mark.parametrize("kind", list(NESTED))
def test_nesting_500_deep_in_a_chain_is_located(tmp_path, home, kind):
    chain = tmp_path / "deep.toml"
    chain.write_text(DEMO_TEXT + NESTED[kind], encoding="utf-8")
    line = DEMO_TEXT.count("\n") + 1
    done = railroom("check", str(chain), home=home)
    assert done.returncode == 2
    assert done.stderr.startswith(f"railroom: {chain}:{line}: (file): nested more than"), done.stderr
    assert_clean(done)


@pytest.mark.parametrize("kind", list(NESTED))
def test_nesting_500_deep_in_a_preset_file_is_located(home, kind):
    lab = home / "lab.toml"
    lab.write_text(SHIPPED + NESTED[kind], encoding="utf-8")
    line = SHIPPED.count("\n") + 1
    for args in (("presets", "list"), ("presets", "check", str(lab))):
        done = railroom(*args, home=home)
        assert f"railroom: {lab}:{line}: (file): nested more than" in done.stderr, done.stderr
        assert_clean(done)
    done = railroom("check", str(DEMO), home=home)
    # The demo's parts are all defined in the file that could not be read: each stage says so.
    assert done.returncode == 2
    assert "could not be read" in done.stderr.splitlines()[0]
    assert_clean(done)
