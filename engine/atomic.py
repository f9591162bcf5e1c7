"""Saving a user's file so that a crash leaves either the old or the new file whole, never a mix.

Write a temporary file in the same folder, flush and fsync it, keep the previous version as
`NAME.bak` when asked, then rename over the original (rename is atomic within one file system,
POSIX rename(2)); finally fsync the folder so the rename itself survives a power cut.
"""
from __future__ import annotations

import os
import tempfile
from pathlib import Path


def fingerprint(path: str | Path) -> tuple[int, int] | None:
    """(modification time in ns, size) to notice a change made by someone else; None if absent."""
    try:
        info = os.stat(path)
    except OSError:
        return None
    return (info.st_mtime_ns, info.st_size)


def write_atomic(path: str | Path, text: str, backup: bool = False) -> None:
    path = Path(path)
    folder = path.parent
    if backup and path.exists():
        write_atomic(path.with_name(path.name + ".bak"), path.read_text(encoding="utf-8"))
    try:
        handle, temporary = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
    except OSError as err:      # name the file being saved, not the hidden temporary one
        raise type(err)(err.errno, f"{err.strerror} (no new file can be made in {folder}, "
                        "which the save needs)", str(path)) from None
    try:
        with os.fdopen(handle, "w", encoding="utf-8", newline="") as stream:
            stream.write(text)
            stream.flush()
            os.fsync(stream.fileno())
        if path.exists():
            os.chmod(temporary, path.stat().st_mode & 0o7777)
        os.replace(temporary, path)
    except BaseException:
        if os.path.exists(temporary):
            os.unlink(temporary)
        raise
    try:
        directory = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(directory)
    except OSError:
        pass
    finally:
        os.close(directory)
