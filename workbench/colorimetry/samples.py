"""Reflectance sample sets as plain arrays on a wavelength grid.

Sets
----
``'cie-13.3'``
    The 14 test colour samples TCS01-TCS14 of CIE 13.3-1995 (TCS01-08 are
    the ones the general colour rendering index uses), 360-830 nm at 5 nm,
    from colour-science (``colour.quality.SDS_TCS['CIE 1995']``).
``'cie-224'``
    The 99 colour evaluation samples of CIE 224:2017, 380-780 nm at 1 or
    5 nm, from colour-science (``colour.quality.cfi2017.load_TCS_CIE2017``;
    its 5 nm table is every fifth point of the 1 nm one).

Both are read from the package's CIE tables file (see
:mod:`workbench.colorimetry.cie`), copied from colour-science and checked
equal to it by a test; nothing here imports colour-science.
``'csv'``
    A user's reflectance table, read by :func:`workbench.fileio.spectra_csv.read_spectra_csv`.

Putting a set on the grid asked for: exact when the grid's points are
table points; otherwise resampled by the CIE 167:2005 rules
(:meth:`Spectra.resample`), said in the notes. A grid reaching outside the
table is an error unless ``extrapolation='constant'`` is asked for.

References
----------
CIE 13.3-1995, *Method of measuring and specifying colour rendering
properties of light sources*.
CIE 224:2017, *CIE 2017 colour fidelity index for accurate scientific use*.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from workbench.colorimetry.cie import table as cie_table
from workbench.errors import WorkbenchError
from workbench.fileio.spectra_csv import read_spectra_csv
from workbench.model.spectra import Spectra, check_wavelengths

__all__ = ["SAMPLE_SETS", "tcs_cie_13_3", "ces_cie_224", "open_sample_set"]

SAMPLE_SETS = ("cie-13.3", "cie-224", "csv")


@lru_cache(maxsize=1)
def _tcs_table() -> Spectra:
    names = tuple(str(n) for n in cie_table("tcs_names"))
    return Spectra(cie_table("tcs_wl"), cie_table("tcs"), names, kind="reflectance",
                   notes=("CIE 13.3-1995 test colour samples TCS01-TCS14 "
                          "(colour-science's table, stored in the package)",),
                   source="CIE 13.3-1995")


@lru_cache(maxsize=2)
def _ces_table(step: int) -> Spectra:
    wl = np.ascontiguousarray(cie_table("ces_wl")[::step])
    values = np.ascontiguousarray(cie_table("ces")[:, ::step])
    names = tuple(f"CES{i + 1:02d}" for i in range(values.shape[0]))
    return Spectra(wl, values, names, kind="reflectance",
                   notes=(f"CIE 224:2017 colour evaluation samples CES01-CES99 at {step} nm "
                          "(colour-science's table, stored in the package)",),
                   source="CIE 224:2017")


def _on_grid(table: Spectra, wl: np.ndarray, extrapolation: str) -> Spectra:
    if np.all(np.isin(wl, table.wavelengths)):
        idx = np.searchsorted(table.wavelengths, wl)
        if np.array_equal(wl, table.wavelengths):
            return table
        return Spectra(wl, table.values[:, idx], table.names, kind=table.kind,
                       notes=table.notes + ("tabulated values at the grid's points",),
                       source=table.source)
    return table.resample(wl, extrapolation=extrapolation)


def tcs_cie_13_3(wavelengths, *, extrapolation="none") -> Spectra:
    """The CIE 13.3 test colour samples TCS01-TCS14 on ``wavelengths`` (nm), reflectance 0-1.

    Returns
    -------
    Spectra
        ``values`` (14, n), names ``TCS01`` ... ``TCS14``.

    References
    ----------
    CIE 13.3-1995, *Method of measuring and specifying colour rendering
    properties of light sources* (TCS01-TCS14).
    docs/methods.md §17.

    Examples
    --------
    >>> s = tcs_cie_13_3(np.arange(400.0, 701.0, 10.0))
    >>> s.shape
    (14, 31)
    """
    wl = check_wavelengths(wavelengths)
    return _on_grid(_tcs_table(), wl, extrapolation)


def ces_cie_224(wavelengths, *, extrapolation="none") -> Spectra:
    """The 99 CIE 224:2017 colour evaluation samples on ``wavelengths`` (nm), reflectance 0-1.

    The 5 nm table is used when every grid point is a multiple of 5 nm, the
    1 nm table otherwise. Names ``CES01`` ... ``CES99``.

    References
    ----------
    CIE 224:2017, *CIE 2017 colour fidelity index for accurate scientific use*
    (the 99 colour evaluation samples).
    docs/methods.md §17.
    """
    wl = check_wavelengths(wavelengths)
    step = 5 if np.all(np.mod(wl, 5.0) == 0) else 1
    return _on_grid(_ces_table(step), wl, extrapolation)


def open_sample_set(source: str, wavelengths, *, file=None, extrapolation="none") -> Spectra:
    """Open a sample set by its source name on ``wavelengths`` (nm).

    Parameters
    ----------
    source : {'cie-13.3', 'cie-224', 'csv'}
    wavelengths : (n,) array_like, nm
    file : path-like, only for ``'csv'``
        A reflectance table (wide or long CSV).
    extrapolation : {'none', 'constant'}
        For a grid reaching beyond the table.

    Returns
    -------
    Spectra
        Reflectance 0-1, ``values`` (count, n).
    """
    wl = check_wavelengths(wavelengths)
    if source == "cie-13.3":
        return tcs_cie_13_3(wl, extrapolation=extrapolation)
    if source == "cie-224":
        return ces_cie_224(wl, extrapolation=extrapolation)
    if source == "csv":
        if file is None:
            raise WorkbenchError("sample set source 'csv' needs a file")
        s = read_spectra_csv(file, kind="reflectance")
        if s.values.ndim != 2:
            s = Spectra(s.wavelengths, s.flat(), s.names, kind=s.kind, units=s.units,
                        notes=s.notes, source=s.source)
        return s.resample(wl, extrapolation=extrapolation)
    raise WorkbenchError(
        f"sample set source must be one of {', '.join(SAMPLE_SETS)} (got {source!r})"
    )
