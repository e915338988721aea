"""Design files: read, validate and write the TOML form of a :class:`~workbench.model.design.Design`.

Loading validates everything before anything is computed and reports every
problem at once in one :class:`~workbench.model.design.DesignError`, whose
first line is a summary (``<file>: 3 problems in the design file``) and whose
next lines are ``key.path: expected ... (got ...)``, one per problem. Unknown
keys and sections are errors. Saving writes through a temporary file and
``os.replace``; load → save → load gives an equal design. No pickle, no eval:
the file is data.

Over 600 lines for a reason: the validator is one piece — one checker that
collects every problem of a file, and one ``_check_*`` function per section
of the schema, each short; splitting them apart would hide which rule
produced which message.
"""

from __future__ import annotations

import math
import os
import re
import tomllib
from pathlib import Path
from typing import Any

import numpy as np

from workbench.fileio.limits import shorten
from workbench.errors import InputFileError, WorkbenchError
from workbench.fileio.atomic import write_text_atomically
from workbench.fileio.design_files import resolve_design
from workbench.model.design import (
    ACROSS_ILLUMINANTS,
    CHANNELS,
    GLOBAL_STARTS,
    MATRIX_METHODS,
    MATRIX_SCOPES,
    OBJECTIVES,
    SCHEMA,
    TARGET_KINDS,
    TOLERANCE_DISTRIBUTIONS,
    Design,
    DesignError,
    Element,
    FieldPosition,
    Fit,
    FittedMatrix,
    Grid,
    IlluminantSpec,
    NoiseModel,
    Param,
    SampleSetSpec,
    Target,
    Tolerance,
    ToleranceSpec,
)
from workbench.optics.kinds import ELEMENT_KINDS, OptionSpec, ParamSpec
from workbench.colorimetry.samples import SAMPLE_SETS
from workbench.colorimetry.cie import canonical_illuminant
from workbench.colorimetry.cie import observer_key
import tomli_w
from workbench.fileio.limits import how_to_raise, limits, read_limited

__all__ = ["load_design", "design_from_bytes", "design_from_dict", "design_to_dict", "save_design"]

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

    def param(self, v, spec: ParamSpec, key: str):
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

    def _in_domain(self, v, spec: ParamSpec, key: str):
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


#: The range a design grid may span, nm: the near ultraviolet to the end of a silicon sensor's response.
GRID_LIMITS_NM = (300.0, 1100.0)


def _check_grid(c: _Checker, v) -> Grid | None:
    t = c.table(v, "grid")
    if t is None:
        return None
    c.unknown(t, ("start_nm", "stop_nm", "step_nm", "resampling"), "grid")
    resampling = c.choice(t.get("resampling", "interpolation"), ("interpolation", "band"), "grid.resampling")
    vals = {}
    for k in ("start_nm", "stop_nm", "step_nm"):
        f = _number(t.get(k))
        # the grid may reach past the CIE tables into the near infrared a silicon sensor sees
        lo, hi, text = (0, 3000, "(0, 3000]") if k == "step_nm" else (GRID_LIMITS_NM + (
            f"[{GRID_LIMITS_NM[0]:g}, {GRID_LIMITS_NM[1]:g}]",))
        if f is None or not (lo < f <= hi if k == "step_nm" else lo <= f <= hi):
            c.bad(f"grid.{k}", f"a number in {text} nm" + ("" if k in t else " (missing)"),
                  t.get(k), show_got=k in t)
        else:
            vals[k] = f
    if len(vals) < 3:
        return None
    if vals["stop_nm"] <= vals["start_nm"]:
        c.bad("grid.stop_nm", f"a number above start_nm = {vals['start_nm']:g} nm", t.get("stop_nm"))
        return None
    min_step = limits().min_step_nm
    if vals["step_nm"] < min_step:
        c.bad("grid.step_nm", f"a step of at least {min_step:g} nm (the input limit min_step_nm)", t.get("step_nm"))
        return None
    if vals["step_nm"] > vals["stop_nm"] - vals["start_nm"]:
        c.bad("grid.step_nm", f"a step of at most stop_nm - start_nm = "
              f"{vals['stop_nm'] - vals['start_nm']:g} nm", t.get("step_nm"))
        return None
    g = Grid(vals["start_nm"], vals["stop_nm"], vals["step_nm"], resampling or "interpolation")
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


def _check_option(c: _Checker, val, spec: OptionSpec, key: str, paths):
    """An option's value by its kind (see :data:`workbench.optics.kinds.registry.OPTION_KINDS`), else None."""
    kind = spec.kind
    if kind == "file":
        return c.file(val, key)
    if kind == "str":
        return c.string(val, key)
    if kind == "positive":
        f = _number(val)
        if f is None or not f > 0:
            c.bad(key, "a number > 0", val)
            return None
        return f
    if kind == "count":
        if isinstance(val, bool) or not isinstance(val, int) or not 1 <= val <= 64:
            c.bad(key, "an integer in 1-64", val)
            return None
        return val
    if kind == "columns":
        if (not isinstance(val, dict) or set(val) != set(paths)
                or any(not isinstance(x, str) or not x for x in val.values())):
            c.bad(key, "a table naming the file's column for each channel "
                  f"({', '.join(paths)})", val)
            return None
        return tuple((ch, val[ch]) for ch in CHANNELS if ch in val)
    if callable(kind):
        try:
            return kind(val)
        except ValueError as err:
            c.bad(key, str(err), val)
            return None
    return c.choice(val, kind, key)


def _check_element(c: _Checker, v, i: int) -> Element | None:
    """One ``[[chain]]`` table, checked against its kind's declaration in the registry."""
    key = f"chain[{i}]"
    t = c.table(v, key)
    if t is None:
        return None
    name = c.string(t.get("name"), f"{key}.name")
    etype = t.get("type")
    if not isinstance(etype, str) or etype not in ELEMENT_KINDS:
        c.bad(f"{key}.type", f"one of {', '.join(ELEMENT_KINDS)}", etype)
        return None
    kind = ELEMENT_KINDS[etype]
    pspecs = kind.params
    if kind.more_params is not None:
        # the element's own parameters depend on its options: read those quietly first (their
        # problems are reported below, in the usual order)
        quiet = _Checker(c.base_dir)
        given = {k: _check_option(quiet, t[k], spec, k, CHANNELS) for k, spec in kind.options.items() if k in t}
        given = {k: v for k, v in given.items() if v is not None}
        given.update({k: spec.default for k, spec in kind.options.items()
                      if k not in given and spec.default is not None})
        try:
            pspecs = kind.param_specs(given)
        except (WorkbenchError, ValueError, KeyError, TypeError) as err:
            c.bad(key, f"options from which the element's parameters follow ({err})", show_got=False)
            return None
    allowed = ("name", "type") + (("paths",) if kind.paths_key else ()) + tuple(pspecs) + tuple(kind.options)
    c.unknown(t, allowed, key)
    ok = name is not None
    paths = CHANNELS
    if "paths" in t and kind.paths_key:
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
    for k, spec in kind.options.items():
        if k not in t:
            if spec.required:
                c.bad(f"{key}.{k}", {"file": "a file name", "positive": "a number > 0"}.get(spec.kind, spec.kind)
                      + " (missing)", show_got=False)
                ok = False
            elif spec.default is not None:
                options.append((k, spec.default))
            continue
        val = _check_option(c, t[k], spec, f"{key}.{k}", paths)
        if val is None:
            ok = False
        else:
            options.append((k, val))
    if kind.check is not None:
        for problem in kind.check(t, dict(params), dict(options)):
            where = f"{key}.{problem.key}" if problem.key else key
            c.bad(where, problem.expected, problem.got, show_got=problem.got is not ...)
            ok = False
    if ok:
        values = {k: p.value for k, p in params}
        for lo_k, hi_k in kind.ordered:
            lo, hi = values[lo_k], values[hi_k]
            unit = kind.params[hi_k].unit
            if not lo < hi:
                what = "wavelength" if unit == "nm" else "number"
                c.bad(f"{key}.{hi_k}", f"a {what} above {lo_k} = {lo:g}{' ' + unit if unit else ''}", hi)
                ok = False
                continue
            # A fit (or a robust fit's draws) must not be able to put the pair out of order:
            # the highest value lo_k may reach stays below the lowest value hi_k may reach.
            lo_p, hi_p = dict(params)[lo_k], dict(params)[hi_k]
            lo_top = (lo_p.max if lo_p.max is not None else np.inf) if lo_p.free else lo_p.value
            hi_low = (hi_p.min if hi_p.min is not None else -np.inf) if hi_p.free else hi_p.value
            if not lo_top < hi_low:
                bound_key, got = (f"{hi_k}.min", hi_low) if hi_p.free else (f"{lo_k}.max", lo_top)
                u = f" {unit}" if unit else ""
                c.bad(f"{key}.{bound_key}", f"bounds that keep {hi_k} above {lo_k} in a fit "
                      f"({lo_k} may reach {lo_top:g}{u}, {hi_k} may fall to {hi_low:g}{u})", got)
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
    out = []
    for i, t in enumerate(_check_named_list(c, v, "samples")):
        key = f"samples[{i}]"
        c.unknown(t, ("name", "source", "file", "extrapolation"), key)
        n0 = len(c.problems)
        name = c.string(t.get("name"), f"{key}.name")
        source = c.choice(t.get("source"), SAMPLE_SETS, f"{key}.source")
        file = None
        if source == "csv":
            file = c.file(t.get("file"), f"{key}.file")
        elif "file" in t and source is not None:
            c.bad(f"{key}.file", f"no file for the built-in set {source!r}", t["file"])
        extrapolation = c.choice(t.get("extrapolation", "none"), ("none", "constant"), f"{key}.extrapolation")
        if len(c.problems) == n0:
            out.append(SampleSetSpec(name, source, file, extrapolation))
    return out


def _check_illuminants(c: _Checker, v):
    out = []
    for i, t in enumerate(_check_named_list(c, v, "illuminants")):
        key = f"illuminants[{i}]"
        c.unknown(t, ("name", "cie", "file", "column", "extrapolation"), key)
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
                    canonical_illuminant(cie)
                except WorkbenchError:
                    c.bad(f"{key}.cie", "a CIE illuminant name such as A, D50, D65, FL2, LED-B1", cie)
            if "column" in t:
                c.bad(f"{key}.column", "no column with cie (only with file)", t["column"])
            if "extrapolation" in t:
                c.bad(f"{key}.extrapolation", "no extrapolation with cie (only with file)", t["extrapolation"])
        else:
            file = c.file(t["file"], f"{key}.file")
            if "column" in t:
                column = c.string(t["column"], f"{key}.column")
        extrapolation = c.choice(t.get("extrapolation", "none"), ("none", "constant"), f"{key}.extrapolation")
        if len(c.problems) == n0:
            out.append(IlluminantSpec(name, cie, file, column, extrapolation))
    return out


def _check_fit(c: _Checker, v, illuminant_names, sample_names) -> Fit | None:
    t = c.table(v, "fit")
    if t is None:
        return None
    c.unknown(t, ("objective", "recording_illuminant", "viewing_illuminant", "weights", "illuminants",
                  "matrix", "matrix_scope", "noise_weight", "global_start", "starts", "seed",
                  "max_evaluations", "infrared_cutoff_nm", "infrared_weight", "max_infrared_share",
                  "illuminant_weights", "across_illuminants", "coating_smoothness"), "fit")
    n0 = len(c.problems)
    objective = c.choice(t.get("objective", "vora"), OBJECTIVES, "fit.objective")
    extra = {}
    for k, choices in (("matrix", MATRIX_METHODS), ("matrix_scope", MATRIX_SCOPES),
                       ("global_start", GLOBAL_STARTS), ("across_illuminants", ACROSS_ILLUMINANTS)):
        if k in t:
            extra[k] = c.choice(t[k], choices, f"fit.{k}")
    if "noise_weight" in t:
        f = _number(t["noise_weight"])
        if f is None or f < 0:
            c.bad("fit.noise_weight", "a number >= 0", t["noise_weight"])
        extra["noise_weight"] = f
    for k, lo, hi, text in (("infrared_cutoff_nm", 380, 1100, "a number in [380, 1100] nm"),
                            ("infrared_weight", 0, math.inf, "a number >= 0"),
                            ("coating_smoothness", 0, 1000, "a number in [0, 1000]"),  # the range of recipe --smoothness
                            ("max_infrared_share", 0, 1, "a number in [0, 1]")):
        if k in t:
            f = _number(t[k])
            if f is None or not lo <= f <= hi:
                c.bad(f"fit.{k}", text, t[k])
            extra[k] = f
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
    if "illuminant_weights" in t:
        w = c.table(t["illuminant_weights"], "fit.illuminant_weights")
        iw = []
        for k, x in (w or {}).items():
            f = _number(x)
            if k not in illuminant_names:
                c.bad(f"fit.illuminant_weights.{k}", "the name of one of the [[illuminants]] ("
                      + (", ".join(illuminant_names) or "none defined") + ")", k)
            elif f is None or f <= 0:
                c.bad(f"fit.illuminant_weights.{k}", "a number > 0", x)
            else:
                iw.append((k, f))
        extra["illuminant_weights"] = tuple(iw)
    if (("illuminant_weights" in t or extra.get("across_illuminants", "weighted-mean") != "weighted-mean")
            and objective is not None and objective != "mean-delta-e00"):
        c.bad("fit.objective", '"mean-delta-e00" when illuminant_weights or across_illuminants = "worst" '
              "is given", objective)
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


#: The [noise] keys of the signal budget, all or none.
_SIGNAL_KEYS = ("scene_lux", "f_number", "exposure_s", "pixel_pitch_um")


def _check_noise(c: _Checker, v) -> NoiseModel | None:
    t = c.table(v, "noise")
    if t is None:
        return None
    c.unknown(t, ("full_well_e", "read_noise_e", "exposure", "grey", *_SIGNAL_KEYS, "lens_transmittance",
                  "qe_percent"), "noise")
    n0 = len(c.problems)
    out = {}
    rules = {"full_well_e": ("a number > 0 (electrons)", lambda f: f > 0),
             "read_noise_e": ("a number >= 0 (electrons rms)", lambda f: f >= 0),
             "exposure": ("a number in (0, 1] (fraction of the full well)", lambda f: 0 < f <= 1),
             "grey": ("a number in (0, 1] (reflectance)", lambda f: 0 < f <= 1),
             "scene_lux": ("a number > 0 (lx)", lambda f: f > 0),
             "f_number": ("a number in [0.5, 1000]", lambda f: 0.5 <= f <= 1000),
             "exposure_s": ("a number in (0, 3600] (seconds)", lambda f: 0 < f <= 3600),
             "pixel_pitch_um": ("a number in (0, 1000] (µm)", lambda f: 0 < f <= 1000),
             "lens_transmittance": ("a number in (0, 1] (fraction)", lambda f: 0 < f <= 1),
             "qe_percent": ("a number in (0, 100] (percent)", lambda f: 0 < f <= 100)}
    given = [k for k in _SIGNAL_KEYS if k in t]
    if given and len(given) < len(_SIGNAL_KEYS):
        missing = [k for k in _SIGNAL_KEYS if k not in t]
        c.bad("noise", "all of " + ", ".join(_SIGNAL_KEYS) + " for the signal budget (missing "
              + ", ".join(missing) + ")", show_got=False)
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
            c.unknown(f, ("name", "aoi_offset_deg", "field_angle_deg"), key)
            name = c.string(f.get("name"), f"{key}.name")
            if "field_angle_deg" in f:
                a = None
                fa = _number(f.get("field_angle_deg"))
                if "aoi_offset_deg" in f:
                    c.bad(key, "either aoi_offset_deg (in the prism glass) or field_angle_deg (in air), not both",
                          show_got=False)
                elif fa is None or not -60 <= fa <= 60:
                    c.bad(f"{key}.field_angle_deg", "a number of degrees in [-60, 60]", f.get("field_angle_deg"))
                elif name is not None:
                    # turned into the glass when the splitter's medium_index is known (tolerance_field)
                    field_.append(FieldPosition(name, fa, fa))
                continue
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
    """Validate plain TOML data, build a :class:`Design` and read the files it names.

    Raises :class:`DesignError` (every schema problem at once) before any
    file is read; then what :func:`workbench.fileio.design_files.resolve_design`
    raises for a bad file.
    """
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
        groups: dict[str, set] = {}
        for kind in ELEMENT_KINDS.values():
            if kind.at_most_one:
                groups.setdefault(kind.group or kind.name, set()).add(kind.name)
        for group, names in groups.items():
            same = [i for i, t in enumerate(items) if isinstance(t.get("type"), str) and t.get("type") in names]
            for i in same[1:]:
                c.bad(f"chain[{i}].type", f"at most one {group} in a chain", items[i].get("type"))
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
    return resolve_design(Design(
        name=name, grid=g, chain=tuple(e for _, e in chain), observer=observer,
        description=description, target=target, samples=tuple(samples),
        illuminants=tuple(illuminants), fit=fit, noise=noise, matrix=matrix, tolerance=tolerance,
        schema=SCHEMA,
        base_dir=str(base_dir), source=None if source is None else str(source),
    ))


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

    References
    ----------
    TOML v1.0.0 (2021), *Tom's Obvious Minimal Language*, https://toml.io/en/v1.0.0
    (read with Python's ``tomllib``, PEP 680).
    """
    p = Path(os.fspath(path))
    raw = read_limited(p, max_bytes=limits().design_bytes, limit_name="design_mb")
    return design_from_bytes(raw, source=str(path), base_dir=p.parent)


def design_from_bytes(raw: bytes, *, source: str, base_dir=".") -> Design:
    """A design file's bytes (a file, an upload) read and validated as :func:`load_design` reads a file.

    Relative file names resolve against ``base_dir``; messages name ``source``.

    References
    ----------
    TOML v1.0.0 (2021), *Tom's Obvious Minimal Language*, https://toml.io/en/v1.0.0
    (read with Python's ``tomllib``, PEP 680).
    """
    if len(raw) > limits().design_bytes:  # an upload: the same limit as a file
        raise InputFileError(f"larger than the limit of {limits().design_mb:g} MiB; "
                             f"{how_to_raise('design_mb')}", source)
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
    except ValueError as err:  # e.g. an integer of more digits than Python converts
        raise InputFileError(f"not valid TOML: {shorten(str(err), 80)}", source) from None
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


def design_to_dict(d: Design, rebase=None) -> dict:
    def f(name):
        return name if rebase is None else rebase(name)

    out: dict[str, Any] = {"schema": d.schema, "name": d.name}
    if d.description:
        out["description"] = d.description
    out["observer"] = int(d.observer)
    out["grid"] = {"start_nm": d.grid.start_nm, "stop_nm": d.grid.stop_nm, "step_nm": d.grid.step_nm,
                   **({"resampling": d.grid.resampling} if d.grid.resampling != "interpolation" else {})}
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
        kind = ELEMENT_KINDS[e.type]
        if kind.paths_key and e.paths != CHANNELS:
            el["paths"] = list(e.paths)
        for k, p in e.params:
            el[k] = _param_out(p)
        for k, v in e.options:
            spec = kind.options.get(k)
            option_kind = None if spec is None else spec.kind
            if option_kind == "columns":
                el[k] = dict(v)
            elif option_kind == "file":
                el[k] = f(v)
            elif hasattr(v, "to_toml"):           # a value naming files of its own (coating materials)
                el[k] = v.to_toml(f)
            else:
                el[k] = v
        chain.append(el)
    out["chain"] = chain
    if d.samples:
        out["samples"] = [
            {"name": s.name, "source": s.source, **({"file": f(s.file)} if s.file else {}),
             **({"extrapolation": s.extrapolation} if s.extrapolation != "none" else {})}
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
            if i.extrapolation != "none":
                item["extrapolation"] = i.extrapolation
            ills.append(item)
        out["illuminants"] = ills
    fit: dict[str, Any] = {"objective": d.fit.objective}
    if d.fit.recording_illuminant is not None:
        fit["recording_illuminant"] = d.fit.recording_illuminant
    if d.fit.viewing_illuminant is not None:
        fit["viewing_illuminant"] = d.fit.viewing_illuminant
    if d.fit.weights:
        fit["weights"] = dict(d.fit.weights)
    if d.fit.illuminant_weights:
        fit["illuminant_weights"] = dict(d.fit.illuminant_weights)
    defaults = Fit()
    for k in ("illuminants", "matrix", "matrix_scope", "noise_weight", "global_start", "starts",
              "seed", "max_evaluations", "infrared_cutoff_nm", "infrared_weight", "max_infrared_share",
              "across_illuminants"):
        v = getattr(d.fit, k)
        if v != getattr(defaults, k):
            fit[k] = list(v) if isinstance(v, tuple) else v
    # written whenever a coating has free layers (the fit then applies it), so the file says what the fit weighs
    free_layers = any(e.type == "coating" and any(k.startswith("layer_") and p.free for k, p in e.params)
                      for e in d.chain)
    if free_layers or d.fit.coating_smoothness != defaults.coating_smoothness:
        fit["coating_smoothness"] = d.fit.coating_smoothness
    out["fit"] = fit
    if d.noise != NoiseModel():
        out["noise"] = {k: getattr(d.noise, k) for k in ("full_well_e", "read_noise_e", "exposure", "grey")}
        out["noise"].update({k: getattr(d.noise, k) for k in (*_SIGNAL_KEYS, "qe_percent")
                             if getattr(d.noise, k) is not None})
        if d.noise.lens_transmittance != 1.0:
            out["noise"]["lens_transmittance"] = d.noise.lens_transmittance
    if d.tolerance != ToleranceSpec():
        tol: dict[str, Any] = {"max_mean_delta_E00": d.tolerance.max_mean_delta_E00,
                               "min_vora": d.tolerance.min_vora}
        if d.tolerance.field:
            tol["field"] = [{"name": f.name, "aoi_offset_deg": f.aoi_offset_deg} if f.field_angle_deg is None
                            else {"name": f.name, "field_angle_deg": f.field_angle_deg} for f in d.tolerance.field]
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

    References
    ----------
    TOML v1.0.0 (2021), *Tom's Obvious Minimal Language*, https://toml.io/en/v1.0.0
    (read with Python's ``tomllib``, PEP 680).
    """
    target = Path(os.fspath(path))
    new_dir = target.parent.resolve()
    old_dir = Path(design.base_dir).resolve()

    def rebase(name: str) -> str:
        p = Path(name)
        if p.is_absolute() or new_dir == old_dir:
            return name
        return Path(os.path.relpath(old_dir / p, new_dir)).as_posix()

    text = "# camera design file, schema 1 (see docs/design-file.md)\n" + tomli_w.dumps(
        design_to_dict(design, rebase))
    write_text_atomically(target, text)
