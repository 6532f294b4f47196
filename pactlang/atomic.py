"""Bytes -> a file replaced in one step: a temporary file beside it, then `os.replace`.

Readers see the old file or the new one, never half of either; the new file
keeps the old one's permission bits and owner (a root user formatting someone
else's file must not take it over; when the owner cannot be kept, nothing is
written), and a symbolic link is followed so the link itself stays a link.
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
        info = os.stat(target)
    except FileNotFoundError:
        info = None
    fd, temp = tempfile.mkstemp(dir=directory, prefix="." + os.path.basename(target) + ".", suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
            handle.flush()
            os.fsync(handle.fileno())
        if info is not None:
            _keep_owner(temp, info)
            os.chmod(temp, stat.S_IMODE(info.st_mode))
        os.replace(temp, target)
    except BaseException:
        try:
            os.unlink(temp)
        except FileNotFoundError:
            pass
        raise


def _keep_owner(temp: str, info: os.stat_result) -> None:
    """Give the new file the old one's owner and group (PermissionError when not allowed)."""
    if hasattr(os, "chown") and (info.st_uid, info.st_gid) != (os.geteuid(), os.getegid()):
        try:
            os.chown(temp, info.st_uid, info.st_gid)
        except PermissionError:
            raise PermissionError("the file's owner or group could not be kept") from None
