"""``workbench coating LAYERS.csv``: reflectance and transmittance of a layer stack, s and p, at several angles.

The layer table has one row per layer from the incidence side, columns
``material`` (a built-in name, a user material given with ``--material``, or
a plain index such as ``2.35`` or ``2.1+0.001j``) and ``thickness_nm``
(physical thickness). The stack is computed by the characteristic-matrix
method (:mod:`workbench.optics.thinfilm`).

Outputs (stdout): ``--format csv`` one row per wavelength, columns
``wavelength_nm`` then for each angle A as given ``R_s_A, R_p_A, T_s_A,
T_p_A`` (fractions 0-1); ``json`` the same arrays per angle with the 50 %
points of T of every edge and the edges of the reflection band for s, p and their mean;
``table`` the band edges
and the same columns aligned. ``--figures DIR``: R/T against wavelength for
each angle and the edge positions against angle, as PNG; the folder is written as one unit
(:class:`workbench.fileio.outdir.OutputFolder`).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from workbench import plots  # its modules (and matplotlib) load on first use, when a figure is drawn
from workbench.analysis.transition import band_sides
from workbench.cli.commands._output import FORMATS, notice, render_rows, to_json
from workbench.errors import InputFileError, RangeCoverageError, WorkbenchError
from workbench.fileio.atomic import write_bytes_atomically
from workbench.fileio.layers_csv import read_layer_table
from workbench.fileio.outdir import OutputFolder
from workbench.optics.materials import built_in_names, material_named, read_nk_csv
from workbench.optics.thinfilm import half_points, stack_response

HELP = "reflectance and transmittance of a thin-film layer stack, s and p, at several angles"

EDGE_RULE = ("edge of each side of the main reflection band (the run of R >= 50 % with the largest area): the single "
             "50 % crossing of its transition (R 90 % -> 10 %) to the pass band; a transition with several crossings "
             "or a rise of R of more than 1 % is non-monotone (docs/methods.md §15, 'Edges and ripple')")

METHOD = ("characteristic-matrix method (H. A. Macleod, Thin-Film Optical Filters, 4th ed., 2010, ch. 2); "
          "R, T fractions 0-1; angles in degrees in the incidence medium")


def register(sub) -> None:
    p = sub.add_parser(
        "coating",
        help=HELP,
        description=(
            HELP + ". LAYERS.csv: one row per layer from the incidence side, columns 'material' and "
            "'thickness_nm'. Materials: " + ", ".join(built_in_names()) + ", a user n,k table "
            "(--material NAME=FILE.csv) or a plain index such as 2.35 or 2.1+0.001j."
        ),
    )
    p.add_argument("layers", type=Path, metavar="LAYERS.csv", help="the layer table")
    p.add_argument("--incident", default="air", metavar="MATERIAL",
                   help="incidence medium, a lossless material or index (default: air; e.g. crown-517 "
                   "inside a prism)")
    p.add_argument("--substrate", default="crown-517", metavar="MATERIAL",
                   help="substrate material or index (default: crown-517)")
    p.add_argument("--angles", default="0", metavar="A1,A2,...",
                   help="angles of incidence in the incidence medium, degrees, 0 ≤ A < 90 (default: 0)")
    p.add_argument("--grid", default="380:780:1", metavar="START:STOP:STEP",
                   help="wavelength grid in nm, STOP included (default: 380:780:1)")
    p.add_argument("--material", action="append", default=[], metavar="NAME=FILE.csv",
                   help="a user material from an n,k table (columns wavelength_nm, n, k); repeatable")
    p.add_argument("--back-surface", action="store_true",
                   help="add the substrate's uncoated back face incoherently (thick substrate, into air)")
    p.add_argument("--format", choices=FORMATS, default="table", help="output format (default: table)")
    p.add_argument("--figures", type=Path, metavar="DIR", default=None,
                   help="write R/T per angle and the edge positions against angle as PNG into DIR")
    p.set_defaults(run=run)


def parse_grid(text: str) -> np.ndarray:
    """``START:STOP:STEP`` in nm → the grid, STOP included."""
    parts = text.replace(" ", "").split(":")
    try:
        start, stop, step = (float(x) for x in parts)
    except ValueError:
        raise WorkbenchError(f"--grid must be START:STOP:STEP in nm, e.g. 380:780:1 (got {text!r})") from None
    if not all(np.isfinite([start, stop, step])) or start <= 0 or step <= 0 or stop <= start:
        raise WorkbenchError(f"--grid must have 0 < START < STOP and STEP > 0 (got {text!r})")
    n = (stop - start) / step
    if abs(n - round(n)) > 1e-6 * max(1.0, n):
        raise WorkbenchError(f"--grid must span a whole number of steps from START to STOP (got {text!r})")
    if round(n) + 1 > 200_000:
        raise WorkbenchError(f"--grid must have at most 200000 wavelengths (got {round(n) + 1})")
    return start + step * np.arange(round(n) + 1)


def parse_angles(text: str) -> list[float]:
    """``0,22.5,45`` → angles in degrees, each 0 ≤ A < 90, no repeats."""
    out = []
    for cell in text.replace(" ", "").split(","):
        try:
            a = float(cell)
        except ValueError:
            raise WorkbenchError(f"--angles must be comma-separated degrees such as 0,45 (got {cell!r})") from None
        if not np.isfinite(a) or a < 0 or a >= 90:
            raise WorkbenchError(f"--angles must be 0 ≤ angle < 90 degrees (got {cell})")
        if a in out:
            raise WorkbenchError(f"--angles must not repeat an angle (got {cell} twice)")
        out.append(a)
    return out


def _user_materials(specs) -> dict:
    user = {}
    for spec in specs:
        name, sep, path = spec.partition("=")
        if not sep or not name.strip() or not path.strip():
            raise WorkbenchError(f"--material must be NAME=FILE.csv (got {spec!r})")
        user[name.strip()] = read_nk_csv(path.strip(), name=name.strip())
    return user


def _medium(text: str, option: str, user, wl):
    try:
        m = material_named(text, user=user)
        return m, m.index(wl)
    except WorkbenchError as err:
        raise WorkbenchError(f"{option}: {err}") from None


def angle_label(a: float) -> str:
    """An angle as it appears in column names: ``45``, ``22.5``."""
    return f"{a:g}"


def compute(args):
    """Read, check and compute everything; returns (rows, media, response, wl, angles)."""
    wl = parse_grid(args.grid)
    angles = parse_angles(args.angles)
    user = _user_materials(args.material)
    rows = read_layer_table(args.layers, user=user)
    inc, n_inc = _medium(args.incident, "--incident", user, wl)
    if np.any(n_inc.imag != 0):
        raise WorkbenchError(f"--incident must be a lossless medium (k = 0) (got {args.incident!r})")
    sub, n_sub = _medium(args.substrate, "--substrate", user, wl)
    if args.back_surface and np.any(n_sub.imag != 0):
        raise WorkbenchError(f"--substrate must be lossless (k = 0) with --back-surface (got {args.substrate!r})")
    N = np.empty((len(rows), wl.size), dtype=complex)
    for i, r in enumerate(rows):
        try:
            N[i] = r.material.index(wl)
        except RangeCoverageError as err:
            raise InputFileError(str(err), str(args.layers), r.line, "material") from None
    d = np.array([r.thickness_nm for r in rows])
    res = stack_response(N, d, wl, angles, incident=n_inc.real, substrate=n_sub,
                         back_surface=args.back_surface, exit_medium=1.0)
    return rows, (inc, sub), res, wl, angles


def half_points_of(res, wl, ia: int) -> dict:
    """Every 50 % point of T for s, p and their mean at angle ``ia``."""
    curves = {"s": res.T[0, ia], "p": res.T[1, ia], "mean": res.T_mean[ia]}
    return {pol: [{"wavelength_nm": round(w, 4), "T": direction} for w, direction in half_points(wl, T)]
            for pol, T in curves.items()}


def band_sides_of(res, wl, ia: int) -> dict:
    """Both sides of the main reflection band (:func:`~workbench.analysis.transition.band_sides`) of R_s, R_p and their mean at angle ``ia``."""
    curves = {"s": res.R[0, ia], "p": res.R[1, ia], "mean": res.R_mean[ia]}
    return {pol: band_sides(wl, R) for pol, R in curves.items()}


def band_edges_of(res, wl, ia: int) -> dict:
    """The band edges for JSON: per polarisation the crossing bounding the band on each side (None off the grid) and each side's transition."""
    out = {}
    for pol, sides in band_sides_of(res, wl, ia).items():
        out[pol] = {f"{side}_nm": (None if not np.isfinite(t.band_edge_nm) else round(float(t.band_edge_nm), 4))
                    for side, t in sides.items()}
        out[pol].update({side: t.to_dict() for side, t in sides.items()})
    return out


def _edge_lines(res, wl, angles) -> tuple[list[str], list[str]]:
    """The table's lines on the band edges and ripples, and the (angle, polarisation, side) not monotone."""
    lines = ["# main reflection band's edges at R = 50 %, nm, short-wave / long-wave (- off the grid); " + EDGE_RULE + ":"]
    ripple = ["# ripple, s / p / mean: in the transition (largest rise of R against its fall, R 90 % -> 10 %) and "
              "in the pass band (max - min of R, peak-to-peak, from one transition width beyond it to the grid's end):"]
    rough = []

    def pct(v):
        return "-" if not np.isfinite(v) else f"{v:.1f}"

    for ia, a in enumerate(angles):
        by = band_sides_of(res, wl, ia)
        lines.append(f"#   {angle_label(a):>5}°  " + "   ".join(
            f"{pol} {by[pol]['short_wave'].short_text()} / {by[pol]['long_wave'].short_text()}"
            for pol in ("s", "p", "mean")))
        for side in ("short_wave", "long_wave"):
            ripple.append(f"#   {angle_label(a):>5}° {side.replace('_', '-')} side: transition " + " / ".join(
                pct(by[pol][side].reversal_pct) for pol in ("s", "p", "mean")) + " %; pass band " + " / ".join(
                pct(by[pol][side].pass_ripple_pct) for pol in ("s", "p", "mean")) + " %")
            rough += [f"{angle_label(a)}° {pol} {side.replace('_', '-')}" for pol in ("s", "p", "mean")
                      if not by[pol][side].problem and not by[pol][side].monotone]
    if rough:
        lines.append("#   * non-monotone transition (R rises again by more than 1 % between R 90 % and 10 %); "
                     "a–b: several 50 % crossings, first and last, no single edge")
    return lines + ripple, rough


def _csv_columns(angles) -> list[str]:
    cols = ["wavelength_nm"]
    for a in angles:
        A = angle_label(a)
        cols += [f"R_s_{A}", f"R_p_{A}", f"T_s_{A}", f"T_p_{A}"]
    return cols


def _spectral_rows(res, wl, angles) -> list[dict]:
    cols = _csv_columns(angles)
    data = [wl]
    for ia in range(len(angles)):
        data += [res.R[0, ia], res.R[1, ia], res.T[0, ia], res.T[1, ia]]
    M = np.column_stack(data)
    out = []
    for row in M:
        d = {cols[0]: float(f"{row[0]:.6g}")}
        for c, v in zip(cols[1:], row[1:]):
            d[c] = float(f"{v:.8f}")
        out.append(d)
    return out


def render_figures(res, title: str) -> dict[str, bytes]:
    """Every figure as PNG bytes, keyed by file name (drawn before anything is written)."""
    names = figure_names([float(a) for a in res.angles_deg])
    figs = {name: plots.coating.plot_stack_spectra(res, ia, title=title) for ia, name in enumerate(names[:-1])}
    figs[names[-1]] = plots.coating.plot_half_points_vs_angle(res, title=title)
    return {name: plots.coating.png_bytes(fig, dpi=110) for name, fig in figs.items()}


def figure_names(angles) -> tuple[str, ...]:
    """The PNG files ``--figures`` writes for these angles."""
    return tuple(f"coating-RT-{angle_label(a)}deg.png" for a in angles) + ("coating-edges-vs-angle.png",)


def run(args) -> int:
    folder = None
    if args.figures is not None:
        folder = OutputFolder(args.figures, option="--figures", command="coating",
                              names=figure_names(parse_angles(args.angles)))
        folder._validate()                     # before any computing
    rows, (inc, sub), res, wl, angles = compute(args)
    figures = render_figures(res, args.layers.name) if folder is not None else None
    if args.format != "csv":
        edge_lines, rough = _edge_lines(res, wl, angles)
        if rough:
            shown = ", ".join(rough[:6]) + (", …" if len(rough) > 6 else "")
            notice(f"{len(rough)} band edges have a non-monotone transition ({shown}): marked * in the table, "
                   "'monotone': false in JSON; a crossing of 50 % on a ripple is not an edge")
    if args.format == "csv":
        text = render_rows(_spectral_rows(res, wl, angles), _csv_columns(angles), "csv")
    elif args.format == "json":
        text = to_json({
            "method": METHOD,
            "edge_rule": EDGE_RULE,
            "layers_file": str(args.layers),
            "layers": [{"line": r.line, "material": r.material.name, "thickness_nm": r.thickness_nm,
                        "source": r.material.source} for r in rows],
            "incident": {"material": inc.name, "source": inc.source},
            "substrate": {"material": sub.name, "source": sub.source},
            "back_surface": bool(args.back_surface),
            "wavelength_nm": [float(f"{w:.6g}") for w in wl],
            "angles": [
                {"angle_deg": a,
                 "R_s": res.R[0, ia].tolist(), "R_p": res.R[1, ia].tolist(),
                 "T_s": res.T[0, ia].tolist(), "T_p": res.T[1, ia].tolist(),
                 "band_edges_50": band_edges_of(res, wl, ia),
                 "half_points_T": half_points_of(res, wl, ia)}
                for ia, a in enumerate(angles)
            ],
        })
    else:
        total = sum(r.thickness_nm for r in rows)
        header = [
            f"# {args.layers}: {len(rows)} layers, {total:.1f} nm in all; incident {inc.name}, "
            f"substrate {sub.name}{' with its back face' if args.back_surface else ''}",
            f"# {METHOD}",
        ]
        header += edge_lines
        text = render_rows(_spectral_rows(res, wl, angles), _csv_columns(angles), "table",
                           header_lines=header, digits=4)
    if figures is not None:
        with folder as out:
            for name, data in figures.items():
                write_bytes_atomically(out.path / name, data)
            out.commit()
        notice(f"wrote {len(figures)} figures into {args.figures}")
    print(text)
    return 0
