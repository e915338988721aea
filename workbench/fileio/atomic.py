"""Saving files without ever losing the previous one."""

from __future__ import annotations

import os
import stat
import uuid
from pathlib import Path

from workbench.errors import InputFileError

__all__ = ["write_atomically", "write_text_atomically", "write_bytes_atomically"]


def write_atomically(target, write) -> None:
    """Call ``write(fh)`` on a binary temporary file in ``target``'s folder, then rename it over ``target``.

    The temporary file is flushed to disk, given the old file's permissions
    and renamed over ``target`` with ``os.replace``; on any failure
    (including Ctrl-C) it is removed and the previous ``target`` is left as
    it was. An OS error becomes :class:`InputFileError` naming the file.

    References
    ----------
    IEEE Std 1003.1-2017 (POSIX), ``rename()``: the replacement of the target is
    atomic; Python's ``os.replace``.
    """
    target = Path(target)
    tmp = target.with_name(f".{target.name}.{uuid.uuid4().hex[:12]}.tmp")
    try:
        fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)
    except OSError as err:
        raise InputFileError(f"cannot write: {err.strerror or err}", str(target)) from None
    try:
        with os.fdopen(fd, "wb") as fh:
            write(fh)
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


def write_text_atomically(target, text: str) -> None:
    """Write ``text`` (UTF-8, newlines as given) to ``target`` atomically; see :func:`write_atomically`.

    References
    ----------
    IEEE Std 1003.1-2017 (POSIX), ``rename()``: the replacement of the target is
    atomic; Python's ``os.replace``.
    """
    data = text.encode("utf-8")
    write_atomically(target, lambda fh: fh.write(data))


def write_bytes_atomically(target, data: bytes) -> None:
    """Write ``data`` to ``target`` atomically; see :func:`write_atomically`.

    References
    ----------
    IEEE Std 1003.1-2017 (POSIX), ``rename()``: the replacement of the target is
    atomic; Python's ``os.replace``.
    """
    write_atomically(target, lambda fh: fh.write(data))
