"""A command's output folder as one unit: the old set or the new set, never a mix.

:class:`OutputFolder` is what ``fit --out``, ``render --out``, ``tolerance
--plots``, ``light --figures`` and ``coating --figures`` write through::

    with OutputFolder(args.out, option="--out", command="fit",
                      names=("design.toml", "report.html")) as out:
        ...                                  # validated and locked before computing
        write_text_atomically(out.path / "metrics.json", text)
        out.commit()                         # the new set replaces the old one at once

What it does:

1. On entry it validates the folder before any computing: the path must
   not be a file, its nearest existing parent must be a writable folder,
   and an existing folder must be empty, hold a previous output of the
   workbench (the ``.workbench-output`` manifest), or hold only files the
   command writes (``names``) — so ``--out ~`` can never wipe a home
   folder.
2. It takes an exclusive lock (``fcntl.flock``) on ``.NAME.lock`` beside
   the folder; a second run on the same folder is refused at once with one
   line.
3. Holding the lock it removes what killed runs left: ``.NAME.tmp-*`` and
   ``.NAME.old-*`` folders beside it (restoring an old set first when a
   kill fell between the two renames of the fallback swap).
4. It creates the staging folder ``.NAME.tmp-<pid>-<random>`` beside the
   target; :attr:`OutputFolder.path` points there and every file of the
   run is written into it.
5. :meth:`OutputFolder.commit` writes the manifest last, flushes the
   folder, and swaps it in: ``renameat2(RENAME_EXCHANGE)`` on Linux (one
   atomic step), else rename the old folder aside, rename the new one in
   and remove the old. Leaving the ``with`` block without commit (an
   error, Ctrl-C) removes the staging folder and leaves the old set as it
   was.

A kill at any moment therefore leaves the folder holding either the
complete old set or the complete new set, plus at most a stray staging
folder that the next run removes.
"""

from __future__ import annotations

import ctypes
import errno
import fcntl
import glob
import json
import os
import shutil
import sys
import time
import uuid
from pathlib import Path

from workbench.errors import InputFileError, WorkbenchError
from workbench.fileio.atomic import write_text_atomically

__all__ = ["OutputFolder", "MANIFEST", "check_output_file"]

#: The manifest written last into every committed output folder.
MANIFEST = ".workbench-output"

_RENAME_EXCHANGE = 2
_AT_FDCWD = -100


def _renameat2():
    if not sys.platform.startswith("linux"):
        return None
    try:
        libc = ctypes.CDLL(None, use_errno=True)
        f = libc.renameat2
    except (OSError, AttributeError):
        return None
    f.argtypes = [ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p, ctypes.c_uint]
    f.restype = ctypes.c_int
    return f


_EXCHANGE = _renameat2()


def _exchange(a: Path, b: Path) -> bool:
    """Swap two paths atomically; False when the system cannot."""
    if _EXCHANGE is None:
        return False
    r = _EXCHANGE(_AT_FDCWD, os.fsencode(a), _AT_FDCWD, os.fsencode(b), _RENAME_EXCHANGE)
    if r == 0:
        return True
    e = ctypes.get_errno()
    if e in (errno.EINVAL, errno.ENOSYS, errno.EOPNOTSUPP if hasattr(errno, "EOPNOTSUPP") else -1):
        return False
    raise OSError(e, os.strerror(e), str(b))


def _fsync_dir(path: Path) -> None:
    try:
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_DIRECTORY", 0))
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def _nearest_existing(path: Path) -> Path:
    p = path
    while not os.path.lexists(p):
        if p.parent == p:
            break
        p = p.parent
    return p


def check_output_file(path, *, option: str) -> Path:
    """Validate a single output file path before computing: not a folder, its parent a writable folder.

    Raises
    ------
    WorkbenchError
        ``--csv out/x.csv: 'out' is a file, expected a folder`` and the like.
    """
    p = Path(os.fspath(path))
    if p.is_dir():
        raise WorkbenchError(f"{option} {p}: is a folder; expected a file name")
    parent = p.parent if str(p.parent) else Path(".")
    base = _nearest_existing(parent)
    if not base.is_dir():
        raise WorkbenchError(f"{option} {p}: {base} is a file; expected a folder there")
    if not os.access(base, os.W_OK | os.X_OK):
        raise WorkbenchError(f"{option} {p}: cannot write in {base} (permission denied)")
    return p


class OutputFolder:
    """An output folder written as one unit (see the module notes).

    Parameters
    ----------
    target : path-like
        The folder the user named.
    option : str
        The option that named it, for messages (``'--out'``).
    command : str
        The command writing it, recorded in the manifest.
    names : sequence of str
        The files the command writes; an existing folder holding only these
        (a previous output without a manifest) may be replaced.

    Attributes
    ----------
    path : Path
        The staging folder to write into (valid inside the ``with`` block).
    target : Path
    """

    def __init__(self, target, *, option: str = "--out", command: str = "workbench", names=()):
        self.target = Path(os.fspath(target))
        self.option = option
        self.command = command
        self.names = set(names)
        self.path: Path | None = None
        self._lock_fd: int | None = None
        self._committed = False
        self.written: list[str] = []

    # -- entry --------------------------------------------------------------
    def __enter__(self) -> "OutputFolder":
        self._validate()
        self._lock()
        try:
            self._clean_strays()
            self.path = self.target.parent / f".{self.target.name}.tmp-{os.getpid()}-{uuid.uuid4().hex[:8]}"
            try:
                self.path.mkdir()
            except OSError as err:
                raise InputFileError(f"cannot create a folder beside it: {err.strerror or err}",
                                     f"{self.option} {self.target}") from None
        except BaseException:
            self._unlock()
            raise
        return self

    def __exit__(self, exc_type, exc, tb) -> None:
        try:
            if not self._committed and self.path is not None:
                shutil.rmtree(self.path, ignore_errors=True)
        finally:
            self._unlock()

    def _where(self) -> str:
        return f"{self.option} {self.target}"

    def _validate(self) -> None:
        t = self.target
        if str(t) in ("", ".", "..") or t.resolve() == Path(t.resolve().anchor) or t.resolve() == Path.home():
            raise WorkbenchError(f"{self._where()}: expected a folder of its own for the output "
                                 "(not the current, parent, root or home folder)")
        if os.path.lexists(t) and not t.is_dir():
            raise WorkbenchError(f"{self._where()}: expected a folder, found a file")
        base = _nearest_existing(t.parent if str(t.parent) else Path("."))
        if not base.is_dir():
            raise WorkbenchError(f"{self._where()}: {base} is a file; expected a folder there")
        if not os.access(base, os.W_OK | os.X_OK):
            raise WorkbenchError(f"{self._where()}: cannot write in {base} (permission denied)")
        if t.is_dir():
            if not os.access(t, os.W_OK | os.X_OK):
                raise WorkbenchError(f"{self._where()}: cannot write in the folder (permission denied)")
            entries = [e.name for e in os.scandir(t)]
            foreign = [n for n in entries if n != MANIFEST and n not in self.names
                       and not (n.startswith(".") and n.endswith(".tmp"))]
            if foreign and MANIFEST not in entries:
                shown = ", ".join(sorted(foreign)[:3]) + (" …" if len(foreign) > 3 else "")
                raise WorkbenchError(
                    f"{self._where()}: the folder holds files the workbench did not write ({shown}); "
                    "the output replaces the whole folder — choose a new or empty folder")
        try:
            t.parent.mkdir(parents=True, exist_ok=True)
        except OSError as err:
            raise WorkbenchError(f"{self._where()}: cannot create {t.parent}: {err.strerror or err}") from None

    def _lock(self) -> None:
        lock = self.target.parent / f".{self.target.name}.lock"
        try:
            fd = os.open(lock, os.O_RDWR | os.O_CREAT | getattr(os, "O_CLOEXEC", 0), 0o644)
        except OSError as err:
            raise WorkbenchError(f"{self._where()}: cannot create the lock file {lock.name}: "
                                 f"{err.strerror or err}") from None
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError:
            os.close(fd)
            raise WorkbenchError(f"{self._where()}: another run is writing this folder (lock {lock}); "
                                 "wait for it to finish or choose another folder") from None
        self._lock_fd = fd

    def _unlock(self) -> None:
        if self._lock_fd is not None:
            try:
                os.close(self._lock_fd)  # closing releases the flock
            finally:
                self._lock_fd = None

    def _clean_strays(self) -> None:
        """Remove staging and old folders left by killed runs (under the lock)."""
        parent, name = self.target.parent, self.target.name
        olds = sorted(parent.glob(f".{glob_escape(name)}.old-*"))
        if olds and not os.path.lexists(self.target):
            # a kill fell between 'old aside' and 'new in' of the fallback swap: put the old set back
            os.rename(olds[-1], self.target)
            olds = olds[:-1]
        for p in olds + sorted(parent.glob(f".{glob_escape(name)}.tmp-*")):
            if p.is_dir() and not p.is_symlink():
                shutil.rmtree(p, ignore_errors=True)
            else:
                try:
                    p.unlink()
                except OSError:
                    pass
        if self.target.is_dir():
            for p in self.target.glob(".*.tmp"):
                try:
                    p.unlink()
                except OSError:
                    pass

    # -- writing ------------------------------------------------------------
    def __truediv__(self, name: str) -> Path:
        """``out / 'name.png'``: the path of a file in the staging folder."""
        return self.path / name

    def commit(self) -> None:
        """Write the manifest, then swap the staging folder in for the target (the new set at once)."""
        if self.path is None or self._committed:
            raise WorkbenchError("OutputFolder.commit: nothing to commit (use it inside 'with')")
        files = sorted(e.name for e in os.scandir(self.path) if e.name != MANIFEST)
        manifest = {"command": self.command, "files": files, "complete": True,
                    "written_utc": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime())}
        try:
            write_text_atomically(self.path / MANIFEST, json.dumps(manifest, indent=1) + "\n")
            _fsync_dir(self.path)
            if os.path.lexists(self.target):
                if _exchange(self.path, self.target):
                    self._committed = True
                    shutil.rmtree(self.path, ignore_errors=True)  # now the old set
                else:
                    old = self.target.parent / f".{self.target.name}.old-{uuid.uuid4().hex[:8]}"
                    os.rename(self.target, old)
                    os.rename(self.path, self.target)
                    self._committed = True
                    shutil.rmtree(old, ignore_errors=True)
            else:
                os.rename(self.path, self.target)
                self._committed = True
            _fsync_dir(self.target.parent)
        except OSError as err:
            raise InputFileError(f"cannot write the output folder: {err.strerror or err}", self._where()) from None
        self.written = files


def glob_escape(name: str) -> str:
    """``name`` with glob's special characters escaped."""
    return glob.escape(name)
