"""Editing preset files: only the edited text changes, saves are atomic, nothing is ever lost."""

from __future__ import annotations

import os
from dataclasses import replace
from pathlib import Path

import pytest

from railroom.engine.circuit.model import InputError
from railroom.engine.formats.preset_editing import (
    ChangedOnDisk,
    PresetEditError,
    check_part_id,
    copy_part,
    delete_part,
    editing_target,
    open_preset_file,
    raw_fields,
    rename_part,
    save_preset_text,
    set_fields,
)
from railroom.engine.formats.presets import (
    load_library,
    parts_from_text,
    read_preset_file,
    sanity_problems,
    search_order,
    shipped_folder,
    user_folder,
)

LAB = """\
# Our lab's parts. Derated 20 % on gbw and slew, house rule.

[part.lab-audio]   # the usual audio part
description = "audio dual"
supply = ["10", "36"]            # total span
supply_abs_max = "40"
output_headroom = ["1.5", "1.5"] # measured at 2 kΩ
input_headroom = ["2", "2"]
gbw = "3M"                       # derated from 4M
slew = "1V/us"
open_loop_gain = "100dB"
offset = "3m"
output_current = "20m"

# single supply sensor front end
[part.lab-sensor]
description = "sensor rro"
supply = [ "2.7",   "5.5" ]      # odd spacing on purpose
supply_abs_max = "6"
output_headroom = ["30m", "30m"]
input_headroom = ["-0.1", "-0.1"]
gbw = "1M"
slew = "0.6V/us"
open_loop_gain = "100dB"
offset = "2m"
output_current = "20m"
"""


def changed_lines(old: str, new: str) -> list[tuple[str, str]]:
    a, b = old.splitlines(), new.splitlines()
    assert len(a) == len(b)
    return [(x, y) for x, y in zip(a, b) if x != y]


def test_set_field_changes_only_that_line_and_keeps_its_comment():
    new = set_fields(LAB, "lab-audio", {"gbw": "2.5M"})
    assert changed_lines(LAB, new) == [
        (
            'gbw = "3M"                       # derated from 4M',
            'gbw = "2.5M"                       # derated from 4M',
        )
    ]
    parts, problems = parts_from_text(new, "lab.toml")
    assert problems == []
    assert {p.id: p.gbw for p in parts} == {"lab-audio": 2.5e6, "lab-sensor": 1e6}


def test_unedited_part_is_byte_for_byte_unchanged_and_same_value_is_no_edit():
    new = set_fields(LAB, "lab-audio", {"supply": ("12", "36"), "offset": "3m"})
    assert new.split("# single supply")[1] == LAB.split("# single supply")[1]
    assert changed_lines(LAB, new) == [
        ('supply = ["10", "36"]            # total span', 'supply = ["12", "36"]            # total span')
    ]


def test_new_optional_field_goes_in_order_and_removing_it_restores_the_text():
    added = set_fields(LAB, "lab-audio", {"offset_drift": "10u"})
    lines = added.splitlines()
    assert lines[lines.index('offset = "3m"') + 1] == 'offset_drift = "10u"'
    assert set_fields(added, "lab-audio", {"offset_drift": None}) == LAB


def test_raw_fields_are_as_written():
    raw = raw_fields(LAB, "lab-sensor")
    assert raw["supply"] == ("2.7", "5.5") and raw["slew"] == "0.6V/us"
    with pytest.raises(PresetEditError):
        raw_fields(LAB, "no-such-part")
    with pytest.raises(PresetEditError):
        set_fields(LAB, "lab-audio", {"gbww": "1M"})


def test_rename_touches_only_the_header():
    new = rename_part(LAB, "lab-audio", "lab-audio-v2")
    assert changed_lines(LAB, new) == [
        ("[part.lab-audio]   # the usual audio part", "[part.lab-audio-v2]   # the usual audio part")
    ]


def test_delete_keeps_the_next_parts_comment_and_everything_else():
    new = delete_part(LAB, "lab-audio")
    assert new.startswith("# Our lab's parts.")
    assert "# single supply sensor front end\n[part.lab-sensor]" in new
    assert "lab-audio" not in new and new.endswith(LAB.split("# single supply")[1])
    assert [p.id for p in parts_from_text(new, "x")[0]] == ["lab-sensor"]
    # the comment right above a part goes with it; the file's heading stays
    second = delete_part(LAB, "lab-sensor")
    assert "single supply" not in second and second == LAB.split("\n# single supply")[0] + "\n"


def test_copy_carries_comments_and_reads_back():
    new = copy_part(LAB, "lab-sensor", LAB, "lab-sensor-b")
    assert new.startswith(LAB)
    assert new[len(LAB) :].startswith(
        '\n# single supply sensor front end\n[part.lab-sensor-b]\ndescription = "sensor rro"\n'
    )
    assert "odd spacing on purpose" in new[len(LAB) :]
    assert [p.id for p in parts_from_text(new, "x")[0]] == ["lab-audio", "lab-sensor", "lab-sensor-b"]
    assert copy_part(LAB, "lab-audio", "", "x").startswith("[part.x]   # the usual audio part\n")


def test_part_ids_are_checked():
    assert check_part_id("my-part_2") is None
    assert "letters" in check_part_id("my part")
    assert "letters" in check_part_id("a.b")
    assert "already" in check_part_id("lab-audio", {"lab-audio"})


def test_save_is_atomic_keeps_a_readable_backup_and_notices_changes(tmp_path):
    path = tmp_path / "lab.toml"
    path.write_text(LAB, encoding="utf-8")
    opened = open_preset_file(path)
    edited = set_fields(opened.text, "lab-audio", {"gbw": "2M"})
    again = save_preset_text(opened, edited)
    assert path.read_text(encoding="utf-8") == edited
    assert (tmp_path / "lab.toml.bak").read_text(encoding="utf-8") == LAB
    parts, problems = read_preset_file(tmp_path / "lab.toml.bak")
    assert problems == [] and parts[0].gbw == 3e6
    assert [p.name for p in tmp_path.iterdir() if p.name.endswith(".tmp")] == []

    # someone else edits the file (over SSH, in another editor): never silently overwritten
    path.write_text(LAB + "\n# added elsewhere, longer\n", encoding="utf-8")
    with pytest.raises(ChangedOnDisk):
        save_preset_text(again, set_fields(again.text, "lab-audio", {"gbw": "1M"}))
    assert "added elsewhere" in path.read_text(encoding="utf-8")
    # the editor re-opens and applies the same edit to what is there now: both changes kept
    fresh = open_preset_file(path)
    save_preset_text(fresh, set_fields(fresh.text, "lab-audio", {"gbw": "1M"}))
    text = path.read_text(encoding="utf-8")
    assert "added elsewhere" in text and 'gbw = "1M"' in text


def test_crash_before_rename_leaves_the_old_file_whole(tmp_path, monkeypatch):
    path = tmp_path / "lab.toml"
    path.write_text(LAB, encoding="utf-8")
    opened = open_preset_file(path)

    def power_cut(src, dst):
        raise OSError("simulated crash between write and rename")

    monkeypatch.setattr(os, "replace", power_cut)
    with pytest.raises(OSError):
        save_preset_text(opened, set_fields(LAB, "lab-audio", {"gbw": "2M"}))
    monkeypatch.undo()
    assert path.read_text(encoding="utf-8") == LAB
    assert [p.name for p in tmp_path.iterdir() if p.name.endswith(".tmp")] == []


def test_an_edit_that_brings_a_problem_is_refused_and_nothing_is_written(tmp_path):
    path = tmp_path / "lab.toml"
    path.write_text(LAB, encoding="utf-8")
    opened = open_preset_file(path)
    with pytest.raises(InputError) as err:
        save_preset_text(opened, set_fields(LAB, "lab-audio", {"slew": "0V/us"}))
    (problem,) = err.value.problems
    assert problem.field == "part.lab-audio.slew" and problem.line == 10
    assert path.read_text(encoding="utf-8") == LAB and not (tmp_path / "lab.toml.bak").exists()


def test_editing_a_shipped_preset_writes_to_the_users_folder():
    tmp_path = user_folder()  # an empty folder per test (tests/conftest.py)
    shipped = shipped_folder() / "generic.toml"
    before = shipped.read_bytes()
    target, text = editing_target(shipped, "generic-rro-5v", tmp_path)
    assert target.path == tmp_path / "generic.toml" and target.stamp is None
    saved = save_preset_text(target, set_fields(text, "generic-rro-5v", {"gbw": "2M"}))
    assert shipped.read_bytes() == before
    with pytest.raises(PresetEditError):
        save_preset_text(open_preset_file(shipped), before.decode())
    library = load_library(search_order())
    part = library.parts["generic-rro-5v"]
    assert part.gbw == 2e6 and part.origin == str(saved.path)
    assert part.overrides == (str(shipped),)
    assert library.parts["generic-fast"].origin == str(shipped)


def test_broken_file_is_reported_and_good_presets_still_load(tmp_path):
    (tmp_path / "good.toml").write_text(LAB, encoding="utf-8")
    (tmp_path / "broken.toml").write_text(
        LAB.replace('gbw = "1M"', 'gbw = "fast"').replace("lab-", "other-"), encoding="utf-8"
    )
    (tmp_path / "garbled.toml").write_text("[part.x\n", encoding="utf-8")
    library = load_library([tmp_path])
    assert {"lab-audio", "lab-sensor", "other-audio"} <= set(library.parts)
    assert "other-sensor" not in library.parts
    where = {(Path(p.file).name, p.line, p.field) for p in library.problems}
    assert ("broken.toml", 22, "part.other-sensor.gbw") in where
    assert any(name == "garbled.toml" and line == 1 for name, line, _ in where)


def test_sanity_catches_the_implausible():
    (part,) = [p for p in parts_from_text(LAB, "x")[0] if p.id == "lab-audio"]
    assert sanity_problems(part) == []
    cases = {
        "gbw": replace(part, gbw=0.0),
        "slew": replace(part, slew=-1.0),
        "open_loop_gain": replace(part, open_loop_gain=0.5),
        "output_headroom": replace(part, output_headroom=(6.0, 5.0)),  # 11 V > the 10 V smallest supply
        "input_headroom": replace(part, input_headroom=(5.0, 5.0)),
    }
    for key, bad in cases.items():
        assert [k for k, _ in sanity_problems(bad)] == [key], key
    reversed_supply = sanity_problems(replace(part, supply=(36.0, 10.0)))
    assert [k for k, _ in reversed_supply] == ["supply"] and "reversed" in reversed_supply[0][1]
