"""Hostile files through the real `railroom check` process: exit 0, 1 or 2, never a traceback,
never a hang, never a changed file; an unreadable input is told on stderr with file and field."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from fuzz_inputs import DEMO_CHAIN, chain_files, extreme_values, has_control, preset_files

EXPLORE = bool(os.environ.get("RAILROOM_FUZZ_EXPLORE"))
PROCESS = settings(
    deadline=None, database=None, derandomize=not EXPLORE, suppress_health_check=list(HealthCheck)
)
TIMEOUT_S = 30
BATCH_FILES = 200


def railroom(*args: str, timeout: float = TIMEOUT_S) -> subprocess.CompletedProcess:
    env = {**os.environ, "COLUMNS": "240"}  # a wide table: names are not wrapped
    return subprocess.run(
        [sys.executable, "-m", "railroom.tui.cli", *args],
        capture_output=True,
        text=True,
        timeout=timeout,
        stdin=subprocess.DEVNULL,
        env=env,
    )


def assert_well_behaved(run: subprocess.CompletedProcess, chain: Path) -> None:
    assert run.returncode in (0, 1, 2), run.stderr
    assert "Traceback" not in run.stderr and "Traceback" not in run.stdout
    assert not has_control(run.stdout) and not has_control(run.stderr)
    if run.returncode == 2:
        lines = run.stderr.splitlines()
        assert lines and all(line.startswith("railroom: ") for line in lines), run.stderr
        assert any(str(chain) in line or "presets" in line for line in lines), run.stderr
    else:
        assert "verdict" in run.stdout


def write(path: Path, text: str) -> bytes:
    path.write_text(text, encoding="utf-8")
    return path.read_bytes()


@settings(PROCESS, max_examples=90)
@given(chain_files() | extreme_values(DEMO_CHAIN))
def test_check_process_on_hostile_chain_files(tmp_path_factory, text):
    chain = tmp_path_factory.mktemp("chain") / "board.toml"
    before = write(chain, text)
    run = railroom("check", str(chain))
    assert_well_behaved(run, chain)
    assert chain.read_bytes() == before


@settings(PROCESS, max_examples=40)
@given(preset_files())
def test_check_process_with_a_hostile_preset_folder(tmp_path_factory, text):
    folder = tmp_path_factory.mktemp("lab-parts")
    preset = folder / "lab.toml"
    before = write(preset, text)
    run = railroom("check", str(DEMO_CHAIN), "--presets", str(folder))
    assert_well_behaved(run, DEMO_CHAIN)
    assert preset.read_bytes() == before


@settings(PROCESS, max_examples=1)
@given(st.lists(chain_files() | extreme_values(DEMO_CHAIN), min_size=BATCH_FILES, max_size=BATCH_FILES))
def test_batch_check_of_a_folder_of_hostile_files(tmp_path_factory, texts):
    folder = tmp_path_factory.mktemp("boards")
    before = {f"{i:03}.toml": write(folder / f"{i:03}.toml", t) for i, t in enumerate(texts)}
    run = railroom("check", str(folder), timeout=180)
    assert run.returncode in (0, 1, 2) and "Traceback" not in run.stderr
    lines = run.stdout.splitlines()
    assert len(lines) == BATCH_FILES
    assert [line.split()[0] in ("GO", "NO-GO", "ERROR") for line in lines] == [True] * BATCH_FILES
    assert [f"{i:03}.toml" in line for i, line in enumerate(lines)] == [True] * BATCH_FILES
    assert not has_control(run.stdout) and not has_control(run.stderr)
    assert {p.name: p.read_bytes() for p in folder.iterdir()} == before


def test_rich_markup_in_names_is_printed_as_written(tmp_path):
    chain = tmp_path / "markup.toml"
    text = DEMO_CHAIN.read_text(encoding="utf-8").replace(
        'name = "gain x10"', 'name = "[bold red]gain[/] [link=http://e.example]x10[/link]"'
    )
    before = write(chain, text)
    run = railroom("check", str(chain))
    assert run.returncode == 1
    assert "[bold red]gain[/] [link=http://e.example]x10[/link]" in run.stdout
    assert chain.read_bytes() == before
