"""Saving files without ever losing the previous one."""

from __future__ import annotations

import os
import stat
import uuid
from pathlib import Path

from .errors import InputFileError

__all__ = ["write_text_atomically"]


def write_text_atomically(target, text: str) -> None:
    """Write ``text`` (UTF-8) to ``target`` through a temporary file in the same folder.

    The temporary file is flushed to disk, given the old file's permissions
    and renamed over ``target`` with ``os.replace``; on any failure it is
    removed and the previous ``target`` is left as it was. An OS error
    becomes :class:`InputFileError` naming the file.
    """
    target = Path(target)
    tmp = target.with_name(f".{target.name}.{uuid.uuid4().hex[:12]}.tmp")
    try:
        fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)
    except OSError as err:
        raise InputFileError(f"cannot write: {err.strerror or err}", str(target)) from None
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        try:
            os.chmod(tmp, stat.S_IMODE(os.stat(target).st_mode))
        except FileNotFoundError:
            pass
        os.replace(tmp, target)
    except BaseException as err:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        if isinstance(err, OSError):
            raise InputFileError(f"cannot write: {err.strerror or err}", str(target)) from None
        raise
