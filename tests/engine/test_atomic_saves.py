"""engine/formats/atomic.py: saves through links, refusals, permissions, leftovers, change detection
(issue 12, item 5). POSIX rename(2) and umask(2) semantics are the reference."""

from __future__ import annotations

import os
import stat

import pytest

from railroom.engine.formats.atomic import fingerprint, write_atomic


def test_a_symlink_is_saved_through_and_stays_a_link(tmp_path):
    real = tmp_path / "boards" / "real.toml"
    real.parent.mkdir()
    real.write_text("old\n")
    link = tmp_path / "link.toml"
    link.symlink_to(real)
    write_atomic(link, "new\n", backup=True)
    assert link.is_symlink() and real.read_text() == "new\n"
    assert (real.parent / "real.toml.bak").read_text() == "old\n"  # beside the target


def test_a_read_only_file_is_refused_and_left_whole(tmp_path):
    path = tmp_path / "chain.toml"
    path.write_text("old\n")
    path.chmod(0o444)
    with pytest.raises(PermissionError) as err:
        write_atomic(path, "new\n")
    assert "read-only" in str(err.value) and str(path) in str(err.value)
    assert path.read_text() == "old\n" and stat.S_IMODE(path.stat().st_mode) == 0o444


@pytest.mark.parametrize("mask, mode", [(0o022, 0o644), (0o077, 0o600), (0o002, 0o664)])
def test_a_new_file_gets_the_mode_the_umask_gives(tmp_path, mask, mode):
    old = os.umask(mask)
    try:
        write_atomic(tmp_path / "new.toml", "x\n")
    finally:
        os.umask(old)
    assert stat.S_IMODE((tmp_path / "new.toml").stat().st_mode) == mode  # 0666 & ~umask (POSIX)


def test_an_existing_file_keeps_its_own_mode(tmp_path):
    path = tmp_path / "chain.toml"
    path.write_text("old\n")
    path.chmod(0o640)
    write_atomic(path, "new\n")
    assert stat.S_IMODE(path.stat().st_mode) == 0o640


def test_temporary_files_of_killed_saves_are_removed_by_the_next_save(tmp_path):
    path = tmp_path / "chain.toml"
    path.write_text("old\n")
    left = [tmp_path / ".chain.toml.k2_9xq0a.tmp", tmp_path / ".chain.toml.abcdefgh.tmp"]
    for file in left:
        file.write_text("half a save")
    keep = [tmp_path / ".chain.toml.notes", tmp_path / ".other.toml.abcdefgh.tmp"]
    for file in keep:
        file.write_text("not ours")
    write_atomic(path, "new\n")
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(["chain.toml"] + [k.name for k in keep])


def test_a_rewrite_keeping_size_and_time_is_still_a_change(tmp_path):
    path = tmp_path / "chain.toml"
    path.write_text('rf = "10k"\n')
    os.utime(path, ns=(10**18, 10**18))
    before = fingerprint(path)
    path.write_text('rf = "20k"\n')  # same size
    os.utime(path, ns=(10**18, 10**18))  # same modification time
    assert fingerprint(path) != before


def test_a_fifo_is_fingerprinted_without_being_opened_for_a_read_that_waits(tmp_path):
    fifo = tmp_path / "parts.toml"
    os.mkfifo(fifo)  # open(2) for reading would wait for a writer forever
    found = fingerprint(fifo)
    assert found is not None and found[2] == ""
