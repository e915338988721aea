"""The design file: the camera's optical chain, its targets and how to judge it.

A design is a TOML file (``schema = 1``, documented in docs/design-file.md)
read into frozen dataclasses. It holds the wavelength grid, the observer,
the target, the optical chain with each numeric parameter's value, bounds,
``free`` flag and tolerance, the sample sets, the illuminants and the fit
objective. Files it names are relative to the design file.

Loading validates everything before anything is computed and reports every
problem at once in one :class:`DesignError`, whose first line is a summary
(``<file>: 3 problems in the design file``) and whose next lines are
``key.path: expected ... (got ...)``, one per problem. Unknown keys and
sections are errors. Saving writes through a temporary file and
``os.replace``; load → save → load gives an equal design. No pickle, no
eval: the file is data.

:meth:`Design.model` reads the measured curves once and returns a
:class:`ChainModel`, which evaluates the channel sensitivities for any
(batched) parameter values; :meth:`Design.channel_sensitivities` is the
one-shot form.
"""

from __future__ import annotations

import math
import os
import re
import tomllib
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import numpy as np

from workbench.optics import elements as optics
from workbench.fileio.atomic import write_text_atomically
from workbench.errors import InputFileError, WorkbenchError
from workbench.model.spectra import Spectra, grid as make_grid

__all__ = [
    "SCHEMA",
    "CHANNELS",
    "ELEMENT_TYPES",
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
    "ElementCurve",
    "ChainModel",
    "load_design",
    "design_from_bytes",
    "save_design",
]

SCHEMA = 1
CHANNELS = ("R", "G", "B")
OBJECTIVES = ("vora", "mean-delta-e00", "luther-residual")
MATRIX_METHODS = ("least-squares", "white-preserving", "delta-e00")
MATRIX_SCOPES = ("shared", "per-illuminant")
GLOBAL_STARTS = ("none", "multi-start", "differential-evolution")
TARGET_KINDS = ("observer", "primaries", "chromaticities", "emitters")
TOLERANCE_DISTRIBUTIONS = ("normal", "uniform")
EXTRAPOLATIONS = ("none", "constant", "zero")

_INF = math.inf


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
    order; ``paths`` the channels it sits on.
    """

    name: str
    type: str
    paths: tuple[str, ...]
    params: tuple[tuple[str, Param], ...]
    options: tuple[tuple[str, Any], ...]

    def param(self, key: str) -> Param | None:
        return dict(self.params).get(key)

    def option(self, key: str, default=None):
        return dict(self.options).get(key, default)


@dataclass(frozen=True)
class Grid:
    """The wavelength grid, nm: ``start_nm`` to ``stop_nm`` inclusive in ``step_nm`` steps."""

    start_nm: float
    stop_nm: float
    step_nm: float

    @property
    def wavelengths(self) -> np.ndarray:
        return make_grid(self.start_nm, self.stop_nm, self.step_nm)


@dataclass(frozen=True)
class Target:
    """What the camera should match (resolved by the primaries and fit code, not here).

    ``kind`` is ``'observer'`` (the colour-matching functions), ``'primaries'``
    (``name`` of a primaries set), ``'chromaticities'`` (``red``, ``green``,
    ``blue``, ``white`` as (x, y)), or ``'emitters'`` (``file`` with
    ``columns`` for R, G, B; optional ``white``).
    """

    kind: str = "observer"
    name: str | None = None
    red: tuple[float, float] | None = None
    green: tuple[float, float] | None = None
    blue: tuple[float, float] | None = None
    white: tuple[float, float] | None = None
    file: str | None = None
    columns: tuple[str, ...] | None = None


@dataclass(frozen=True)
class SampleSetSpec:
    name: str
    source: str
    file: str | None = None


@dataclass(frozen=True)
class IlluminantSpec:
    """A named illuminant: a CIE name (``cie``) or a CSV file (``file``, ``column``)."""

    name: str
    cie: str | None = None
    file: str | None = None
    column: str | None = None


@dataclass(frozen=True)
class Fit:
    """How to fit and judge the design: objective, illuminants, matrix rule, weights, search.

    ``illuminants`` are the ``[[illuminants]]`` the ΔE00 statistics and the
    colorimetric objective use (empty: all of them). ``matrix`` and
    ``matrix_scope`` choose the colour-correction matrix (see
    :mod:`workbench.analysis.camera`). ``noise_weight`` weighs the matrix's row
    norms against the objective; ``global_start`` with ``starts`` and
    ``seed`` an optional global search before the local fit.
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


@dataclass(frozen=True)
class NoiseModel:
    """Sensor noise for the noise measures: shot noise from the full well plus read noise.

    ``exposure`` is the fraction of the full well the perfect white reaches
    in the channel that collects most of it; ``grey`` the reflectance of the
    patch whose output noise is reported.
    """

    full_well_e: float = 20000.0
    read_noise_e: float = 8.0
    exposure: float = 0.8
    grey: float = 0.18


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
    """A position in the image where the chief ray meets the splitter at a different angle."""

    name: str
    aoi_offset_deg: float


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
        """Read and validate a design file; see :func:`load_design`."""
        return load_design(path)

    def save(self, path) -> None:
        """Write the design atomically; see :func:`save_design`."""
        save_design(self, path)

    def resolve(self, name: str) -> Path:
        """A file name of the design as a path (relative names against ``base_dir``)."""
        p = Path(name)
        return p if p.is_absolute() else Path(self.base_dir) / p

    def to_dict(self) -> dict:
        """The design as the plain TOML data :func:`save_design` writes."""
        return _to_dict(self)

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

        ``None`` is the equal-energy spectrum (ones). A CSV SPD is resampled
        onto the grid by the CIE 167 rules and may not be extrapolated; the
        notes say so.
        """
        from workbench.colorimetry.cie import illuminant_on
        from workbench.fileio.spectra_csv import read_spectra_csv

        wl = self.grid.wavelengths
        if name is None:
            return "equal energy (E)", np.ones(wl.size), ("equal-energy spectrum",)
        spec = {i.name: i for i in self.illuminants}.get(name)
        if spec is None:
            raise WorkbenchError(
                f"no illuminant named {name!r} in the design (have "
                f"{', '.join(i.name for i in self.illuminants) or 'none'})"
            )
        if spec.cie is not None:
            label, tab = illuminant_on(wl, spec.cie)
            return label, np.asarray(tab.values), (tab.note,)
        s = read_spectra_csv(self.resolve(spec.file), kind="emission")
        if spec.column is not None:
            s = s.select([spec.column])
        elif len(s) != 1:
            raise WorkbenchError(
                f"illuminant {name!r}: expected a column, the file {spec.file} holds {len(s)} spectra"
            )
        s = s.resample(wl)
        return f"{name} ({spec.file})", s.flat()[0], s.notes

    def sample_set(self, name: str) -> Spectra:
        """A ``[[samples]]`` entry on the design grid (reflectance 0-1, (count, n))."""
        from workbench.colorimetry.samples import open_sample_set

        spec = {s.name: s for s in self.samples}.get(name)
        if spec is None:
            raise WorkbenchError(
                f"no sample set named {name!r} in the design (have "
                f"{', '.join(s.name for s in self.samples) or 'none'})"
            )
        file = None if spec.file is None else self.resolve(spec.file)
        return open_sample_set(spec.source, self.grid.wavelengths, file=file)

    # -- evaluation --------------------------------------------------------------
    def model(self) -> "ChainModel":
        """Read the measured curves and return the evaluator of the chain."""
        return ChainModel(self)

    def channel_sensitivities(self, values=None) -> Spectra:
        """The three channel sensitivities R, G, B as Spectra (kind sensitivity), (3, n)."""
        return self.model().channel_sensitivities(values)

    def element_curves(self, values=None) -> tuple["ElementCurve", ...]:
        """Each element's curve on each channel, for plotting; see :meth:`ChainModel.element_curves`."""
        return self.model().element_curves(values)


# --------------------------------------------------------------------------
# The schema of the chain
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class _P:
    """Specification of one numeric parameter: domain, unit, default."""

    lo: float
    hi: float
    lo_open: bool
    hi_open: bool
    unit: str
    default: float | None = None  # None: required
    optional: bool = False  # may be absent (no default)

    def contains(self, v: float) -> bool:
        above = v > self.lo if self.lo_open else v >= self.lo
        below = v < self.hi if self.hi_open else v <= self.hi
        return above and below

    def describe(self) -> str:
        lo = "(" if self.lo_open else "["
        hi = ")" if self.hi_open else "]"
        fmt = lambda x: "inf" if x == _INF else "-inf" if x == -_INF else f"{x:g}"  # noqa: E731
        unit = f" {self.unit}" if self.unit else ""
        return f"a number in {lo}{fmt(self.lo)}, {fmt(self.hi)}{hi}{unit}"


_WL = _P(100.0, 3000.0, False, False, "nm")
_WIDTH = _P(0.0, 1000.0, True, False, "nm")
_LEVEL1 = _P(0.0, 1.0, False, False, "", 1.0)
_LEVEL0 = _P(0.0, 1.0, False, False, "", 0.0)
_AOI = _P(0.0, 80.0, False, False, "deg", 0.0)

# type -> (params, options). Options: key -> (kind, required, default)
ELEMENT_TYPES: dict[str, tuple[dict[str, _P], dict[str, tuple]]] = {
    "measured": ({}, {
        "file": ("file", True, None), "column": ("str", False, None),
        "extrapolation": (EXTRAPOLATIONS, False, "none"),
    }),
    "glass": ({
        "thickness_mm": _P(0.0, 1000.0, True, False, "mm"),
        "refractive_index": _P(1.0, 4.0, False, False, "", 1.52),
    }, {
        "file": ("file", True, None), "column": ("str", False, None),
        "measured_thickness_mm": ("positive", True, None),
        "reflection": (optics.REFLECTION_MODELS, False, "approx"),
        "extrapolation": (EXTRAPOLATIONS, False, "none"),
    }),
    "long-pass": ({
        "center_nm": _WL, "width_nm": _WIDTH, "pass_level": _LEVEL1, "block_level": _LEVEL0,
    }, {"shape": (optics.EDGE_SHAPES, False, "logistic")}),
    "short-pass": ({
        "center_nm": _WL, "width_nm": _WIDTH, "pass_level": _LEVEL1, "block_level": _LEVEL0,
    }, {"shape": (optics.EDGE_SHAPES, False, "logistic")}),
    "band-pass": ({
        "low_nm": _WL, "high_nm": _WL, "width_nm": _WIDTH, "pass_level": _LEVEL1,
        "block_level": _LEVEL0,
    }, {"shape": (optics.EDGE_SHAPES, False, "logistic")}),
    "neutral-density": ({"density": _P(0.0, 10.0, False, False, "")}, {}),
    "colour-correction": ({
        "mired_shift": _P(-1000.0, 1000.0, False, False, "mired"), "peak_level": _LEVEL1,
    }, {}),
    "dichroic-splitter": ({
        "blue_green_nm": _WL, "green_red_nm": _WL,
        "blue_green_width_nm": _WIDTH, "green_red_width_nm": _WIDTH,
        "blue_green_aoi_deg": _AOI, "green_red_aoi_deg": _AOI,
        "n_eff_s": _P(1.0, 5.0, True, False, "", 1.8),
        "n_eff_p": _P(1.0, 5.0, True, False, "", optional=True),
        "medium_index": _P(1.0, 4.0, False, False, "", 1.0),
        "f_number": _P(0.5, 1000.0, False, False, "", optional=True),
        "loss": _P(0.0, 1.0, False, True, "", 0.0),
    }, {
        "order": (optics.SPLITTER_ORDERS, False, "blue-first"),
        "shape": (optics.EDGE_SHAPES, False, "logistic"),
        "rings": ("count", False, 4), "azimuths": ("count", False, 8),
    }),
    "sensor-qe": ({}, {
        "file": ("file", True, None), "column": ("str", False, None),
        "columns": ("columns", False, None),
        "extrapolation": (EXTRAPOLATIONS, False, "none"),
    }),
}

_TOP_KEYS = ("schema", "name", "description", "observer", "grid", "target", "chain",
             "samples", "illuminants", "fit", "noise", "matrix", "tolerance")


# --------------------------------------------------------------------------
# Validation
# --------------------------------------------------------------------------


def _got(v) -> str:
    if isinstance(v, dict):
        return f"a table with keys {', '.join(map(str, v))}" if v else "an empty table"
    if isinstance(v, list):
        try:
            text = _toml_array(v)
        except Exception:  # noqa: BLE001 - arrays of tables, dates: just say what it is
            text = ""
        return text if text and len(text) <= 40 else "an array"
    if isinstance(v, bool):
        return "true" if v else "false"
    text = repr(v)
    return text if len(text) <= 40 else text[:37] + "..."


def _toml_array(v) -> str:
    """A TOML array of numbers and strings as written in the file, e.g. ``["R", "Y"]``."""
    parts = []
    for x in v:
        if isinstance(x, bool):
            parts.append("true" if x else "false")
        elif isinstance(x, (int, float)):
            parts.append(repr(x))
        elif isinstance(x, str):
            parts.append('"' + x.replace("\\", "\\\\").replace('"', '\\"') + '"')
        else:
            raise TypeError
    return "[" + ", ".join(parts) + "]"


def _number(v):
    """float(v) for a TOML integer or float that fits a finite float, else None."""
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        return None
    try:
        f = float(v)
    except OverflowError:
        return None
    return f if math.isfinite(f) else None


class _Checker:
    def __init__(self, base_dir: Path):
        self.problems: list[tuple[str, str]] = []
        self.base_dir = base_dir

    def bad(self, key: str, expected: str, got=None, *, show_got=True) -> None:
        msg = f"expected {expected}"
        if show_got:
            msg += f" (got {_got(got)})"
        self.problems.append((key, msg))

    def unknown(self, table: dict, allowed, key: str) -> None:
        for k in table:
            if k not in allowed:
                where = f"{key}.{k}" if key else str(k)
                self.problems.append(
                    (where, f"expected no such key (unknown; allowed: {', '.join(allowed)})")
                )

    def table(self, v, key: str):
        if not isinstance(v, dict):
            self.bad(key, "a table", v)
            return None
        return v

    def string(self, v, key: str, *, nonempty=True):
        if not isinstance(v, str) or (nonempty and not v.strip()):
            self.bad(key, "a non-empty string", v)
            return None
        return v

    def choice(self, v, choices, key: str):
        if not isinstance(v, str) or v not in choices:
            self.bad(key, f"one of {', '.join(choices)}", v)
            return None
        return v

    def file(self, v, key: str):
        if v is None:
            self.bad(key, "a file name (missing)", show_got=False)
            return None
        s = self.string(v, key)
        if s is None:
            return None
        p = Path(s)
        full = p if p.is_absolute() else self.base_dir / p
        if not full.is_file():
            self.bad(key, "an existing file (names are relative to the design file's folder)", v)
            return None
        return s

    def xy(self, v, key: str):
        if (not isinstance(v, list) or len(v) != 2
                or any(_number(c) is None for c in v)):
            self.bad(key, "a chromaticity [x, y] of two numbers", v)
            return None
        x, y = (_number(c) for c in v)
        if not (x > 0 and y > 0 and x + y <= 1):
            self.bad(key, "a chromaticity with x > 0, y > 0 and x + y <= 1", v)
            return None
        return (x, y)

    def param(self, v, spec: _P, key: str):
        if isinstance(v, dict):
            self.unknown(v, ("value", "min", "max", "free", "tolerance"), key)
            if "value" not in v:
                self.bad(f"{key}.value", f"{spec.describe()} (missing)", show_got=False)
                return None
            value = self._in_domain(v["value"], spec, f"{key}.value")
            lo = self._in_domain(v["min"], spec, f"{key}.min") if "min" in v else None
            hi = self._in_domain(v["max"], spec, f"{key}.max") if "max" in v else None
            free = v.get("free", False)
            if not isinstance(free, bool):
                self.bad(f"{key}.free", "true or false", free)
                free = False
            tol = self._tolerance(v["tolerance"], f"{key}.tolerance") if "tolerance" in v else None
            if lo is not None and hi is not None and not lo < hi:
                self.bad(f"{key}.max", f"a number greater than min = {lo:g}", hi)
                return None
            if free and ("min" not in v or "max" not in v):
                self.bad(key, "both min and max when free = true", show_got=False)
                return None
            if value is None:
                return None
            if (lo is not None and value < lo) or (hi is not None and value > hi):
                self.bad(f"{key}.value", f"a number within [min, max] = [{lo}, {hi}]", value)
                return None
            return Param(value, lo, hi, free, tol)
        value = self._in_domain(v, spec, key)
        return None if value is None else Param(value)

    def _in_domain(self, v, spec: _P, key: str):
        f = _number(v)
        if f is None or not spec.contains(f):
            self.bad(key, spec.describe(), v)
            return None
        return f

    def _tolerance(self, v, key: str):
        t = self.table(v, key)
        if t is None:
            return None
        self.unknown(t, ("distribution", "width"), key)
        dist = t.get("distribution", "normal")
        if self.choice(dist, TOLERANCE_DISTRIBUTIONS, f"{key}.distribution") is None:
            return None
        w = _number(t.get("width"))
        if w is None or not w > 0:
            self.bad(f"{key}.width", "a number > 0 (the standard deviation or half-width)",
                     t.get("width"))
            return None
        return Tolerance(dist, w)


def _check_grid(c: _Checker, v) -> Grid | None:
    t = c.table(v, "grid")
    if t is None:
        return None
    c.unknown(t, ("start_nm", "stop_nm", "step_nm"), "grid")
    vals = {}
    for k in ("start_nm", "stop_nm", "step_nm"):
        f = _number(t.get(k))
        if f is None or not (0 < f <= 3000):
            c.bad(f"grid.{k}", "a number in (0, 3000] nm" + ("" if k in t else " (missing)"),
                  t.get(k), show_got=k in t)
        else:
            vals[k] = f
    if len(vals) < 3:
        return None
    g = Grid(vals["start_nm"], vals["stop_nm"], vals["step_nm"])
    try:
        wl = g.wavelengths
    except WorkbenchError:
        c.bad("grid", "stop_nm - start_nm to be a positive whole number of step_nm steps",
              f"{g.start_nm:g}-{g.stop_nm:g} nm at {g.step_nm:g} nm", )
        return None
    if wl.size < 3 or wl.size > 10001:
        c.bad("grid", "3 to 10001 wavelengths", f"{wl.size}")
        return None
    return g


def _check_element(c: _Checker, v, i: int) -> Element | None:
    key = f"chain[{i}]"
    t = c.table(v, key)
    if t is None:
        return None
    name = c.string(t.get("name"), f"{key}.name")
    etype = t.get("type")
    if not isinstance(etype, str) or etype not in ELEMENT_TYPES:
        c.bad(f"{key}.type", f"one of {', '.join(ELEMENT_TYPES)}", etype)
        return None
    pspecs, ospecs = ELEMENT_TYPES[etype]
    allowed = ("name", "type") + (() if etype == "dichroic-splitter" else ("paths",)) + tuple(pspecs) + tuple(ospecs)
    c.unknown(t, allowed, key)
    ok = name is not None
    paths = CHANNELS
    if "paths" in t and etype != "dichroic-splitter":
        p = t["paths"]
        if (not isinstance(p, list) or not p or any(x not in CHANNELS for x in p)
                or len(set(p)) != len(p)):
            c.bad(f"{key}.paths", "a non-empty array of distinct channels from \"R\", \"G\", \"B\"", p)
            ok = False
        else:
            paths = tuple(ch for ch in CHANNELS if ch in p)
    params = []
    for k, spec in pspecs.items():
        if k not in t:
            if spec.optional:
                continue
            if spec.default is None:
                c.bad(f"{key}.{k}", f"{spec.describe()} (missing)", show_got=False)
                ok = False
                continue
            params.append((k, Param(float(spec.default))))
            continue
        p = c.param(t[k], spec, f"{key}.{k}")
        if p is None:
            ok = False
        else:
            params.append((k, p))
    options = []
    for k, (kind, required, default) in ospecs.items():
        if k not in t:
            if required:
                c.bad(f"{key}.{k}", {"file": "a file name", "positive": "a number > 0"}.get(kind, kind) + " (missing)",
                      show_got=False)
                ok = False
            elif default is not None:
                options.append((k, default))
            continue
        val = t[k]
        if kind == "file":
            val = c.file(val, f"{key}.{k}")
        elif kind == "str":
            val = c.string(val, f"{key}.{k}")
        elif kind == "positive":
            f = _number(val)
            if f is None or not f > 0:
                c.bad(f"{key}.{k}", "a number > 0", val)
                val = None
            else:
                val = f
        elif kind == "count":
            if isinstance(val, bool) or not isinstance(val, int) or not 1 <= val <= 64:
                c.bad(f"{key}.{k}", "an integer in 1-64", val)
                val = None
        elif kind == "columns":
            if (not isinstance(val, dict) or set(val) != set(paths)
                    or any(not isinstance(x, str) or not x for x in val.values())):
                c.bad(f"{key}.{k}", "a table naming the file's column for each channel "
                      f"({', '.join(paths)})", val)
                val = None
            else:
                val = tuple((ch, val[ch]) for ch in CHANNELS if ch in val)
        else:
            val = c.choice(val, kind, f"{key}.{k}")
        if val is None:
            ok = False
        else:
            options.append((k, val))
    if etype == "sensor-qe" and "column" in t and "columns" in t:
        c.bad(key, "either column (one curve for all channels) or columns (one per channel), not both",
              show_got=False)
        ok = False
    if etype == "band-pass" and ok:
        lo, hi = dict(params)["low_nm"].value, dict(params)["high_nm"].value
        if not lo < hi:
            c.bad(f"{key}.high_nm", f"a wavelength above low_nm = {lo:g} nm", hi)
            ok = False
    if etype == "dichroic-splitter" and ok:
        bg, gr = dict(params)["blue_green_nm"].value, dict(params)["green_red_nm"].value
        if not bg < gr:
            c.bad(f"{key}.green_red_nm", f"a wavelength above blue_green_nm = {bg:g} nm", gr)
            ok = False
    if not ok:
        return None
    return Element(name, etype, paths, tuple(params), tuple(options))


def _check_target(c: _Checker, v) -> Target | None:
    t = c.table(v, "target")
    if t is None:
        return None
    kind = c.choice(t.get("kind"), TARGET_KINDS, "target.kind")
    if kind is None:
        return None
    allowed = {
        "observer": ("kind",),
        "primaries": ("kind", "name"),
        "chromaticities": ("kind", "red", "green", "blue", "white"),
        "emitters": ("kind", "file", "columns", "white"),
    }[kind]
    c.unknown(t, allowed, "target")
    n0 = len(c.problems)
    out: dict[str, Any] = {"kind": kind}
    if kind == "primaries":
        out["name"] = c.string(t.get("name"), "target.name")
    elif kind == "chromaticities":
        for k in ("red", "green", "blue", "white"):
            out[k] = c.xy(t.get(k), f"target.{k}")
    elif kind == "emitters":
        out["file"] = c.file(t.get("file"), "target.file")
        cols = t.get("columns")
        if cols is not None:
            if (not isinstance(cols, list) or len(cols) != 3
                    or any(not isinstance(x, str) or not x for x in cols) or len(set(cols)) != 3):
                c.bad("target.columns", "an array of three distinct column names (R, G, B)", cols)
            else:
                out["columns"] = tuple(cols)
        if "white" in t:
            out["white"] = c.xy(t["white"], "target.white")
    return None if len(c.problems) > n0 else Target(**out)


def _check_named_list(c: _Checker, v, key: str):
    if not isinstance(v, list) or any(not isinstance(x, dict) for x in v):
        c.bad(key, "an array of tables ([[" + key + "]] sections)", v)
        return []
    return v


def _check_samples(c: _Checker, v):
    from workbench.colorimetry.samples import SAMPLE_SETS

    out = []
    for i, t in enumerate(_check_named_list(c, v, "samples")):
        key = f"samples[{i}]"
        c.unknown(t, ("name", "source", "file"), key)
        n0 = len(c.problems)
        name = c.string(t.get("name"), f"{key}.name")
        source = c.choice(t.get("source"), SAMPLE_SETS, f"{key}.source")
        file = None
        if source == "csv":
            file = c.file(t.get("file"), f"{key}.file")
        elif "file" in t and source is not None:
            c.bad(f"{key}.file", f"no file for the built-in set {source!r}", t["file"])
        if len(c.problems) == n0:
            out.append(SampleSetSpec(name, source, file))
    return out


def _check_illuminants(c: _Checker, v):
    from workbench.colorimetry.cie import _canonical_illuminant

    out = []
    for i, t in enumerate(_check_named_list(c, v, "illuminants")):
        key = f"illuminants[{i}]"
        c.unknown(t, ("name", "cie", "file", "column"), key)
        n0 = len(c.problems)
        name = c.string(t.get("name"), f"{key}.name")
        cie = file = column = None
        if ("cie" in t) == ("file" in t):
            c.bad(key, "exactly one of cie (a CIE illuminant name) or file (a CSV SPD)",
                  show_got=False)
        elif "cie" in t:
            cie = c.string(t["cie"], f"{key}.cie")
            if cie is not None:
                try:
                    _canonical_illuminant(cie)
                except WorkbenchError:
                    c.bad(f"{key}.cie", "a CIE illuminant name such as A, D50, D65, FL2, LED-B1", cie)
            if "column" in t:
                c.bad(f"{key}.column", "no column with cie (only with file)", t["column"])
        else:
            file = c.file(t["file"], f"{key}.file")
            if "column" in t:
                column = c.string(t["column"], f"{key}.column")
        if len(c.problems) == n0:
            out.append(IlluminantSpec(name, cie, file, column))
    return out


def _check_fit(c: _Checker, v, illuminant_names, sample_names) -> Fit | None:
    t = c.table(v, "fit")
    if t is None:
        return None
    c.unknown(t, ("objective", "recording_illuminant", "viewing_illuminant", "weights", "illuminants",
                  "matrix", "matrix_scope", "noise_weight", "global_start", "starts", "seed",
                  "max_evaluations"), "fit")
    n0 = len(c.problems)
    objective = c.choice(t.get("objective", "vora"), OBJECTIVES, "fit.objective")
    extra = {}
    for k, choices in (("matrix", MATRIX_METHODS), ("matrix_scope", MATRIX_SCOPES),
                       ("global_start", GLOBAL_STARTS)):
        if k in t:
            extra[k] = c.choice(t[k], choices, f"fit.{k}")
    if "noise_weight" in t:
        f = _number(t["noise_weight"])
        if f is None or f < 0:
            c.bad("fit.noise_weight", "a number >= 0", t["noise_weight"])
        extra["noise_weight"] = f
    for k, lo in (("starts", 1), ("seed", 0), ("max_evaluations", 10)):
        if k in t:
            x = t[k]
            if isinstance(x, bool) or not isinstance(x, int) or x < lo:
                c.bad(f"fit.{k}", f"a whole number >= {lo}", x)
            extra[k] = x
    if "illuminants" in t:
        v = t["illuminants"]
        if not isinstance(v, list) or not v or not all(isinstance(x, str) for x in v):
            c.bad("fit.illuminants", "a non-empty list of [[illuminants]] names", v)
        else:
            for x in v:
                if x not in illuminant_names:
                    c.bad("fit.illuminants", "names of the [[illuminants]] ("
                          + (", ".join(illuminant_names) or "none defined") + ")", x)
            extra["illuminants"] = tuple(v)
    ill = {}
    for k in ("recording_illuminant", "viewing_illuminant"):
        if k in t:
            ill[k] = c.string(t[k], f"fit.{k}")
            if ill[k] is not None and ill[k] not in illuminant_names:
                c.bad(f"fit.{k}", "the name of one of the [[illuminants]] ("
                      + (", ".join(illuminant_names) or "none defined") + ")", ill[k])
    weights = []
    if "weights" in t:
        w = c.table(t["weights"], "fit.weights")
        for k, x in (w or {}).items():
            f = _number(x)
            if k not in sample_names:
                c.bad(f"fit.weights.{k}", "the name of one of the [[samples]] ("
                      + (", ".join(sample_names) or "none defined") + ")", k)
            elif f is None or f < 0:
                c.bad(f"fit.weights.{k}", "a number >= 0", x)
            else:
                weights.append((k, f))
    if len(c.problems) > n0:
        return None
    return Fit(objective, ill.get("recording_illuminant"), ill.get("viewing_illuminant"),
               tuple(weights), **extra)


def _check_noise(c: _Checker, v) -> NoiseModel | None:
    t = c.table(v, "noise")
    if t is None:
        return None
    c.unknown(t, ("full_well_e", "read_noise_e", "exposure", "grey"), "noise")
    n0 = len(c.problems)
    out = {}
    rules = {"full_well_e": ("a number > 0 (electrons)", lambda f: f > 0),
             "read_noise_e": ("a number >= 0 (electrons rms)", lambda f: f >= 0),
             "exposure": ("a number in (0, 1] (fraction of the full well)", lambda f: 0 < f <= 1),
             "grey": ("a number in (0, 1] (reflectance)", lambda f: 0 < f <= 1)}
    for k, (expected, ok) in rules.items():
        if k in t:
            f = _number(t[k])
            if f is None or not ok(f):
                c.bad(f"noise.{k}", expected, t[k])
            out[k] = f
    return None if len(c.problems) > n0 else NoiseModel(**out)


def _matrix3(c: _Checker, v, key: str):
    if (not isinstance(v, list) or len(v) != 3
            or not all(isinstance(r, list) and len(r) == 3 and all(_number(x) is not None for x in r)
                       for r in v)):
        c.bad(key, "a 3×3 matrix as three rows of three numbers", v)
        return None
    m = tuple(tuple(float(_number(x)) for x in r) for r in v)
    if abs(float(np.linalg.det(np.array(m)))) < 1e-12:
        c.bad(key, "an invertible 3×3 matrix (this one's determinant is 0)", show_got=False)
        return None
    return m


def _check_matrix(c: _Checker, v, illuminant_names) -> FittedMatrix | None:
    t = c.table(v, "matrix")
    if t is None:
        return None
    c.unknown(t, ("method", "scope", "values", "per_illuminant"), "matrix")
    n0 = len(c.problems)
    method = c.choice(t.get("method"), MATRIX_METHODS, "matrix.method")
    scope = c.choice(t.get("scope", "shared"), MATRIX_SCOPES, "matrix.scope")
    values = None
    per = []
    if scope == "shared":
        if "values" not in t:
            c.bad("matrix.values", "a 3×3 matrix (missing)", show_got=False)
        else:
            values = _matrix3(c, t["values"], "matrix.values")
    elif scope == "per-illuminant":
        p = c.table(t.get("per_illuminant"), "matrix.per_illuminant")
        for k, m in (p or {}).items():
            if k not in illuminant_names:
                c.bad(f"matrix.per_illuminant.{k}", "the name of one of the [[illuminants]]", k)
            per.append((k, _matrix3(c, m, f"matrix.per_illuminant.{k}")))
    return None if len(c.problems) > n0 else FittedMatrix(method, scope, values, tuple(per))


def _check_tolerance(c: _Checker, v) -> ToleranceSpec | None:
    t = c.table(v, "tolerance")
    if t is None:
        return None
    c.unknown(t, ("max_mean_delta_E00", "min_vora", "field"), "tolerance")
    n0 = len(c.problems)
    out = {}
    if "max_mean_delta_E00" in t:
        f = _number(t["max_mean_delta_E00"])
        if f is None or f <= 0:
            c.bad("tolerance.max_mean_delta_E00", "a number > 0 (ΔE00)", t["max_mean_delta_E00"])
        out["max_mean_delta_E00"] = f
    if "min_vora" in t:
        f = _number(t["min_vora"])
        if f is None or not 0 <= f <= 1:
            c.bad("tolerance.min_vora", "a number in [0, 1]", t["min_vora"])
        out["min_vora"] = f
    if "field" in t:
        field_ = []
        items = t["field"]
        if not isinstance(items, list):
            c.bad("tolerance.field", "a list of [[tolerance.field]] tables", items)
            items = []
        for i, f in enumerate(items):
            key = f"tolerance.field[{i}]"
            f = c.table(f, key)
            if f is None:
                continue
            c.unknown(f, ("name", "aoi_offset_deg"), key)
            name = c.string(f.get("name"), f"{key}.name")
            a = _number(f.get("aoi_offset_deg"))
            if a is None or not -30 <= a <= 30:
                c.bad(f"{key}.aoi_offset_deg", "a number of degrees in [-30, 30]", f.get("aoi_offset_deg"))
            if name is not None and a is not None:
                field_.append(FieldPosition(name, a))
        out["field"] = tuple(field_)
    return None if len(c.problems) > n0 else ToleranceSpec(**out)


def _duplicates(c: _Checker, names, key: str):
    seen = set()
    for i, n in names:
        if n in seen:
            c.bad(f"{key}[{i}].name", "a name not used before in " + key, n)
        seen.add(n)


def design_from_dict(data: dict, *, base_dir=".", source=None) -> Design:
    """Validate plain TOML data and build a :class:`Design`; raises :class:`DesignError`."""
    c = _Checker(Path(base_dir))
    if not isinstance(data, dict):
        raise DesignError([("(top)", "expected a table")], source)
    c.unknown(data, _TOP_KEYS, "")
    schema = data.get("schema")
    if isinstance(schema, bool) or schema != SCHEMA:
        c.bad("schema", f"{SCHEMA} (the schema version this workbench reads)"
              + ("" if "schema" in data else " (missing)"), schema, show_got="schema" in data)
    name = c.string(data.get("name"), "name") if "name" in data else (
        c.bad("name", "a non-empty string (missing)", show_got=False))
    description = ""
    if "description" in data:
        description = data["description"]
        if not isinstance(description, str):
            c.bad("description", "a string", description)
    observer = "2"
    if "observer" in data:
        from workbench.colorimetry.cie import observer_key

        o = data["observer"]
        try:
            if isinstance(o, bool) or not isinstance(o, (int, str)):
                raise WorkbenchError("")
            observer = observer_key(o)
        except WorkbenchError:
            c.bad("observer", "2 (CIE 1931 2°) or 10 (CIE 1964 10°)", o)
    g = _check_grid(c, data["grid"]) if "grid" in data else c.bad(
        "grid", "a [grid] table with start_nm, stop_nm, step_nm (missing)", show_got=False)
    chain = []
    if "chain" not in data:
        c.bad("chain", "at least one [[chain]] element (missing)", show_got=False)
    else:
        items = _check_named_list(c, data["chain"], "chain")
        if isinstance(data["chain"], list) and not data["chain"]:
            c.bad("chain", "at least one [[chain]] element", show_got=False)
        for i, t in enumerate(items):
            e = _check_element(c, t, i)
            if e is not None:
                chain.append((i, e))
        _duplicates(c, [(i, t.get("name")) for i, t in enumerate(items) if isinstance(t.get("name"), str)], "chain")
        splitters = [i for i, t in enumerate(items) if t.get("type") == "dichroic-splitter"]
        for i in splitters[1:]:
            c.bad(f"chain[{i}].type", "at most one dichroic-splitter in a chain", "dichroic-splitter")
    target = _check_target(c, data["target"]) if "target" in data else Target()
    samples = _check_samples(c, data["samples"]) if "samples" in data else []
    if "samples" in data and isinstance(data["samples"], list):
        _duplicates(c, [(i, t.get("name")) for i, t in enumerate(data["samples"])
                        if isinstance(t, dict) and isinstance(t.get("name"), str)], "samples")
    illuminants = _check_illuminants(c, data["illuminants"]) if "illuminants" in data else []
    if "illuminants" in data and isinstance(data["illuminants"], list):
        _duplicates(c, [(i, t.get("name")) for i, t in enumerate(data["illuminants"])
                        if isinstance(t, dict) and isinstance(t.get("name"), str)], "illuminants")
    ill_names = [
        t.get("name") for t in data.get("illuminants", [])
        if isinstance(t, dict) and isinstance(t.get("name"), str)
    ] if isinstance(data.get("illuminants"), list) else []
    smp_names = [
        t.get("name") for t in data.get("samples", [])
        if isinstance(t, dict) and isinstance(t.get("name"), str)
    ] if isinstance(data.get("samples"), list) else []
    fit = _check_fit(c, data["fit"], ill_names, smp_names) if "fit" in data else Fit()
    noise = _check_noise(c, data["noise"]) if "noise" in data else NoiseModel()
    matrix = _check_matrix(c, data["matrix"], ill_names) if "matrix" in data else None
    tolerance = _check_tolerance(c, data["tolerance"]) if "tolerance" in data else ToleranceSpec()
    if c.problems:
        raise DesignError(c.problems, source)
    return Design(
        name=name, grid=g, chain=tuple(e for _, e in chain), observer=observer,
        description=description, target=target, samples=tuple(samples),
        illuminants=tuple(illuminants), fit=fit, noise=noise, matrix=matrix, tolerance=tolerance,
        schema=SCHEMA,
        base_dir=str(base_dir), source=None if source is None else str(source),
    )


_TOML_POS = re.compile(r"\s*\(at line (\d+), column (\d+)\)\s*$")


def load_design(path) -> Design:
    """Read a design file (TOML, ``schema = 1``) and validate it.

    Parameters
    ----------
    path : path-like

    Returns
    -------
    Design
        ``base_dir`` is the file's folder; file names in it resolve there.

    Raises
    ------
    InputFileError
        The file cannot be read or is not TOML (message names line and column).
    DesignError
        The data break the schema: every problem, one per line after the summary.
    """
    p = Path(os.fspath(path))
    try:
        raw = p.read_bytes()
    except OSError as err:
        raise InputFileError(f"cannot read: {err.strerror or err}", str(path)) from None
    return design_from_bytes(raw, source=str(path), base_dir=p.parent)


def design_from_bytes(raw: bytes, *, source: str, base_dir=".") -> Design:
    """A design file's bytes (a file, an upload) read and validated as :func:`load_design` reads a file.

    Relative file names resolve against ``base_dir``; messages name ``source``.
    """
    try:
        text = bytes(raw).decode("utf-8")
    except UnicodeDecodeError as err:
        raise InputFileError(f"expected UTF-8 text (byte {err.start} is not)", source) from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        msg = str(err)
        m = _TOML_POS.search(msg)
        if m:
            raise InputFileError(f"not valid TOML: {msg[:m.start()]}", source,
                                 int(m.group(1)), int(m.group(2))) from None
        raise InputFileError(f"not valid TOML: {msg}", source) from None
    except RecursionError:
        raise InputFileError("not valid TOML: nested too deeply", source) from None
    return design_from_dict(data, base_dir=Path(base_dir), source=source)


# --------------------------------------------------------------------------
# Saving
# --------------------------------------------------------------------------


def _param_out(p: Param):
    if p.plain:
        return p.value
    out: dict[str, Any] = {"value": p.value}
    if p.min is not None:
        out["min"] = p.min
    if p.max is not None:
        out["max"] = p.max
    if p.free:
        out["free"] = True
    if p.tolerance is not None:
        out["tolerance"] = {"distribution": p.tolerance.distribution, "width": p.tolerance.width}
    return out


def _to_dict(d: Design, rebase=None) -> dict:
    def f(name):
        return name if rebase is None else rebase(name)

    out: dict[str, Any] = {"schema": d.schema, "name": d.name}
    if d.description:
        out["description"] = d.description
    out["observer"] = int(d.observer)
    out["grid"] = {"start_nm": d.grid.start_nm, "stop_nm": d.grid.stop_nm, "step_nm": d.grid.step_nm}
    t = d.target
    tgt: dict[str, Any] = {"kind": t.kind}
    if t.name is not None:
        tgt["name"] = t.name
    for k in ("red", "green", "blue", "white"):
        if getattr(t, k) is not None:
            tgt[k] = list(getattr(t, k))
    if t.file is not None:
        tgt["file"] = f(t.file)
    if t.columns is not None:
        tgt["columns"] = list(t.columns)
    out["target"] = tgt
    chain = []
    for e in d.chain:
        el: dict[str, Any] = {"name": e.name, "type": e.type}
        if e.type != "dichroic-splitter" and e.paths != CHANNELS:
            el["paths"] = list(e.paths)
        for k, p in e.params:
            el[k] = _param_out(p)
        for k, v in e.options:
            if k == "columns":
                el[k] = dict(v)
            elif k == "file":
                el[k] = f(v)
            else:
                el[k] = v
        chain.append(el)
    out["chain"] = chain
    if d.samples:
        out["samples"] = [
            {"name": s.name, "source": s.source, **({"file": f(s.file)} if s.file else {})}
            for s in d.samples
        ]
    if d.illuminants:
        ills = []
        for i in d.illuminants:
            item: dict[str, Any] = {"name": i.name}
            if i.cie is not None:
                item["cie"] = i.cie
            if i.file is not None:
                item["file"] = f(i.file)
            if i.column is not None:
                item["column"] = i.column
            ills.append(item)
        out["illuminants"] = ills
    fit: dict[str, Any] = {"objective": d.fit.objective}
    if d.fit.recording_illuminant is not None:
        fit["recording_illuminant"] = d.fit.recording_illuminant
    if d.fit.viewing_illuminant is not None:
        fit["viewing_illuminant"] = d.fit.viewing_illuminant
    if d.fit.weights:
        fit["weights"] = dict(d.fit.weights)
    defaults = Fit()
    for k in ("illuminants", "matrix", "matrix_scope", "noise_weight", "global_start", "starts",
              "seed", "max_evaluations"):
        v = getattr(d.fit, k)
        if v != getattr(defaults, k):
            fit[k] = list(v) if isinstance(v, tuple) else v
    out["fit"] = fit
    if d.noise != NoiseModel():
        out["noise"] = {k: getattr(d.noise, k) for k in ("full_well_e", "read_noise_e", "exposure", "grey")}
    if d.tolerance != ToleranceSpec():
        tol: dict[str, Any] = {"max_mean_delta_E00": d.tolerance.max_mean_delta_E00,
                               "min_vora": d.tolerance.min_vora}
        if d.tolerance.field:
            tol["field"] = [{"name": f.name, "aoi_offset_deg": f.aoi_offset_deg} for f in d.tolerance.field]
        out["tolerance"] = tol
    if d.matrix is not None:
        m: dict[str, Any] = {"method": d.matrix.method, "scope": d.matrix.scope}
        if d.matrix.values is not None:
            m["values"] = [list(r) for r in d.matrix.values]
        if d.matrix.per_illuminant:
            m["per_illuminant"] = {k: [list(r) for r in v] for k, v in d.matrix.per_illuminant}
        out["matrix"] = m
    return out


def save_design(design: Design, path) -> None:
    """Write ``design`` as TOML to ``path`` atomically (temporary file + ``os.replace``).

    Relative file names are rewritten relative to the new file's folder when
    it differs from the design's ``base_dir``, so they name the same files.
    """
    import tomli_w

    target = Path(os.fspath(path))
    new_dir = target.parent.resolve()
    old_dir = Path(design.base_dir).resolve()

    def rebase(name: str) -> str:
        p = Path(name)
        if p.is_absolute() or new_dir == old_dir:
            return name
        return Path(os.path.relpath(old_dir / p, new_dir)).as_posix()

    text = "# camera design file, schema 1 (see docs/design-file.md)\n" + tomli_w.dumps(
        _to_dict(design, rebase))
    write_text_atomically(target, text)


# --------------------------------------------------------------------------
# Evaluation
# --------------------------------------------------------------------------


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
            s = s.select(names).resample(self.wavelengths, extrapolation=e.option("extrapolation", "none"))
            notes.extend(s.notes)
            self._tables[e.name] = s.values
        self.notes = tuple(notes)
        self._memo: dict[str, tuple] = {}

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
                g("refractive_index"), reflection=e.option("reflection"))
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
