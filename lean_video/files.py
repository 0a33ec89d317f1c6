"""Writing files so that an interrupted run never leaves a truncated one.

Shared by every stage that writes: the text goes to a temporary file in the
same folder, is flushed to disk, and is moved over the target in one step
(``os.replace``), so a reader sees either the old file or the whole new one.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path


def atomic_write_text(path: str | os.PathLike, text: str, *, private: bool = False) -> Path:
    """Write ``text`` (UTF-8) to ``path`` atomically and return the path.

    Parameters
    ----------
    path : path-like
        Target file; its folder must exist.
    text : str
    private : bool, keyword-only
        Make the file readable by its owner only (mode 0600), for anything
        holding client data.
    """
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as handle:
            handle.write(text)
            handle.flush()
            os.fsync(handle.fileno())
        if private:
            os.chmod(tmp, 0o600)
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
    try:  # make the rename itself durable (POSIX); not available everywhere
        dfd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(dfd)
        finally:
            os.close(dfd)
    except OSError:
        pass
    return target
