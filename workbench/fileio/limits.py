"""The input-limits policy: how much the workbench reads or computes before it refuses.

Every reader and every command checks its input against these limits
*before* it allocates or computes, so a bad or hostile input ends with one
line naming the file or option and the limit, never with a hang, a
memory error or a machine swapping to death.

The limits (defaults; the README lists them too):

========================  ==========  ===============================================
name                      default     what it bounds
========================  ==========  ===============================================
``min_step_nm``           0.01        smallest wavelength step of a grid, nm
``bands``                 100000      wavelengths of one grid or spectrum
``spectra``               1000000     spectra in one file
``trials``                1000000     Monte Carlo trials of one tolerance run
``chunk_pixels``          16777216    pixels (spectra) in one render chunk
``cell_chars``            1024        characters of one CSV cell
``line_chars``            16777216    characters of one line of a text file
``file_mb``               1024        MiB read from a CSV or other text file
``design_mb``             16          MiB of a design (TOML) or sidecar (JSON) file
========================  ==========  ===============================================

A limit is raised for one run with the command line's ``--limit NAME=VALUE``
(``workbench --limit trials=5000000 tolerance …``) or for a session with
the environment variable ``WORKBENCH_LIMITS="trials=5000000,file_mb=4096"``;
in Python, :func:`set_limits` or the :func:`raised` context manager.

Files are read only when they are regular files: a FIFO, a device
(``/dev/zero``), a socket or a directory is refused *before* it is opened
(``os.stat``), and the file is then opened with ``O_NONBLOCK`` and checked
again on the open descriptor (``os.fstat``), so a file swapped for a FIFO
between the two checks cannot block. Reading stops at the size limit.
"""

from __future__ import annotations

import contextlib
import dataclasses
import os
import stat
from dataclasses import dataclass

from workbench.errors import InputFileError, WorkbenchError

__all__ = [
    "Limits",
    "limits",
    "set_limits",
    "raised",
    "parse_limit",
    "shorten",
    "check_regular_file",
    "read_limited",
    "check_count",
    "check_step",
]


@dataclass(frozen=True)
class Limits:
    """The limits in force (see the module notes for each field's meaning and unit)."""

    min_step_nm: float = 0.01
    bands: int = 100_000
    spectra: int = 1_000_000
    trials: int = 1_000_000
    chunk_pixels: int = 16_777_216
    cell_chars: int = 1024
    line_chars: int = 16_777_216
    file_mb: float = 1024.0
    design_mb: float = 16.0

    @property
    def file_bytes(self) -> int:
        """``file_mb`` in bytes."""
        return int(self.file_mb * 2**20)

    @property
    def design_bytes(self) -> int:
        """``design_mb`` in bytes."""
        return int(self.design_mb * 2**20)


_FIELDS = {f.name: f.type for f in dataclasses.fields(Limits)}
_current = Limits()


def limits() -> Limits:
    """The limits in force."""
    return _current


def set_limits(**changes) -> Limits:
    """Change limits for the rest of the process (``set_limits(trials=5_000_000)``); returns the old ones."""
    global _current
    old = _current
    new = {}
    for name, value in changes.items():
        new[name] = _checked(name, value)
    _current = dataclasses.replace(_current, **new)
    return old


@contextlib.contextmanager
def raised(**changes):
    """Context manager: the limits changed as :func:`set_limits` for the ``with`` block only."""
    global _current
    old = set_limits(**changes)
    try:
        yield _current
    finally:
        _current = old


def _checked(name: str, value):
    if name not in _FIELDS:
        raise WorkbenchError(f"limit must be one of {', '.join(_FIELDS)} (got {shorten(str(name), 40)!r})")
    kind = _FIELDS[name]
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise WorkbenchError(f"limit {name} must be a number (got {shorten(str(value), 40)!r})") from None
    if not (v > 0 and v < 1e15):
        raise WorkbenchError(f"limit {name} must be a number > 0 (got {shorten(str(value), 40)})")
    if kind in ("int", int):
        if v != int(v):
            raise WorkbenchError(f"limit {name} must be a whole number (got {shorten(str(value), 40)})")
        return int(v)
    return v


def parse_limit(text: str) -> dict:
    """``'NAME=VALUE[,NAME=VALUE…]'`` as a dict of checked limits (for ``--limit`` and ``WORKBENCH_LIMITS``)."""
    out = {}
    for part in str(text).split(","):
        part = part.strip()
        if not part:
            continue
        name, sep, value = part.partition("=")
        if not sep:
            raise WorkbenchError(f"limit must be NAME=VALUE, e.g. trials=5000000 (got {shorten(part, 40)!r})")
        name = name.strip()
        out[name] = _checked(name, value.strip())
    return out


def limits_from_environment() -> None:
    """Apply ``WORKBENCH_LIMITS`` (if set) to the limits in force."""
    text = os.environ.get("WORKBENCH_LIMITS")
    if text:
        try:
            set_limits(**parse_limit(text))
        except WorkbenchError as err:
            raise WorkbenchError(f"WORKBENCH_LIMITS: {err}") from None


def shorten(text: str, width: int = 60) -> str:
    """``text`` cut to ``width`` characters with ``…(N characters)`` when longer: how long inputs are echoed."""
    text = str(text)
    if len(text) <= width:
        return text
    return f"{text[:width]}…({len(text)} characters)"


def how_to_raise(name: str) -> str:
    """The hint appended to a limit's refusal."""
    verb = "lower" if name == "min_step_nm" else "raise"
    return f"{verb} it with --limit {name}=… or WORKBENCH_LIMITS"


_KINDS = (
    (stat.S_ISDIR, "a directory"),
    (stat.S_ISFIFO, "a FIFO (named pipe)"),
    (stat.S_ISCHR, "a character device"),
    (stat.S_ISBLK, "a block device"),
    (stat.S_ISSOCK, "a socket"),
)


def _kind_of(mode: int) -> str | None:
    for test, label in _KINDS:
        if test(mode):
            return label
    return None if stat.S_ISREG(mode) else "not a regular file"


def check_regular_file(path, *, allow_dir: bool = False) -> os.stat_result:
    """``os.stat`` of ``path``, refusing anything but a regular file (or a directory when ``allow_dir``).

    Raises
    ------
    InputFileError
        ``<path>: cannot read: No such file or directory``; ``…: cannot read:
        Is a directory``; ``…: cannot read: a FIFO (named pipe); expected a
        regular file``, and likewise for devices and sockets.
    """
    name = os.fspath(path)
    try:
        st = os.stat(name)
    except OSError as err:
        raise InputFileError(f"cannot read: {err.strerror or err}", str(name)) from None
    except ValueError as err:  # embedded NUL
        raise InputFileError(f"cannot read: {err}", repr(str(name))) from None
    if stat.S_ISDIR(st.st_mode):
        if allow_dir:
            return st
        raise InputFileError("cannot read: Is a directory", str(name))
    kind = _kind_of(st.st_mode)
    if kind is not None:
        raise InputFileError(f"cannot read: {kind}; expected a regular file", str(name))
    return st


def read_limited(path, *, max_bytes: int | None = None, limit_name: str = "file_mb") -> bytes:
    """The bytes of the regular file ``path``, refusing FIFOs, devices and files over ``max_bytes``.

    ``max_bytes`` defaults to the ``file_mb`` limit. The file is checked with
    ``os.stat`` before it is opened, opened with ``O_NONBLOCK`` and checked
    again with ``os.fstat``; at most ``max_bytes + 1`` bytes are read.

    Raises
    ------
    InputFileError
        Naming the file: missing, unreadable, not a regular file, or larger
        than the limit (``larger than the limit of 16 MiB (file_mb); …``).
    """
    name = os.fspath(path)
    if max_bytes is None:
        max_bytes = limits().file_bytes
    check_regular_file(name)
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_CLOEXEC", 0)
    try:
        fd = os.open(name, flags)
    except OSError as err:
        raise InputFileError(f"cannot read: {err.strerror or err}", str(name)) from None
    try:
        st = os.fstat(fd)
        kind = _kind_of(st.st_mode)
        if kind is not None:
            raise InputFileError(f"cannot read: {kind}; expected a regular file", str(name))
        if st.st_size > max_bytes:
            raise _too_large(name, max_bytes, limit_name, st.st_size)
        chunks = []
        total = 0
        first = st.st_size + 1  # one read for the whole file in the usual case: no joined copy
        while True:
            try:
                block = os.read(fd, min(max(first, 1 << 16), max_bytes + 1 - total))
                first = 1 << 24
            except OSError as err:
                raise InputFileError(f"cannot read: {err.strerror or err}", str(name)) from None
            if not block:
                break
            chunks.append(block)
            total += len(block)
            if total > max_bytes:
                raise _too_large(name, max_bytes, limit_name, None)
    finally:
        os.close(fd)
    return b"".join(chunks) if len(chunks) != 1 else chunks[0]


def _too_large(name, max_bytes: int, limit_name: str, size: int | None) -> InputFileError:
    got = f" (it holds {size / 2**20:.1f} MiB)" if size is not None else ""
    return InputFileError(
        f"larger than the limit of {max_bytes / 2**20:g} MiB{got}; reading stopped — "
        f"{how_to_raise(limit_name.removesuffix('_bytes'))}", str(name))


def check_count(count, limit_name: str, what: str, *, where: str | None = None) -> int:
    """Refuse ``count`` of ``what`` above the limit ``limit_name``; returns ``count``.

    ``where`` (an option or file) leads the message: ``--trials: 1000000000
    trials is above the limit of 1000000; raise it with …``.
    """
    cap = getattr(limits(), limit_name)
    if count > cap:
        lead = f"{where}: " if where else ""
        raise WorkbenchError(f"{lead}{count} {what} is above the limit of {cap}; {how_to_raise(limit_name)}")
    return count


def check_step(start: float, stop: float, step: float, *, what: str = "grid") -> int:
    """Refuse a grid ``start:stop:step`` (nm) whose step is below ``min_step_nm``, above the range, or
    which holds more than ``bands`` wavelengths; returns the number of steps."""
    lim = limits()
    for label, v in (("start", start), ("stop", stop), ("step", step)):
        try:
            ok = v == v and abs(float(v)) != float("inf")
        except (TypeError, ValueError):
            ok = False
        if not ok:
            raise WorkbenchError(f"{what} {label} must be a finite number in nm (got {v})")
    span = stop - start
    if not step >= lim.min_step_nm:
        raise WorkbenchError(f"{what} step must be at least {lim.min_step_nm:g} nm (got {step:g} nm)")
    if not span > 0:
        raise WorkbenchError(f"{what} must run upwards: stop > start (got {start:g}-{stop:g} nm)")
    if step > span:
        raise WorkbenchError(f"{what} step must be at most the range {start:g}-{stop:g} nm, "
                             f"{span:g} nm (got {step:g} nm)")
    n = span / step
    if not n + 1 <= lim.bands:
        count = f"{int(n) + 1}" if n < 1e15 else f"{n:.3g}"
        raise WorkbenchError(f"{what} {start:g}-{stop:g} nm at {step:g} nm holds {count} wavelengths, "
                             f"above the limit of {lim.bands}; {how_to_raise('bands')}")
    return int(round(n))
