"""The design schema: the camera's optical chain, its targets and how to judge it.

A design is a TOML file (``schema = 1``, documented in docs/design-file.md)
read into the frozen dataclasses of this module. It holds the wavelength
grid, the observer, the target, the optical chain with each numeric
parameter's value, bounds, ``free`` flag and tolerance, the sample sets, the
illuminants and the fit objective. Files it names are relative to the design
file.

Reading and validating a file (every problem at once, in one
:class:`DesignError`) and writing it atomically live in
:mod:`workbench.fileio.design_toml`; evaluating the chain for any parameter
values in :mod:`workbench.optics.chain` (:meth:`Design.model`). What each
element ``type`` holds is declared by the registry of element kinds,
:mod:`workbench.optics.kinds`.

A design from :func:`~workbench.fileio.design_toml.load_design` is fully
resolved: every file it names has been read once, and its curves sit in the
design as arrays with their notes (``Element.data`` on the design grid,
``IlluminantSpec.spd``, ``SampleSetSpec.spd``, ``Target.emitters`` as read,
put on the grid when used; none of these is compared by ``==``). An entry whose file could not be used
carries the error (``error``), raised with its message when the entry is
used — an illuminant the computation never asks for does not stop the rest.
Nothing here reads a file.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from workbench.errors import RangeCoverageError, WorkbenchError
from workbench.model.spectra import Spectra, coarsening_method, grid as make_grid

if TYPE_CHECKING:  # names for annotations only: the chain sits above the schema
    from workbench.optics.chain import ChainModel, ElementCurve

__all__ = [
    "SCHEMA",
    "CHANNELS",
    "DesignError",
    "Tolerance",
    "Param",
    "Element",
    "Grid",
    "Target",
    "SampleSetSpec",
    "IlluminantSpec",
    "Fit",
    "NoiseModel",
    "FittedMatrix",
    "FieldPosition",
    "ToleranceSpec",
    "Design",
    "uncovered",
]

SCHEMA = 1
CHANNELS = ("R", "G", "B")
OBJECTIVES = ("vora", "mean-delta-e00", "luther-residual")
MATRIX_METHODS = ("least-squares", "white-preserving", "delta-e00")
MATRIX_SCOPES = ("shared", "per-illuminant")
GLOBAL_STARTS = ("none", "multi-start", "differential-evolution")
ACROSS_ILLUMINANTS = ("weighted-mean", "worst")
TARGET_KINDS = ("observer", "primaries", "chromaticities", "emitters")
TOLERANCE_DISTRIBUTIONS = ("normal", "uniform")
#: How a tabulated curve may be extended beyond its measured range.
EXTRAPOLATIONS = ("none", "constant", "zero")

def uncovered(s: Spectra, wavelengths, what: str) -> str:
    """The message for measured data that do not cover the design grid, naming the key that extends them."""
    wl = np.asarray(wavelengths)
    return (f"data cover {s.wavelengths[0]:g}-{s.wavelengths[-1]:g} nm but the design grid is "
            f"{wl[0]:g}-{wl[-1]:g} nm; set extrapolation = \"constant\" on this {what} to extend it "
            "(CIE 167)")


#: Said when a design built in code (not by the loader) is asked for data only loading reads.
_NOT_RESOLVED = ("{what} has not been read: designs are read with workbench.fileio.design_toml.load_design "
                 "(or design_from_dict), which reads every file they name")


# --------------------------------------------------------------------------
# Errors
# --------------------------------------------------------------------------


class DesignError(WorkbenchError):
    """Every problem found in one design file.

    ``problems`` is a tuple of ``(key_path, message)``; ``str()`` is the
    summary line followed by one ``  key.path: message`` line per problem.
    """

    def __init__(self, problems, path=None):
        self.problems = tuple(problems)
        self.path = None if path is None else str(path)
        n = len(self.problems)
        head = f"{n} problem{'s' if n != 1 else ''} in the design file"
        if self.path:
            head = f"{self.path}: {head}"
        keys = [k for k, _ in self.problems[:3]]
        if keys:
            head += f" ({', '.join(keys)}{', ...' if n > 3 else ''})"
        lines = [head] + [f"  {k}: {m}" for k, m in self.problems]
        super().__init__("\n".join(lines))


# --------------------------------------------------------------------------
# The data
# --------------------------------------------------------------------------

def _design_files():
    """The design-file module :mod:`workbench.fileio.design_toml`."""
    # Late: the file layer sits above the schema and imports it (a cycle at import time otherwise).
    from workbench.fileio import design_toml

    return design_toml


def _package_tables():
    """The package's CIE and sample tables: :mod:`workbench.colorimetry` (its ``cie`` and ``samples``)."""
    # Late: the package's tables, not files of the design; colorimetry sits above the schema.
    import workbench.colorimetry.samples  # loads workbench.colorimetry.cie too

    return workbench.colorimetry


@dataclass(frozen=True)
class Tolerance:
    """Manufacturing tolerance of one parameter.

    ``width`` is the standard deviation (``'normal'``) or the half-width
    (``'uniform'``), in the parameter's unit.
    """

    distribution: str
    width: float


@dataclass(frozen=True)
class Param:
    """A numeric parameter: value, optional bounds, whether a fit may move it, tolerance."""

    value: float
    min: float | None = None
    max: float | None = None
    free: bool = False
    tolerance: Tolerance | None = None

    @property
    def plain(self) -> bool:
        """True when the parameter is just a number (saved as a bare number)."""
        return self.min is None and self.max is None and not self.free and self.tolerance is None


@dataclass(frozen=True)
class Element:
    """One element of the optical chain.

    ``params`` and ``options`` are tuples of ``(key, value)`` in schema
    order; ``paths`` the channels it sits on. ``data`` holds the tabulated
    curve(s) an element of a kind that reads a file was given, read at load
    and put on the design grid (``Spectra``, one row or one per path, with
    the notes of reading and resampling), or what its kind's ``load``
    returned; ``None`` for the others. ``error``: why its file could not be
    used (raised when the chain is built).
    """

    name: str
    type: str
    paths: tuple[str, ...]
    params: tuple[tuple[str, Param], ...]
    options: tuple[tuple[str, Any], ...]
    data: Any = field(default=None, compare=False, repr=False)
    error: Exception | None = field(default=None, compare=False, repr=False)

    def param(self, key: str) -> Param | None:
        return dict(self.params).get(key)

    def option(self, key: str, default=None):
        return dict(self.options).get(key, default)


@dataclass(frozen=True)
class Grid:
    """The wavelength grid, nm: ``start_nm`` to ``stop_nm`` inclusive in ``step_nm`` steps.

    ``resampling``: how finer measured curves are put on it, ``'interpolation'``
    (CIE 167 rules) or ``'band'`` (a triangular band-pass average over each
    step, :func:`workbench.model.spectra.band_matrix`).
    """

    start_nm: float
    stop_nm: float
    step_nm: float
    resampling: str = "interpolation"

    @property
    def wavelengths(self) -> np.ndarray:
        return make_grid(self.start_nm, self.stop_nm, self.step_nm)


@dataclass(frozen=True)
class Target:
    """What the camera should match (resolved by the primaries and fit code, not here).

    ``kind`` is ``'observer'`` (the colour-matching functions), ``'primaries'``
    (``name`` of a primaries set), ``'chromaticities'`` (``red``, ``green``,
    ``blue``, ``white`` as (x, y)), or ``'emitters'`` (``file`` with
    ``columns`` for R, G, B; optional ``white``). ``emitters`` holds the
    emission spectra of that file (the three columns), read at load.
    """

    kind: str = "observer"
    name: str | None = None
    red: tuple[float, float] | None = None
    green: tuple[float, float] | None = None
    blue: tuple[float, float] | None = None
    white: tuple[float, float] | None = None
    file: str | None = None
    columns: tuple[str, ...] | None = None
    emitters: Spectra | None = field(default=None, compare=False, repr=False)
    error: Exception | None = field(default=None, compare=False, repr=False)


@dataclass(frozen=True)
class SampleSetSpec:
    """A named sample set: a built-in set (``source``) or a CSV of reflectances (``file``).

    ``extrapolation`` (``none``/``constant``) extends it past its table;
    ``spd`` holds a CSV set's reflectances as read at load (put on the grid when used).
    """

    name: str
    source: str
    file: str | None = None
    extrapolation: str = "none"
    spd: Spectra | None = field(default=None, compare=False, repr=False)
    error: Exception | None = field(default=None, compare=False, repr=False)


@dataclass(frozen=True)
class IlluminantSpec:
    """A named illuminant: a CIE name (``cie``) or a CSV file (``file``, ``column``).

    ``spd`` holds a CSV SPD as read at load (its column chosen; put on the
    grid when used).
    """

    name: str
    cie: str | None = None
    file: str | None = None
    column: str | None = None
    extrapolation: str = "none"
    spd: Spectra | None = field(default=None, compare=False, repr=False)
    error: Exception | None = field(default=None, compare=False, repr=False)


@dataclass(frozen=True)
class Fit:
    """How to fit and judge the design: objective, illuminants, matrix rule, weights, search.

    ``illuminants`` are the ``[[illuminants]]`` the ΔE00 statistics and the
    colorimetric objective use (empty: all of them). ``matrix`` and
    ``matrix_scope`` choose the colour-correction matrix (see
    :mod:`workbench.analysis.camera`). ``noise_weight`` weighs the matrix's row
    norms against the objective; ``global_start`` with ``starts`` and
    ``seed`` an optional global search before the local fit.
    ``infrared_cutoff_nm``, ``infrared_weight`` and ``max_infrared_share``
    report, weight or cap each channel's signal from the near infrared
    (:mod:`workbench.analysis.near_infrared`). ``illuminant_weights`` and
    ``across_illuminants`` ('weighted-mean' or 'worst') combine the
    illuminants in the ``mean-delta-e00`` objective (:mod:`workbench.analysis.fit`).
    ``coating_smoothness`` weighs the ripple penalty (second differences of
    the chief ray's R_s and R_p on a 2 nm grid, as ``workbench recipe``'s)
    of every ``coating`` element with a free ``layer_<i>_nm``; 0: none.
    """

    objective: str = "vora"
    recording_illuminant: str | None = None
    viewing_illuminant: str | None = None
    weights: tuple[tuple[str, float], ...] = ()
    illuminants: tuple[str, ...] = ()
    matrix: str = "least-squares"
    matrix_scope: str = "shared"
    noise_weight: float = 0.0
    global_start: str = "none"
    starts: int = 8
    seed: int = 0
    max_evaluations: int = 3000
    infrared_cutoff_nm: float = 700.0
    infrared_weight: float = 0.0
    max_infrared_share: float | None = None
    illuminant_weights: tuple[tuple[str, float], ...] = ()
    across_illuminants: str = "weighted-mean"
    coating_smoothness: float = 1.0


@dataclass(frozen=True)
class NoiseModel:
    """Sensor noise for the noise measures: shot noise from the full well plus read noise.

    ``exposure`` is the fraction of the full well the perfect white reaches
    in the channel that collects most of it; ``grey`` the reflectance of the
    patch whose output noise is reported. With ``scene_lux`` (and
    ``f_number``, ``exposure_s``, ``pixel_pitch_um``) the grey's electrons
    come instead from the signal budget of the camera equation
    (:mod:`workbench.analysis.signal_budget`) under each illuminant;
    ``lens_transmittance`` for a lens not in the chain, ``qe_percent`` the
    sensor's peak quantum efficiency when its curve is relative.
    """

    full_well_e: float = 20000.0
    read_noise_e: float = 8.0
    exposure: float = 0.8
    grey: float = 0.18
    scene_lux: float | None = None
    f_number: float | None = None
    exposure_s: float | None = None
    pixel_pitch_um: float | None = None
    lens_transmittance: float = 1.0
    qe_percent: float | None = None


@dataclass(frozen=True)
class FittedMatrix:
    """A colour-correction matrix stored with the design (written by ``workbench fit``).

    ``values`` (3×3 rows) for a shared matrix; ``per_illuminant`` holds
    ``(name, 3×3)`` for one matrix per illuminant.
    """

    method: str
    scope: str
    values: tuple[tuple[float, float, float], ...] | None = None
    per_illuminant: tuple[tuple[str, tuple[tuple[float, float, float], ...]], ...] = ()


@dataclass(frozen=True)
class FieldPosition:
    """A position in the image where the chief ray meets the splitter at a different angle.

    ``aoi_offset_deg`` is the change of angle in the prism glass; or
    ``field_angle_deg`` gives the chief ray's angle in air at the entrance
    face, turned into the glass by Snell's law (``aoi_offset_deg`` then
    holds the angle in glass it gives).
    """

    name: str
    aoi_offset_deg: float
    field_angle_deg: float | None = None


@dataclass(frozen=True)
class ToleranceSpec:
    """The specification a unit must meet and the field positions to check (``[tolerance]``)."""

    max_mean_delta_E00: float = 1.5
    min_vora: float = 0.95
    field: tuple[FieldPosition, ...] = ()


@dataclass(frozen=True)
class Design:
    """A camera design as read from a design file (see docs/design-file.md).

    Equality compares the design's data; ``source`` and ``base_dir`` (where
    it was read from, against which its file names resolve) are not
    compared.
    """

    name: str
    grid: Grid
    chain: tuple[Element, ...]
    observer: str = "2"
    description: str = ""
    target: Target = field(default_factory=Target)
    samples: tuple[SampleSetSpec, ...] = ()
    illuminants: tuple[IlluminantSpec, ...] = ()
    fit: Fit = field(default_factory=Fit)
    noise: NoiseModel = field(default_factory=NoiseModel)
    matrix: FittedMatrix | None = None
    tolerance: ToleranceSpec = field(default_factory=ToleranceSpec)
    schema: int = SCHEMA
    base_dir: str = field(default=".", compare=False)
    source: str | None = field(default=None, compare=False)

    # -- files ---------------------------------------------------------------
    @classmethod
    def load(cls, path) -> "Design":
        """Read and validate a design file; see :func:`workbench.fileio.design_toml.load_design`."""
        return _design_files().load_design(path)

    def save(self, path) -> None:
        """Write the design atomically; see :func:`workbench.fileio.design_toml.save_design`."""
        _design_files().save_design(self, path)

    def resolve(self, name: str) -> Path:
        """A file name of the design as a path (relative names against ``base_dir``)."""
        p = Path(name)
        return p if p.is_absolute() else Path(self.base_dir) / p

    def to_dict(self) -> dict:
        """The design as the plain TOML data :func:`workbench.fileio.design_toml.save_design` writes."""
        return _design_files().design_to_dict(self)

    # -- parameters ------------------------------------------------------------
    def parameters(self) -> dict[str, Param]:
        """Every numeric parameter by ``'element.param'`` key, in chain order."""
        return {f"{e.name}.{k}": p for e in self.chain for k, p in e.params}

    def free_parameters(self) -> dict[str, Param]:
        """The parameters a fit may move (``free = true``), by ``'element.param'``."""
        return {k: p for k, p in self.parameters().items() if p.free}

    def with_values(self, values: dict[str, float]) -> "Design":
        """A new design with the given parameter values (bounds checked); this one is unchanged."""
        known = self.parameters()
        problems = []
        for k, v in values.items():
            if k not in known:
                problems.append((k, f"expected one of the design's parameters ({', '.join(known)})"))
                continue
            p = known[k]
            v = float(v)
            if (p.min is not None and v < p.min) or (p.max is not None and v > p.max) or not math.isfinite(v):
                problems.append((k, f"expected a value in [{p.min}, {p.max}] (got {v!r})"))
        if problems:
            raise DesignError(problems)
        chain = []
        for e in self.chain:
            params = tuple(
                (k, replace(p, value=float(values[f"{e.name}.{k}"])) if f"{e.name}.{k}" in values else p)
                for k, p in e.params
            )
            chain.append(replace(e, params=params))
        return replace(self, chain=tuple(chain))

    # -- illuminants and samples -------------------------------------------------
    def illuminant_values(self, name: str | None) -> tuple[str, np.ndarray, tuple[str, ...]]:
        """An ``[[illuminants]]`` entry on the design grid: ``(label, values (n,), notes)``.

        ``None`` is the equal-energy spectrum (ones). A CSV SPD (read when
        the design was loaded) is put on the grid by the CIE 167 rules (or
        band-averaged, ``[grid] resampling``), extrapolated only when its
        ``extrapolation`` key says so; the notes say so.
        """
        wl = self.grid.wavelengths
        if name is None:
            return "equal energy (E)", np.ones(wl.size), ("equal-energy spectrum",)
        index = {i.name: k for k, i in enumerate(self.illuminants)}.get(name)
        if index is None:
            raise WorkbenchError(
                f"no illuminant named {name!r} in the design (have "
                f"{', '.join(i.name for i in self.illuminants) or 'none'})"
            )
        spec = self.illuminants[index]
        where = f"illuminants[{index}] {name!r}"
        if spec.cie is not None:
            try:
                label, tab = _package_tables().cie.illuminant_on(wl, spec.cie)
            except WorkbenchError as e:
                raise WorkbenchError(f"{where}: {e}") from None
            return label, np.asarray(tab.values), (tab.note,)
        if spec.error is not None:
            raise spec.error.with_traceback(None)
        if spec.spd is None:
            raise WorkbenchError(_NOT_RESOLVED.format(what=f"illuminant {name!r}"))
        s = spec.spd
        if spec.extrapolation == "none" and not s.covers(wl[0], wl[-1]):
            raise WorkbenchError(f"{where} ({spec.file}): " + uncovered(s, wl, "entry"))
        s = s.resample(wl, extrapolation=spec.extrapolation,
                       method=coarsening_method(s.wavelengths, wl, self.grid.resampling))
        return f"{name} ({spec.file})", s.flat()[0], s.notes

    def sample_set(self, name: str) -> Spectra:
        """A ``[[samples]]`` entry on the design grid (reflectance 0-1, (count, n))."""
        index = {s.name: k for k, s in enumerate(self.samples)}.get(name)
        if index is None:
            raise WorkbenchError(
                f"no sample set named {name!r} in the design (have "
                f"{', '.join(s.name for s in self.samples) or 'none'})"
            )
        spec = self.samples[index]
        if spec.error is not None:
            raise spec.error.with_traceback(None)
        wl = self.grid.wavelengths
        try:
            if spec.source == "csv":
                if spec.spd is None:
                    raise WorkbenchError(_NOT_RESOLVED.format(what=f"sample set {name!r}"))
                return spec.spd.resample(wl, extrapolation=spec.extrapolation)
            return _package_tables().samples.open_sample_set(spec.source, wl, extrapolation=spec.extrapolation)
        except RangeCoverageError as e:
            what = spec.file or spec.source
            text = str(e).split(" nm but ")[0]
            raise WorkbenchError(
                f"samples[{index}] {name!r} ({what}): {text} nm but the design grid is {wl[0]:g}-{wl[-1]:g} "
                "nm; set extrapolation = \"constant\" on this entry to extend it (CIE 167)") from None

    # -- evaluation --------------------------------------------------------------
    def model(self) -> "ChainModel":
        """Read the measured curves and return the evaluator of the chain."""
        from workbench.optics.chain import ChainModel  # the chain sits above the schema

        return ChainModel(self)

    def channel_sensitivities(self, values=None) -> Spectra:
        """The three channel sensitivities R, G, B as Spectra (kind sensitivity), (3, n)."""
        return self.model().channel_sensitivities(values)

    def element_curves(self, values=None) -> tuple["ElementCurve", ...]:
        """Each element's curve on each channel, for plotting; see :meth:`ChainModel.element_curves`."""
        return self.model().element_curves(values)
