"""Replacing a file so that a crash at any moment leaves either the old or the new complete file.

The new bytes go to a temporary file in the same folder, which is flushed and fsynced and then renamed over
the target (``os.replace`` is atomic within a file system); the folder is fsynced afterwards so the rename
itself survives a power cut. The file replaced is first kept beside it as ``NAME.backup`` (a hard link where
the file system allows, else a copy written the same safe way).

- A symlink is followed: its final target is rewritten and the link stays a link; the backup and the
  temporary file live beside the target.
- The mode of an existing file is kept; a new file gets 0o666 less the umask, like any file the user creates.
- On an error the target is untouched and the temporary file is removed. Only a process killed mid-save
  can leave a temporary file behind; it is named ``.NAME.<12 hex digits>.partial`` and the next save of the
  same file removes it. Two processes must not save the same file at the same moment (the worst outcome is a
  failed save, never a broken file).

This module imports only the standard library, so a small process can use it quickly.
"""

from __future__ import annotations

import os
import re
import secrets
import stat
from pathlib import Path

__all__ = ["BACKUP_SUFFIX", "TEMPORARY_SUFFIX", "backup_path", "leftover_temporaries", "write_file_atomically"]

BACKUP_SUFFIX = ".backup"
TEMPORARY_SUFFIX = ".partial"


def backup_path(path: str | os.PathLike) -> Path:
    """Where the previous version of ``path`` is kept (beside the symlink's final target)."""
    target = Path(os.path.realpath(path))
    return target.with_name(target.name + BACKUP_SUFFIX)


def leftover_temporaries(path: str | os.PathLike) -> list[Path]:
    """Temporary files a killed save of ``path`` may have left (beside the symlink's final target)."""
    target = Path(os.path.realpath(path))
    pattern = re.compile(r"^\." + re.escape(target.name) + r"\.[0-9a-f]{12}" + re.escape(TEMPORARY_SUFFIX) + "$")
    try:
        names = os.listdir(target.parent)
    except OSError:
        return []
    return sorted(target.parent / n for n in names if pattern.match(n))


def _temporary_name(target: Path) -> Path:
    return target.with_name(f".{target.name}.{secrets.token_hex(6)}{TEMPORARY_SUFFIX}")


def _write_new(path: Path, data: bytes, mode: int | None) -> None:
    """Create ``path`` (must not exist), write ``data``, fsync. ``mode`` None: 0o666 less the umask."""
    flags = os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_CLOEXEC", 0) | getattr(os, "O_BINARY", 0)
    fd = os.open(path, flags, 0o666 if mode is None else mode & 0o777)
    try:
        if mode is not None and hasattr(os, "fchmod"):
            os.fchmod(fd, mode)
        view = memoryview(data)
        while view:
            written = os.write(fd, view)
            view = view[written:]
        os.fsync(fd)
    finally:
        os.close(fd)


def _fsync_folder(folder: Path) -> None:
    if not hasattr(os, "O_DIRECTORY"):
        return  # Windows: folders cannot be opened for fsync; rename durability is the file system's
    fd = os.open(folder, os.O_RDONLY | os.O_DIRECTORY)
    try:
        os.fsync(fd)
    except OSError:
        pass  # some file systems do not support fsync on folders; nothing better can be done
    finally:
        os.close(fd)


def _discard(path: Path | None) -> None:
    if path is not None:
        try:
            os.unlink(path)
        except FileNotFoundError:
            pass


def _keep_backup(target: Path, mode: int) -> None:
    """Make ``target``'s current content ``target.backup``, atomically (the backup is old or new, never torn)."""
    temporary = _temporary_name(target)
    try:
        try:
            os.link(target, temporary)
        except OSError:
            _write_new(temporary, target.read_bytes(), mode)
        os.replace(temporary, backup_path(target))
    finally:
        # Also after a successful replace: when the backup already was a hard link to the target (a save
        # killed just after making the backup), rename() of one link onto another of the same file does
        # nothing and leaves the temporary name in place (POSIX rename).
        _discard(temporary)


def write_file_atomically(path: str | os.PathLike, data: bytes, *, backup: bool = True) -> Path:
    """Replace the file at ``path`` by ``data`` so that it is never seen half-written; return the file written.

    ``backup`` keeps the file replaced as NAME.backup beside it. Raises OSError (the old file untouched).
    """
    if not isinstance(data, bytes | bytearray | memoryview):
        raise TypeError(f"data must be bytes, got {type(data).__name__}")
    target = Path(os.path.realpath(path))
    if target.is_dir():
        raise IsADirectoryError(f"{path} is a folder, not a file")
    for leftover in leftover_temporaries(target):
        _discard(leftover)
    try:
        info = os.stat(target)
    except FileNotFoundError:
        info = None
    if info is not None and not stat.S_ISREG(info.st_mode):
        raise OSError(f"{path} is not a regular file")
    mode = None if info is None else stat.S_IMODE(info.st_mode)
    temporary: Path | None = _temporary_name(target)
    try:
        _write_new(temporary, bytes(data), mode)
        if backup and info is not None:
            _keep_backup(target, mode)
        os.replace(temporary, target)
        temporary = None
    finally:
        _discard(temporary)
    _fsync_folder(target.parent)
    return target
