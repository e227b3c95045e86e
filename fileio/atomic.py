"""Saving a file so that a crash, a full disk or a failed rename never leaves a half-written
file where the user's work was: the new content goes to a temporary file in the same folder
(same file system, so the final rename is atomic), is flushed to disk, then replaces the old."""

from __future__ import annotations

import contextlib
import os
import stat
import tempfile
from pathlib import Path


def backup_path(path: str | Path) -> Path:
    path = Path(path)
    return path.with_name(path.name + ".bak")


def write_atomic(path: str | Path, data: bytes, *, backup: bool = True) -> None:
    """Write `data` to `path` atomically; with `backup`, keep the previous file as `<name>.bak`."""
    path = Path(path)
    mode = _mode_for(path)
    temp = _write_temp(path, data, mode)
    try:
        if backup and path.exists():
            # Copy rather than rename, so that `path` exists at every moment.
            bak = _write_temp(path, path.read_bytes(), mode)
            try:
                os.replace(bak, backup_path(path))
            except BaseException:
                _remove(bak)
                raise
        os.replace(temp, path)
    except BaseException:
        _remove(temp)
        raise
    _sync_folder(path.parent)


def _write_temp(path: Path, data: bytes, mode: int) -> Path:
    fd, name = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
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
