"""Tests of workbench.report.fit_report and workbench.plots.fit: the fit report and its five figures.

The report embeds the vector figures of workbench.plots.fit_vector (tested
in tests/test_vector_figures.py); the matplotlib figures of
workbench.plots.fit (notebooks, ``evaluate --figures``) are tested here.

One small design (a two-edge splitter and a short-pass edge on a 10 nm
grid, CIE 13.3 and CIE 224 samples under D65 and A) is fitted once per
module; the figures and the HTML page are checked against the numbers of
that fit, and the shown numbers against colour-science and scipy.
"""

from __future__ import annotations

import base64
import re
from dataclasses import replace
from html.parser import HTMLParser
from xml.etree import ElementTree

import colour
import numpy as np
import pytest
from scipy.linalg import subspace_angles

from workbench.fileio.design_toml import load_design
from workbench.errors import InputFileError, WorkbenchError
from workbench.analysis.evaluator import DesignEvaluator
from workbench.analysis.fit import FitStatus, fit_design
from workbench.plots.fit import (ARROW_SCALES, plot_chromaticity_shifts, plot_delta_e_bars,
                                 plot_noise_vs_accuracy, plot_sensitivities_vs_targets)
from workbench.report.fit_report import fit_report_figures, fit_report_html, noise_accuracy_points, write_fit_report

SMALL_DESIGN = """\
schema = 1
name = "Small test prism"
description = "Two-edge splitter and a short-pass edge on a 10 nm grid."
observer = 2

[grid]
start_nm = 380
stop_nm = 780
step_nm = 10

[target]
kind = "primaries"
name = "ITU-R BT.709"

[[chain]]
name = "prism"
type = "dichroic-splitter"
blue_green_nm = { value = 520.0, min = 480.0, max = 560.0, free = true }
green_red_nm = { value = 600.0, min = 570.0, max = 640.0, free = true }
blue_green_width_nm = { value = 20.0, min = 8.0, max = 60.0, free = true }
green_red_width_nm = { value = 20.0, min = 8.0, max = 60.0, free = true }

[[chain]]
name = "ir-cut"
type = "short-pass"
center_nm = { value = 660.0, min = 620.0, max = 700.0, free = true }
width_nm = 20.0

[[samples]]
name = "tcs"
source = "cie-13.3"

[[samples]]
name = "ces"
source = "cie-224"

[[illuminants]]
name = "daylight"
cie = "D65"

[[illuminants]]
name = "tungsten"
cie = "A"

[fit]
objective = "vora"
recording_illuminant = "daylight"
viewing_illuminant = "daylight"
"""

@pytest.fixture(scope="module")
def fitted(tmp_path_factory):
    path = tmp_path_factory.mktemp("design") / "small.toml"
    path.write_text(SMALL_DESIGN, encoding="utf-8")
    design = load_design(path)
    ev = DesignEvaluator(design)
    result = fit_design(design, progress=False, evaluator=ev)
    return design, ev, result


@pytest.fixture(scope="module")
def page(fitted):
    _, ev, result = fitted
    return fit_report_html(result, ev)


@pytest.fixture(scope="module")
def points(fitted):
    _, ev, result = fitted
    return noise_accuracy_points(result, ev)


@pytest.fixture(scope="module")
def figures(fitted, points):
    """The matplotlib versions of the report's figures (notebooks and ``evaluate --figures`` draw these)."""
    _, _, result = fitted
    a = result.after
    return {"sensitivities": plot_sensitivities_vs_targets(a, before=result.before),
            "delta_e_bars": plot_delta_e_bars(a),
            "chromaticity": plot_chromaticity_shifts(a, observer=result.design.observer),
            "noise_accuracy": plot_noise_vs_accuracy(points)}


class _Tables(HTMLParser):
    """Cell texts of every table with an id, row by row, and the text of the status block."""

    def __init__(self):
        super().__init__()
        self.tables: dict[str, list[list[str]]] = {}
        self.status = ""
        self._table = None
        self._row = None
        self._cell = None
        self._in_status = 0

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "table" and "id" in a:
            self._table = self.tables.setdefault(a["id"], [])
        elif tag == "tr" and self._table is not None:
            self._row = []
            self._table.append(self._row)
        elif tag in ("td", "th") and self._row is not None:
            self._cell = []
        if tag == "div" and a.get("id") == "status":
            self._in_status = 1
        elif tag == "div" and self._in_status:
            self._in_status += 1

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._cell is not None:
            self._row.append("".join(self._cell).strip())
            self._cell = None
        elif tag == "table":
            self._table = None
            self._row = None
        elif tag == "div" and self._in_status:
            self._in_status -= 1

    def handle_data(self, data):
        if self._cell is not None:
            self._cell.append(data)
        if self._in_status:
            self.status += data


def parse(page: str) -> _Tables:
    p = _Tables()
    p.feed(page)
    return p


def cie_d65_and_cmfs(wl):
    """D65 and CIE 1931 2° from colour-science at whole-nm points (no interpolation at 10 nm)."""
    d65 = colour.SDS_ILLUMINANTS["D65"]
    cm = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    E = np.asarray(d65.values)[np.searchsorted(d65.wavelengths, wl)]
    X = np.asarray(cm.values)[np.searchsorted(cm.wavelengths, wl)]
    return E, X


# --------------------------------------------------------------------------
# The HTML page
# --------------------------------------------------------------------------


class TestFitReportHtml:
    def test_five_embedded_svg_figures(self, page):
        """Each of the five figures is an <img> with a base64 SVG that parses as XML, texts kept as text."""
        srcs = re.findall(r'<img src="([^"]*)"', page)
        assert len(srcs) == 5
        for fig_id in ("sensitivities", "delta_e_bars", "chromaticity", "noise_accuracy", "chain"):
            assert f'<figure id="fig-{fig_id}"><img src="data:image/svg+xml;base64,' in page
        sizes = []
        for s in srcs:
            assert s.startswith("data:image/svg+xml;base64,")
            svg = base64.b64decode(s.split(",", 1)[1], validate=True).decode("utf-8")
            root = ElementTree.fromstring(svg)  # well-formed XML, one <svg> root
            assert root.tag == "{http://www.w3.org/2000/svg}svg"
            sizes.append((root.get("width"), root.get("height")))
            assert "<text" in svg and not re.search(r"\bnan\b", svg, flags=re.IGNORECASE)
        # the figures' sizes in px (workbench.plots.fit_vector)
        assert sizes[0] == ("920", "660")
        assert sizes[3] == ("780", "540")

    def test_figures_are_the_vector_figures(self, fitted, points, page):
        """The embedded pictures are fit_report_figures' vector figures, byte for byte, in order."""
        _, ev, result = fitted
        figs = fit_report_figures(result, ev, points=points)
        assert list(figs) == ["sensitivities", "delta_e_bars", "chromaticity", "noise_accuracy", "chain"]
        assert re.findall(r'<img src="([^"]*)"', page) == [f.data_uri() for f in figs.values()]

    def test_throughput_table(self, page):
        """The report has the throughput table: every element of the fitted chain, then the optics together."""
        rows = re.findall(r'<table id="throughput">(.*?)</table>', page, re.S)[0]
        names = re.findall(r"<tr><td>([^<]*)</td>", rows)
        assert len(names) >= 2 and names[-1] == "optics together" and "optics together" not in names[:-1]

    @pytest.mark.slow  # computes the whole report a second time
    def test_same_bytes_twice(self, fitted, page):
        """The page is the same when written twice (no date, numbered SVG ids)."""
        _, ev, result = fitted
        assert fit_report_html(result, ev) == page

    def test_self_contained(self, page):
        """No http(s) reference, no external script, stylesheet or image: CSS inline, images data: URIs."""
        assert not re.search(r"https?://", page, flags=re.IGNORECASE)
        assert "<link" not in page and "<script" not in page
        assert "<style>" in page
        for attr in re.findall(r'(?:src|href)="([^"]*)"', page):
            assert attr.startswith("data:image/svg+xml;base64,")
        assert page.startswith("<!DOCTYPE html>") and page.rstrip().endswith("</html>")

    def test_status_shown(self, fitted, page):
        """The status block names the fit's status, its message from the one table and the solver's words."""
        _, _, result = fitted
        status = parse(page).status
        head = ("Converged" if result.converged
                else f"NOT CONVERGED — {result.status_name.upper()} (status {int(result.status)})")
        assert status.startswith(head + ":")
        assert result.status_message.rstrip(" .") in status
        assert result.message.rstrip(" .") in status
        assert f"{result.evaluations} evaluations" in status

    def test_parameter_table(self, fitted, page):
        """One row per free parameter: unit, start, fitted, the design file's bounds, the at-bound flag."""
        _, _, result = fitted
        rows = parse(page).tables["parameters"]
        assert rows[0] == ["parameter", "unit", "start", "fitted", "lower bound", "upper bound",
                           "change", "at bound"]
        body = {r[0]: r for r in rows[1:]}
        assert set(body) == {"prism.blue_green_nm", "prism.green_red_nm", "prism.blue_green_width_nm",
                             "prism.green_red_width_nm", "ir-cut.center_nm"}
        # the bounds written in SMALL_DESIGN
        assert body["prism.blue_green_nm"][1:3] == ["nm", "520"]
        assert body["prism.blue_green_nm"][4:6] == ["480", "560"]
        assert body["prism.green_red_width_nm"][4:6] == ["8", "60"]
        assert body["ir-cut.center_nm"][4:6] == ["620", "700"]
        for p in result.parameters:
            r = body[p["name"]]
            assert float(r[3]) == pytest.approx(p["value"], rel=1e-5)
            assert r[7] == (f"at {p['at_bound']}" if p["at_bound"] else "")

    def test_vora_value_against_scipy(self, fitted, page):
        """ν shown = mean cos² of the principal angles between D65-weighted camera and CIE functions."""
        _, ev, result = fitted
        E, X = cie_d65_and_cmfs(ev.wavelengths)
        S = result.after.sensitivities.T
        # Vora & Trussell 1993: ν = Tr(P_A P_M)/3 = mean cos² of the principal angles (scipy)
        nu = np.mean(np.cos(subspace_angles(E[:, None] * S, E[:, None] * X)) ** 2)
        assert result.after.vora_value == pytest.approx(nu, abs=1e-9)
        rows = {r[0]: r for r in parse(page).tables["measures"] if len(r) == 4}
        assert rows["Vora value ν"][3] == f"{nu:.4f}"

    def test_delta_e_statistics_against_colour_science(self, fitted, page):
        """Mean, median, p95, max ΔE00 per illuminant shown = colour-science CIEDE2000 of the same Lab pairs."""
        _, _, result = fitted
        a = result.after
        rows = parse(page).tables["measures"]
        for j, ill in enumerate(a.illuminants):
            # CIE 142-2001 as implemented by colour-science
            d = colour.delta_E(a.camera_Lab[j], a.true_Lab[j], method="CIE 2000")
            start = next(i for i, r in enumerate(rows) if r == [f"ΔE00 under {ill}"])
            block = {r[0]: r for r in rows[start + 1:start + 5]}
            assert block["mean ΔE00"][3] == f"{np.mean(d):.3f}"
            assert block["median ΔE00"][3] == f"{np.median(d):.3f}"
            assert block["95th percentile ΔE00"][3] == f"{np.percentile(d, 95):.3f}"
            assert block["maximum ΔE00"][3] == f"{np.max(d):.3f}"

    def test_headline_measures_before_and_after(self, fitted, page):
        """ν, q, Luther residual, SMI and noise appear for the start and the fit, each with a unit text."""
        _, _, result = fitted
        b, a = result.before, result.after
        rows = [r for r in parse(page).tables["measures"] if len(r) == 4][1:]
        assert all(r[1] for r in rows)
        by = {r[0]: r for r in rows}
        assert by["Vora value ν"][2:] == [f"{b.vora_value:.4f}", f"{a.vora_value:.4f}"]
        assert by["Neugebauer q (R / G / B)"][3] == " / ".join(f"{v:.4f}" for v in a.neugebauer_q)
        assert by["Luther residual"][2:] == [f"{b.luther_residual:.4f}", f"{a.luther_residual:.4f}"]
        assert by["ISO 17321-1-style SMI"][2:] == [f"{b.smi['smi']:.1f}", f"{a.smi['smi']:.1f}"]
        assert "100 − 5.5 × mean ΔE*ab" in by["ISO 17321-1-style SMI"][1]
        assert by["condition number of the matrix"][3] == f"{a.noise['daylight']['condition']:.3f}"
        # row norms: Euclidean norm of each matrix row (common practice: noise gain, independent channels)
        norms = np.linalg.norm(a.matrices[0], axis=-1)
        assert by["row norms ‖mᵢ‖ (R / G / B)"][3] == " / ".join(f"{v:.3f}" for v in norms)

    def test_objective_and_methods(self, fitted, page):
        """The objective, the search and every method text of the measures are on the page."""
        import html

        _, _, result = fitted
        assert "<code>vora</code>: maximise the Vora value ν" in page
        assert "local only (bounded least squares" in page
        for key, text in result.after.methods.items():
            assert f"<dd>{html.escape(str(text))}</dd>" in page, key

    @pytest.mark.slow  # a second full report
    def test_worst_light_objective_and_quasi_newton_search_named(self, fitted):
        """A mean-delta-e00 fit across the worst light says so, and names L-BFGS-B as its local search."""
        _, ev, result = fitted
        page = fit_report_html(replace(result, objective="mean-delta-e00", across_illuminants="worst",
                                       illuminant_weights=(("D65", 2.0),)), ev)
        assert "minimise the worst light&#x27;s mean ΔE00" in page
        assert "(Σ_j (ω_j m_j)^32)^(1/32)" in page
        assert "illuminant weights D65 2" in page
        assert "local only (bounded quasi-Newton, L-BFGS-B on Σr²" in page
        assert "trust-region" not in page

    @pytest.mark.slow  # a second fit and a full report
    def test_not_converged_shown_and_escaped(self, fitted):
        """status 'budget spent': a warning block with the reason; markup in names and messages escaped."""
        _, ev, result = fitted
        params = list(result.parameters)
        params[0] = {**params[0], "value": params[0]["max"], "at_bound": "max"}
        bad = replace(result, status=FitStatus.BUDGET_SPENT, message="max_nfev <reached> & 'stopped'",
                      parameters=tuple(params),
                      design=replace(result.design, name='Rig <img src=x onerror="alert(1)"> & Co'))
        page = fit_report_html(bad, ev)
        parsed = parse(page)
        assert parsed.status.startswith("NOT CONVERGED — BUDGET SPENT (status 1): the evaluation budget was spent")
        assert "Local solver: max_nfev <reached> & 'stopped'." in parsed.status
        assert '<div class="status warn" id="status">' in page
        assert "max_nfev &lt;reached&gt; &amp; &#x27;stopped&#x27;" in page
        assert "<reached>" not in page and "<img src=x" not in page
        assert "Rig &lt;img src=x onerror=&quot;alert(1)&quot;&gt; &amp; Co" in page
        assert f"ended at a bound: {params[0]['name']}" in page
        row = next(r for r in parsed.tables["parameters"] if r[0] == params[0]["name"])
        assert row[7] == "at max"


class TestWriteFitReport:
    @pytest.mark.slow  # a fit and a full report
    def test_interrupted_fit_written(self, fitted, tmp_path):
        """A fit stopped by its evaluation budget is reported BUDGET SPENT; the file is the whole page."""
        design, ev, _ = fitted
        result = fit_design(design, progress=False, evaluator=ev, max_evaluations=12)
        assert result.status == FitStatus.BUDGET_SPENT
        out = write_fit_report(result, tmp_path / "report.html", evaluator=ev)
        assert out == tmp_path / "report.html"
        text = out.read_text(encoding="utf-8")
        status = parse(text).status
        assert status.startswith("NOT CONVERGED — BUDGET SPENT (status 1): the evaluation budget was spent "
                                 "before the best point passed the local convergence test; the best point "
                                 "found is kept.")
        assert "evaluations of a budget of 12 in" in status
        assert text.count("data:image/svg+xml;base64,") == 5
        assert [p.name for p in tmp_path.iterdir()] == ["report.html"]  # no temporary file left

    def test_missing_folder(self, fitted, tmp_path):
        """A folder that does not exist: one-line error naming the file, before anything is drawn."""
        _, ev, result = fitted
        target = tmp_path / "nowhere" / "report.html"
        with pytest.raises(InputFileError) as e:
            write_fit_report(result, target, evaluator=ev)
        assert str(e.value) == f"{target}: cannot write: folder {target.parent} does not exist"


# --------------------------------------------------------------------------
# Noise against accuracy
# --------------------------------------------------------------------------


class TestNoiseAccuracyPoints:
    def test_three_methods_start_and_fitted(self, points):
        """Six points: least squares, white-preserving, ΔE00-minimising, each at the start then fitted."""
        assert [(p["method"], p["state"]) for p in points] == [
            ("least-squares", "start"), ("least-squares", "fitted"),
            ("white-preserving", "start"), ("white-preserving", "fitted"),
            ("delta-e00", "start"), ("delta-e00", "fitted")]
        assert points[5]["label"] == "ΔE00-minimising, fitted"

    def test_design_rule_matches_the_fit(self, fitted, points):
        """The design's own rule (least squares) at the fit: the fit's matrix and its ΔE00 (colour-science)."""
        _, _, result = fitted
        a = result.after
        p = points[1]
        assert p["noise_gain"] == pytest.approx(np.max(np.linalg.norm(a.matrices, axis=-1)), rel=1e-12)
        # CIE 142-2001 as implemented by colour-science, over samples × illuminants
        d = colour.delta_E(a.camera_Lab, a.true_Lab, method="CIE 2000")
        assert p["mean_delta_E00"] == pytest.approx(np.mean(d), rel=1e-9)
        sig = np.mean([a.noise[ill]["sigma_out"] for ill in a.illuminants])
        assert p["sigma_out"] == pytest.approx(sig, rel=1e-12)
        assert points[0]["vora_value"] == pytest.approx(result.before.vora_value, rel=1e-12)


# --------------------------------------------------------------------------
# The figures
# --------------------------------------------------------------------------


class TestPlotSensitivitiesVsTargets:
    def test_axes_units_and_title(self, fitted, figures):
        """Wavelength in nm, the response scale stated, the matrix rule and illuminant in the title."""
        _, _, result = fitted
        top, bottom = figures["sensitivities"].axes
        assert bottom.get_xlabel() == "wavelength λ (nm)"
        assert "display RGB; largest target peak = 1" in top.get_ylabel()
        assert "same scale" in bottom.get_ylabel()
        assert "least-squares, shared matrix under daylight" in top.get_title()
        assert "ITU-R BT.709" in top.get_title()

    def test_curves_targets_residual(self, fitted, figures):
        """Lines are curves, targets and curves − targets divided by the largest |target|."""
        _, _, result = fitted
        a = result.after
        top, bottom = figures["sensitivities"].axes
        scale = np.max(np.abs(a.targets))
        lines = {ln.get_label(): ln for ln in top.get_lines()}
        for i, ch in enumerate("RGB"):
            np.testing.assert_allclose(lines[f"{ch} camera"].get_ydata(), a.curves[i] / scale, rtol=1e-12)
            np.testing.assert_allclose(lines[f"{ch} target"].get_ydata(), a.targets[i] / scale, rtol=1e-12)
            np.testing.assert_allclose(lines[f"{ch} camera, start"].get_ydata(),
                                       result.before.curves[i] / scale, rtol=1e-12)
            assert lines[f"{ch} target"].get_linestyle() == "--"
        res = [ln for ln in bottom.get_lines() if ln.get_label().startswith("R: rms")][0]
        np.testing.assert_allclose(res.get_ydata(), (a.curves[0] - a.targets[0]) / scale, rtol=1e-12, atol=1e-15)

    def test_without_before(self, fitted):
        """No start overlay when ``before`` is None."""
        _, _, result = fitted
        fig = plot_sensitivities_vs_targets(result.after)
        labels = [ln.get_label() for ln in fig.axes[0].get_lines()]
        assert not any("start" in s for s in labels)


class TestPlotDeltaEBars:
    def test_one_row_per_illuminant(self, fitted, figures):
        """J rows of K bars, heights the per-sample ΔE00, mean and p95 lines, ΔE00 axis label."""
        _, _, result = fitted
        a = result.after
        axes = figures["delta_e_bars"].axes
        assert len(axes) == len(a.illuminants) == 2
        for j, ax in enumerate(axes):
            bars = ax.collections[0]  # one collection of K rectangles
            heights = [p.vertices[:, 1].max() for p in bars.get_paths()]
            np.testing.assert_allclose(heights, a.per_sample[j], rtol=1e-12)
            assert ax.get_ylabel() == "ΔE00 (CIEDE2000)"
            st = a.delta_E00[a.illuminants[j]]
            assert ax.get_title(loc="left") == (f"{a.illuminants[j]}: mean {st['mean']:.2f}, median "
                                                f"{st['median']:.2f}, p95 {st['p95']:.2f}, max {st['max']:.2f}")
            levels = sorted(ln.get_ydata()[0] for ln in ax.get_lines()
                            if ln.get_label().startswith(("mean", "95th")))
            np.testing.assert_allclose(levels, sorted([st["mean"], st["p95"]]), rtol=1e-12)
        assert "set order" in axes[-1].get_xlabel()
        assert [t.get_text() for t in axes[-1].get_xticklabels()] == ["tcs\n(14 samples)", "ces\n(99 samples)"]


    def test_worst_samples_named(self, fitted):
        """The label_worst largest ΔE00 of each illuminant are named above their bars; 0 names none."""
        _, _, result = fitted
        a = result.after
        fig = plot_delta_e_bars(a, label_worst=2)
        for j, ax in enumerate(fig.axes):
            worst = {a.sample_names[k] for k in np.argsort(-a.per_sample[j])[:2]}
            assert {t.get_text() for t in ax.texts} == worst
        assert all(not ax.texts for ax in plot_delta_e_bars(a, label_worst=0).axes)


class TestPlotChromaticityShifts:
    def test_axes_locus_and_arrows(self, fitted, figures):
        """u′v′ axes, the spectral locus through colour-science's 520 nm point, arrows true → camera."""
        _, _, result = fitted
        a = result.after
        fig = figures["chromaticity"]
        full, zoom = fig.axes[0], fig.axes[1]
        for ax in (full, zoom):
            assert ax.get_xlabel() == "u′ (CIE 1976 UCS)" and ax.get_ylabel() == "v′ (CIE 1976 UCS)"
        assert fig.axes[2].get_ylabel() == "ΔE00 (CIEDE2000)"  # the colour bar
        cm = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
        # CIE 15:2004 § 8.1 u′v′ of the 520 nm spectral stimulus, computed by colour-science
        uv520 = colour.xy_to_Luv_uv(colour.XYZ_to_xy(cm[520]))
        locus = np.column_stack(full.get_lines()[0].get_data())
        assert np.min(np.linalg.norm(locus - uv520, axis=1)) < 1e-9
        q = zoom.collections[0]
        j = a.illuminants.index("daylight")
        np.testing.assert_allclose(q.U, a.camera_uv[j, :, 0] - a.true_uv[j, :, 0], rtol=1e-12, atol=1e-15)
        np.testing.assert_allclose(q.V, a.camera_uv[j, :, 1] - a.true_uv[j, :, 1], rtol=1e-12, atol=1e-15)
        np.testing.assert_allclose(q.get_array(), a.per_sample[j], rtol=1e-12)
        assert "Colour shifts under daylight" in fig.get_suptitle()

    def test_tiny_arrows_lengthened_and_said(self, fitted):
        """Shifts of 1e-4 in u′v′ are drawn ×k (k > 1), said in the legend; 0.05 shifts are drawn ×1."""
        _, _, result = fitted
        a = result.after
        tiny = replace(a, camera_uv=a.true_uv + 1e-4)
        fig = plot_chromaticity_shifts(tiny, "tungsten")
        zoom = fig.axes[1]
        k = 1.0 / zoom.collections[0].scale
        assert k > 1 and k in ARROW_SCALES
        legend = [t.get_text() for t in zoom.get_legend().get_texts()]
        assert f"true → camera, arrows lengthened ×{k:g}" in legend
        big = replace(a, camera_uv=a.true_uv + 0.05)
        zoom = plot_chromaticity_shifts(big, "tungsten").axes[1]
        assert zoom.collections[0].scale == 1.0
        assert "true → camera" in [t.get_text() for t in zoom.get_legend().get_texts()]

    def test_unknown_illuminant(self, fitted):
        """An illuminant the measures do not hold: one-line error listing the ones they do."""
        _, _, result = fitted
        with pytest.raises(WorkbenchError) as e:
            plot_chromaticity_shifts(result.after, "F11")
        assert str(e.value) == "illuminant must be one of daylight, tungsten (got 'F11')"


class TestPlotNoiseVsAccuracy:
    def test_points_and_labels(self, points, figures):
        """Each point at (noise gain, mean ΔE00), labelled in the legend; axes say quantity and scale."""
        ax = figures["noise_accuracy"].axes[0]
        assert ax.get_xlabel() == "noise gain: largest row norm ‖mᵢ‖ of the matrix (identity = 1)"
        assert ax.get_ylabel() == "mean ΔE00 (CIEDE2000) over samples × illuminants"
        drawn = {ln.get_label(): (ln.get_xdata()[0], ln.get_ydata()[0]) for ln in ax.get_lines()}
        for p in points:
            assert drawn[p["label"]] == pytest.approx((p["noise_gain"], p["mean_delta_E00"]))
        assert [t.get_text() for t in ax.get_legend().get_texts()] == [p["label"] for p in points]

    def test_sigma_out_axis(self, points):
        """noise='sigma-out' puts the grey patch's output noise on x, in display RGB with white = 1."""
        ax = plot_noise_vs_accuracy(points, noise="sigma-out").axes[0]
        assert ax.get_xlabel() == "output noise σ_out of the grey patch, display RGB (white = 1)"
        assert ax.get_lines()[0].get_xdata()[0] == pytest.approx(points[0]["sigma_out"])

    def test_bad_noise_choice(self, points):
        """An unknown noise figure: one-line error naming the choices."""
        with pytest.raises(WorkbenchError) as e:
            plot_noise_vs_accuracy(points, noise="snr")
        assert str(e.value) == "noise must be one of row-norm, sigma-out (got 'snr')"

    def test_draws_into_given_figure(self, points):
        """fig= is cleared and reused."""
        from matplotlib.figure import Figure

        fig = Figure()
        fig.subplots(2, 2)
        out = plot_noise_vs_accuracy(points, fig=fig)
        assert out is fig and len(fig.axes) == 1


class TestBoundCostsSection:
    def test_table_lists_the_ranked_costs(self, fitted, page):
        """A parameter at a bound gets a row in 'What the bounds cost', in the result's ranked order."""
        _, _, result = fitted
        rows = parse(page).tables.get("bound-costs")
        if not result.bound_costs:
            assert rows is None
            return
        assert rows[0][:3] == ["parameter", "at", "relaxing"]
        assert [r[0] for r in rows[1:]] == [c["name"] for c in result.bound_costs]
        for r, c in zip(rows[1:], result.bound_costs):
            assert r[3] == f"{c['d_cost']:+.3g}" and r[5] == f"{c['d_mean_delta_E00']:+.3g}"


class TestPerLightTable:
    def test_every_light_by_matrix_rule(self, fitted, page, points):
        """One row per matrix rule with the fitted filters; the last cell says whether every light is ≤ 1.0."""
        rows = parse(page).tables["per-light"]
        fitted_points = [p for p in points if p["state"] == "fitted"]
        assert [r[0] for r in rows[1:]] == [p["label"] for p in fitted_points]
        for r, p in zip(rows[1:], fitted_points):
            assert r[1:-1] == [f"{v:.3f}" for v in p["by_illuminant"].values()]
            assert r[-1] == ("yes" if max(p["by_illuminant"].values()) <= 1.0 else "no")
            # the per-light means average to the overall mean (equal sample counts per light)
            assert np.mean(list(p["by_illuminant"].values())) == pytest.approx(p["mean_delta_E00"], rel=1e-12)
