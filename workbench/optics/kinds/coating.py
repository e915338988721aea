"""Element kind ``coating``: a real multilayer stack (trim coating, IR cut, or one splitter face).

The stack is a layer formula over material symbols (:mod:`workbench.optics.stacks`):
``layers = "(0.5L H 0.5L)^12"`` with ``materials = {H = "TiO2", L = "SiO2"}`` and
the QWOT reference wavelength ``reference_nm``; or physical thicknesses,
``layers = "H[52.3] L[88.1] …"``. It is computed by the characteristic-
matrix method (:mod:`workbench.optics.thinfilm`) at its chief-ray angle in
its incidence medium, averaged over the rays of the lens's cone (when
``f_number`` is given) and over s and p (unpolarised unless
``polarisation`` says otherwise).

Use
---
``reflects = "none"`` (default)
    The element transmits: T on each of its ``paths`` (a trim coating, an
    IR cut).
``reflects = "B"`` (or ``"G"``, ``"R"``)
    A splitter face: the named path gets the face's reflectance R, the
    other paths in ``paths`` its transmittance T, paths not listed are not
    touched. A blue-first prism is two faces: ``paths = ["R","G","B"]``,
    ``reflects = "B"``; then ``paths = ["R","G"]``, ``reflects = "R"``.
    Each face is averaged over the cone on its own, so the green path gets
    ⟨T₁⟩⟨T₂⟩ where the idealised splitter multiplies ray by ray (a stated
    simplification; the two differ little when the faces' edges are apart).

Parameters ``reference_nm`` and ``thickness_scale`` (all thicknesses × the
scale: a systematic proportional thickness error) can be free, bounded and
toleranced like any other; so are ``thickness_scale_<S>`` and
``index_scale_<S>`` for each material symbol S (systematic thickness and
index errors of one material), and each layer's own physical thickness,
``layer_<i>_nm`` (i from 1 at the incidence side; the kind's ``more_params``
names one per layer of the formula), which, when given, replaces what the
formula says for that layer. The material indices are evaluated on the
design grid once, when the design is loaded (``load``); the chief-ray angle
``aoi_deg`` takes the field angle in the field-shift analysis
(``field_angles``).
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass, field
from functools import cached_property, lru_cache
from pathlib import Path

import numpy as np

from workbench.errors import InputFileError, WorkbenchError
from workbench.optics.kinds.registry import (
    CurveInput, ElementKind, KindProblem, LoadInput, OptionSpec, ParamSpec, register_kind,
)
from workbench.fileio.limits import limits, read_limited
from workbench.optics.materials import material_named, read_nk_csv
from workbench.optics.stacks import parse_layer_formula, resolve_materials
from workbench.optics.stacks import cone_response

__all__ = ["KIND", "MaterialTable", "MaterialFile", "parse_materials", "CoatingData", "layer_thicknesses", "layer_indices"]

REFLECTS = ("none", "R", "G", "B")
POLARISATIONS = ("unpolarised", "s", "p")
BACK_SURFACE = ("none", "uncoated")
_CHANNELS = ("R", "G", "B")
_SYMBOL = re.compile(r"[A-Za-z][A-Za-z0-9_]*")


@dataclass(frozen=True)
class MaterialFile:
    """A user n,k table named in a design file, ``{file = "films/nb2o5.csv"}`` (relative to the design file).

    The file is read once, when the design is loaded (the kind's ``load``),
    by :func:`workbench.optics.materials.read_nk_csv`.
    """

    file: str

    def to_toml(self, rebase=None) -> dict:
        """``{"file": name}``, the name passed through ``rebase`` (saving elsewhere)."""
        return {"file": self.file if rebase is None else rebase(self.file)}


class MaterialTable(dict):
    """The ``materials`` option: symbol → material name, index or :class:`MaterialFile`; read-only, hashable.

    Saved as a table by :meth:`to_toml`, which rewrites the file names of
    user n,k tables through the saver's ``rebase`` (like ``file`` options).
    """

    __slots__ = ()

    def __hash__(self):
        return hash(tuple(self.items()))

    def _read_only(self, *a, **k):
        raise TypeError("a MaterialTable is read-only")

    __setitem__ = __delitem__ = update = pop = popitem = clear = setdefault = _read_only

    def to_toml(self, rebase=None) -> dict:
        """Plain TOML data: ``{H = "TiO2", L = 1.46, M = {file = "…"}}``."""
        return {k: v.to_toml(rebase) if isinstance(v, MaterialFile) else v for k, v in self.items()}


def parse_materials(value) -> MaterialTable:
    """The ``materials`` option: a table ``{H = "TiO2", L = 1.46, M = {file = "nk.csv"}}`` or ``"H=TiO2, L=1.46"``.

    A value ``{file = "…"}`` names a user n,k table (CSV with ``wavelength_nm``,
    ``n``, ``k``; :func:`workbench.optics.materials.read_nk_csv`) relative to
    the design file's folder; it is read when the design is loaded.

    Raises
    ------
    ValueError
        What was expected, for the design-file validator.
    """
    expected = 'a table of material symbols such as {H = "TiO2", L = "SiO2"}'
    if isinstance(value, str):
        pairs = []
        for part in value.replace(";", ",").split(","):
            if part.strip():
                sym, sep, name = part.partition("=")
                if not sep:
                    raise ValueError(expected)
                pairs.append((sym.strip(), name.strip()))
    elif isinstance(value, dict):
        pairs = list(value.items())
    else:
        raise ValueError(expected)
    if not pairs:
        raise ValueError(expected)
    out = {}
    for sym, spec in pairs:
        if not isinstance(sym, str) or not _SYMBOL.fullmatch(sym):
            raise ValueError(f"{expected}; symbols are letters, digits and _ starting with a letter "
                             f"(got {sym!r})")
        if isinstance(spec, MaterialFile):
            out[sym] = spec
            continue
        if isinstance(spec, dict):
            name = spec.get("file")
            if set(spec) != {"file"} or not isinstance(name, str) or not name.strip():
                raise ValueError(f"{expected}; a user n,k table is written {{file = \"films/nk.csv\"}} "
                                 f"(got {spec!r} for {sym})")
            out[sym] = MaterialFile(name)
            continue
        if isinstance(spec, bool) or not isinstance(spec, (str, int, float)):
            raise ValueError(f"{expected}; each a material name, an index or {{file = \"nk.csv\"}} "
                             f"(got {spec!r} for {sym})")
        try:
            material_named(spec if isinstance(spec, str) else float(spec))
        except WorkbenchError as err:
            raise ValueError(f"{expected}; {sym}: {err}") from None
        out[sym] = spec if isinstance(spec, str) else float(spec)
    return MaterialTable(out)


def _parse_medium(value):
    """``incident`` / ``substrate``: a built-in material name or an index."""
    if isinstance(value, bool) or not isinstance(value, (str, int, float)):
        raise ValueError("a material name or an index such as 1.52")
    try:
        material_named(value if isinstance(value, str) else float(value))
    except WorkbenchError as err:
        raise ValueError(f"a material name or an index such as 1.52; {err}") from None
    return value


def _formula(options, files=None):
    """The parsed layers and ``{symbol: Material}``; user tables from ``files`` (read at load), else left out."""
    table = dict(options["materials"])
    plain = {k: v for k, v in table.items() if not isinstance(v, MaterialFile)}
    resolved = resolve_materials(plain, what="materials") if plain else {}
    mats = {k: (files or {}).get(k) if isinstance(v, MaterialFile) else resolved[k] for k, v in table.items()}
    mats = {k: v for k, v in mats.items() if v is not None}
    return parse_layer_formula(options["layers"], table, what="layers"), mats


def _read_tables(x: LoadInput) -> dict:
    """The user n,k tables of the ``materials`` option, each read once; errors name design, element and key."""
    out = {}
    design = f"{x.source}: " if getattr(x, "source", None) else ""
    for sym, spec in dict(x.option("materials")).items():
        if not isinstance(spec, MaterialFile):
            continue
        where = f"{design}{x.key}.materials.{sym}"
        path = x.resolve(spec.file)
        try:
            text = read_limited(path, max_bytes=limits().design_bytes, limit_name="design_mb")
        except InputFileError as err:
            why = "no such file" if not os.path.lexists(path) else err.message
            raise WorkbenchError(f"{where}: expected an n,k table (CSV: wavelength_nm, n, k) relative to the "
                                 f"design file's folder (got {spec.file!r}: {why})") from None
        try:
            out[sym] = read_nk_csv(spec.file, name=Path(spec.file).stem, text=text.decode("utf-8-sig"))
        except UnicodeDecodeError:
            raise WorkbenchError(f"{where}: {spec.file}: must be UTF-8 text") from None
        except WorkbenchError as err:
            raise WorkbenchError(f"{where}: {err}") from None
        try:
            out[sym].index(x.wavelengths)
        except WorkbenchError as err:
            raise WorkbenchError(f"{where}: {err}; the table must cover the design grid") from None
    return out


def _more_params(options: dict) -> dict:
    """One optional physical thickness per layer of the formula: ``layer_1_nm`` … ``layer_L_nm``.

    Asked for once per parameter name in places (a tolerance run over every
    layer), so the answer is kept per formula and materials table.
    """
    if "layers" not in options or "materials" not in options:
        return {}
    key = (options["layers"], options["materials"])
    try:
        hash(key)
    except TypeError:                     # a materials table not parsed yet
        return _layer_params(*key)
    return dict(_layer_params_kept(*key))


@lru_cache(maxsize=64)
def _layer_params_kept(layers, materials) -> dict:
    """:func:`_layer_params`, kept."""
    return _layer_params(layers, materials)


def _layer_params(layers_formula, materials) -> dict:
    """The ``more_params`` of one layer formula and materials table."""
    options = {"layers": layers_formula, "materials": materials}
    try:
        layers, _ = _formula(options)
    except WorkbenchError:
        return {}                         # the check reports the formula's problem at its key
    out = {f"layer_{i + 1}_nm": ParamSpec(0.0, 100000.0, True, False, "nm", optional=True,
                                          meaning=f"physical thickness of layer {i + 1} ({x.symbol}); "
                                                  "replaces the formula's")
           for i, x in enumerate(layers)}
    for sym in dict(options["materials"]):
        out[f"thickness_scale_{sym}"] = ParamSpec(0.0, 3.0, True, False, "", optional=True,
                                                  meaning=f"the {sym} layers' thicknesses × this (systematic "
                                                          "error of one material)")
        out[f"index_scale_{sym}"] = ParamSpec(0.0, 3.0, True, False, "", optional=True,
                                              meaning=f"{sym}'s n × this (index error of one material)")
    return out


@dataclass(frozen=True, eq=False)
class CoatingData:
    """What a coating needs on the design grid, made once at load.

    ``reference_indices`` keeps, for each reference wavelength met, every
    material's index there (what the QWOT thicknesses need), so that a fit
    or a slider that moves other parameters does not evaluate the
    dispersion formulas again.
    """

    layers: tuple
    materials: dict
    N: np.ndarray            # (L, n) complex
    n_incident: np.ndarray   # (n,) real
    n_substrate: np.ndarray  # (n,) complex
    notes: tuple = ()
    reference_indices: dict = field(default_factory=dict, repr=False)

    @cached_property
    def layer_tables(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Per layer: QWOT multiple (NaN if physical), physical nm (NaN if QWOT), material number (order of ``materials``)."""
        symbols = list(self.materials)
        qwot = np.array([np.nan if x.qwot is None else x.qwot for x in self.layers])
        phys = np.array([np.nan if x.physical_nm is None else x.physical_nm for x in self.layers])
        which = np.array([symbols.index(x.symbol) for x in self.layers], dtype=np.intp)
        for a in (qwot, phys, which):
            a.setflags(write=False)
        return qwot, phys, which

    def indices_at(self, reference_nm: float) -> np.ndarray:
        """Real index of every material (order of ``materials``) at one reference wavelength, kept once met."""
        n = self.reference_indices.get(reference_nm)
        if n is None:
            n = np.array([m.index([reference_nm])[0].real for m in self.materials.values()])
            if len(self.reference_indices) >= 256:
                self.reference_indices.clear()
            self.reference_indices[reference_nm] = n
        return n


def _load(x: LoadInput) -> CoatingData:
    files = _read_tables(x)
    try:
        layers, mats = _formula(x.options, files)
    except WorkbenchError as err:
        raise WorkbenchError(f"{x.key}: {err}") from None
    wl = np.asarray(x.wavelengths, dtype=float)
    by_sym = {}
    for sym, m in mats.items():
        try:
            by_sym[sym] = m.index(wl)
        except WorkbenchError as err:
            raise WorkbenchError(f"{x.key}.materials.{sym}: {err}") from None
    media = {}
    for key in ("incident", "substrate"):
        spec = x.option(key)
        try:
            media[key] = material_named(spec if isinstance(spec, str) else float(spec)).index(wl)
        except WorkbenchError as err:
            raise WorkbenchError(f"{x.key}.{key}: {err}") from None
    if np.any(media["incident"].imag != 0):
        raise WorkbenchError(f"{x.key}.incident: expected a lossless medium (got {x.option('incident')!r})")
    N = np.stack([by_sym[layer.symbol] for layer in layers])
    n_inc = media["incident"].real.copy()
    n_sub = media["substrate"].copy()
    for a in (N, n_inc, n_sub):
        a.setflags(write=False)
    return CoatingData(tuple(layers), mats, N, n_inc, n_sub)


def _thicknesses(data: CoatingData, params: dict) -> np.ndarray:
    """Physical thicknesses ``(..., L)`` for batched parameters."""
    qwot, phys, which = data.layer_tables
    L = qwot.size
    ref = np.asarray(params.get("reference_nm", np.nan), dtype=float)
    scale = np.asarray(params["thickness_scale"], dtype=float)
    own = {i: np.asarray(params[f"layer_{i + 1}_nm"], dtype=float) for i in range(L)
           if f"layer_{i + 1}_nm" in params}
    shape = np.broadcast_shapes(ref.shape, scale.shape, *(v.shape for v in own.values()))
    d = np.broadcast_to(phys, shape + (L,)).copy()
    need = np.isfinite(qwot)
    need[list(own)] = False
    if need.any():
        if ref.ndim == 0:
            d[..., need] = qwot[need] * float(ref) / (4.0 * data.indices_at(float(ref))[which[need]])
        else:
            ref_b = np.broadcast_to(ref, shape).reshape(-1)
            n_at = np.stack([m.index(ref_b).real for m in data.materials.values()])     # (M, B)
            q = qwot[need][:, None] * ref_b[None, :] / (4.0 * n_at[which[need]])      # (L_q, B)
            d[..., need] = q.T.reshape(shape + (int(need.sum()),))
    for i, v in own.items():
        d[..., i] = v
    return d * scale[..., None]


def layer_thicknesses(data: CoatingData, params: dict) -> np.ndarray:
    """Every layer's physical thickness ``(..., L)`` in nm for batched parameters of a coating element.

    The formula's thicknesses (QWOT at ``reference_nm`` or physical), each
    ``layer_<i>_nm`` given in its place, times ``thickness_scale`` and the
    layer's material's ``thickness_scale_<S>``; ``params`` by parameter name
    (``layer_3_nm``, not ``element.layer_3_nm``). Not checked for > 0.
    """
    d = _thicknesses(data, params)
    symbols = list(data.materials)
    which = data.layer_tables[2]
    if any(f"thickness_scale_{s}" in params for s in symbols):
        ts = np.stack(np.broadcast_arrays(*[np.asarray(params.get(f"thickness_scale_{s}", 1.0), dtype=float)
                                            for s in symbols]), axis=-1)        # (..., M)
        d = d * ts[..., which]
    return d


def layer_indices(data: CoatingData, params: dict, N=None) -> np.ndarray:
    """The layers' indices ``(L, n)`` or ``(..., L, n)`` with each material's ``index_scale_<S>`` applied to n.

    ``N`` the unscaled indices (L, n) on some grid (default the design
    grid's, ``data.N``); one set when every row has the same scales.
    """
    N = data.N if N is None else N
    symbols = list(data.materials)
    if any(f"index_scale_{s}" in params for s in symbols):
        ns = np.stack(np.broadcast_arrays(*[np.asarray(params.get(f"index_scale_{s}", 1.0), dtype=float)
                                            for s in symbols]), axis=-1)        # (..., M)
        flat = ns.reshape(-1, ns.shape[-1])
        if np.all(flat == flat[0]):
            ns = flat[0]                  # the same indices in every row: one set (the engine then sees one stack)
        N = N.real * ns[..., data.layer_tables[2], None] + 1j * N.imag          # (..., L, n)
    return N


def _curve(x: CurveInput):
    data: CoatingData = x.data
    wl = np.asarray(x.wavelengths, dtype=float)
    d = layer_thicknesses(data, x.params)
    if np.any(~(d > 0)):
        raise WorkbenchError("coating layer thicknesses must be > 0 nm (got one ≤ 0)")
    N = layer_indices(data, x.params)
    aoi = np.asarray(x.p("aoi_deg"), dtype=float)
    fno = x.params.get("f_number")
    engine = dict(incident=data.n_incident, substrate=data.n_substrate, polarisation=x.option("polarisation"),
                  rings=x.option("rings"), azimuths=x.option("azimuths"),
                  back_surface=x.option("back_surface") == "uncoated")
    if d.ndim == 1 and N.ndim == 2 and aoi.ndim == 0 and np.ndim(fno) == 0:
        # one state (a slider, a fit's step): no batch to sort by geometry
        R, T, _, _ = cone_response(N, d, wl, aoi_deg=float(aoi), f_number=None if fno is None else float(fno),
                                   **engine)
        return _paths(x, R, T, ())
    batch = np.broadcast_shapes(d.shape[:-1], N.shape[:-2], aoi.shape, np.shape(fno) if fno is not None else ())
    d = np.broadcast_to(d, batch + d.shape[-1:])
    N_flat = np.broadcast_to(N, batch + N.shape[-2:]).reshape((-1,) + N.shape[-2:]) if N.ndim > 2 else None
    aoi_b = np.broadcast_to(aoi, batch).reshape(-1)
    fno_b = None if fno is None else np.broadcast_to(np.asarray(fno, dtype=float), batch).reshape(-1)
    d_flat = d.reshape(-1, d.shape[-1])
    R = np.empty((d_flat.shape[0], wl.size))
    T = np.empty_like(R)
    # one engine call per distinct geometry (a fit step or a tolerance draw moves few of them)
    geo = np.stack([aoi_b, np.zeros_like(aoi_b) if fno_b is None else fno_b], axis=1)
    if geo.shape[0] == 1:
        keys, inverse = geo, np.zeros(1, dtype=np.intp)
    else:
        keys, inverse = np.unique(geo, axis=0, return_inverse=True)
    for k, (a, f) in enumerate(keys):
        rows = np.nonzero(inverse.reshape(-1) == k)[0] if len(keys) > 1 else slice(None)
        r, t, _, _ = cone_response(N if N_flat is None else N_flat[rows], d_flat[rows], wl, aoi_deg=float(a),
                                   f_number=None if fno_b is None else float(f), **engine)
        R[rows], T[rows] = r, t
    return _paths(x, R.reshape(batch + (wl.size,)), T.reshape(batch + (wl.size,)), batch)


def _paths(x: CurveInput, R, T, batch) -> np.ndarray:
    """The element's curve on the R, G, B paths ``(..., 3, n_λ)``: R on the reflected path, T on the others."""
    out = np.ones(batch + (3, R.shape[-1]))
    reflects = x.option("reflects")
    for i, ch in enumerate(_CHANNELS):
        if ch in x.paths:
            out[..., i, :] = R if ch == reflects else T
    return out


def _check(raw: dict, params: dict, options: dict):
    """The formula parses; QWOT layers have a reference; a face reflects into one of its paths."""
    if "layers" not in options or "materials" not in options:
        return
    try:
        layers, _ = _formula(options)
    except WorkbenchError as err:
        yield KindProblem("layers", f"a layer formula; {err}", ...)
        return
    own = {i for i in range(len(layers)) if f"layer_{i + 1}_nm" in raw}
    if any(x.qwot is not None for i, x in enumerate(layers) if i not in own) and "reference_nm" not in raw:
        yield KindProblem("reference_nm", "a reference wavelength in nm for the QWOT layers (missing)", ...)
    reflects = options.get("reflects", "none")
    paths = raw.get("paths", list(_CHANNELS))
    if reflects != "none" and isinstance(paths, list) and reflects not in paths:
        yield KindProblem("reflects", f"one of the element's paths ({', '.join(map(str, paths))}) or \"none\"",
                          reflects)


KIND = register_kind(ElementKind(
    name="coating",
    summary="multilayer thin-film coating (trim, IR cut or splitter face), characteristic-matrix method",
    curve=_curve,
    per_path=True,
    check=_check,
    load=_load,
    more_params=_more_params,
    field_angles=("aoi_deg",),
    params={
        "reference_nm": ParamSpec(100.0, 3000.0, False, False, "nm", optional=True,
                                  meaning="reference wavelength of the QWOT layers"),
        "thickness_scale": ParamSpec(0.0, 3.0, True, False, "", 1.0,
                                     meaning="every layer's thickness × this (systematic thickness error)"),
        "aoi_deg": ParamSpec(0.0, 80.0, False, False, "deg", 0.0,
                             meaning="chief-ray angle in the incidence medium"),
        "f_number": ParamSpec(0.5, 1000.0, False, False, "", optional=True,
                              meaning="absent: the chief ray only; given: averaged over the cone of rays"),
    },
    options={
        "layers": OptionSpec("str", required=True,
                             meaning="layer formula from the incidence side: `(H L)^10 H`, `0.5L`, `H[52.3]` (nm)"),
        "materials": OptionSpec(parse_materials, required=True,
                                meaning="symbols: `{H = \"TiO2\", L = \"SiO2\"}`, built-in names, indices or "
                                        "`{file = \"nk.csv\"}` (a user n,k table)"),
        "incident": OptionSpec(_parse_medium, default="air",
                               meaning="incidence medium (e.g. crown-517 inside a prism)"),
        "substrate": OptionSpec(_parse_medium, default="crown-517", meaning="substrate material or index"),
        "reflects": OptionSpec(REFLECTS, default="none",
                               meaning="`none`: T on its paths; a channel: that path gets R, the others T"),
        "polarisation": OptionSpec(POLARISATIONS, default="unpolarised", meaning="light reaching the coating"),
        "back_surface": OptionSpec(BACK_SURFACE, default="none",
                                   meaning="`uncoated`: the substrate's back face into air, added incoherently"),
        "rings": OptionSpec("count", default=4, meaning="quadrature rings over the cone"),
        "azimuths": OptionSpec("count", default=8, meaning="quadrature azimuths over the cone"),
    },
    notes="R, T by the characteristic-matrix method, averaged over the cone's rays and s, p; "
          "`layer_<i>_nm` parameters (one per layer) replace the formula's thickness",
    order=85,
))
