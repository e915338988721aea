"""The registry of optical element kinds: what a ``[[chain]]`` element of each ``type`` may hold and does.

Each kind is one :class:`ElementKind`, declared in one module of
:mod:`workbench.optics.kinds` and entered here by :func:`register_kind`.
It states, in one place:

- its parameters (:class:`ParamSpec`: domain, unit, default, meaning; every
  parameter may then carry ``min``, ``max``, ``free`` and ``tolerance`` in a
  design file), in schema order;
- its options (:class:`OptionSpec`: a file, a name, a choice, a count ...);
- its own validation beyond each key's domain (``ordered`` pairs of
  parameters, and an optional ``check`` function);
- its curve function (:class:`CurveInput` → ``(..., n)`` on each of the
  element's paths, or ``(..., 3, n)`` for R, G, B when ``per_path``);
- whether it reads a tabulated curve (``reads``: the spectral quantity of
  its ``file`` option, read once when the design is loaded).

The design-file validator (:mod:`workbench.fileio.design_toml`), the loader
(:mod:`workbench.fileio.design_files`), the chain
(:mod:`workbench.optics.chain`), the tolerance draws, the notebook sliders
and the table of kinds in docs/design-file.md all read :data:`ELEMENT_KINDS`,
a mapping of type names to kinds, in the spirit of colour-science's
``method=`` registries (a mapping of names to entries, validated against its
keys).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Iterator, Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from workbench.errors import WorkbenchError

__all__ = [
    "CHANNELS",
    "EXTRAPOLATIONS",
    "ParamSpec",
    "OptionSpec",
    "KindProblem",
    "CurveInput",
    "ElementKind",
    "KindRegistry",
    "ELEMENT_KINDS",
    "register_kind",
    "unregister_kind",
    "element_kind",
    "parameter_spec",
    "element_param_spec",
    "LoadInput",
]

#: The camera's channels, in the order of every (..., 3, n) array.
CHANNELS = ("R", "G", "B")
#: How a tabulated curve may be extended beyond its measured range (``extrapolation`` option).
EXTRAPOLATIONS = ("none", "constant", "zero")

_INF = math.inf


def _fmt(x: float) -> str:
    return "inf" if x == _INF else "-inf" if x == -_INF else f"{x:g}"


@dataclass(frozen=True)
class ParamSpec:
    """One numeric parameter of a kind: its domain, unit, default and meaning.

    Parameters
    ----------
    lo, hi : float
        The domain's ends (``math.inf`` for none).
    lo_open, hi_open : bool
        Whether each end is excluded.
    unit : str
        ``'nm'``, ``'mm'``, ``'deg'``, ``'mired'`` or ``''`` for a plain number.
    default : float or None
        The value when the key is absent; ``None``: required (unless ``optional``).
    optional : bool
        May be absent with no default (the kind then does without it).
    meaning : str
        A few words for the documentation table.
    slider : callable or None
        For a parameter without ``min``/``max`` in the design that should
        still get a notebook slider: ``value -> (lo, hi, note)``.
    """

    lo: float
    hi: float
    lo_open: bool
    hi_open: bool
    unit: str
    default: float | None = None
    optional: bool = False
    meaning: str = ""
    slider: Callable[[float], tuple[float, float, str]] | None = field(default=None, compare=False)

    def contains(self, v):
        """True where ``v`` lies in the domain (scalar or array)."""
        above = v > self.lo if self.lo_open else v >= self.lo
        below = v < self.hi if self.hi_open else v <= self.hi
        return above & below

    def describe(self) -> str:
        """The domain as the validator says it: ``a number in (0, 1000] nm``."""
        lo = "(" if self.lo_open else "["
        hi = ")" if self.hi_open else "]"
        unit = f" {self.unit}" if self.unit else ""
        return f"a number in {lo}{_fmt(self.lo)}, {_fmt(self.hi)}{hi}{unit}"

    def describe_short(self) -> str:
        """The domain for the documentation: ``(0, 1000] nm``."""
        lo = "(" if self.lo_open else "["
        hi = ")" if self.hi_open else "]"
        unit = f" {self.unit}" if self.unit else ""
        return f"{lo}{_fmt(self.lo)}, {_fmt(self.hi)}{hi}{unit}"


#: Option value kinds the validator knows: ``'file'`` (a file name relative to the design file, read
#: at load when the kind ``reads``), ``'str'`` (a non-empty string), ``'positive'`` (a number > 0),
#: ``'count'`` (an integer 1-64), ``'columns'`` (a table naming a column for each of the element's
#: paths); or a tuple of allowed strings; or a function ``value -> parsed value`` that raises
#: ``ValueError("<what was expected>")`` for a bad value (any TOML value: strings, arrays, tables).
OPTION_KINDS = ("file", "str", "positive", "count", "columns")


@dataclass(frozen=True)
class OptionSpec:
    """One non-numeric setting of a kind (not fitted, not toleranced).

    ``kind`` is one of :data:`OPTION_KINDS` or a tuple of allowed strings;
    ``default`` is used when the key is absent and not ``required``.
    """

    kind: str | tuple[str, ...] | Callable[[Any], Any]
    required: bool = False
    default: Any = None
    meaning: str = ""

    def __post_init__(self):
        if not isinstance(self.kind, tuple) and not callable(self.kind) and self.kind not in OPTION_KINDS:
            raise WorkbenchError(f"option kind must be one of {', '.join(OPTION_KINDS)} or a tuple of "
                                 f"choices (got {self.kind!r})")


@dataclass(frozen=True)
class KindProblem:
    """A problem a kind's ``check`` finds: ``key`` below the element (``''``: the element itself).

    The validator reports ``chain[i].key: expected <expected> (got <got>)``;
    leave ``got`` out to say only what was expected.
    """

    key: str
    expected: str
    got: Any = field(default=..., compare=False)


@dataclass(frozen=True, eq=False)
class CurveInput:
    """What a kind's curve function receives.

    Attributes
    ----------
    wavelengths : (n,) ndarray
        The design grid, nm.
    params : dict of str to (...) ndarray
        The kind's parameters by their own key (``'center_nm'``), any batch
        shape; all broadcast together.
    options : dict of str to object
        The element's options (defaults filled in).
    paths : tuple of str
        The channels the element sits on, in R, G, B order.
    data : (rows, n) ndarray, object or None
        The tabulated curve(s) read at load for a kind that ``reads`` (one
        row, or one per path), already on the design grid; what the kind's
        ``load`` returned for a kind that loads; else None.
    names : tuple of str
        For a kind that ``reads``: the file's column headers of ``data``'s rows.
    """

    wavelengths: np.ndarray
    params: dict
    options: dict
    paths: tuple[str, ...]
    data: np.ndarray | None = None
    names: tuple[str, ...] = ()

    def p(self, key: str):
        """A parameter's value(s)."""
        return self.params[key]

    def option(self, key: str, default=None):
        """An option's value."""
        return self.options.get(key, default)


@dataclass(frozen=True, eq=False)
class LoadInput:
    """What a kind's ``load`` function receives when the design is loaded.

    Attributes
    ----------
    key : str
        ``'chain[i]'``, for messages.
    name : str
        The element's name.
    options : dict
        Its options (defaults filled in).
    paths : tuple of str
    wavelengths : (n,) ndarray
        The design grid, nm.
    resolve : callable
        ``resolve(file_name) -> Path``: a file name of the design (relative
        to the design file's folder) as a path.
    file : str or None
        The element's ``file`` option as written (for messages).
    source : str or None
        The design file (or what stands for it), for messages.
    """

    key: str
    name: str
    options: dict
    paths: tuple[str, ...]
    wavelengths: np.ndarray
    resolve: Callable[[str], Any]
    file: str | None = None
    source: str | None = None

    def option(self, key: str, default=None):
        """An option's value."""
        return self.options.get(key, default)


@dataclass(frozen=True)
class ElementKind:
    """One kind of optical element: parameters, options, validation and curve, in one place.

    Parameters
    ----------
    name : str
        The ``type`` written in the design file, e.g. ``'long-pass'``.
    curve : callable
        ``curve(CurveInput) -> ndarray``: ``(..., n)`` transmittance (or
        sensitivity) 0-1 applied on each of the element's paths, or with
        ``per_path`` ``(..., 3, n)`` for R, G, B (1 where it does not act).
    params : mapping of str to ParamSpec
        In schema order (the order a saved file writes them).
    options : mapping of str to OptionSpec
    summary : str
        What it is, in a few words (documentation table).
    ordered : tuple of (str, str)
        Parameter pairs that must increase (``('low_nm', 'high_nm')``):
        checked on loading, on slider moves and on every tolerance draw.
    check : callable or None
        ``check(raw: dict, params: dict, options: dict) -> iterable of
        KindProblem`` for rules beyond each key's domain; ``raw`` is the
        element's TOML table, ``params``/``options`` what passed so far.
    reads : str or None
        The spectral quantity of its ``file`` option (``'transmittance'``,
        ``'sensitivity'``), read once at load with its ``column`` /
        ``columns`` / ``extrapolation`` options; ``'sensitivity'`` also
        gives the chain its units.
    per_path : bool
        The curve is ``(..., 3, n)`` over R, G, B.
    paths_key : bool
        The element takes a ``paths`` key (default all of R, G, B); False
        for an element that acts on all three by itself (the splitter).
    at_most_one : bool
        At most one element of this kind — or of its ``group`` — in a chain.
    group : str or None
        Kinds with ``at_most_one`` and the same group share the limit (a
        second kind of beam splitter sets ``group="dichroic-splitter"``: one
        splitter per chain, whichever kind).
    order : int
        Position in listings (the validator's "one of ..." and the
        documentation table); built-in kinds use 10-90.
    notes : str
        More for the documentation table (formulae, rules).
    more_params : callable or None
        ``more_params(options: dict) -> mapping of str to ParamSpec``: the
        parameters an element has beyond ``params`` given its options (a
        coating's per-layer thicknesses named by its layer formula). They are
        validated, fitted, toleranced and saved like the fixed ones.
    load : callable or None
        ``load(LoadInput) -> object``: what the element needs from files,
        read once when the design is loaded (e.g. material tables); the
        object (immutable; a ``notes`` tuple attribute is collected into the
        chain's notes) arrives as :attr:`CurveInput.data`. For tabulated
        curves use ``reads`` instead.
    field_angles : tuple of str
        Parameters (angles of incidence, deg) to which the field angle
        across the image adds (the field-shift analysis).
    after_read : callable or None
        For a kind that ``reads``: ``after_read(spectra, LoadInput) ->
        spectra``, called at load once the columns are chosen and before
        the curve is put on the grid; it may add notes or raise a
        :class:`~workbench.errors.WorkbenchError` about what the file says
        (the glass: total or internal transmittance from its header).
    """

    name: str
    curve: Callable[[CurveInput], np.ndarray]
    params: Mapping[str, ParamSpec] = field(default_factory=dict)
    options: Mapping[str, OptionSpec] = field(default_factory=dict)
    summary: str = ""
    ordered: tuple[tuple[str, str], ...] = ()
    check: Callable[[dict, dict, dict], Iterable[KindProblem]] | None = None
    reads: str | None = None
    per_path: bool = False
    paths_key: bool = True
    at_most_one: bool = False
    group: str | None = None
    order: int = 1000
    notes: str = ""
    more_params: Callable[[dict], Mapping[str, ParamSpec]] | None = None
    load: Callable[[LoadInput], Any] | None = None
    field_angles: tuple[str, ...] = ()
    after_read: Callable[[Any, LoadInput], Any] | None = None

    def param_specs(self, options: Mapping | None = None) -> Mapping[str, ParamSpec]:
        """Every parameter an element of this kind has with ``options``: ``params`` then ``more_params``.

        Raises
        ------
        WorkbenchError
            ``more_params`` returned a name of a fixed parameter or option.
        """
        if self.more_params is None:
            return self.params
        extra = dict(self.more_params(dict(options or {})))
        clash = set(extra) & (set(self.params) | set(self.options) | {"name", "type", "paths"})
        if clash:
            raise WorkbenchError(f"kind {self.name!r}: more_params must give new names (got "
                                 f"{', '.join(sorted(clash))})")
        return {**self.params, **extra}

    def __post_init__(self):
        if not isinstance(self.name, str) or not self.name or self.name != self.name.strip():
            raise WorkbenchError(f"kind name must be a non-empty string (got {self.name!r})")
        if not callable(self.curve):
            raise WorkbenchError(f"kind {self.name!r}: curve must be callable (got {self.curve!r})")
        clash = set(self.params) & (set(self.options) | {"name", "type", "paths"})
        if clash:
            raise WorkbenchError(f"kind {self.name!r}: parameter names must differ from the options and "
                                 f"name, type, paths (got {', '.join(sorted(clash))})")
        for a, b in self.ordered:
            if a not in self.params or b not in self.params:
                raise WorkbenchError(f"kind {self.name!r}: ordered pairs must name parameters (got {a!r}, {b!r})")
        if self.reads is not None and "file" not in self.options:
            raise WorkbenchError(f"kind {self.name!r}: a kind that reads a curve must have a 'file' option")
        if self.after_read is not None and self.reads is None:
            raise WorkbenchError(f"kind {self.name!r}: after_read needs reads (a tabulated curve)")
        if self.reads is not None and self.load is not None:
            raise WorkbenchError(f"kind {self.name!r}: give either reads (a tabulated curve) or load, not both")
        for a in self.field_angles:
            if a not in self.params:
                raise WorkbenchError(f"kind {self.name!r}: field_angles must name parameters (got {a!r})")


class KindRegistry(Mapping):
    """A read-only mapping of type names to :class:`ElementKind`, in listing order.

    Entries come and go only through :func:`register_kind` and
    :func:`unregister_kind`.
    """

    def __init__(self):
        self._kinds: dict[str, ElementKind] = {}

    def __getitem__(self, name: str) -> ElementKind:
        return self._kinds[name]

    def __iter__(self) -> Iterator[str]:
        return iter(self._kinds)

    def __len__(self) -> int:
        return len(self._kinds)

    def __repr__(self) -> str:
        return f"KindRegistry({', '.join(self._kinds)})"

    def _add(self, kind: ElementKind, replace: bool) -> None:
        if kind.name in self._kinds and not replace and self._kinds[kind.name] is not kind:
            raise WorkbenchError(f"element kind {kind.name!r} is already registered")
        self._kinds[kind.name] = kind
        self._kinds = dict(sorted(self._kinds.items(), key=lambda kv: kv[1].order))

    def _remove(self, name: str) -> ElementKind:
        if name not in self._kinds:
            raise WorkbenchError(f"no element kind {name!r} to remove (have {', '.join(self._kinds)})")
        return self._kinds.pop(name)


#: Every element kind by its ``type`` name, in listing order.
ELEMENT_KINDS = KindRegistry()


def register_kind(kind: ElementKind, *, replace: bool = False) -> ElementKind:
    """Enter ``kind`` in :data:`ELEMENT_KINDS` and return it (a module's ``KIND = register_kind(...)``).

    Raises
    ------
    WorkbenchError
        A kind of that name is registered already (unless ``replace``).
    """
    if not isinstance(kind, ElementKind):
        raise WorkbenchError(f"kind must be an ElementKind (got {type(kind).__name__})")
    ELEMENT_KINDS._add(kind, replace)
    return kind


def unregister_kind(name: str) -> ElementKind:
    """Remove a kind from :data:`ELEMENT_KINDS` (tests that registered a throwaway kind)."""
    return ELEMENT_KINDS._remove(name)


def element_kind(name: str) -> ElementKind:
    """The registered kind named ``name``.

    Raises
    ------
    WorkbenchError
        ``'type' must be one of measured, glass, ... (got 'x')``.
    """
    try:
        return ELEMENT_KINDS[name]
    except (KeyError, TypeError):
        raise WorkbenchError(f"'type' must be one of {', '.join(ELEMENT_KINDS)} (got {name!r})") from None


def parameter_spec(element_type: str, key: str) -> ParamSpec | None:
    """The :class:`ParamSpec` of fixed parameter ``key`` of kind ``element_type`` (None when there is none).

    For an element's own parameters (including a kind's ``more_params``) use
    :func:`element_param_spec`.
    """
    kind = ELEMENT_KINDS.get(element_type)
    return None if kind is None else kind.params.get(key)


def element_param_spec(element, key: str) -> ParamSpec | None:
    """The :class:`ParamSpec` of parameter ``key`` of one design element (None when there is none)."""
    kind = ELEMENT_KINDS.get(element.type)
    if kind is None:
        return None
    if kind.more_params is None:
        return kind.params.get(key)
    try:
        return kind.param_specs(dict(element.options)).get(key)
    except WorkbenchError:
        return None


# --------------------------------------------------------------------------
# Parameter domains several kinds share
# --------------------------------------------------------------------------

#: A wavelength, nm (an edge's 50 % point).
WAVELENGTH = ParamSpec(100.0, 3000.0, False, False, "nm")
#: An edge's 10-90 % width, nm.
EDGE_WIDTH = ParamSpec(0.0, 1000.0, True, False, "nm", meaning="10-90 % width")
#: The in-band level, 0-1 (default 1).
PASS_LEVEL = ParamSpec(0.0, 1.0, False, False, "", 1.0, meaning="in-band level")
#: The blocking level, 0-1 (default 0).
BLOCK_LEVEL = ParamSpec(0.0, 1.0, False, False, "", 0.0, meaning="blocking level")
