"""Which kind of spectrum a file holds, and whether it fits the command reading it.

The CSV reader takes the kind from a ``# kind:`` line, else from the header
by the rule :data:`workbench.fileio.spectra_csv.KIND_RULE` (T, Ti, τ →
transmittance; R, ρ → reflectance; QE, A/W, responsivity → sensitivity;
irradiance, W/(m² nm) → emission), else takes reflectance and says so. A
command that needs one kind (``light`` takes emission, ``tristimulus``
reflectance, transmittance or emission) reads the file without forcing a
kind and refuses a file that names another, in one line naming the file,
what said so and the ``--kind`` option that overrides it.
"""

from __future__ import annotations

import re

from workbench.errors import InputFileError
from workbench.model.spectra import Spectra
from workbench.fileio.spectra_csv import KIND_UNSAID_NOTE

__all__ = ["kind_said", "require_kind", "read_for"]

_TAKEN_FROM = re.compile(r"kind (?P<kind>\w+) taken from (?P<by>the header '.*?'|the header \".*?\"|the metadata line \d+)")


def kind_said(s: Spectra) -> tuple[str | None, str | None]:
    """``(kind, what said it)`` as the file says it, or ``(None, None)`` when it says nothing.

    From the reader's notes: a ``# kind:`` line leaves no note (its kind is
    the spectra's), a header leaves ``kind … taken from the header '…'``,
    and silence leaves :data:`KIND_UNSAID_NOTE`.
    """
    for n in s.notes:
        if n.endswith(KIND_UNSAID_NOTE):
            return None, None
        m = _TAKEN_FROM.search(n)
        if m is not None:
            return m.group("kind"), m.group("by")
    return s.kind, "its '# kind:' line"


def read_for(read, accepted: tuple[str, ...], *, command: str, default: str, kind: str | None = None,
             option: str = "--kind") -> Spectra:
    """Spectra read for a command that takes the kinds ``accepted``.

    ``read(kind)`` reads the file with that kind (None: as the file says).
    With ``kind`` given (the command's ``--kind``) the file is read as that;
    otherwise a file naming no kind is read again as ``default`` (so its
    scale is judged for that kind), and one naming a kind not in
    ``accepted`` is refused by :func:`require_kind`.
    """
    if kind is not None:
        return read(kind)
    s = read(None)
    said, _ = kind_said(s)
    if said is None:
        return read(default)
    return require_kind(s, accepted, command=command, option=option)


def require_kind(s: Spectra, accepted: tuple[str, ...], *, command: str, option: str = "--kind") -> Spectra:
    """``s`` when its file names one of the kinds ``accepted`` (or none); refused otherwise.

    Raises
    ------
    InputFileError
        ``"<file>: holds transmittance (so says the header 'lens T%'), but `workbench light` takes
        emission; pass --kind emission if it is one"``.
    """
    kind, by = kind_said(s)
    if kind is None:
        return s
    if kind not in accepted:
        takes = ", ".join(accepted[:-1]) + " or " + accepted[-1] if len(accepted) > 1 else accepted[0]
        raise InputFileError(
            f"holds {kind} (so says {by}), but `workbench {command}` takes {takes}; "
            f"pass {option} {accepted[0]} if it is one", s.source)
    return s
