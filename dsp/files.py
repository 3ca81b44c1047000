"""Atomic file writes: a crash or a full disk leaves the old file or the new one, never half.

Model files, session files, snapshot recipes and reports all save through here.
"""

from __future__ import annotations

import os
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path


def new_file_mode(path: str | Path) -> int:
    """Permission bits for a file that replaces ``path``: its own when it exists, else 0o666 less the umask."""
    try:
        return Path(path).stat().st_mode & 0o7777
    except OSError:
        pass
    mask = os.umask(0o022)   # reading the umask means setting it; put it straight back
    os.umask(mask)
    return 0o666 & ~mask


@contextmanager
def atomic_path(path: str | Path) -> Iterator[str]:
    """Yield a temporary file name beside ``path``; on success it replaces ``path``.

    The temporary file is in the target's folder, so :func:`os.replace` is a rename on
    one file system; it gets the permission bits of the file it replaces (``mkstemp``
    makes 0600).  The folder is ``fsync``-ed after the rename where the platform allows
    it.  If the body raises, the temporary file is removed and ``path`` is untouched.
    Writers that hold a file descriptor should ``fsync`` it before leaving the body.
    """
    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
    os.close(fd)
    try:
        yield tmp
        os.chmod(tmp, new_file_mode(path))
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
    _fsync_folder(folder)


def atomic_write_text(path: str | Path, text: str) -> Path:
    """Write ``text`` (UTF-8, ``\\n`` line ends) to ``path`` atomically (see :func:`atomic_path`)."""
    path = Path(path)
    with atomic_path(path) as tmp:
        with open(tmp, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
    return path


def _fsync_folder(folder: Path) -> None:
    if not hasattr(os, "O_DIRECTORY"):
        return   # Windows: folders cannot be opened for fsync
    try:
        fd = os.open(folder, os.O_RDONLY | os.O_DIRECTORY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)
