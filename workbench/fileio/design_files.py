"""Reading what a design names, once: the second half of loading a design.

:func:`resolve_design` takes a validated :class:`~workbench.model.design.Design`
and returns it with every file it names read once — the tabulated curves
of its chain elements (kinds that ``reads``, put on the design grid; what a
kind's own ``load`` function reads), the SPD files of its illuminants, the
reflectance files of its sample sets and the emitter spectra of its target
— each with the notes of reading (and resampling). The arrays are
read-only. After this, computing with the design (the chain, the
evaluator, the tolerance run) never touches the disk. Illuminants and
sample sets are put on the grid when used (the computation, not the
reading), so one that a command does not need costs nothing but its
reading.

A file that cannot be used does not stop loading: the entry keeps the
error and raises it when it is used (see :func:`resolve_design`), with the
message the reader gives (file, line, what was expected).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from workbench.errors import WorkbenchError
from workbench.fileio.spectra_csv import read_spectra_csv
from workbench.model.design import Design, Element, IlluminantSpec, SampleSetSpec, uncovered
from workbench.model.spectra import Spectra, coarsening_method
from workbench.optics.kinds import LoadInput, element_kind

__all__ = ["resolve_design"]


def _frozen(s: Spectra) -> Spectra:
    values = np.array(s.values, dtype=float)
    values.setflags(write=False)
    return replace(s, values=values)


def _element_data(design: Design, e: Element, i: int) -> Element:
    kind = element_kind(e.type)
    if kind.load is not None:
        data = kind.load(LoadInput(f"chain[{i}]", e.name, dict(e.options), e.paths, design.grid.wavelengths,
                                   design.resolve, e.option("file"), design.source))
        return replace(e, data=data)
    file = e.option("file")
    if kind.reads is None or file is None:
        return e
    s = read_spectra_csv(design.resolve(file), kind=kind.reads)
    key = f"chain[{i}]"
    cols = e.option("columns")
    if cols is not None:
        names = [c for _, c in cols]
    elif e.option("column") is not None:
        names = [e.option("column")]
    elif len(s) == 1:
        names = [s.names[0]]
    else:
        raise WorkbenchError(
            f"{key}.column: expected the column to use, the file {file} holds "
            f"{len(s)} curves ({', '.join(s.names[:6])})"
        )
    missing = [n for n in names if n not in s.names]
    if missing:
        raise WorkbenchError(
            f"{key}: expected column {missing[0]!r} in {file} (it holds {', '.join(s.names[:6])})"
        )
    s = s.select(names)
    wl = design.grid.wavelengths
    if kind.after_read is not None:
        s = kind.after_read(s, LoadInput(key, e.name, dict(e.options), e.paths, wl, design.resolve, file))
    extrapolation = e.option("extrapolation", "none")
    if extrapolation == "none" and not s.covers(wl[0], wl[-1]):
        raise WorkbenchError(f"{key} {e.name!r} ({file}): " + uncovered(s, wl, "element"))
    s = s.resample(wl, extrapolation=extrapolation,
                   method=coarsening_method(s.wavelengths, wl, design.grid.resampling))
    return replace(e, data=_frozen(s))


def _illuminant(design: Design, spec: IlluminantSpec, index: int) -> IlluminantSpec:
    if spec.cie is not None:
        return spec
    s = read_spectra_csv(design.resolve(spec.file), kind="emission")
    if spec.column is not None:
        s = s.select([spec.column])
    elif len(s) != 1:
        raise WorkbenchError(
            f"illuminant {spec.name!r}: expected a column, the file {spec.file} holds {len(s)} spectra"
        )
    return replace(spec, spd=_frozen(s))


def _samples(design: Design, spec: SampleSetSpec, index: int) -> SampleSetSpec:
    if spec.source != "csv":
        return spec
    s = read_spectra_csv(design.resolve(spec.file), kind="reflectance")
    if s.values.ndim != 2:
        s = Spectra(s.wavelengths, s.flat(), s.names, kind=s.kind, units=s.units, notes=s.notes, source=s.source)
    return replace(spec, spd=_frozen(s))


def _emitters(design: Design, target):
    s = read_spectra_csv(design.resolve(target.file), kind="emission")
    if target.columns is not None:
        s = s.select(list(target.columns))
    return replace(target, emitters=_frozen(s))


def _kept(resolve, spec, *args):
    """``resolve(...)``, or ``spec`` carrying the error when its file cannot be used."""
    try:
        return resolve(*args)
    except WorkbenchError as err:
        return replace(spec, error=err)


def resolve_design(design: Design) -> Design:
    """``design`` with every file it names read once and put on its grid (see the module notes).

    An entry whose file cannot be read, lacks a column the design names or
    does not cover the grid keeps the error (``error``), and it is raised,
    with the same message as ever (the entry's key, its file, what was
    expected), where the entry is used: the chain when it is built, an
    illuminant or sample set when it is asked for, the target when the
    primaries are made.
    """
    chain = tuple(_kept(_element_data, e, design, e, i) for i, e in enumerate(design.chain))
    target = design.target
    if target.kind == "emitters" and target.file is not None:
        target = _kept(_emitters, target, design, target)
    illuminants = tuple(_kept(_illuminant, s, design, s, i) for i, s in enumerate(design.illuminants))
    samples = tuple(_kept(_samples, s, design, s, i) for i, s in enumerate(design.samples))
    return replace(design, chain=chain, target=target, illuminants=illuminants, samples=samples)
