"""The optical chain of a design, evaluated for any (batched) parameter values.

:class:`ChainModel` evaluates each element's curve — by the curve function
of its kind in :data:`workbench.optics.kinds.ELEMENT_KINDS` — and the product
along each channel's path with plain numpy, from a resolved design (its
tabulated curves were read at load; nothing here reads a file).
:class:`ElementCurve` is one element's curve per channel.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np

from workbench.errors import WorkbenchError
from workbench.model.design import CHANNELS, Design, Element
from workbench.model.spectra import Spectra
from workbench.optics.kinds import CurveInput, ElementKind, element_kind

__all__ = ["ElementCurve", "ChainModel", "CoarseGridWarning", "check_edge_sampling"]

#: Grid points wanted across the 10-90 % width of the sharpest edge.
EDGE_POINTS = 2.0


class CoarseGridWarning(UserWarning):
    """The design grid is too coarse for the sharpest parametric edge of the chain."""


def check_edge_sampling(design: Design) -> str | None:
    """The warning text when the grid step leaves fewer than EDGE_POINTS points across the narrowest edge.

    Each element's width parameters (``width_nm``, ``blue_green_width_nm``,
    ``green_red_width_nm``) count at their value (a fit that narrows an edge
    below twice the step is not warned about).
    """
    step = float(design.grid.step_nm)
    narrowest = None
    for i, e in enumerate(design.chain):
        for k, p in e.params:
            if not k.endswith("width_nm"):
                continue
            w = float(p.value)
            if narrowest is None or w < narrowest[0]:
                narrowest = (w, f"chain[{i}] {e.name!r}.{k}")
    if narrowest is None or step * EDGE_POINTS <= narrowest[0] + 1e-9:
        return None
    w, where = narrowest
    return (f"grid.step_nm = {step:g} nm leaves fewer than {EDGE_POINTS:g} grid points across the narrowest edge, "
            f"{where} = {w:g} nm (10-90 %); use step_nm ≤ "
            f"{w / EDGE_POINTS:g} nm for edges this sharp")


@dataclass(frozen=True, eq=False)
class ElementCurve:
    """One element's curve per channel: ``values`` (..., 3, n), 1 on channels it is not on."""

    name: str
    type: str
    paths: tuple[str, ...]
    values: np.ndarray


class ChainModel:
    """The design's optical chain, ready to evaluate for any parameter values.

    The design's tabulated curves were read and put on the design grid when
    it was loaded; the evaluation is plain numpy. ``notes`` say how each
    curve was read and resampled; ``units`` are those of the sensor's
    curve (``'1'`` without one).

    Parameters
    ----------
    design : Design
    """

    def __init__(self, design: Design):
        self.design = design
        self.wavelengths = design.grid.wavelengths
        self._kinds: dict[str, ElementKind] = {}
        notes: list[str] = []
        self.units = "1"
        for i, e in enumerate(design.chain):
            if e.error is not None:
                raise e.error.with_traceback(None)
            kind = element_kind(e.type)
            self._kinds[e.name] = kind
            if kind.reads is None and kind.load is None:
                continue
            if e.data is None:
                raise WorkbenchError(f"chain[{i}] ({e.name}): its files have not been read: designs are "
                                     "read with workbench.fileio.design_toml.load_design, which reads every "
                                     "file they name")
            if kind.reads == "sensitivity":
                self.units = e.data.units
            notes.extend(getattr(e.data, "notes", ()))
        coarse = check_edge_sampling(design)
        if coarse is not None:
            warnings.warn(coarse, CoarseGridWarning, stacklevel=2)
        self.notes = tuple(notes)
        self._memo: dict[str, tuple] = {}

    def parameter_names(self) -> tuple[str, ...]:
        return tuple(self.design.parameters())

    def _values(self, values) -> dict[str, np.ndarray]:
        base = getattr(self, "_base", None)
        if base is None or base[0] is not self.design:
            # the design's own values, once per design (an evaluator's copy may swap its design)
            base = (self.design, {k: np.array(p.value) for k, p in self.design.parameters().items()})
            for a in base[1].values():
                a.setflags(write=False)
            self._base = base
        current = dict(base[1])
        for k, v in (values or {}).items():
            if k not in current:
                raise WorkbenchError(
                    f"unknown parameter {k!r}; expected one of {', '.join(current)}"
                )
            current[k] = np.asarray(v, dtype=float)
        return current

    def _curve(self, e: Element, p) -> np.ndarray:
        kind = self._kinds[e.name]
        tabulated = kind.reads is not None and e.data is not None
        x = CurveInput(self.wavelengths, {k: p[f"{e.name}.{k}"] for k, _ in e.params}, dict(e.options),
                       e.paths, e.data.values if tabulated else e.data,
                       tuple(e.data.names) if tabulated else ())
        return kind.curve(x)

    def _curve_distinct(self, e: Element, p) -> np.ndarray:
        """The element's curve for a batch, the rows that repeat the first row's values computed once.

        A fit's batch of forward differences moves one parameter per row, so
        an element sees the base values (row 0) in every row but the few
        that move its own parameters; a tolerance batch may not move an
        element at all. For a 1-D batch of 3 or more, the curve is computed
        for row 0 and the rows unlike it and spread back (each row's curve
        is the one the kind computes for it alone); anything else goes to
        the kind as it is.
        """
        names = [f"{e.name}.{k}" for k, _ in e.params]
        batched = [n for n in names if p[n].ndim == 1]
        if not batched or any(p[n].ndim > 1 for n in names):
            return np.asarray(self._curve(e, p))
        B = p[batched[0]].shape[0]
        if B < 3 or any(p[n].shape[0] != B for n in batched):
            return np.asarray(self._curve(e, p))
        moved = p[batched[0]] != p[batched[0]][0]
        for n in batched[1:]:
            moved |= p[n] != p[n][0]
        keep = np.flatnonzero(moved)                              # the rows unlike the first
        if len(keep) + 1 == B:
            return np.asarray(self._curve(e, p))
        keep = np.concatenate([[0], keep])
        inverse = np.zeros(B, dtype=np.intp)
        inverse[keep[1:]] = np.arange(1, len(keep))
        q = dict(p)
        for n in batched:
            q[n] = p[n][keep]
        c = np.asarray(self._curve(e, q))
        if c.ndim != (3 if self._kinds[e.name].per_path else 2) or c.shape[0] != len(keep):
            return np.asarray(self._curve(e, p))    # a curve that does not follow its parameters' batch
        return c[inverse]

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
        for e in self.design.chain:
            # each element's curve is kept for its last parameter values: a slider or a fit
            # step that moves one element recomputes only that one
            key = tuple((k, p[f"{e.name}.{k}"].shape, p[f"{e.name}.{k}"].tobytes()) for k, _ in e.params)
            hit = self._memo.get(e.name)
            if hit is not None and hit[0] == key:
                out.append(hit[1])
                continue
            c = self._curve_distinct(e, p)
            if self._kinds[e.name].per_path:
                full = c
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
