"""Tests of workbench.plots.vector (the SVG plotter) and workbench.plots.fit_vector (the fit report's figures).

The plotter is checked on its own (nice ticks, the data → pixel transform,
escaping, NaN handling, determinism, well-formed SVG 1.1), then each
report figure of the demo design's fit: it parses as XML, holds the
expected series and texts and nothing not finite.
"""

from __future__ import annotations

import math
import re
import xml.etree.ElementTree as ET
from dataclasses import replace
from types import SimpleNamespace

import numpy as np
import pytest

from workbench.errors import WorkbenchError
from workbench.plots.fit_vector import (ARROW_SCALES, chain_figure, chromaticity_figure, delta_e_bars_figure,
                                        front_figure, noise_accuracy_figure, sensitivities_figure)
from workbench.plots.vector import (Figure, colour_map, nice_limits, nice_step, nice_ticks, stack, text_width,
                                    tick_labels, xml_escape)

SVG = "{http://www.w3.org/2000/svg}"  # SVG 1.1 (W3C Recommendation 2011), § 5.1.2: the SVG namespace


def parse(fig) -> ET.Element:
    """The figure's SVG parsed (fails on anything not well-formed XML)."""
    root = ET.fromstring(fig.svg())
    assert root.tag == SVG + "svg"
    return root


def texts(root) -> list[str]:
    """Every text of the picture, lines of a multi-line text joined by '\\n'."""
    out = []
    for t in root.iter(SVG + "text"):
        spans = list(t.iter(SVG + "tspan"))
        out.append("\n".join(s.text or "" for s in spans) if spans else (t.text or ""))
    return out


def numbers(svg: str) -> list[float]:
    """Every number in the picture's path data and coordinates."""
    attrs = " ".join(re.findall(r'(?:d|x|y|width|height)="([^"]*)"', svg))
    return [float(v) for v in re.findall(r"-?\d+(?:\.\d+)?", attrs)]


@pytest.fixture(scope="module")
def fitted(demo_design):
    from workbench.analysis.evaluator import DesignEvaluator
    from workbench.analysis.fit import fit_design
    from workbench.report.fit_report import noise_accuracy_points

    ev = DesignEvaluator(demo_design)
    result = fit_design(demo_design, progress=False, evaluator=ev)
    return result, noise_accuracy_points(result, ev)


# --------------------------------------------------------------------------
# Numbers and texts
# --------------------------------------------------------------------------


class TestNiceStep:
    @pytest.mark.parametrize("span", [1e-7, 0.013, 0.5, 1.0, 3.7, 41.0, 400.0, 12345.0])
    def test_one_two_two_half_five(self, span):
        """The step is 1, 2, 2.5 or 5 × 10^k and gives at most the asked number of intervals (common practice)."""
        step = nice_step(span, 6)
        mant = step / 10 ** math.floor(math.log10(step))
        assert min(abs(mant - m) for m in (1, 2, 2.5, 5, 10)) < 1e-9
        assert span / step <= 6 * (1 + 1e-9)
        assert span / step > 6 / 2.5 / (1 + 1e-9)  # the next nice step down would give more than asked

    def test_degenerate(self):
        """A zero, negative or non-finite span gives step 1."""
        assert nice_step(0.0) == nice_step(-1.0) == nice_step(math.nan) == 1.0


class TestNiceTicks:
    @pytest.mark.parametrize("lo, hi", [(380.0, 780.0), (-0.42, 1.06), (0.0, 3.85), (0.2113, 0.2191),
                                        (-5e-5, 5e-5), (1.0, 2.5)])
    def test_cover_the_range(self, lo, hi):
        """Ticks lie in [lo, hi], are equally spaced by a nice step and leave less than a step at each end."""
        t = nice_ticks(lo, hi, 6)
        step = nice_step(hi - lo, 6)
        assert t.size >= 2
        assert t[0] >= lo - 1e-12 and t[-1] <= hi + 1e-12
        assert t[0] - lo < step and hi - t[-1] < step
        np.testing.assert_allclose(np.diff(t), step, rtol=1e-9)

    def test_nice_limits(self):
        """nice_limits widens a range to the next multiples of a nice step of about half the tick spacing."""
        assert nice_limits(-0.42, 1.06, 6) == (-0.6, 1.2)  # step 0.2 for 12 intervals
        assert nice_limits(0.0, 5.2, 5) == (0.0, 6.0)

    def test_flat_range(self):
        """A single value is widened around itself (no zero-width axis)."""
        lo, hi = nice_limits(2.0, 2.0)
        assert lo < 2.0 < hi


class TestTickLabels:
    def test_decimals_from_step(self):
        """As many decimals as the step needs, a true minus sign, no '-0'."""
        assert tick_labels([0.0, 0.25, 0.5]) == ["0.00", "0.25", "0.50"]
        assert tick_labels([-0.5, 0.0, 0.5]) == ["−0.5", "0.0", "0.5"]
        assert tick_labels([400.0, 500.0, 600.0]) == ["400", "500", "600"]
        assert tick_labels([-1e-17, 1.0]) == ["0", "1"]

    def test_tiny_steps_in_exponent_form(self):
        """Steps below 1e-4 are written in three significant digits."""
        assert tick_labels([1e-5, 2e-5]) == ["1e−05", "2e−05"]


class TestXmlEscape:
    def test_markup_and_quotes(self):
        """& < > \" ' are escaped (XML 1.0, § 2.4)."""
        assert xml_escape("a<&>\"'b") == "a&lt;&amp;&gt;&quot;&#39;b"

    def test_forbidden_characters_replaced(self):
        """Control characters XML 1.0 forbids (§ 2.2) become U+FFFD; tab and newline stay."""
        assert xml_escape("a\x00b\x1bc\td\n") == "a\ufffdb\ufffdc\td\n"


class TestTextWidth:
    def test_longer_text_wider(self):
        """Widths grow with the text and the size; the widest line of several counts."""
        assert text_width("mean 0.86", 10) < text_width("95th percentile 2.11", 10)
        assert text_width("abc", 20) == pytest.approx(2 * text_width("abc", 10))
        assert text_width("ab\nabcdef", 10) == text_width("abcdef", 10)


class TestColourMap:
    def test_ends_and_nan(self):
        """The lower end is the map's first colour, the upper its last; values outside clip; NaN is grey."""
        assert colour_map([0.0, 1.0, 2.0, -1.0, math.nan], 0.0, 1.0) == [
            "#440154", "#fde725", "#fde725", "#440154", "#999999"]


# --------------------------------------------------------------------------
# Axes and figures
# --------------------------------------------------------------------------


class TestAxesTransform:
    def test_known_points(self):
        """Data (xlim, ylim) map onto the box: y grows upwards, pixels downwards."""
        fig = Figure(600, 400)
        ax = fig.add_axes((100, 50, 400, 200), xlim=(0, 10), ylim=(0, 1))
        fig.svg()
        assert float(ax.px(5)) == 300 and float(ax.px(0)) == 100 and float(ax.px(10)) == 500
        assert float(ax.py(0)) == 250 and float(ax.py(1)) == 50 and float(ax.py(0.25)) == 200

    def test_marker_drawn_at_its_pixel(self):
        """A circle marker at data (2.5, 0.75) is centred on pixel (200, 100) in the SVG."""
        fig = Figure(600, 400)
        ax = fig.add_axes((100, 50, 400, 200), xlim=(0, 10), ylim=(0, 1))
        ax.markers([2.5], [0.75], size=8, fill="#123456")
        d = [p.get("d") for p in parse(fig).iter(SVG + "path") if p.get("fill") == "#123456"][0]
        x, y = map(float, re.match(r"M([-\d.]+),([-\d.]+)a", d).groups())
        assert (x + 4, y) == (200, 100)

    def test_limits_from_data_cover_it(self):
        """Limits from the data enclose every point and sit on ticks."""
        fig = Figure(600, 400)
        ax = fig.add_axes((60, 20, 500, 340))
        ax.line([1.3, 2.0, 7.9], [-0.3, 0.4, 2.2])
        fig.svg()
        (x0, x1), (y0, y1) = ax.limits
        assert x0 <= 1.3 and x1 >= 7.9 and y0 <= -0.3 and y1 >= 2.2
        tx, ty = ax.ticks(0)[0], ax.ticks(1)[0]
        assert tx[0] - x0 < np.diff(tx)[0] and y1 - ty[-1] < np.diff(ty)[0]

    def test_shared_x(self):
        """A panel sharing x takes the other's limits and ticks."""
        fig = Figure(600, 400)
        top, bottom = (fig.add_axes(b, xlim=(380, 780)) for b in stack(60, 20, 500, 340, ratios=(2, 1), gap=20))
        bottom._xlim = None
        top.line([380, 780], [0, 1])
        bottom.share_x = top
        bottom.line([500, 600], [0, 1])
        fig.svg()
        assert bottom.limits[0] == top.limits[0] == (380.0, 780.0)

    def test_equal_aspect(self):
        """equal=True gives one data unit the same pixels on both axes, the box centred."""
        fig = Figure(600, 400)
        ax = fig.add_axes((0, 0, 400, 200), xlim=(0, 1), ylim=(0, 1), equal=True)
        fig.svg()
        assert ax.box == (100.0, 0.0, 200.0, 200.0)


class TestStack:
    def test_ratios_and_gap(self):
        """Panels split the height by the ratios with the gap between them."""
        assert stack(10, 20, 100, 320, ratios=(3, 1), gap=20) == [(10, 20, 100, 225.0), (10, 265.0, 100, 75.0)]


class TestFigureSvg:
    def test_well_formed_and_sized(self):
        """One <svg> root in the SVG namespace, width, height and viewBox the figure's size."""
        fig = Figure(321, 123)
        fig.add_axes((40, 10, 260, 90)).line([0, 1], [0, 1])
        root = parse(fig)
        assert (root.get("width"), root.get("height"), root.get("viewBox")) == ("321", "123", "0 0 321 123")

    def test_escaped_texts_survive(self):
        """Labels, titles and legend entries with '<&>' and quotes come back unchanged from the parsed SVG."""
        nasty = 'a <b> & "c" \'d\''
        fig = Figure(500, 300)
        ax = fig.add_axes((60, 30, 300, 200))
        ax.line([0, 1], [0, 1], label=nasty)
        ax.annotate(nasty, 0.5, 0.5)
        ax.set(xlabel=nasty, ylabel=nasty, title=nasty)
        ax.legend("right")
        fig.title(nasty)
        assert texts(parse(fig)).count(nasty) == 6

    def test_nan_breaks_lines_never_written(self):
        """Non-finite points break a polyline into pieces and are skipped as markers, bars and arrows."""
        fig = Figure(500, 300)
        ax = fig.add_axes((60, 30, 300, 200))
        ax.line([0, 1, 2, 3, 4], [0, 1, np.nan, 1, np.inf], colour="#010101")
        ax.markers([0, np.nan, 2], [1, 1, np.nan])
        ax.bars([0, 1, 2], [1, np.nan, 2], colours="#020202")
        ax.arrows([0, np.nan], [0, 0], [1, 1], [1, 1], colours="#030303")
        svg = fig.svg()
        assert "nan" not in svg.lower() and "inf" not in svg.lower()
        d = [p.get("d") for p in parse(fig).iter(SVG + "path") if p.get("stroke") == "#010101"][0]
        assert d.count("M") == 2  # (0, 1) then (3)
        bars = [p.get("d") for p in parse(fig).iter(SVG + "path") if p.get("fill") == "#020202"][0]
        assert bars.count("M") == 2

    def test_one_path_per_series(self):
        """Markers of one series and bars of one colour are each one <path>."""
        fig = Figure(500, 300)
        ax = fig.add_axes((60, 30, 300, 200))
        ax.markers(np.arange(50), np.arange(50), fill="#0a0a0a", shape="star")
        ax.bars(np.arange(20), np.ones(20), colours=["#0b0b0b"] * 10 + ["#0c0c0c"] * 10)
        fills = [p.get("fill") for p in parse(fig).iter(SVG + "path")]
        assert fills.count("#0a0a0a") == 1 and fills.count("#0b0b0b") == 1 and fills.count("#0c0c0c") == 1

    def test_rounded_to_tenth_pixel(self):
        """Coordinates are written to 0.1 px at most."""
        fig = Figure(500, 300)
        ax = fig.add_axes((60.123, 30, 300, 200), xlim=(0, 3), ylim=(0, 7))
        ax.line([0, 1, 2], [0.1234567, 1, 2])
        assert not re.search(r"\d\.\d\d", " ".join(re.findall(r' d="([^"]*)"', fig.svg())))

    def test_same_bytes(self):
        """The same calls give the same bytes."""
        def make():
            fig = Figure(500, 300, name="x")
            ax = fig.add_axes((60, 30, 300, 200))
            ax.line(np.linspace(0, 1, 30), np.sin(np.linspace(0, 6, 30)), label="sin")
            ax.legend()
            return fig.svg_bytes()

        assert make() == make()

    def test_legend_best_avoids_the_data(self):
        """'best' puts the legend in an empty corner: here the data fill the upper half, the legend goes lower right."""
        fig = Figure(500, 300)
        ax = fig.add_axes((60, 30, 400, 240), xlim=(0, 1), ylim=(0, 1))
        ax.markers(np.repeat(np.linspace(0, 1, 20), 20), np.tile(np.linspace(0.5, 1, 20), 20), label="cloud")
        ax.legend("best")
        fig.svg()
        assert ax._best_corner(80, 30) == "lower right"

    def test_legend_entries(self):
        """One legend text per labelled series, unlabelled ones left out."""
        fig = Figure(500, 300)
        ax = fig.add_axes((60, 30, 300, 200))
        ax.line([0, 1], [0, 1], label="one")
        ax.line([0, 1], [1, 0])
        ax.markers([0.5], [0.5], shape="triangle", label="two")
        ax.legend("upper left")
        assert [t for t in texts(parse(fig)) if t in ("one", "two")] == ["one", "two"]

    def test_bad_marker_and_legend_place(self):
        """An unknown marker shape or legend place is refused naming the choices."""
        ax = Figure(100, 100).add_axes((0, 0, 100, 100))
        with pytest.raises(ValueError, match="marker shape must be circle"):
            ax.markers([0], [0], shape="hexagon")
        with pytest.raises(ValueError, match="legend loc must be one of best"):
            ax.legend("middle")


# --------------------------------------------------------------------------
# The report's figures
# --------------------------------------------------------------------------


def _finite_svg(fig):
    svg = fig.svg()
    assert not re.search(r"\bnan\b|\binf\b", svg, flags=re.IGNORECASE)
    assert all(math.isfinite(v) for v in numbers(svg))
    return parse(fig)


class TestSensitivitiesFigure:
    def test_series_and_texts(self, fitted):
        """Nine curves (target, camera, start per channel) over six residuals, axes with quantity and unit."""
        result, _ = fitted
        fig = sensitivities_figure(result.after, before=result.before)
        root = _finite_svg(fig)
        t = texts(root)
        for ch in "RGB":
            assert {f"{ch} target", f"{ch} camera", f"{ch} camera, start"} <= set(t)
        assert sum(1 for s in t if re.fullmatch(r"[RGB]( start)?: rms \d\.\d{3}", s)) == 6
        assert "wavelength λ (nm)" in t and "relative response\n(display RGB; largest target peak = 1)" in t
        assert any("against the target colour-matching functions of" in s for s in t)
        top, bottom = fig.axes
        curves = [it for it in top.items if it[0] == "line"]
        assert len(curves) == 9 and len([it for it in bottom.items if it[0] == "line"]) == 6
        scale = np.max(np.abs(result.after.targets))
        np.testing.assert_allclose(curves[1][2], result.after.curves[0] / scale, rtol=1e-12)  # R camera
        assert bottom.limits[0] == top.limits[0] == (result.after.wavelengths[0], result.after.wavelengths[-1])

    def test_without_before(self, fitted):
        """No start curves when ``before`` is None."""
        result, _ = fitted
        t = texts(parse(sensitivities_figure(result.after)))
        assert not any("start" in s for s in t)


class TestDeltaEBarsFigure:
    def test_panels_bars_and_names(self, fitted):
        """One panel per illuminant with its statistics title, K bars, the worst three named, sets on the x axis."""
        result, _ = fitted
        a = result.after
        fig = delta_e_bars_figure(a)
        root = _finite_svg(fig)
        t = texts(root)
        assert len(fig.axes) == len(a.illuminants)
        for j, ill in enumerate(a.illuminants):
            st = a.delta_E00[ill]
            assert (f"{ill}: mean {st['mean']:.2f}, median {st['median']:.2f}, p95 {st['p95']:.2f}, "
                    f"max {st['max']:.2f}") in t
            bars = [it for it in fig.axes[j].items if it[0] == "bars"][0]
            np.testing.assert_allclose(bars[2], a.per_sample[j], rtol=1e-12)
            worst = {a.sample_names[k] for k in np.argsort(-a.per_sample[j])[:3]}
            assert worst <= {x[2] for x in fig.axes[j].texts}
        assert f"mean {a.delta_E00[a.illuminants[0]]['mean']:.2f}" in t
        runs = {}
        for s in a.sample_sets:
            runs[s] = runs.get(s, 0) + 1
        for name, n in runs.items():
            assert f"{name}\n({n} samples)" in t

    def test_sample_names_escaped(self, fitted):
        """A sample name with markup is shown as written."""
        result, _ = fitted
        a = result.after
        names = list(a.sample_names)
        k = int(np.argmax(a.per_sample[0]))
        names[k] = "<b>&'x'"
        assert "<b>&'x'" in texts(parse(delta_e_bars_figure(replace(a, sample_names=tuple(names)))))

    def test_missing_numbers_shown_as_dash(self, fitted):
        """A ΔE00 statistic that is not finite reads '—' in the titles and legends, never 'nan'."""
        result, _ = fitted
        a = result.after
        ill = a.illuminants[0]
        stats = {**a.delta_E00, ill: {**a.delta_E00[ill], "p95": float("nan"), "max": float("nan")}}
        fig = delta_e_bars_figure(replace(a, delta_E00=stats))
        t = texts(_finite_svg(fig))
        assert any(s.startswith(f"{ill}: mean ") and s.endswith("p95 —, max —") for s in t)
        assert "95th percentile —" in t


class TestChromaticityFigure:
    def test_locus_arrows_colour_bar(self, fitted):
        """Spectral locus, one arrow per sample, u′v′ axis labels, the ΔE00 colour bar, the shifts in the title."""
        result, _ = fitted
        a = result.after
        fig = chromaticity_figure(a, observer=result.design.observer)
        root = _finite_svg(fig)
        t = texts(root)
        assert t.count("u′ (CIE 1976 UCS)") == 2 and t.count("v′ (CIE 1976 UCS)") == 2
        assert "ΔE00 (CIEDE2000)" in t
        assert any(s.startswith("spectral locus 380-700 nm") for s in t)
        assert any(s.startswith(f"Colour shifts under {a.curve_illuminant}") for s in t)
        arrows = [it for it in fig.axes[1].items if it[0] == "arrows"][0]
        assert arrows[3]["n"] == a.per_sample.shape[1]
        assert root.find(f".//{SVG}linearGradient") is not None

    def test_tiny_arrows_lengthened(self, fitted):
        """Shifts of 1e-4 are drawn ×k (k > 1 from ARROW_SCALES), said in the legend."""
        result, _ = fitted
        a = result.after
        t = texts(parse(chromaticity_figure(replace(a, camera_uv=a.true_uv + 1e-4))))
        said = [s for s in t if re.fullmatch(r"true → camera, arrows lengthened ×\d+", s)]
        assert said and int(said[0].rsplit("×", 1)[1]) in ARROW_SCALES[1:]

    def test_unknown_illuminant(self, fitted):
        """An illuminant the measures do not hold: one-line error listing those they do."""
        result, _ = fitted
        with pytest.raises(WorkbenchError) as e:
            chromaticity_figure(result.after, "F11")
        assert str(e.value) == f"illuminant must be one of {', '.join(result.after.illuminants)} (got 'F11')"


class TestNoiseAccuracyFigure:
    def test_points_at_their_pixels(self, fitted):
        """Six legend entries; each point's marker centred on its (noise gain, mean ΔE00) pixel."""
        _, points = fitted
        fig = noise_accuracy_figure(points)
        root = _finite_svg(fig)
        t = texts(root)
        assert [s for s in t if s in {p["label"] for p in points}] == [p["label"] for p in points]
        assert "noise gain: largest row norm ‖mᵢ‖ of the matrix (identity = 1)" in t
        ax = fig.axes[0]
        marks = [it for it in ax.items if it[0] == "markers"]
        assert len(marks) == len(points)
        for (_, x, y, _st), p in zip(marks, points):
            assert (x[0], y[0]) == (p["noise_gain"], p["mean_delta_E00"])
            (x0, x1), (y0, y1) = ax.limits
            assert x0 < x[0] < x1 and y0 < y[0] < y1

    def test_bad_noise_choice(self, fitted):
        """An unknown noise figure: one-line error naming the choices."""
        _, points = fitted
        with pytest.raises(WorkbenchError) as e:
            noise_accuracy_figure(points, noise="snr")
        assert str(e.value) == "noise must be one of row-norm, sigma-out (got 'snr')"


class TestChainFigure:
    def test_panels_per_channel(self, fitted):
        """Three panels sharing x; each element on the channels of its path, each channel's product."""
        result, _ = fitted
        curves = result.design.element_curves()
        fig = chain_figure(result.after.wavelengths, curves)
        root = _finite_svg(fig)
        t = texts(root)
        for k, ch in enumerate("RGB"):
            assert f"cumulative {ch}" in t
            on = [c for c in curves if ch in c.paths]
            assert len([it for it in fig.axes[k].items if it[0] == "line"]) == len(on) + 1
            total = np.prod([np.asarray(c.values)[k] for c in curves], axis=0)
            np.testing.assert_allclose(fig.axes[k].items[-1][2], total, rtol=1e-12)
        assert t.count("wavelength λ (nm)") == 1


class TestFrontFigure:
    def test_points_and_star(self):
        """Each front point labelled with its t; the chosen one starred and in the legend."""
        front = [{"noise_gain_rms": 1.3, "mean_delta_E00": 0.9, "t": 0.0},
                 {"noise_gain_rms": 1.1, "mean_delta_E00": 1.2, "t": 0.5},
                 {"noise_gain_rms": 1.0, "mean_delta_E00": 2.0, "t": 1.0}]
        fig = front_figure(front)
        t = texts(_finite_svg(fig))
        assert {"t = 0", "t = 0.5", "t = 1", "the written fit", "non-dominated fits"} <= set(t)
        stars = [it for it in fig.axes[0].items if it[0] == "markers" and it[3]["shape"] == "star"]
        assert len(stars) == 1 and stars[0][1][0] == 1.3


class TestDeterministic:
    def test_same_bytes_twice(self, fitted):
        """Every report figure gives the same bytes when drawn twice."""
        result, points = fitted
        a = result.after
        for make in (lambda: sensitivities_figure(a, before=result.before), lambda: delta_e_bars_figure(a),
                     lambda: chromaticity_figure(a), lambda: noise_accuracy_figure(points)):
            assert make().svg_bytes() == make().svg_bytes()

    def test_empty_inputs_draw(self):
        """A front of one point and an empty chain still give well-formed pictures."""
        parse(front_figure([{"noise_gain_rms": 1.0, "mean_delta_E00": 1.0, "t": 0.0}]))
        curve = SimpleNamespace(name="only", type="glass", paths=("R", "G", "B"), values=np.ones((3, 5)))
        parse(chain_figure(np.linspace(400, 700, 5), [curve]))


class TestLongTitles:
    def test_wrap_text(self):
        """Lines break between words to fit the width; explicit line breaks are kept."""
        from workbench.plots.vector import wrap_text

        lines = wrap_text("alpha beta gamma delta\nepsilon", 12, text_width("alpha beta gamma", 12) + 1)
        assert lines == ["alpha beta gamma", "delta", "epsilon"]

    def test_long_target_name_wrapped_and_panels_moved(self, fitted):
        """A target name too long for one line is wrapped; the panels move down and the figure grows."""
        result, _ = fitted
        a = result.after
        long = replace(a, methods={**a.methods, "target": "a display with a very long name " * 4})
        short_fig, long_fig = sensitivities_figure(a), sensitivities_figure(long)
        assert long_fig.height > short_fig.height
        assert long_fig.axes[0].box[1] - short_fig.axes[0].box[1] == long_fig.height - short_fig.height
        title = [t for t in texts(parse(long_fig)) if t.startswith("Camera after")][0]
        assert title.count("\n") >= 2
        assert all(text_width(line, 15.1) <= long_fig.width - 40 for line in title.split("\n"))


class TestTickCrowding:
    def test_x_labels_do_not_overlap(self):
        """On a narrow axis with long tick labels, x ticks are thinned until their labels fit between them."""
        fig = Figure(300, 200)
        ax = fig.add_axes((40, 10, 160, 150), xlim=(0.21512, 0.21693), xticks=9)
        fig.svg()
        t, labels = ax.ticks(0)
        shown = [p for p, s in zip(t, labels) if s]
        assert len(t) >= 2 and len(shown) >= 1
        if len(shown) > 1:
            spacing = 160 * (shown[1] - shown[0]) / (0.21693 - 0.21512)
            assert max(text_width(s, 11) for s in labels) + 10 <= spacing

    def test_at_least_two_ticks(self):
        """A range narrower than one nice step of the first guess still gets two ticks or more."""
        fig = Figure(300, 200)
        ax = fig.add_axes((40, 10, 160, 150), xlim=(0.2151, 0.2169), ylim=(1.0001, 1.0009))
        fig.svg()
        assert len(ax.ticks(0)[0]) >= 2 and len(ax.ticks(1)[0]) >= 2


class TestPrimitives:
    def test_fill_between_dashes_rotation(self):
        """fill_between is one closed filled path; dashes become a dash array; the y label is turned −90°."""
        fig = Figure(500, 300)
        ax = fig.add_axes((60, 30, 300, 200), xlim=(0, 4), ylim=(0, 2))
        ax.fill_between([0, 1, 2, 3, 4], 0.0, [1, 1.5, np.nan, 1, 0.5], colour="#0d0d0d", opacity=0.3)
        ax.line([0, 4], [1, 1], dash="dashed", colour="#0e0e0e")
        ax.set(ylabel="y (unit)")
        root = parse(fig)
        fill = [p for p in root.iter(SVG + "path") if p.get("fill") == "#0d0d0d"][0]
        d = fill.get("d")
        assert d.startswith("M") and d.endswith("z") and fill.get("opacity") == "0.3"
        assert len(re.findall(r"-?[\d.]+,-?[\d.]+", d)) == 8  # 4 finite x, top then bottom
        dashed = [p for p in root.iter(SVG + "path") if p.get("stroke") == "#0e0e0e"][0]
        assert dashed.get("stroke-dasharray") == "6 3.5"
        label = [t for t in root.iter(SVG + "text") if t.text == "y (unit)"][0]
        assert label.get("transform").startswith("rotate(-90 ")

    def test_every_marker_shape(self):
        """Each marker shape draws a closed sub-path per point."""
        from workbench.plots.vector import MARKERS

        for shape in MARKERS:
            fig = Figure(200, 200)
            ax = fig.add_axes((20, 20, 160, 160), xlim=(0, 1), ylim=(0, 1))
            ax.markers([0.2, 0.8], [0.5, 0.5], shape=shape, fill="#0f0f0f")
            d = [p.get("d") for p in parse(fig).iter(SVG + "path") if p.get("fill") == "#0f0f0f"][0]
            assert d.count("M") == 2 and d.count("z") == 2, shape



# --------------------------------------------------------------------------
# Tolerance figures (workbench.plots.tolerance_vector)
# --------------------------------------------------------------------------


@pytest.fixture(scope="module")
def tolerance_run(demo_design):
    from workbench.analysis.tolerance import run_tolerance

    return run_tolerance(demo_design, trials=60, seed=3, progress=False)


def _no_nan(svg: str) -> None:
    assert not re.search(r"\b(nan|inf)\b", svg, flags=re.IGNORECASE)


class TestHistogramsFigure:
    def test_series_and_texts(self, tolerance_run):
        """Six panels: one step outline per illuminant or channel, the nominal and spec lines, titles with units."""
        from workbench.plots.tolerance_vector import histograms_figure

        r = tolerance_run
        fig = histograms_figure(r, case="fixed")
        svg = fig.svg()
        _no_nan(svg)
        ts = texts(parse(fig))
        assert any(t.startswith(f"{r.design.name}: 60 trials (seed 3), matrix fixed; yield ") for t in ts)
        for label in ("Vora value ν (1, 0-1)", "ΔE00 (CIEDE2000 units)", "noise gain (1, row 2-norm of the matrix)",
                      "white-balance gain R/G (1, ratio to the green gain)", "trials", "nominal",
                      f"spec ν ≥ {r.spec.min_vora:g}", f"spec ≤ {r.spec.max_mean_delta_E00:g}",
                      "display R", "display G", "display B", *r.illuminants):
            assert label in ts
        assert len(fig.axes) == 6
        n_ill = len(r.illuminants)
        assert [sum(k == "line" for k, *_ in ax.items) for ax in fig.axes] == [1, n_ill, n_ill, n_ill, n_ill, 3]

    def test_recalibrated_case(self, tolerance_run):
        """The recalibrated case is drawn from its own trials and named in the title."""
        from workbench.plots.tolerance_vector import histograms_figure

        ts = texts(parse(histograms_figure(tolerance_run, case="recalibrated")))
        assert any("matrix recalibrated; yield" in t for t in ts)


class TestRankingFigure:
    def test_rows_and_limit(self, tolerance_run):
        """One named row per parameter, largest first; `top` keeps that many and the title says how many more."""
        from workbench.plots.tolerance_vector import ranking_figure

        rows = tolerance_run.ranking("fixed")["parameters"]
        fig = ranking_figure(tolerance_run, case="fixed")
        svg = fig.svg()
        _no_nan(svg)
        ts = texts(parse(fig))
        names = [t.split("\n")[0] for t in ts if "\n" in t and ("σ =" in t or "±" in t)]
        assert names == [r["name"] for r in rows]
        assert "SRC²" in ts and "at nominal − width" in ts and "at nominal + width" in ts
        assert "change of the worst-illuminant mean ΔE00 from the nominal (ΔE00 units)" in ts
        one = texts(parse(ranking_figure(tolerance_run, case="fixed", top=1)))
        assert any(f"top 1 of {len(rows)} parameters by variance share; {len(rows) - 1} more omitted" in t
                   for t in one)


class TestFieldShiftFigure:
    def test_positions_and_series(self, tolerance_run):
        """Both panels name every field position and hold a solid and a dashed line per illuminant."""
        from workbench.plots.tolerance_vector import field_shift_figure

        field = tolerance_run.field
        fig = field_shift_figure(field)
        svg = fig.svg()
        _no_nan(svg)
        ts = texts(parse(fig))
        for p in field.positions:
            assert ts.count(p.name) == 2
        assert ts.count("angle offset of the chief ray on both splitter faces (degrees, in glass)") == 2
        for ill in field.illuminants:
            assert f"{ill}: mean" in ts and f"{ill}: max" in ts and f"{ill}: white" in ts
        for ax in fig.axes:
            assert sum(k == "line" for k, *_ in ax.items) == 2 * len(field.illuminants)


class TestTolerancePlotsWithoutMatplotlib:
    def test_no_matplotlib_import(self):
        """Importing the tolerance panel and its figures imports no matplotlib (a fresh interpreter)."""
        import subprocess
        import sys

        code = ("import sys, workbench.widgets.tolerance, workbench.plots.tolerance_vector; "
                "print(any(m == 'matplotlib' or m.startswith('matplotlib.') for m in sys.modules))")
        out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
        assert out.strip() == "False"
