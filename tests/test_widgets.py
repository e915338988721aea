"""The notebook panels without a browser: controls drive the core functions, errors read as the CLI's.

The panels are built in this process (ipywidgets work without a front end)
and, in :class:`TestPanelInKernel`, inside a real kernel through nbclient.
Numbers are checked against independent evaluations of the core functions
and against published values (with the source beside each check); the
error lines against what the command line prints for the same file.
"""

from __future__ import annotations

import threading
import time
from pathlib import Path

import numpy as np
import pytest

from workbench import demo_dir
from workbench.cli.main import main as cli_main
from workbench.fileio.design_toml import load_design
from workbench.errors import WorkbenchError
from workbench.analysis.evaluator import DesignEvaluator
from workbench.analysis.fit import FitResult, fit_design
from workbench.widgets.common import (
    ErrorLine,
    design_from_upload,
    error_text,
    guard,
    output_png,
    read_uploaded_spectra,
    upload_entry,
)
from workbench.widgets.design import DesignPanel
from workbench.widgets.primaries import PrimariesPanel
from workbench.widgets.sensitivity_figure import SensitivityFigure

DEMO = demo_dir() / "tern3_design.toml"
BAD = Path(__file__).parent / "data" / "design_bad"
EDGE = "prism.blue_green_nm"


def cli_error(argv, capsys) -> str:
    """The error the command line prints on stderr for ``argv`` (which must fail with status 2).

    Notes printed before it (``note: …`` lines about reading) are left out.
    """
    capsys.readouterr()
    assert cli_main(argv) == 2
    err = capsys.readouterr().err.rstrip("\n")
    return err[err.index("error: "):]


@pytest.fixture(scope="module")
def demo_design():
    return load_design(DEMO)


@pytest.fixture
def panel():
    return DesignPanel(DEMO)


class TestErrorText:
    def test_user_error_reads_as_the_cli(self):
        """A WorkbenchError becomes exactly the CLI's 'error: …' text."""
        assert error_text(WorkbenchError("x.csv, line 3: expected a number (got 'a')")) == \
            "error: x.csv, line 3: expected a number (got 'a')"

    def test_fault_is_named_not_traced(self):
        """Any other exception is one line naming its type, flagged as the workbench's fault."""
        text = error_text(ZeroDivisionError("division by zero"))
        assert text.startswith("error: unexpected ZeroDivisionError: division by zero")
        assert "Traceback" not in text and "\n" not in text


class TestGuard:
    def test_shows_and_swallows(self):
        """An exception inside the guard lands in the line and does not propagate."""
        line = ErrorLine()
        with guard(line) as g:
            raise WorkbenchError("bad thing")
        assert g.failed and line.is_error and line.text == "error: bad thing"
        assert "error: bad thing" in line.value

    def test_clears_on_success(self):
        """A clean run clears an earlier error."""
        line = ErrorLine()
        line.show(WorkbenchError("old"))
        with guard(line) as g:
            pass
        assert not g.failed and line.text == "" and line.value == ""

    def test_keyboard_interrupt_passes(self):
        """Ctrl-C is not swallowed."""
        with pytest.raises(KeyboardInterrupt):
            with guard(ErrorLine()):
                raise KeyboardInterrupt


class TestDesignFromUpload:
    def test_same_design_as_the_file(self, demo_design):
        """The demo design's bytes read as an upload give the same design as load_design."""
        d = design_from_upload("tern3_design.toml", DEMO.read_bytes(), DEMO.parent)
        assert d == demo_design
        assert d.source == "tern3_design.toml"

    @pytest.mark.parametrize("name", ["toml_syntax.toml", "many_problems.toml", "missing_file.toml"])
    def test_errors_match_the_cli(self, name, capsys, monkeypatch):
        """Syntax and schema errors of an upload read exactly as `workbench evaluate` prints them."""
        monkeypatch.chdir(BAD)
        with pytest.raises(WorkbenchError) as e:
            design_from_upload(name, (BAD / name).read_bytes(), BAD)
        assert error_text(e.value) == cli_error(["evaluate", name], capsys)

    def test_not_utf8(self, tmp_path, capsys, monkeypatch):
        """Bytes that are not UTF-8 are refused as load_design refuses the file."""
        monkeypatch.chdir(tmp_path)
        (tmp_path / "latin.toml").write_bytes("name = 'caf\xe9'\n".encode("latin-1"))
        with pytest.raises(WorkbenchError) as e:
            design_from_upload("latin.toml", (tmp_path / "latin.toml").read_bytes(), tmp_path)
        assert error_text(e.value) == cli_error(["evaluate", "latin.toml"], capsys)


class TestSensitivityFigure:
    def _figure(self, demo_design):
        ev = DesignEvaluator(demo_design)
        m = ev.measures()
        f = SensitivityFigure(m.wavelengths)
        f.set_targets(m.targets)
        f.set_context("title", "target")
        f.set_reference(m.curves, "as loaded")
        return ev, f, m

    def test_update_draws_the_new_curves(self, demo_design):
        """New responses give a new picture; the same responses the same SVG text."""
        ev, f, m = self._figure(demo_design)
        first = f.update(m.curves)
        m2 = ev.measures({EDGE: 536.0})
        moved = f.update(m2.curves)
        assert first.startswith("<svg") and moved != first
        assert f.update(m.curves) == first

    def test_residual_limits_follow_the_data(self, demo_design):
        """A residual far outside the current limits widens them, so nothing is clipped."""
        ev, f, m = self._figure(demo_design)
        f.update(m.curves)
        lim0 = f._res_lim
        f.update(m.curves * 3)
        res = np.max(np.abs(m.curves * 3 * f.scale - f._targets))
        assert f._res_lim >= res > lim0

    def test_scale_makes_largest_target_one(self, demo_design):
        """Every curve is drawn × the factor that makes the largest |target| 1."""
        _, f, m = self._figure(demo_design)
        assert np.max(np.abs(f._targets)) == pytest.approx(1.0)
        assert f.scale == pytest.approx(1 / np.max(np.abs(m.targets)))

    def test_axes_carry_units(self, demo_design):
        """Both panels name their quantity; the wavelength axis its unit; the legend names the styles."""
        _, f, m = self._figure(demo_design)
        svg = f.update(m.curves)
        for text in ("wavelength λ (nm)", "relative response", "camera − target", "as loaded",
                     "camera R, G, B (white balance + matrix)"):
            assert text in svg


class TestDesignPanelSliders:
    def test_one_slider_per_bounded_parameter_and_the_angles(self, panel, demo_design):
        """Every parameter with min/max gets its bounds; angles and f-number get one too."""
        bounded = {k: p for k, p in demo_design.parameters().items() if p.min is not None}
        assert set(bounded) <= set(panel.sliders)
        for k, p in bounded.items():
            s = panel.sliders[k]
            assert (s.min, s.max, s.value) == (p.min, p.max, p.value)
        for k in ("prism.blue_green_aoi_deg", "prism.green_red_aoi_deg", "prism.f_number"):
            s = panel.sliders[k]
            assert s.min < s.value < s.max
        assert panel.sliders["prism.blue_green_aoi_deg"].value == 25.0  # the demo design file
        assert panel.error.text == ""

    def test_opening_state_matches_the_evaluator(self, panel, demo_design):
        """The panel opens on the design's own measures."""
        m = DesignEvaluator(demo_design).measures()
        assert panel.measures.vora_value == pytest.approx(m.vora_value, rel=1e-12)
        assert f"{m.vora_value:.4f}" in panel.table.value

    def test_moving_an_edge_changes_measures_and_picture(self, panel, demo_design):
        """An edge slider re-evaluates the design (as an independent evaluator does) and redraws the picture."""
        before_svg = panel.svg()
        before_table = panel.table.value
        panel.sliders[EDGE].value = 545.0
        ref = DesignEvaluator(demo_design.with_values({EDGE: 545.0})).measures()
        assert panel.measures.vora_value == pytest.approx(ref.vora_value, rel=1e-12)
        assert panel.measures.delta_E00["daylight"]["mean"] == pytest.approx(ref.delta_E00["daylight"]["mean"])
        assert panel.svg() != before_svg
        assert panel.table.value != before_table
        assert f"{ref.vora_value:.4f}" in panel.table.value
        assert panel.svg().startswith(f'<svg xmlns="http://www.w3.org/2000/svg" version="1.1" '
                                      f'width="{panel.figure.width:g}" height="{panel.figure.height:g}"')

    def test_angle_of_incidence_moves_the_edges(self, panel, demo_design):
        """The splitter's angle of incidence (no bounds in the file) changes the curves too."""
        c0 = panel.measures.sensitivities.copy()
        panel.sliders["prism.blue_green_aoi_deg"].value = 30.0
        ref = DesignEvaluator(demo_design).measures({"prism.blue_green_aoi_deg": 30.0})
        np.testing.assert_allclose(panel.measures.sensitivities, ref.sensitivities)
        assert not np.allclose(panel.measures.sensitivities, c0)

    def test_set_values_and_reset(self, panel, demo_design):
        """Several sliders move with one update; reset returns to the design."""
        panel.set_values({EDGE: 540.0, "prism.green_red_nm": 610.0})
        assert panel.values()[EDGE] == 540.0 and panel.values()["prism.green_red_nm"] == 610.0
        panel.reset()
        assert panel.values()[EDGE] == demo_design.parameters()[EDGE].value

    def test_measures_table_units_and_methods(self, panel):
        """The table names unit and method of every headline number."""
        t = panel.table.value
        for text in ("Vora value ν", "0-1", "Neugebauer q", "Luther residual", "mean ΔE00", "p95",
                     "CIEDE2000", "noise gain", "SNR R/G/B (dB)", "Vora &amp; Trussell 1993",
                     "display RGB, white = 1"):
            assert text in t, text


class TestDesignPanelFit:
    @pytest.mark.slow  # a fit in the panel thread and a reference fit
    def test_fit_button_runs_the_fit(self, panel, demo_design):
        """The Fit button fits from the slider values in a thread; the result equals fit_design's."""
        panel.sliders[EDGE].value = 540.0
        start = demo_design.with_values(panel.values())
        panel.fit_button.click()
        assert panel.wait(120)
        res = panel.result
        assert isinstance(res, FitResult) and res.converged
        assert res.start_design == start
        direct = fit_design(start, progress=False)
        assert res.after.vora_value == pytest.approx(direct.after.vora_value, rel=1e-9)
        assert res.after.vora_value > res.before.vora_value
        for k, p in res.design.free_parameters().items():
            assert panel.sliders[k].value == pytest.approx(p.value)
        assert panel.measures.vora_value == pytest.approx(res.after.vora_value, rel=1e-9)
        assert "converged" in panel.fit_status.value
        assert panel.reference_label == "before fit"
        assert not panel.fit_button.disabled and panel.stop_button.disabled
        assert panel.progress.value > 0 and panel.progress.bar_style == "success"
        assert "Fit of" in panel.fit_report.value

    @pytest.mark.slow  # a worst-light fit in the panel thread
    def test_objective_choice(self, panel):
        """'ΔE00, worst light' fits the worst-illuminant objective; 'Vora value ν' the ν objective."""
        panel.objective.value = "worst"
        panel.fit(wait=True)
        assert panel.result.objective == "mean-delta-e00" and panel.result.across_illuminants == "worst"
        assert panel.objective.disabled is False

    @pytest.mark.slow  # three fits along the front
    def test_front_mode(self, panel):
        """The front mode fits N points, shows the figure and the table, with a running progress total."""
        panel.mode.value = "front"
        panel.front_points.value = 3
        panel.fit(wait=True)
        res = panel.result
        assert [p["t"] for p in res.front] == [0.0, 0.5, 1.0]
        assert 'alt="accuracy against noise"' in panel.fit_report.value
        assert panel.progress.value > res.evaluations  # the three fits counted together

    @pytest.mark.slow  # the nominal and the robust fit, two tolerance runs
    def test_robust_mode(self, panel):
        """The robust mode writes nominal against robust (yields with Wilson intervals) into the panel."""
        panel.mode.value = "robust"
        panel.robust_draws.value = 4
        panel.fit(wait=True)
        rb = panel.result.robust
        assert rb["draws"] == 4 and 0 <= rb["robust"]["yield"] <= 1
        assert "Nominal against robust" in panel.fit_report.value

    def test_front_refused_for_a_delta_e_matrix(self, panel):
        """A front with a ΔE00 matrix is refused in the error line before any work."""
        from dataclasses import replace

        panel.design = replace(panel.design, fit=replace(panel.design.fit, matrix="delta-e00"))
        panel.mode.value = "front"
        panel.fit()
        assert not panel.fitting
        assert panel.error.text.startswith("error: '--front' needs a matrix computed by its rule")

    def test_stop_keeps_the_best_point(self, panel, monkeypatch):
        """Stop during a fit ends it as 'stopped' (status 3) with the best point so far."""
        from workbench.analysis.evaluator import DesignEvaluator

        started = threading.Event()
        real = DesignEvaluator.sensitivities

        def slow(self, x):
            started.set()
            time.sleep(0.05)
            return real(self, x)

        monkeypatch.setattr(DesignEvaluator, "sensitivities", slow)
        panel.fit()
        assert started.wait(30)
        assert panel.fitting and panel.sliders[EDGE].disabled
        panel.stop_button.click()
        assert panel.wait(60)
        assert panel.result.status == 3 and panel.result.status_name == "stopped"
        assert "the best point found is kept" in panel.result.status_message
        assert "stopped" in panel.fit_status.value
        assert panel.result.after.vora_value >= panel.result.before.vora_value - 1e-12
        assert not panel.sliders[EDGE].disabled

    def test_no_free_parameters(self, tmp_path):
        """A design with nothing free says so in the error line instead of fitting."""
        text = DEMO.read_text().replace("free = true", "free = false")
        f = tmp_path / "fixed.toml"
        f.write_text(text.replace('file = "', f'file = "{DEMO.parent.as_posix()}/'))
        p = DesignPanel(f)
        assert p.error.text == "", p.error.text
        p.fit(wait=True)
        assert p.result is None
        assert p.error.text.startswith("error: ") and "no free parameters to fit" in p.error.text


class TestDesignPanelFiles:
    def test_bad_upload_shows_the_cli_error(self, panel, capsys, monkeypatch):
        """A bad uploaded design shows the same error line as the CLI and keeps the loaded design."""
        monkeypatch.chdir(BAD)
        panel.path.value = str(BAD / "x.toml")
        vora = panel.measures.vora_value
        panel.upload.value = (upload_entry("many_problems.toml", (BAD / "many_problems.toml").read_bytes()),)
        assert panel.error.is_error
        assert panel.error.text == cli_error(["evaluate", "many_problems.toml"], capsys)
        assert "Traceback" not in panel.error.value
        assert panel.measures.vora_value == vora and EDGE in panel.sliders

    def test_good_upload_opens(self, panel, demo_design):
        """An uploaded design opens with its file names read beside the path box's folder."""
        panel.path.value = str(DEMO)
        text = DEMO.read_text().replace("value = 532.0", "value = 540.0")
        panel.upload.value = (upload_entry("edited.toml", text.encode()),)
        assert panel.error.text == ""
        assert panel.sliders[EDGE].value == 540.0
        assert panel.path.value == str(DEMO)  # the folder for the next upload's file names stays
        ref = DesignEvaluator(demo_design.with_values({EDGE: 540.0})).measures()
        assert panel.measures.vora_value == pytest.approx(ref.vora_value, rel=1e-12)

    def test_bad_path_shows_the_cli_error(self, panel, capsys, monkeypatch, tmp_path):
        """A path that does not exist reads as `workbench evaluate` says it."""
        monkeypatch.chdir(tmp_path)
        assert not panel.load("nope.toml")
        assert panel.error.text == cli_error(["evaluate", "nope.toml"], capsys)
        assert panel.load_button.description == "Load"
        panel.path.value = str(DEMO)
        panel.load_button.click()
        assert panel.error.text == ""

    def test_bad_panel_start(self, tmp_path, capsys, monkeypatch):
        """A panel opened on a bad file shows the error and no sliders (no exception)."""
        monkeypatch.chdir(BAD)
        p = DesignPanel("toml_syntax.toml")
        assert p.error.text == cli_error(["evaluate", "toml_syntax.toml"], capsys)
        assert p.sliders == {} and p.measures is None

    def test_save_writes_the_current_state(self, panel, tmp_path):
        """Save writes the slider values and the matrix of this state; the file reads back the same."""
        panel.sliders[EDGE].value = 541.0
        target = tmp_path / "sub" / "saved.toml"
        assert not panel.save(target)
        assert "cannot write" in panel.error.text and not target.exists()
        target.parent.mkdir()
        assert panel.save(target), panel.error.text
        d = load_design(target)
        assert d.parameters()[EDGE].value == 541.0
        np.testing.assert_allclose(np.array(d.matrix.values), panel.measures.matrices[0], rtol=1e-12)
        m = DesignEvaluator(d).measures()  # file names rebased: the saved design still finds its data
        assert m.vora_value == pytest.approx(panel.measures.vora_value, rel=1e-12)
        assert panel.status.text.startswith(f"saved {target}")
        assert not list(tmp_path.joinpath("sub").glob(".*.tmp"))

    def test_save_needs_toml(self, panel, tmp_path):
        """The save box wants a .toml name."""
        assert not panel.save(tmp_path / "x.txt")
        assert panel.error.text == f"error: save as: expected a .toml file name (got {str(tmp_path / 'x.txt')!r})"

    def test_export_curves(self, panel, tmp_path):
        """Export writes the sensitivities and the matrixed responses with the targets, read back exactly."""
        from workbench.fileio.spectra_csv import read_spectra_csv

        out = tmp_path / "curves.csv"
        assert panel.export(out), panel.error.text
        s = read_spectra_csv(out)
        assert s.names == ("R", "G", "B") and s.kind == "sensitivity"
        np.testing.assert_array_equal(s.values, panel.measures.sensitivities)
        s2 = read_spectra_csv(tmp_path / "curves-matrixed.csv")
        np.testing.assert_array_equal(s2.values[:3], panel.measures.curves)
        np.testing.assert_array_equal(s2.values[3:], panel.measures.targets)


class TestPrimariesPanel:
    @pytest.fixture
    def pp(self):
        return PrimariesPanel()

    def test_named_set_matrix(self, pp):
        """BT.709 opens with the RP 177 matrix colour-science gives for the same set."""
        import colour

        ref = colour.RGB_COLOURSPACES["ITU-R BT.709"].matrix_RGB_to_XYZ  # colour-science 0.4.7
        np.testing.assert_allclose(pp.primaries.matrix_RGB_to_XYZ, ref, atol=1e-6)
        # ITU-R BT.709-6, item 3.2: Y' = 0.2126 R' + 0.7152 G' + 0.0722 B'
        assert "K_R 0.2126, K_G 0.7152, K_B 0.0722" in pp.info.value
        assert pp.error.text == ""

    @pytest.mark.slow  # builds the primaries panel and redraws its figures
    def test_changing_set_redraws(self, pp):
        """Another named set redraws the diagram and the targets and changes the tables."""
        a, t, info = output_png(pp.chroma_plot), output_png(pp.target_plot), pp.info.value
        pp.named.value = "ITU-R BT.2020"
        assert output_png(pp.chroma_plot) != a and output_png(pp.target_plot) != t
        # ITU-R BT.2020-2, Table 4: K_R 0.2627, K_B 0.0593
        assert "K_R 0.2627" in pp.info.value and "K_B 0.0593" in pp.info.value and pp.info.value != info

    @pytest.mark.slow  # builds the primaries panel and redraws its figures
    def test_uv_diagram(self, pp):
        """The u′v′ toggle redraws the diagram."""
        a = output_png(pp.chroma_plot)
        pp.diagram.value = "uv"
        assert output_png(pp.chroma_plot) != a

    @pytest.mark.slow  # builds the primaries panel and redraws its figures
    def test_typed_chromaticities(self, pp):
        """Typed x, y become the set; SMPTE C values give SMPTE C's matrix."""
        pp.mode.value = "chromaticities"
        # SMPTE RP 145 / 170M: R (0.630, 0.340), G (0.310, 0.595), B (0.155, 0.070), white D65
        for k, v in {"xR": 0.630, "yR": 0.340, "xG": 0.310, "yG": 0.595, "xB": 0.155, "yB": 0.070}.items():
            pp.xy[k].value = v
        pp.apply_xy.click()
        import colour

        ref = colour.RGB_COLOURSPACES["SMPTE C"].matrix_RGB_to_XYZ  # colour-science 0.4.7
        np.testing.assert_allclose(pp.primaries.matrix_RGB_to_XYZ, ref, atol=2e-4)

    @pytest.mark.slow  # builds the primaries panel and redraws its figures
    def test_collinear_chromaticities_error_matches_cli(self, pp, capsys):
        """Primaries on one line are refused with the CLI's message."""
        pp.mode.value = "chromaticities"
        for k, v in {"xR": 0.6, "yR": 0.3, "xG": 0.4, "yG": 0.3, "xB": 0.2, "yB": 0.3}.items():
            pp.xy[k].value = v
        pp.apply_xy.click()
        assert pp.error.text == cli_error(["primaries", "--xy", "0.6,0.3,0.4,0.3,0.2,0.3"], capsys)

    def test_bad_white(self, pp, capsys):
        """An unknown white name reads as the CLI says it."""
        pp.mode.value = "chromaticities"
        pp.white.value = "D99"
        pp.apply_xy.click()
        assert pp.error.text == cli_error(["primaries", "--xy", "0.64,0.33,0.3,0.6,0.15,0.06",
                                           "--white", "D99"], capsys)

    @pytest.mark.slow  # builds the primaries panel and redraws its figures
    def test_emitters_from_path_and_upload_agree(self, pp):
        """The demo emitters by path and by upload give the same set and drive levels."""
        from workbench.colorimetry.primaries import primaries_from_emitters
        from workbench.fileio.spectra_csv import read_spectra_csv

        f = demo_dir() / "emitters_phosphor.csv"
        pp.mode.value = "emitter spectra"
        assert pp.error.text == ""
        by_path = pp.primaries
        ref = primaries_from_emitters(read_spectra_csv(f, kind="emission"), "2")
        np.testing.assert_allclose(by_path.xy, ref.xy, rtol=1e-12)
        pp.emitter_upload.value = (upload_entry("emitters_phosphor.csv", f.read_bytes()),)
        np.testing.assert_allclose(pp.primaries.xy, ref.xy, rtol=1e-12)
        assert pp.drive is not None and "drive levels for white" in pp.info.value

    @pytest.mark.slow  # builds the primaries panel and redraws its figures
    def test_bad_emitter_upload_error_matches_cli(self, pp, capsys, monkeypatch, tmp_path):
        """A bad uploaded emitter file shows exactly what `workbench primaries --emitters` prints."""
        monkeypatch.chdir(tmp_path)
        text = b"wavelength_nm,R,G\n400,1,0\n500,0,1\n600,x,0\n"
        (tmp_path / "bad_emitters.csv").write_bytes(text)
        pp.mode.value = "emitter spectra"
        prev = pp.primaries
        pp.emitter_upload.value = (upload_entry("bad_emitters.csv", text),)
        assert pp.error.text == cli_error(["primaries", "--emitters", "bad_emitters.csv"], capsys)
        assert pp.primaries is prev

    @pytest.mark.slow  # builds the primaries panel and redraws its figures
    def test_two_emitters_error_matches_cli(self, pp, capsys, monkeypatch, tmp_path):
        """A readable file with two spectra is refused as the CLI refuses it."""
        monkeypatch.chdir(tmp_path)
        rows = "\n".join(f"{w},{np.exp(-((w - 600) / 20) ** 2):.6f},{np.exp(-((w - 530) / 20) ** 2):.6f}"
                         for w in range(380, 781, 5))
        text = ("wavelength_nm,R,G\n" + rows + "\n").encode()
        (tmp_path / "two.csv").write_bytes(text)
        pp.mode.value = "emitter spectra"
        pp.emitter_upload.value = (upload_entry("two.csv", text),)
        assert pp.error.text == cli_error(["primaries", "--emitters", "two.csv"], capsys)

    @pytest.mark.slow  # builds the primaries panel and redraws its figures
    def test_emitter_fit_reaches_bt709(self, pp):
        """The emitter-set fit reaches the BT.709 primaries and white within its tolerance."""
        from workbench.colorimetry.coordinates import xy_to_uv_prime

        assert pp.fit_emitters(), pp.error.text
        res = pp.emitter_fit
        assert res.success, res.message
        # ITU-R BT.709-6, Part 2, item 1.3-1.4
        target = np.array([[0.640, 0.330], [0.300, 0.600], [0.150, 0.060]])
        duv = np.linalg.norm(xy_to_uv_prime(res.primaries_xy) - xy_to_uv_prime(target), axis=-1)
        assert np.all(duv < 1e-4)
        assert output_png(pp.fit_plot) is not None and "targets reached" in pp.fit_report.value

    @pytest.mark.slow  # builds the primaries panel and redraws its figures
    def test_bars_table(self, pp):
        """The bar table follows amplitude and luma: 75 % yellow Y′ and 100 % white code 235."""
        pp.bar_luma.value = "BT.709"
        # ITU-R BT.709-6 item 3.2: Y' = 0.2126 R' + 0.7152 G' + 0.0722 B'; yellow at 75 %: 0.75 × 0.9278
        pp.bar_amplitude.value = 75.0
        assert f"{0.75 * (0.2126 + 0.7152):.4f}" in pp.bars.value
        pp.bar_amplitude.value = 100.0
        # ITU-R BT.709-6 item 4.6: 8-bit nominal white Y = 235, black 16
        assert "<td style=\"padding:1px 6px\">235</td>" in pp.bars.value
        assert "luma BT.709" in pp.bars.value


class TestReadUploadedSpectra:
    def test_empty_upload(self):
        """Nothing uploaded gives None."""
        import ipywidgets as W

        assert read_uploaded_spectra(W.FileUpload()) is None

    def test_reads_as_the_csv_reader(self):
        """An upload reads by the CSV reader's rules and is named by the file name."""
        import ipywidgets as W

        u = W.FileUpload()
        u.value = (upload_entry("r.csv", "nm;a\n400;50\n500;60\n600;70\n".encode()),)
        s = read_uploaded_spectra(u)
        assert s.source == "r.csv" and s.values[0].tolist() == [0.5, 0.6, 0.7]


@pytest.mark.slow  # starts a kernel
class TestPanelInKernel:
    """The notebook's panel inside a real kernel, driven cell by cell (nbclient)."""

    def test_slider_in_kernel_updates_widget_state(self, tmp_path):
        """Setting a slider in the kernel changes the measures HTML and the Output's SVG in the widget state."""
        import nbformat
        from nbclient import NotebookClient

        nb = nbformat.read(Path(__file__).parents[1] / "notebooks" / "02-camera-design.ipynb", as_version=4)
        client = NotebookClient(nb, timeout=180, kernel_name="python3",
                                resources={"metadata": {"path": str(tmp_path)}})

        def state():
            out, table = None, None
            for st in client.widget_state.values():
                if "wb-design-plot" in st.get("_dom_classes", ()):
                    out = [o["data"]["image/svg+xml"] for o in st.get("outputs", [])
                           if "image/svg+xml" in o.get("data", {})]
                if "wb-measures" in st.get("_dom_classes", ()):
                    table = st.get("value")
            return out, table

        nb.cells = nb.cells[:2]  # the introduction and the panel
        with client.setup_kernel():
            for i, cell in enumerate(nb.cells):
                if cell.cell_type == "code":
                    client.execute_cell(cell, i)
            png0, table0 = state()
            extra = nbformat.v4.new_code_cell(
                f"panel.sliders[{EDGE!r}].value = 548.0\nprint(round(panel.measures.vora_value, 6))")
            nb.cells.append(extra)
            client.execute_cell(extra, len(nb.cells) - 1)
            png1, table1 = state()
        assert png0 and png1 and png0 != png1
        assert table0 and table1 and table0 != table1
        printed = float("".join(o.get("text", "") for o in extra.outputs).strip())
        ref = DesignEvaluator(load_design(DEMO).with_values({EDGE: 548.0})).measures()
        assert printed == pytest.approx(ref.vora_value, abs=1e-6)
        assert png1[0].startswith("<svg") and "wavelength λ (nm)" in png1[0]
