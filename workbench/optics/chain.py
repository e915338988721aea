"""The optical chain of a design, evaluated for any (batched) parameter values.

:class:`ChainModel` reads the design's measured curves once and then
evaluates each element's curve and the product along each channel's path
with plain numpy; :class:`ElementCurve` is one element's curve per channel.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from workbench.errors import WorkbenchError
from workbench.model.design import CHANNELS, Design, Element
from workbench.model.spectra import Spectra, coarsening_method
from workbench.optics import elements as optics

__all__ = ["ElementCurve", "ChainModel", "uncovered"]


def uncovered(s: Spectra, wavelengths, what: str) -> str:
    """The message for measured data that do not cover the design grid, naming the key that extends them."""
    wl = np.asarray(wavelengths)
    return (f"data cover {s.wavelengths[0]:g}-{s.wavelengths[-1]:g} nm but the design grid is "
            f"{wl[0]:g}-{wl[-1]:g} nm; set extrapolation = \"constant\" on this {what} to extend it "
            "(CIE 167)")



@dataclass(frozen=True, eq=False)
class ElementCurve:
    """One element's curve per channel: ``values`` (..., 3, n), 1 on channels it is not on."""

    name: str
    type: str
    paths: tuple[str, ...]
    values: np.ndarray


class ChainModel:
    """The design's optical chain, ready to evaluate for any parameter values.

    Measured curves are read and put on the design grid once, here; the
    evaluation is then plain numpy. ``notes`` say how each curve was read
    and resampled.

    Parameters
    ----------
    design : Design
    """

    def __init__(self, design: Design):
        from workbench.fileio.spectra_csv import read_spectra_csv

        self.design = design
        self.wavelengths = design.grid.wavelengths
        self._tables: dict[str, np.ndarray] = {}
        self._glass_data: dict[str, str] = {}
        notes: list[str] = []
        self.units = "1"
        for i, e in enumerate(design.chain):
            file = e.option("file")
            if file is None:
                continue
            kind = "sensitivity" if e.type == "sensor-qe" else "transmittance"
            s = read_spectra_csv(design.resolve(file), kind=kind)
            if e.type == "sensor-qe":
                self.units = s.units
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
            if e.type == "glass":
                self._glass_data[e.name] = self._glass_holds(e, key, file, names[0], notes)
            extrapolation = e.option("extrapolation", "none")
            if extrapolation == "none" and not s.covers(self.wavelengths[0], self.wavelengths[-1]):
                raise WorkbenchError(
                    f"{key} {e.name!r} ({file}): " + uncovered(s, self.wavelengths, "element"))
            s = s.resample(self.wavelengths, extrapolation=extrapolation,
                           method=coarsening_method(s.wavelengths, self.wavelengths, design.grid.resampling))
            notes.extend(s.notes)
            self._tables[e.name] = s.values
        self.notes = tuple(notes)
        self._memo: dict[str, tuple] = {}

    @staticmethod
    def _glass_holds(e: Element, key: str, file: str, column: str, notes: list) -> str:
        """'total' or 'internal': the element's ``transmittance`` key, else its column's header.

        A header naming internal transmittance (Ti, τi, 'internal') is read
        as such; a key contradicting the header is refused.
        """
        said = e.option("transmittance")
        bare = re.sub(r"\s*(?:[(\[][^()\[\]]*[)\]]|%)\s*$", "", column.strip())
        header_internal = (re.fullmatch(r"ti|τi|t_i|τ_i|tint", bare, re.IGNORECASE) is not None
                           or re.search(r"(?<![a-z])internal(?![a-z])", column, re.IGNORECASE) is not None)
        if e.option("reflection") == "none":
            return "internal"
        if said is None:
            if header_internal:
                notes.append(f"{key} {e.name!r} ({file}): column {column!r} read as internal transmittance "
                             "(its header says so); the faces are added from refractive_index")
                return "internal"
            return "total"
        if said == "total" and header_internal:
            raise WorkbenchError(
                f"{key} {e.name!r} ({file}): the header {column!r} says internal transmittance but "
                'transmittance = "total"; set transmittance = "internal" (or name the column as total)')
        return said

    def parameter_names(self) -> tuple[str, ...]:
        return tuple(self.design.parameters())

    def _values(self, values) -> dict[str, np.ndarray]:
        current = {k: np.asarray(p.value) for k, p in self.design.parameters().items()}
        for k, v in (values or {}).items():
            if k not in current:
                raise WorkbenchError(
                    f"unknown parameter {k!r}; expected one of {', '.join(current)}"
                )
            current[k] = np.asarray(v, dtype=float)
        return current

    def _curve(self, e: Element, p) -> np.ndarray:
        wl = self.wavelengths
        g = lambda k: p[f"{e.name}.{k}"]  # noqa: E731
        t = e.type
        if t in ("measured", "sensor-qe"):
            return self._tables[e.name]  # (1|3, n)
        if t == "glass":
            return optics.glass_transmittance(
                self._tables[e.name][0], e.option("measured_thickness_mm"), g("thickness_mm"),
                g("refractive_index"), reflection=e.option("reflection"), data=self._glass_data[e.name])
        if t in ("long-pass", "short-pass"):
            return optics.edge(wl, g("center_nm"), g("width_nm"), kind=t, shape=e.option("shape"),
                               pass_level=g("pass_level"), block_level=g("block_level"))
        if t == "band-pass":
            return optics.band_pass(wl, g("low_nm"), g("high_nm"), g("width_nm"),
                                    shape=e.option("shape"), pass_level=g("pass_level"),
                                    block_level=g("block_level"))
        if t == "neutral-density":
            return optics.neutral_density(wl, g("density"))
        if t == "colour-correction":
            return optics.colour_correction(wl, g("mired_shift"), peak_level=g("peak_level"))
        if t == "dichroic-splitter":
            kw = {k: g(k) for k, _ in e.params}
            paths, _ = optics.dichroic_splitter(
                wl, **kw, order=e.option("order"), shape=e.option("shape"),
                rings=e.option("rings"), azimuths=e.option("azimuths"))
            return paths
        raise WorkbenchError(f"unknown element type {t!r}")  # pragma: no cover

    def element_curves(self, values=None) -> tuple[ElementCurve, ...]:
        """Each element's curve on the R, G, B paths, ``(..., 3, n)`` (1 off its paths).

        Parameters
        ----------
        values : dict of str to (...) array_like, optional
            Parameter values by ``'element.param'``, overriding the design's;
            all batch shapes must broadcast together.
        """
        p = self._values(values)
        out = []
        n = self.wavelengths.size
        for e in self.design.chain:
            # each element's curve is kept for its last parameter values: a slider or a fit
            # step that moves one element recomputes only that one
            key = tuple((k, p[f"{e.name}.{k}"].shape, p[f"{e.name}.{k}"].tobytes()) for k, _ in e.params)
            hit = self._memo.get(e.name)
            if hit is not None and hit[0] == key:
                out.append(hit[1])
                continue
            c = np.asarray(self._curve(e, p))
            if e.type == "dichroic-splitter":
                full = c
            elif e.type in ("measured", "sensor-qe"):
                # rows: one curve for all the element's paths, or one per path (R, G, B order)
                on = {ch: c[j if c.shape[0] > 1 else 0] for j, ch in enumerate(e.paths)}
                full = np.stack([on.get(ch, np.ones(n)) for ch in CHANNELS])
            else:
                mask = np.array([ch in e.paths for ch in CHANNELS])[:, None]
                full = np.where(mask, c[..., None, :], 1.0)
            full = np.asarray(full)
            full.setflags(write=False)
            curve = ElementCurve(e.name, e.type, e.paths, full)
            self._memo[e.name] = (key, curve)
            out.append(curve)
        return tuple(out)

    def sensitivities(self, values=None) -> np.ndarray:
        """The R, G, B channel sensitivities, ``(..., 3, n)``: the product along each path."""
        total = 1.0
        for c in self.element_curves(values):
            total = total * c.values
        return np.broadcast_to(total, np.shape(total)[:-2] + (3, self.wavelengths.size)).copy()

    def channel_sensitivities(self, values=None) -> Spectra:
        """The sensitivities as Spectra (kind sensitivity, names R, G, B), for one set of values."""
        s = self.sensitivities(values)
        if s.ndim != 2:
            raise WorkbenchError("channel_sensitivities takes one set of values; use sensitivities() for a batch")
        return Spectra(self.wavelengths, s, CHANNELS, kind="sensitivity", units=self.units,
                       notes=self.notes + (f"product along each path of the chain of {self.design.name!r}",),
                       source=self.design.source)
