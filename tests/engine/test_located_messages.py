"""Messages that name the line (issue 12 item 12): a mistyped table, a byte that is not UTF-8, a
save into a read-only folder, and 50,000 unknown keys counted rather than listed."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

import railroom.engine.demos as demos_package
from railroom.engine.formats.presets import shipped_folder
from command_line import X10_CHAIN
from command_line import railroom

DEMO_TEXT = (Path(demos_package.__file__).parent / "pump_vibration.toml").read_text(encoding="utf-8")
CHAIN = X10_CHAIN


def test_a_mistyped_table_is_named_with_its_line(tmp_path, home):
    path = tmp_path / "board.toml"
    path.write_text(CHAIN.replace("[rails.main]", "[rail.analog]"), encoding="utf-8")
    done = railroom("check", str(path), home=home)
    assert done.returncode == 2
    assert (
        f"railroom: {path}:2: rail: unknown field for a chain file; did you mean 'rails'?"
        in done.stderr.splitlines()
    )


def test_a_mistyped_table_in_a_preset_file_is_named_with_its_line(home):
    lab = home / "lab.toml"
    lab.write_text("[parts.x]\nsupply = 1\n", encoding="utf-8")
    done = railroom("presets", "check", str(lab), home=home)
    assert done.returncode == 2
    assert f"railroom: {lab}:1: parts: unknown table" in done.stderr


def test_a_byte_that_is_not_utf8_is_named_by_its_line(tmp_path, home):
    path = tmp_path / "board.toml"
    path.write_bytes(CHAIN.replace('"-15"', '"-15 \xb5"').encode("latin-1"))
    done = railroom("check", str(path), home=home)
    assert done.returncode == 2
    assert done.stderr.startswith(f"railroom: {path}:4: (file): not UTF-8 text: byte 0xb5"), done.stderr


def test_a_preset_file_that_is_not_utf8_names_its_line_and_its_parts(tmp_path, home):
    shipped = (shipped_folder() / "generic.toml").read_text(encoding="utf-8")
    lab = home / "lab.toml"
    lab.write_bytes(shipped.replace("classic bipolar", "classic bipolar \xb5").encode("latin-1"))
    chain = tmp_path / "board.toml"
    chain.write_text(CHAIN, encoding="utf-8")
    done = railroom("check", str(chain), home=home)
    assert done.returncode == 2
    lines = done.stderr.splitlines()
    assert "part 'generic-bipolar-15v' is defined in" in lines[0] and f"{lab}:7" in lines[0]
    assert (
        f"railroom: {lab}:8: (file): not UTF-8 text: byte 0xb5 cannot be decoded; save the "
        "file as UTF-8" in lines
    )


def test_a_save_into_a_folder_that_takes_no_new_file_names_the_file(tmp_path, monkeypatch):
    """A read-only folder (simulated: the test may run as root, who may write anywhere): the
    operating system refuses the temporary file; the message must name the file being saved."""
    import tempfile
    from railroom.engine.formats.atomic import write_atomic

    target = tmp_path / "board.toml"

    def refuse(prefix="", suffix="", dir=None):
        raise PermissionError(13, "Permission denied", os.path.join(dir, f"{prefix}x1y2z3{suffix}"))

    monkeypatch.setattr(tempfile, "mkstemp", refuse)
    with pytest.raises(PermissionError) as err:
        write_atomic(target, CHAIN)
    assert err.value.filename == str(target)
    assert ".tmp" not in str(err.value) and str(target) in str(err.value)
    assert "Permission denied" in str(err.value)


def test_fifty_thousand_unknown_keys_are_counted_not_listed(tmp_path, home):
    from railroom.engine.formats.fields import MAX_UNKNOWN

    path = tmp_path / "board.toml"
    keys = "".join(f"k{i} = 1\n" for i in range(50_000))
    path.write_text(DEMO_TEXT.replace("[source]\n", "[source]\n" + keys, 1), encoding="utf-8")
    first = DEMO_TEXT.splitlines().index("[source]") + 2
    done = railroom("check", str(path), home=home)
    assert done.returncode == 2
    lines = done.stderr.splitlines()
    assert len(lines) == MAX_UNKNOWN + 1
    assert lines[0].startswith(f"railroom: {path}:{first}: source.k0: unknown field")
    assert lines[-1] == (
        f"railroom: {path}:{first + MAX_UNKNOWN}: source: "
        f"{50_000 - MAX_UNKNOWN:,} more unknown fields for [source] from this "
        "line on (not listed one by one)"
    )


def test_many_problems_are_capped_with_a_count(tmp_path, home):
    from railroom.tui.subcommands.common import MAX_PROBLEM_LINES

    path = tmp_path / "board.toml"
    # 90 stages (under the limit of 100), each with three bad values: 270 problems.
    stages = "".join(
        f'[[stage]]\nblock = "noninverting"\npart = "generic-rro-5v"\nload = "x{i}"\nrf = "y"\nrg = "z"\n'
        for i in range(90)
    )
    path.write_text(CHAIN + stages, encoding="utf-8")
    done = railroom("check", str(path), home=home)
    assert done.returncode == 2
    lines = done.stderr.splitlines()
    assert len(lines) == MAX_PROBLEM_LINES + 1
    assert lines[-1] == f"railroom: and {270 - MAX_PROBLEM_LINES:,} more problems (fix these first)"
