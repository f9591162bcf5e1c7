"""Sensible limits (issue 12 item 13; the README's "Limits"): past them a file is refused with a
located message instead of taking minutes and gigabytes."""

from __future__ import annotations

import subprocess
from pathlib import Path

import pytest

from railroom.engine.formats.chain_file import MAX_INPUTS, MAX_STAGES
from railroom.engine.formats.fields import MAX_FILE_BYTES, MAX_TEXT
from command_line import railroom as run_railroom

HEAD = """format = 1
[rails.main]
positive = "15"
negative = "-15"
[source]
level = ["-0.1", "0.1"]
"""
FOLLOWER = '[[stage]]\nblock = "follower"\npart = "generic-bipolar-15v"\n'


def summing(count: int) -> str:
    inputs = ", ".join('{r = "100k", v = "0.01"}' for _ in range(count))
    return (
        f'[[stage]]\nblock = "summing"\npart = "generic-bipolar-15v"\nrin = "10k"\n'
        f'rf = "10k"\ninputs = [{inputs}]\n'
    )


def write(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "board.toml"
    path.write_text(text, encoding="utf-8")
    return path


def railroom(*args: str, home: Path) -> subprocess.CompletedProcess:
    return run_railroom(*args, home=home, timeout=120)


def test_the_limits_are_the_documented_ones():
    readme = (Path(__file__).parents[2] / "README.md").read_text(encoding="utf-8")
    limits = readme.split("**Limits.**")[1].split("\n\n")[0]
    for figure in (
        f"{MAX_STAGES} stages",
        f"{MAX_INPUTS} fixed inputs",
        f"{MAX_TEXT} characters",
        f"{MAX_FILE_BYTES // 2**20} MiB",
        "16 levels",
        "300 s",
    ):
        assert figure in limits, figure


def test_at_the_stage_limit_the_chain_is_checked(tmp_path, home):
    done = railroom("check", str(write(tmp_path, HEAD + FOLLOWER * MAX_STAGES)), home=home)
    assert done.returncode == 0, done.stderr[-500:]


def test_past_the_stage_limit_the_first_extra_stage_is_named(tmp_path, home):
    path = write(tmp_path, HEAD + FOLLOWER * (MAX_STAGES + 1))
    done = railroom("check", str(path), home=home)
    assert done.returncode == 2
    line = HEAD.count("\n") + 3 * MAX_STAGES + 1
    assert done.stderr == (
        f"railroom: {path}:{line}: stage: {MAX_STAGES + 1} stages; railroom "
        f"checks at most {MAX_STAGES} in one chain: split the chain into files\n"
    )


def test_fixed_inputs_of_a_summing_stage(tmp_path, home):
    assert railroom("check", str(write(tmp_path, HEAD + summing(MAX_INPUTS))), home=home).returncode in (0, 1)
    path = write(tmp_path, HEAD + summing(MAX_INPUTS + 1))
    done = railroom("check", str(path), home=home)
    assert done.returncode == 2
    assert done.stderr == (
        f"railroom: {path}:12: stage.1.inputs: {MAX_INPUTS + 1} fixed inputs; "
        f"a summing stage takes at most {MAX_INPUTS}\n"
    )


@pytest.mark.parametrize("where", ["title", "name"])
def test_a_title_or_name_past_the_limit(tmp_path, home, where):
    long = "x" * (MAX_TEXT + 1)
    text = (
        f'title = "{long}"\n' + HEAD + FOLLOWER
        if where == "title"
        else HEAD + FOLLOWER + f'name = "{long}"\n'
    )
    path = write(tmp_path, text)
    done = railroom("check", str(path), home=home)
    assert done.returncode == 2
    field = "title" if where == "title" else "stage.1.name"
    assert f": {field}: expected at most {MAX_TEXT} characters, got {MAX_TEXT + 1}" in done.stderr


def test_a_part_id_past_the_limit(home):
    lab = home / "lab.toml"
    lab.write_text(f'[part.{"p" * (MAX_TEXT + 1)}]\nsupply = ["3", "5"]\n', encoding="utf-8")
    done = railroom("presets", "check", str(lab), home=home)
    assert done.returncode == 2
    assert f"{lab}:1: part.{'p' * 20}" in done.stderr
    assert f"at most {MAX_TEXT} characters" in done.stderr
