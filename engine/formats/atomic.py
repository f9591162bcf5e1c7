"""Saving a user's file so that a crash leaves either the old or the new file whole, never a mix.

Write a temporary file in the same folder, flush and fsync it, keep the previous version as
`NAME.bak` when asked, then rename over the original (rename is atomic within one file system,
POSIX rename(2)); finally fsync the folder so the rename itself survives a power cut.

A name that is a symbolic link is saved through it: the file it points to gets the new text and the
link stays. A read-only file is refused, never replaced. A new file gets the permissions the
user's umask gives (as any editor's new file would), an existing one keeps its own. Temporary files
left by a save that was killed are removed by the next save of the same file.
"""

from __future__ import annotations

import errno
import hashlib
import os
import re
import stat
import tempfile
from pathlib import Path

Fingerprint = tuple[int, int, str]


HASHED_BYTES = 16 << 20  # a file's first 16 MiB are hashed (every second, by the watcher)


def fingerprint(path: str | Path) -> Fingerprint | None:
    """(modification time in ns, size, content hash) to notice a change made by someone else,
    even one that keeps the size and the modification time; None if absent or unreadable. Only a
    regular file is read (a FIFO or a device is never opened, so nothing can hang here)."""
    try:
        handle = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    except OSError:
        return None
    try:
        info = os.fstat(handle)
        if not stat.S_ISREG(info.st_mode):
            return (info.st_mtime_ns, info.st_size, "")
        digest = hashlib.blake2b(digest_size=16)
        left = HASHED_BYTES
        while left > 0:
            block = os.read(handle, min(left, 1 << 20))
            if not block:
                break
            digest.update(block)
            left -= len(block)
    except OSError:
        return None
    finally:
        os.close(handle)
    return (info.st_mtime_ns, info.st_size, digest.hexdigest())


def is_read_only(path: Path) -> bool:
    """No write permission on the file itself (its mode, even for a user who could override it)."""
    try:
        mode = path.stat().st_mode
    except OSError:
        return False
    return not mode & 0o222 or not os.access(path, os.W_OK)


def write_atomic(path: str | Path, text: str, backup: bool = False) -> None:
    path = Path(os.path.realpath(path))  # through a symbolic link, to its target
    folder = path.parent
    exists = path.exists()
    if exists and is_read_only(path):
        raise PermissionError(
            errno.EACCES,
            "the file is read-only, so it was not replaced (make it writable, or save under another name)",
            str(path),
        )
    if backup and exists:
        write_atomic(path.with_name(path.name + ".bak"), path.read_text(encoding="utf-8"))
    remove_leftovers(path)
    try:
        handle, temporary = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
    except OSError as err:  # name the file being saved, not the hidden temporary one
        raise type(err)(
            err.errno,
            f"{err.strerror} (no new file can be made in {folder}, which the save needs)",
            str(path),
        ) from None
    try:
        with os.fdopen(handle, "w", encoding="utf-8", newline="") as stream:
            stream.write(text)
            stream.flush()
            os.fsync(stream.fileno())
        os.chmod(temporary, path.stat().st_mode & 0o7777 if exists else 0o666 & ~umask())
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


def remove_leftovers(path: Path) -> None:
    """Remove the temporary files an earlier save of `path` left when it was killed (they carry
    its name and tempfile's eight-character random part)."""
    pattern = re.compile(rf"\.{re.escape(path.name)}\.[a-z0-9_]{{8}}\.tmp")
    try:
        names = os.listdir(path.parent)
    except OSError:
        return
    for name in names:
        if pattern.fullmatch(name):
            try:
                os.unlink(path.parent / name)
            except OSError:
                pass


def umask() -> int:
    current = os.umask(0o022)
    os.umask(current)
    return current
