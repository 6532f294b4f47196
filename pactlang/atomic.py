"""Bytes -> a file replaced in one step: a temporary file beside it, then `os.replace`.

Readers see the old file or the new one, never half of either; the new file
keeps the old one's permission bits, and a symbolic link is followed so the
link itself stays a link.
"""

from __future__ import annotations

import os
import stat
import tempfile


def write_atomic(path: str, data: bytes) -> None:
    """Replace the file at `path` with `data`, atomically on one filesystem."""
    target = os.path.realpath(path)
    directory = os.path.dirname(target) or "."
    try:
        mode = stat.S_IMODE(os.stat(target).st_mode)
    except FileNotFoundError:
        mode = None
    fd, temp = tempfile.mkstemp(dir=directory, prefix="." + os.path.basename(target) + ".", suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
            handle.flush()
            os.fsync(handle.fileno())
        if mode is not None:
            os.chmod(temp, mode)
        os.replace(temp, target)
    except BaseException:
        try:
            os.unlink(temp)
        except FileNotFoundError:
            pass
        raise
