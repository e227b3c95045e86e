"""Saving a file so that a crash, a full disk or a failed rename never leaves a half-written
file where the user's work was: the new content goes to a temporary file in the same folder
(same file system, so the final rename is atomic), is flushed to disk, then replaces the old.

A symbolic link is followed: its target is written and the link kept. Anything that is not a
regular file (a FIFO, a device, a folder) is refused before it is opened, since opening a FIFO
waits for a reader forever. Temporary names are short, so any legal name can be saved, and
every failure is a `WriteFailed` naming the user's file, never the temporary one.
"""

from __future__ import annotations

import contextlib
import errno
import os
import stat
import tempfile
from pathlib import Path

# Most file systems allow names of 255 bytes; the backup's suffix must fit within them.
NAME_BYTES = 255
BACKUP_SUFFIX = ".bak"
TEMP_PREFIX = ".rf-"


class WriteFailed(OSError):
    """A file could not be written; the message names the user's file and the reason."""


def backup_path(path: str | Path) -> Path:
    """`<name>.bak`, with the name shortened when the suffix would make it too long."""
    path = Path(path)
    name = path.name
    while len((name + BACKUP_SUFFIX).encode("utf-8", "surrogateescape")) > NAME_BYTES:
        name = name[:-1]
    return path.with_name(name + BACKUP_SUFFIX)


def write_atomic(path: str | Path, data: bytes, *, backup: bool = True) -> None:
    """Write `data` to `path` atomically; with `backup`, keep the previous file as `<name>.bak`."""
    shown = Path(path)
    target = _regular_target(shown)
    try:
        mode = _mode_for(target)
        temp = _write_temp(target, data, mode)
        try:
            if backup and target.exists():
                # Copy rather than rename, so that `target` exists at every moment.
                bak = _write_temp(target, target.read_bytes(), mode)
                try:
                    os.replace(bak, backup_path(target))
                except BaseException:
                    _remove(bak)
                    raise
            os.replace(temp, target)
        except BaseException:
            _remove(temp)
            raise
        _sync_folder(target.parent)
    except OSError as why:
        raise WriteFailed(f"{shown} could not be written: {reason(why)}") from why


def reason(error: OSError) -> str:
    """The reason in words, with what to do for the failures users meet."""
    words = {
        errno.ENOSPC: "the disk is full (no space left on the device). Free some space, "
        "or save to another disk",
        errno.EDQUOT: "the disk quota is used up. Free some space, or save to another disk",
        errno.EACCES: "permission denied. Save to a folder you may write to",
        errno.EPERM: "the operation is not permitted. Save to a folder you may write to",
        errno.EROFS: "the disk is read-only. Save to another disk",
        errno.ENOENT: "the folder does not exist. Choose an existing folder",
        errno.ENAMETOOLONG: "the name is too long. Choose a shorter name",
    }
    if error.errno in words:
        return words[error.errno]
    return " ".join((error.strerror or str(error)).split())


def _regular_target(path: Path) -> Path:
    """The file to write: a link's target; refuses special files and folders."""
    target = Path(os.path.realpath(path)) if path.is_symlink() else path
    try:
        info = target.stat()
    except FileNotFoundError:
        return target
    except OSError as why:
        raise WriteFailed(f"{path} could not be written: {reason(why)}") from why
    if stat.S_ISDIR(info.st_mode):
        raise WriteFailed(f"{path} is a folder, not a file. Choose a file name inside it.")
    if not stat.S_ISREG(info.st_mode):
        raise WriteFailed(
            f"{path} is not a regular file (a pipe, a device or a socket); Rangefold writes "
            "only ordinary files. Choose another name."
        )
    return target


def _write_temp(path: Path, data: bytes, mode: int) -> Path:
    fd, name = tempfile.mkstemp(prefix=TEMP_PREFIX, suffix=".tmp", dir=path.parent)
    temp = Path(name)
    try:
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
            handle.flush()
            os.fsync(handle.fileno())
        os.chmod(temp, mode)
    except BaseException:
        _remove(temp)
        raise
    return temp


def _mode_for(path: Path) -> int:
    """Keep an existing file's permissions; a new file gets the usual ones (mkstemp's are 0600)."""
    try:
        return stat.S_IMODE(path.stat().st_mode)
    except FileNotFoundError:
        umask = os.umask(0)
        os.umask(umask)
        return 0o666 & ~umask


def _remove(path: Path) -> None:
    with contextlib.suppress(FileNotFoundError):
        path.unlink()


def _sync_folder(folder: Path) -> None:
    """Make the rename itself durable; folders cannot be opened for this on Windows."""
    if os.name != "posix":
        return
    fd = os.open(folder, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)
