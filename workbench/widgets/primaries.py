"""The primaries notebook panel: a named set, typed chromaticities or emitter spectra.

The chromaticity diagram with gamut triangles, the target functions, the
emitter-set fit and the colour-bar table; every number comes from
:mod:`workbench.colorimetry` with its unit and method.
"""

from __future__ import annotations

import html
from pathlib import Path

import ipywidgets as W
import numpy as np
from matplotlib.figure import Figure

from workbench import demo_dir
from workbench.colorimetry.emitters import Band, Emitter, fit_emitter_set
from workbench.colorimetry.gamut import coverage_of_named_sets, gamut_area
from workbench.colorimetry.primaries import (
    PRIMARIES,
    drive_levels_for_white,
    primaries_from_emitters,
    primaries_from_xy,
    primaries_named,
)
from workbench.colorimetry.signals import BAR_COLUMNS, colour_bars, luma_coefficients_of
from workbench.colorimetry.targets import target_cmfs
from workbench.errors import WorkbenchError
from workbench.fileio.spectra_csv import read_spectra_csv
from workbench.model.spectra import grid
from workbench.plots.chromaticity import plot_chromaticity_diagram, plot_target_cmfs
from workbench.plots.spectra import plot_spectra
from workbench.widgets.common import (
    ErrorLine,
    compact,
    figure_png,
    fmt_number,
    guard,
    html_table,
    read_uploaded_spectra,
    show_png,
    uploaded_files,
)

__all__ = ["PrimariesPanel", "primaries_panel"]

#: Evaluation budget of the primaries panel's emitter-set fit (1 nm grid; a second or two).
EMITTER_FIT_EVALUATIONS = 300


# --------------------------------------------------------------------------
# The primaries panel
# --------------------------------------------------------------------------


def _start_emitters(shape: str):
    """Three emitters to start the emitter-set fit.

    One band each near the usual display peaks (620, 530, 455 nm; common
    practice), and a weak blue side band on the red emitter (1 % at
    450 nm) so that a red below the spectral locus, as BT.709's, can be
    reached. Widths 2-150 nm FWHM, amplitudes 0-100 (relative).
    """
    def band(peak, width, amplitude, peaks):
        return Band(shape, peak, width, amplitude, peak_bounds=peaks, width_bounds=(2.0, 150.0),
                    amplitude_bounds=(0.0, 100.0))

    return (
        Emitter("red", (band(620.0, 25.0, 1.0, (580.0, 700.0)), band(450.0, 20.0, 0.01, (400.0, 500.0)))),
        Emitter("green", (band(530.0, 35.0, 1.0, (490.0, 580.0)),)),
        Emitter("blue", (band(455.0, 25.0, 1.0, (400.0, 490.0)),)),
    )


class PrimariesPanel(W.VBox):
    """The primaries panel: a set of display primaries, its gamut, targets, emitters and bars.

    Choose a named set, type the chromaticities of R, G, B and a white, or
    load three emitter spectra (path or upload). The panel shows the
    chromaticity diagram with the gamut triangles (and those of the sets
    chosen for comparison), the RP 177 matrices, luminance coefficients,
    gamut area and coverage, the target colour-matching functions, an
    emitter-set fit to the set and the colour-bar table.

    Attributes
    ----------
    primaries : Primaries or None
    drive : DriveLevels or None (emitter spectra only)
    emitter_fit : EmitterFit or None
    error : ErrorLine
    """

    def __init__(self, *, name: str = "ITU-R BT.709", **kw):
        super().__init__(**kw)
        self.add_class("wb-primaries-panel")
        self.primaries = None
        self.drive = None
        self.emitters = None
        self.emitter_fit = None
        self.error = ErrorLine()
        self.mode = W.ToggleButtons(options=["named set", "chromaticities", "emitter spectra"],
                                    value="named set", style={"button_width": "130px"})
        self.mode.add_class("wb-mode")
        self.named = W.Dropdown(options=list(PRIMARIES), value=name, description="set",
                                layout=W.Layout(width="320px"))
        self.named.add_class("wb-named")
        xy0 = PRIMARIES[name].xy
        self.xy = {}
        boxes = []
        for i, ch in enumerate("RGB"):
            for j, c in enumerate("xy"):
                t = W.BoundedFloatText(value=float(xy0[i, j]), min=0.0, max=1.0, step=0.001,
                                       description=f"{c} {ch}", layout=W.Layout(width="150px"),
                                       style={"description_width": "40px"})
                t.add_class(f"wb-xy-{c}{ch}")
                self.xy[f"{c}{ch}"] = t
                boxes.append(t)
        self.white = W.Text(value="D65", description="white", layout=W.Layout(width="220px"),
                            tooltip="CIE illuminant name (D65, C, D50, …), DCI, or x,y",
                            style={"description_width": "40px"})
        self.white.add_class("wb-white")
        self.apply_xy = W.Button(description="Use these", layout=W.Layout(width="100px"))
        self.apply_xy.add_class("wb-apply-xy")
        self.emitter_path = W.Text(value=str(demo_dir() / "emitters_phosphor.csv"), description="emitters CSV",
                                   layout=W.Layout(width="520px"), style={"description_width": "90px"})
        self.emitter_path.add_class("wb-emitter-path")
        self.emitter_load = W.Button(description="Load", layout=W.Layout(width="70px"))
        self.emitter_load.add_class("wb-emitter-load")
        self.emitter_upload = W.FileUpload(accept=".csv,.txt", multiple=False, description="Upload .csv",
                                           layout=W.Layout(width="150px"))
        self.emitter_upload.add_class("wb-emitter-upload")
        self.luminance = W.BoundedFloatText(value=100.0, min=1e-6, max=1e9, description="white Y",
                                            tooltip="luminance the drive levels must reach: cd/m² for "
                                                    "absolute spectra, Σ S ȳ Δλ for relative ones",
                                            layout=W.Layout(width="180px"), style={"description_width": "60px"})
        self.observer = W.Dropdown(options=[("CIE 1931 2°", "2"), ("CIE 1964 10°", "10")], value="2",
                                   description="observer", layout=W.Layout(width="230px"))
        self.diagram = W.ToggleButtons(options=[("CIE 1931 xy", "xy"), ("CIE 1976 u′v′", "uv")], value="xy",
                                       style={"button_width": "110px"})
        self.diagram.add_class("wb-diagram")
        self.compare = W.SelectMultiple(options=list(PRIMARIES), value=["ITU-R BT.2020"],
                                        description="compare", rows=6, layout=W.Layout(width="300px"))
        self.compare.add_class("wb-compare")
        self.source_box = W.VBox()
        self.chroma_plot = W.Output(layout=W.Layout(flex="0 0 auto", width="570px"))
        self.chroma_plot.add_class("wb-chromaticity-plot")
        self.target_plot = W.Output()
        self.target_plot.add_class("wb-targets-plot")
        self.info = W.HTML()
        self.info.add_class("wb-primaries-info")
        # emitter-set fit
        self.band_shape = W.Dropdown(options=["gaussian-wavenumber", "gaussian"], value="gaussian-wavenumber",
                                     description="band shape", layout=W.Layout(width="300px"),
                                     style={"description_width": "80px"})
        self.fit_button = W.Button(description="Fit emitter set", button_style="primary",
                                   tooltip="move three one-band emitters until their primaries and "
                                           "white hit this set", layout=W.Layout(width="130px"))
        self.fit_button.add_class("wb-emitter-fit")
        self.fit_report = W.HTML()
        self.fit_report.add_class("wb-emitter-fit-report")
        self.fit_plot = W.Output()
        self.fit_plot.add_class("wb-emitter-fit-plot")
        # bars
        self.bar_amplitude = W.FloatSlider(value=100.0, min=1.0, max=100.0, step=1.0, description="bars %",
                                           readout_format=".0f", layout=W.Layout(width="360px"))
        self.bar_amplitude.add_class("wb-bar-amplitude")
        self.bar_luma = W.Dropdown(options=["this set (RP 177)", "BT.601", "BT.709", "BT.2020"],
                                   value="this set (RP 177)", description="luma", layout=W.Layout(width="260px"))
        self.bar_luma.add_class("wb-bar-luma")
        self.bars = W.HTML()
        self.bars.add_class("wb-bars")

        self.mode.observe(lambda _: self._mode_changed(), names="value")
        self.named.observe(lambda _: self.use_named(), names="value")
        self.apply_xy.on_click(lambda _: self.use_xy())
        self.emitter_load.on_click(lambda _: self.use_emitters(self.emitter_path.value))
        self.emitter_upload.observe(self._on_upload, names="value")
        for w in (self.observer, self.diagram, self.compare):
            w.observe(lambda _: self.refresh(), names="value")
        self.fit_button.on_click(lambda _: self.fit_emitters())
        self.bar_amplitude.observe(lambda _: self._bars(), names="value")
        self.bar_luma.observe(lambda _: self._bars(), names="value")

        self.children = [
            self.mode, self.source_box, self.error,
            W.HBox([self.observer, self.diagram]),
            W.HBox([self.chroma_plot, W.VBox([self.compare, self.info],
                                             layout=W.Layout(flex="1 1 0%", min_width="0", margin="0 0 0 8px"))],
                   layout=W.Layout(width="100%")),
            self.target_plot,
            W.HTML("<div style='line-height:1.3'><b>Emitter-set fit</b> "
                   "<span style='font-size:11px;color:#555'>three emitters (start 620 / 530 / 455 nm, a weak "
                   "450 nm side band on red; 1 nm grid) moved until each primary and the equal-drive white "
                   "hit this set (bounded least squares, Δu′v′ tolerance 1e-4)</span></div>"),
            W.HBox([self.band_shape, self.fit_button]),
            self.fit_report, self.fit_plot,
            W.HTML("<b>Signal levels and colour bars</b>"),
            W.HBox([self.bar_amplitude, self.bar_luma]),
            self.bars,
        ]
        self._mode_changed()

    # -- choosing the set ----------------------------------------------------------
    def _mode_changed(self) -> None:
        m = self.mode.value
        if m == "named set":
            self.source_box.children = [self.named]
            self.use_named()
        elif m == "chromaticities":
            g = list(self.xy.values())
            self.source_box.children = [W.HBox(g[0:2]), W.HBox(g[2:4]), W.HBox(g[4:6]),
                                        W.HBox([self.white, self.apply_xy])]
            self.use_xy()
        else:
            self.source_box.children = [W.HBox([self.emitter_path, self.emitter_load, self.emitter_upload]),
                                        W.HBox([self.white, self.luminance])]
            self.use_emitters(self.emitter_path.value)

    def use_named(self) -> bool:
        """Use the named set chosen in the dropdown."""
        with guard(self.error) as g:
            self._set(primaries_named(self.named.value), None, None)
        return not g.failed

    def use_xy(self) -> bool:
        """Use the typed chromaticities and white."""
        with guard(self.error) as g:
            xy = np.array([[self.xy[f"x{c}"].value, self.xy[f"y{c}"].value] for c in "RGB"])
            p = primaries_from_xy(xy, self.white.value.strip() or "D65", name="typed chromaticities",
                                  observer=self.observer.value)
            self._set(p, None, None)
        return not g.failed

    def use_emitters(self, path=None, *, spectra=None) -> bool:
        """Use three emitter spectra (R, G, B) from a CSV path or given spectra."""
        with guard(self.error) as g:
            s = spectra if spectra is not None else read_spectra_csv(Path(str(path).strip()), kind="emission")
            self._emitter_set(s)
        return not g.failed

    def _on_upload(self, change) -> None:
        if not uploaded_files(self.emitter_upload):
            return
        with guard(self.error):
            s = read_uploaded_spectra(self.emitter_upload, kind="emission")
            self._emitter_set(s)

    def _emitter_set(self, s) -> None:
        white = self.white.value.strip() or "D65"
        p = primaries_from_emitters(s, self.observer.value, white=white, name=str(s.source or "emitters"))
        d = drive_levels_for_white(s, white, float(self.luminance.value), observer=self.observer.value)
        self._set(p, d, s)

    def _set(self, p, drive, emitters) -> None:
        self.primaries, self.drive, self.emitters = p, drive, emitters
        self.emitter_fit = None
        self.fit_report.value = ""
        self.fit_plot.outputs = ()
        self.refresh()

    # -- the outputs -------------------------------------------------------------
    def refresh(self) -> None:
        """Redraw the diagram, the targets, the tables and the bars for the current set."""
        if self.primaries is None:
            return
        with guard(self.error, clear=False):
            self._draw()
            self._info()
            self._bars()

    def _draw(self) -> None:

        p = self.primaries
        sets = [p] + [PRIMARIES[n] for n in self.compare.value if n != p.name]
        fig = Figure(figsize=(6.2, 6.2), dpi=90, layout="constrained")
        ax = plot_chromaticity_diagram(sets, diagram=self.diagram.value, observer=self.observer.value,
                                       ax=fig.add_subplot())
        if self.diagram.value == "uv":
            ax.legend(fontsize=7, loc="lower right")  # the upper right holds the triangles in u′v′
        show_png(self.chroma_plot, figure_png(fig), alt="chromaticity diagram")
        fig = Figure(figsize=(8.4, 5.0), dpi=84, layout="constrained")
        t = target_cmfs(p, grid(380, 780, 5), self.observer.value)
        ax = plot_target_cmfs(t, observer=self.observer.value, ax=fig.add_subplot(),
                              title=f"Target colour-matching functions of {p.name} (white {p.white_name})")
        ax.yaxis.label.set_fontsize(9)  # the long label fits the axes' height
        show_png(self.target_plot, figure_png(fig), alt="target functions")

    def _info(self) -> None:
        p = self.primaries
        M = p.matrix_RGB_to_XYZ
        Minv = p.matrix_XYZ_to_RGB
        K = p.luminance_coefficients

        def mat(A, rows, cols):
            return html_table([{"": r, **{c: fmt_number(A[i, j], 6) for j, c in enumerate(cols)}}
                               for i, r in enumerate(rows)], [""] + list(cols))

        cov = coverage_of_named_sets(p)
        cov_rows = [{"set": n, "xy": f"{100 * c['xy']:.1f}", "uv": f"{100 * c['uv']:.1f}"} for n, c in cov.items()]
        xy_rows = [{"": ch, "x": fmt_number(p.xy[i, 0]), "y": fmt_number(p.xy[i, 1])} for i, ch in enumerate("RGB")]
        xy_rows.append({"": f"white {p.white_name}", "x": fmt_number(p.white_xy[0]), "y": fmt_number(p.white_xy[1])})
        parts = [
            f'<div style="font-size:12px"><b>{html.escape(p.name)}</b> — {html.escape(p.source)}</div>',
            html_table(xy_rows, ["", "x", "y"], caption="chromaticities (CIE 1931 x, y)", cls="wb-xy-table"),
            '<div style="font-size:12px;margin-top:4px">RGB → XYZ (SMPTE RP 177, white RGB 1,1,1 → '
            'Y = 1)</div>',
            mat(M, ["X", "Y", "Z"], ["R", "G", "B"]),
            '<div style="font-size:12px;margin-top:4px">XYZ → RGB (inverse)</div>',
            mat(Minv, ["R", "G", "B"], ["X", "Y", "Z"]),
            f'<div style="font-size:12px;margin-top:4px">luminance coefficients K_R {K[0]:.4f}, K_G {K[1]:.4f}, '
            f'K_B {K[2]:.4f} (Y row of the matrix); gamut area {gamut_area(p, "xy"):.5f} in xy, '
            f'{gamut_area(p, "uv"):.5f} in u′v′ (chromaticity units²)</div>',
            html_table(cov_rows, ["set", "xy", "uv"],
                       headers=["named set", "% covered in xy", "% covered in u′v′"],
                       caption=f"how much of each named set's triangle {p.name} covers", cls="wb-coverage"),
        ]
        if self.drive is not None:
            d = self.drive
            parts.append(
                f'<div style="font-size:12px;margin-top:4px" class="wb-drive">drive levels for white '
                f'{html.escape(self.white.value)} at Y = {d.luminance:g} ({html.escape(d.units)}): '
                f'R {d.drive[0]:.4f}, G {d.drive[1]:.4f}, B {d.drive[2]:.4f} of the measured drive — '
                f'{html.escape(d.message)}</div>')
        notes = list(self.emitters.notes) if self.emitters is not None else []
        for n in notes + list(p.notes):
            parts.append(f'<div style="font-size:11px;color:#555">note: {html.escape(n)}</div>')
        self.info.value = compact("".join(parts))

    def _bars(self) -> None:
        with guard(self.error, clear=False):
            system = self.primaries if self.bar_luma.value.startswith("this set") else self.bar_luma.value
            label, K = luma_coefficients_of(system)
            rows = colour_bars(self.bar_amplitude.value / 100.0, K)
            out = [{c: (r[c] if isinstance(r[c], (str, int)) else fmt_number(r[c])) for c in BAR_COLUMNS} for r in rows]
            head = (f"colour bars at {self.bar_amplitude.value:g} % amplitude; luma {label}: K_R {K[0]:.4f}, "
                    f"K_G {K[1]:.4f}, K_B {K[2]:.4f}")
            self.bars.value = compact(
                html_table(out, BAR_COLUMNS, caption=head, cls="wb-bars-table")
                + '<div style="font-size:11px;color:#555">R′G′B′, Y′, B′−Y′, R′−Y′, U, V (PAL factors '
                  '0.493, '
                  '0.877), Cb, Cr (0.5/(1−K)) in signal units 0-1; Y8…Cr10 narrow-range code values '
                  '(Y 16-235, C 16-240 at 8 bits; ITU-R BT.601/709 quantisation).</div>')

    # -- the emitter-set fit --------------------------------------------------------
    def fit_emitters(self) -> bool:
        """Fit three one-band emitters so their primaries and white hit the current set."""

        with guard(self.error) as g:
            if self.primaries is None:
                raise WorkbenchError("choose a set of primaries first")
            res = fit_emitter_set(_start_emitters(self.band_shape.value), self.primaries, grid(380, 780, 1),
                                  observer=self.observer.value, max_nfev=EMITTER_FIT_EVALUATIONS)
            self.emitter_fit = res
            bands = "; ".join(
                f"{e.name} band {j + 1}: peak {c.peak_nm:.1f} nm, FWHM {c.width_nm:.1f} nm, "
                f"amplitude {c.amplitude:.4g}" for e in res.emitters for j, c in enumerate(e.components))
            self.fit_report.value = compact(res._repr_html_() + (
                f'<div style="font-size:12px">{html.escape(bands)} (relative radiance; '
                f'{res.nfev} evaluations)</div>'))
            fig = Figure(figsize=(8.4, 3.4), dpi=84, layout="constrained")
            ax = plot_spectra(res.spectra, ax=fig.add_subplot(), colours=[(0.8, 0.1, 0.1), (0.1, 0.6, 0.1),
                                                                            (0.1, 0.2, 0.85)])
            ax.set_title(f"Fitted emitter set for {self.primaries.name} ({self.band_shape.value} bands)")
            show_png(self.fit_plot, figure_png(fig), alt="fitted emitter spectra")
        return not g.failed


def primaries_panel(name: str = "ITU-R BT.709") -> PrimariesPanel:
    """The primaries panel opened on a named set; see :class:`PrimariesPanel`."""
    return PrimariesPanel(name=name)
