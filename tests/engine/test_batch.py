"""`railroom check` on many files: one line each, in order, worst exit status, files untouched."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

from fuzz_inputs import DEMO_CHAIN
from railroom.tui.subcommands.batch import Options, chain_paths, check_all

DEMO = DEMO_CHAIN.read_text(encoding="utf-8")
# The demo is NO-GO (its level shifter slews too slowly at 200 mV peak, 5 kHz); at a tenth of
# the amplitude every stage is linear with room to spare.
GO_CHAIN = DEMO.replace('amplitude = "200m"', 'amplitude = "20m"')
BROKEN = DEMO.replace('rf = "90k9 0.1%"', 'rf = "90k9 0.1%%"')


def railroom(*args: str, timeout: float = 120) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-m", "railroom.tui.cli", *args], capture_output=True, text=True, timeout=timeout
    )


def board_folder(tmp_path: Path, files: dict[str, str]) -> Path:
    folder = tmp_path / "boards"
    folder.mkdir()
    for name, text in files.items():
        (folder / name).write_text(text, encoding="utf-8")
    return folder


def test_folder_gives_one_line_per_file_in_order_and_the_worst_status(tmp_path):
    folder = board_folder(
        tmp_path,
        {"a-go.toml": GO_CHAIN, "b-nogo.toml": DEMO, "c-broken.toml": BROKEN, "notes.txt": "not a chain"},
    )
    before = {p.name: p.read_bytes() for p in folder.iterdir()}
    run = railroom("check", str(folder))
    lines = run.stdout.splitlines()
    assert [line.split()[0] for line in lines] == ["GO", "NO-GO", "ERROR"]
    assert ["a-go.toml" in lines[0], "b-nogo.toml" in lines[1], "c-broken.toml" in lines[2]] == [True] * 3
    assert run.returncode == 2
    # The broken file's problem is located on stderr: file, line of rf (demo line 56), field.
    assert "c-broken.toml:56: stage.2.rf:" in run.stderr
    assert "Traceback" not in run.stderr
    assert {p.name: p.read_bytes() for p in folder.iterdir()} == before


def test_exit_status_is_the_worst_verdict(tmp_path):
    folder = board_folder(tmp_path, {"a.toml": GO_CHAIN, "b.toml": GO_CHAIN, "c.toml": DEMO})
    assert railroom("check", str(folder / "a.toml"), str(folder / "b.toml")).returncode == 0
    assert railroom("check", str(folder)).returncode == 1


def test_batch_json_lists_every_file_with_its_report(tmp_path):
    folder = board_folder(tmp_path, {"a.toml": GO_CHAIN, "b.toml": BROKEN})
    run = railroom("check", str(folder), "--json")
    files = json.loads(run.stdout)["files"]
    assert [(Path(f["file"]).name, f["exit"], f["verdict"]) for f in files] == [
        ("a.toml", 0, "go"),
        ("b.toml", 2, "unreadable"),
    ]
    assert files[0]["report"]["verdict"] == "go" and files[1]["problems"]
    assert run.returncode == 2


def test_empty_folder_and_missing_file_are_input_errors(tmp_path):
    empty = tmp_path / "empty"
    empty.mkdir()
    run = railroom("check", str(empty))
    assert run.returncode == 2 and "no chain files" in run.stderr
    run = railroom("check", str(tmp_path / "nowhere.toml"), str(DEMO_CHAIN))
    assert run.returncode == 2 and "nowhere.toml" in run.stdout and "Traceback" not in run.stderr


def test_parallel_workers_give_the_same_outcomes_as_one_process(tmp_path):
    folder = board_folder(
        tmp_path, {f"{i}.toml": t for i, t in enumerate([GO_CHAIN, DEMO, BROKEN, GO_CHAIN])}
    )
    paths, missing = chain_paths([str(folder)])
    assert not missing and len(paths) == 4
    options = Options((), None, None, None, None, "summary")
    assert check_all(paths, options, workers=2) == check_all(paths, options, workers=1)
