"""Crash-safe files: atomic writes, content hashes and the file-system flush of a batch run.

:func:`atomic_write` writes to a temporary name beside the target and renames it into
place, so that whatever kills the process, the final name holds the old complete file or
the new complete one. With ``durable=True`` it also fsyncs (the summary; small files);
with ``durable=False`` (the per-climate outputs) it only starts the kernel's writeback, and
one :func:`flush_filesystem` at the end of the run makes them all durable at once.
"""

from __future__ import annotations

import contextlib
import hashlib
import os
import uuid
from collections.abc import Callable
from pathlib import Path
from typing import Any

__all__ = ["TMP_MARK", "atomic_write", "file_sha256", "flush_filesystem"]

#: what every temporary name holds (a run removes those a killed run left)
TMP_MARK = ".tmp-"


def file_sha256(path: str | os.PathLike, chunk: int = 1 << 20) -> str:
    """sha256 (hex) of a file's content."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        while block := fh.read(chunk):
            h.update(block)
    return h.hexdigest()


def _tmp_name(path: Path) -> Path:
    return path.with_name(f".{path.name}{TMP_MARK}{os.getpid()}-{uuid.uuid4().hex[:8]}")


def atomic_write(path: str | os.PathLike, write: Callable[[Path], Any], *,
                 durable: bool = True) -> Path:
    """Write a file atomically: ``write(tmp)`` to a temporary name beside it, then rename.

    The temporary file sits in the same folder (so :func:`os.replace` is an atomic
    rename on POSIX) and is removed if ``write`` fails: whatever kills the process,
    the final name holds the old complete file or the new complete one.
    ``durable=True`` also fsyncs the file before the rename and the folder after it,
    so the new file survives an operating-system crash or power cut as soon as this
    returns; ``durable=False`` leaves that to the kernel's writeback (or to one
    :func:`flush_filesystem` for many files).
    """
    path = Path(path)
    tmp = _tmp_name(path)
    try:
        write(tmp)
        if durable:
            fd = os.open(tmp, os.O_RDONLY)
            try:
                os.fsync(fd)
            finally:
                os.close(fd)
        else:
            _start_writeback(tmp)
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise
    if durable:
        _sync_folder(path.parent)
    return path


def _start_writeback(path: Path) -> None:
    """Have the kernel start writing ``path`` to disk now, without waiting for it.

    On Linux ``posix_fadvise(POSIX_FADV_DONTNEED)`` starts the writeback of the file's
    dirty pages and lets their cache go once written. Without it the kernel keeps a run's
    outputs in memory (they are far below its writeback threshold) and the end-of-run
    :func:`flush_filesystem` writes them all while both cores wait (~0.5 s after 200
    climates); started here, the disk writes them while the next tasks compute.
    """
    if not hasattr(os, "posix_fadvise"):  # macOS, Windows: the final flush does it all
        return
    with contextlib.suppress(OSError):
        fd = os.open(path, os.O_RDONLY)
        try:
            os.posix_fadvise(fd, 0, 0, os.POSIX_FADV_DONTNEED)
        finally:
            os.close(fd)


def _sync_folder(folder: Path) -> None:
    """fsync a folder, which makes the renames done in it durable."""
    with contextlib.suppress(OSError):
        dfd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(dfd)
        finally:
            os.close(dfd)


def flush_filesystem(folder: str | os.PathLike) -> None:
    """Write out everything the kernel holds for the file system of ``folder``.

    Linux's ``syncfs`` (only that file system), else :func:`os.sync` (all of them).
    One call at the end of a batch run makes every output written with
    ``atomic_write(..., durable=False)`` durable, for a fraction of the cost of one
    fsync per file (measured: ~0.5 s after 200 climates, against up to ~20 % of the run;
    < 0.01 s when each file's writeback was started as it was written).
    """
    import ctypes

    try:
        syncfs = ctypes.CDLL(None, use_errno=True).syncfs
    except (OSError, AttributeError):  # not Linux (or no C library symbols)
        if hasattr(os, "sync"):
            os.sync()
        return
    with contextlib.suppress(OSError):
        fd = os.open(folder, os.O_RDONLY)
        try:
            syncfs(fd)
        finally:
            os.close(fd)
