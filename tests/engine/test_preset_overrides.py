"""A user's preset that cannot be read never lets the shipped part stand in silently (issue 11
item 6, issue 18): `railroom check` exits 2 and says first where the broken part is."""

from __future__ import annotations

import os

import pytest

from railroom.engine.formats.presets import shipped_folder
from command_line import railroom

SHIPPED = (shipped_folder() / "generic.toml").read_text(encoding="utf-8")
# generic-bipolar-15v as shipped, but derated by the user: its bias current is mistyped.
OVERRIDE = SHIPPED.split("[part.generic-precision]")[0].replace(
    'bias_current = "100n"', 'bias_current = "1pA max"'
)
CHAIN = """format = 1
title = "x10 on a bipolar part"
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


@pytest.fixture
def chain(tmp_path):
    path = tmp_path / "board.toml"
    path.write_text(CHAIN, encoding="utf-8")
    return path


def test_the_chain_checks_with_the_shipped_part(chain, home):
    done = railroom("check", str(chain), home=home)
    assert done.returncode == 0, done.stderr


def test_a_broken_override_is_an_error_not_the_shipped_part(chain, home):
    lab = home / "lab.toml"
    lab.write_text(OVERRIDE, encoding="utf-8")
    done = railroom("check", str(chain), home=home)
    assert done.returncode == 2, done.stdout
    lines = done.stderr.splitlines()
    # First line: the chain's part line, naming the preset file and the part's line in it.
    assert lines[0].startswith(f"railroom: {chain}:10: stage.1.part: part 'generic-bipolar-15v'")
    assert f"{lab}:7" in lines[0] and "could not be read" in lines[0]
    assert "did you mean" not in lines[0]
    bias_line = OVERRIDE.splitlines().index('bias_current = "1pA max"') + 1
    assert any(
        line.startswith(f"railroom: {lab}:{bias_line}: part.generic-bipolar-15v.bias_current")
        for line in lines
    ), done.stderr
    assert "Traceback" not in done.stderr


def test_a_later_good_definition_wins_over_a_broken_one(chain, home, tmp_path):
    (home / "lab.toml").write_text(OVERRIDE, encoding="utf-8")
    extra = tmp_path / "extra"
    extra.mkdir()
    (extra / "fixed.toml").write_text(OVERRIDE.replace('"1pA max"', '"1p"'), encoding="utf-8")
    done = railroom("check", str(chain), "--presets", str(extra), home=home)
    assert done.returncode == 0, done.stderr


def test_a_preset_file_that_is_not_toml_still_names_its_parts_first(chain, home):
    lab = home / "lab.toml"
    lab.write_text(OVERRIDE.replace('gbw = "1M"', 'gbw = "1M'), encoding="utf-8")
    done = railroom("check", str(chain), home=home)
    assert done.returncode == 2
    first = done.stderr.splitlines()[0]
    assert "part 'generic-bipolar-15v'" in first and f"{lab}:7" in first, done.stderr
    assert "not valid TOML" in done.stderr


def test_a_missing_presets_folder_is_an_error(chain, home, tmp_path):
    done = railroom("check", str(chain), "--presets", str(tmp_path / "no-such"), home=home)
    assert done.returncode == 2, done.stdout
    assert "no-such" in done.stderr and "no such folder" in done.stderr
    assert "Traceback" not in done.stderr
    done = railroom("check", str(chain), "--presets", str(chain), home=home)
    assert done.returncode == 2
    assert done.stderr.startswith(f"railroom: --presets: {chain}: not a folder")


def test_a_missing_folder_named_in_the_chain_is_located(chain, home):
    chain.write_text(CHAIN.replace("format = 1\n", 'format = 1\npresets = ["lab-parts"]\n'), encoding="utf-8")
    done = railroom("check", str(chain), home=home)
    assert done.returncode == 2, done.stdout
    assert done.stderr.startswith(f"railroom: {chain}:2: presets:"), done.stderr
    assert "lab-parts" in done.stderr


@pytest.mark.skipif(os.geteuid() == 0, reason="root reads every folder")
def test_an_unreadable_presets_folder_is_a_located_error(chain, home, tmp_path):
    locked = tmp_path / "locked"
    locked.mkdir()
    (locked / "lab.toml").write_text(OVERRIDE.replace('"1pA max"', '"1p"'), encoding="utf-8")
    locked.chmod(0)
    try:
        done = railroom("check", str(chain), "--presets", str(locked), home=home)
    finally:
        locked.chmod(0o755)
    assert done.returncode == 2, done.stdout
    assert f"railroom: {locked}: " in done.stderr and "cannot be read" in done.stderr


def test_an_unreadable_folder_stops_the_check_in_process(chain, home, tmp_path, monkeypatch):
    """The same as root (who may read every folder): listing the folder fails as it would."""
    import railroom.engine.formats.presets as presets
    from railroom.engine.formats.loading import load_checked
    from railroom.engine.circuit.model import InputError

    locked = tmp_path / "locked"
    locked.mkdir()
    real = presets.preset_files

    def listing(folder):
        if folder == locked:
            raise PermissionError(13, "Permission denied", str(folder))
        return real(folder)

    monkeypatch.setattr(presets, "preset_files", listing)
    with pytest.raises(InputError) as err:
        load_checked(str(chain), (str(locked),), strict=True)
    assert [str(p) for p in err.value.problems] == [f"{locked}: (folder): cannot be read: Permission denied"]


def test_a_preset_file_with_a_byte_order_mark_is_read(chain, home):
    lab = home / "lab.toml"
    # A derated copy whose supply limit (20 V, absolute 22 V) the +/-15 V rails (30 V) exceed:
    # the NO-GO shows the file with the byte-order mark is the one used.
    lab.write_bytes(
        b"\xef\xbb\xbf"
        + OVERRIDE.replace('"1pA max"', '"1p"')
        .replace('supply = ["10", "36"]', 'supply = ["10", "20"]')
        .replace('supply_abs_max = "40"', 'supply_abs_max = "22"')
        .encode("utf-8")
    )
    done = railroom("check", str(chain), home=home)
    assert done.returncode == 1, done.stderr
    assert "absolute maximum of 22 V" in done.stdout
    listed = railroom("presets", "list", home=home)
    assert listed.returncode == 0 and listed.stderr == "", listed.stderr
    line = next(x for x in listed.stdout.splitlines() if x.startswith("generic-bipolar-15v "))
    assert str(lab) in line


def test_a_chain_file_with_a_byte_order_mark_is_read(chain, home):
    chain.write_bytes(b"\xef\xbb\xbf" + CHAIN.encode("utf-8"))
    done = railroom("check", str(chain), home=home)
    assert done.returncode == 0, done.stderr


def test_presets_list_and_show_say_the_override_is_broken(home):
    lab = home / "lab.toml"
    lab.write_text(OVERRIDE, encoding="utf-8")
    listed = railroom("presets", "list", home=home)
    assert listed.returncode == 0
    assert not any(line.startswith("generic-bipolar-15v ") for line in listed.stdout.splitlines())
    assert (
        f"railroom: {lab}:7: part.generic-bipolar-15v: could not be read, so it is not "
        f"listed; {shipped_folder() / 'generic.toml'} is not used in its place"
    ) in listed.stderr.splitlines()
    shown = railroom("presets", "show", "generic-bipolar-15v", home=home)
    assert shown.returncode == 2 and shown.stdout == ""
    assert shown.stderr.startswith(
        f"railroom: preset 'generic-bipolar-15v' is defined in {lab}:7, which could not be read"
    )


def test_a_part_only_in_a_broken_file_is_said_to_be_there_not_unknown(chain, home):
    lab = home / "lab.toml"
    lab.write_text(OVERRIDE.replace("generic-bipolar-15v", "lab-bipolar"), encoding="utf-8")
    chain.write_text(CHAIN.replace("generic-bipolar-15v", "lab-bipolar"), encoding="utf-8")
    done = railroom("check", str(chain), home=home)
    assert done.returncode == 2
    lines = done.stderr.splitlines()
    assert lines[0].startswith(
        f"railroom: {chain}:10: stage.1.part: part 'lab-bipolar' is "
        f"defined in {lab}:7, which could not be read"
    )
    assert not any("unknown part" in line for line in lines), done.stderr
