"""The spectral data model and its resampling (CIE 167)."""

import colour
import numpy as np
import pytest

from workbench.errors import RangeCoverageError, WorkbenchError
from workbench.model.spectra import Spectra, grid, is_uniform, resample_values, resampling_matrix


def smooth(wl, seed=0, count=1):
    """Smooth random spectra: a few broad Gaussians on a floor."""
    rng = np.random.default_rng(seed)
    c = rng.uniform(380, 780, (count, 4, 1))
    w = rng.uniform(30, 120, (count, 4, 1))
    a = rng.uniform(0.05, 0.3, (count, 4, 1))
    return 0.05 + (a * np.exp(-0.5 * ((wl - c) / w) ** 2)).sum(axis=1)


class TestSpectra:
    def test_shapes_names_defaults(self):
        """Values of any leading shape; default names s1.. one per spectrum."""
        wl = grid(400, 700, 10)
        s = Spectra(wl, np.zeros((2, 3, wl.size)))
        assert len(s) == 6 and s.names[0] == "s1" and s.shape == (2, 3, 31)
        assert s.step == 10 and s.uniform

    def test_inputs_not_mutated_and_read_only(self):
        """The model copies its inputs and freezes them."""
        wl = grid(400, 700, 10)
        v = np.ones(wl.size)
        s = Spectra(wl, v)
        v[0] = 5
        assert s.values[0] == 1
        with pytest.raises(ValueError):
            s.values[0] = 3

    @pytest.mark.parametrize(
        "wl, values, message",
        [
            ([400, 410], [1, 2], "wavelengths must hold at least 3 points (got 2)"),
            ([400, 420, 410], [1, 2, 3], "wavelengths must be strictly increasing (got 420 then 410 nm at positions 2-3)"),
            ([400, 410, 420], [1, 2], "values must be shaped (..., 3) to match the wavelengths (got (2,))"),
        ],
    )
    def test_bad_input_messages(self, wl, values, message):
        """Bad grids and shapes are refused with the exact message."""
        with pytest.raises(WorkbenchError) as e:
            Spectra(wl, values)
        assert str(e.value) == message

    def test_unknown_kind_and_duplicate_names(self):
        """Kind must be one of four; names unique."""
        wl = grid(400, 700, 100)
        with pytest.raises(WorkbenchError, match="kind must be one of"):
            Spectra(wl, [1, 2, 3, 4], kind="colour")
        with pytest.raises(WorkbenchError, match="names must be unique"):
            Spectra(wl, np.ones((2, 4)), names=("a", "a"))

    def test_select_by_name(self):
        """Spectra are found by name, with a clear error for a missing one."""
        wl = grid(400, 700, 100)
        s = Spectra(wl, [[1, 2, 3, 4], [5, 6, 7, 8]], names=("leaf", "brick"))
        assert s["brick"].tolist() == [5, 6, 7, 8]
        with pytest.raises(WorkbenchError, match="no spectrum named 'sky'"):
            s["sky"]


class TestResample:
    def test_sprague_published_example(self):
        """Sprague at 501/502 nm from 20 nm data."""
        # colour-science SpragueInterpolator docstring, CIE 167 coefficients
        x = grid(500, 600, 20)
        y = np.array([0.0651, 0.0705, 0.0772, 0.0870, 0.1128, 0.1360])
        v, used = resample_values(y, x, np.array([501.0, 502.0]))
        assert used == "sprague"
        np.testing.assert_allclose(v, [0.0653522, 0.0656105], atol=5e-8)

    @pytest.mark.parametrize("method, ref", [
        ("sprague", colour.SpragueInterpolator),
        ("cubic-spline", colour.CubicSplineInterpolator),
        ("linear", colour.LinearInterpolator),
    ])
    def test_matches_reference_library(self, method, ref):
        """Each method equals colour-science's interpolator of the same name."""
        # colour-science 0.4.7 as reference library
        x = grid(380, 780, 10)
        y = smooth(x, seed=3)[0]
        xt = np.arange(380.0, 780.0, 0.7)
        v, _ = resample_values(y, x, xt, method=method)
        np.testing.assert_allclose(v, ref(x, y)(xt), rtol=0, atol=1e-12)

    def test_nonuniform_auto_is_cubic_spline(self):
        """Non-uniform data get the cubic spline (CIE 167)."""
        x = np.array([380.0, 395, 401, 430, 470, 520, 600, 690, 780])
        y = np.sin(x / 50)
        v, used = resample_values(y, x, grid(380, 780, 5))
        assert used == "cubic-spline"
        np.testing.assert_allclose(v, colour.CubicSplineInterpolator(x, y)(grid(380, 780, 5)), atol=1e-12)

    @pytest.mark.parametrize("n", [3, 4, 5, 12, 300])
    def test_cubic_spline_any_length(self, n):
        """The numpy not-a-knot spline equals scipy's CubicSpline on irregular knots, 3 to 300 of them."""
        from scipy.interpolate import CubicSpline  # reference: scipy's not-a-knot spline (colour-science's too)

        rng = np.random.default_rng(n)
        x = 380 + np.concatenate([[0.0], np.cumsum(rng.uniform(0.3, 3.0, n - 1))])
        y = np.sin(x / 23) + rng.uniform(0, 0.1, n)
        xt = np.linspace(x[0], x[-1], 257)
        v, _ = resample_values(y, x, xt, method="cubic-spline")
        np.testing.assert_allclose(v, CubicSpline(x, y, bc_type="not-a-knot")(xt), rtol=0, atol=1e-12)

    def test_batch_equals_single(self):
        """A (2, 3, n) batch resamples like each spectrum alone."""
        x = grid(380, 780, 10)
        y = smooth(x, seed=1, count=6).reshape(2, 3, -1)
        xt = grid(380, 780, 1)
        v, _ = resample_values(y, x, xt)
        one, _ = resample_values(y[1, 2], x, xt)
        assert v.shape == (2, 3, xt.size)
        np.testing.assert_allclose(v[1, 2], one, atol=1e-14)

    def test_extrapolation_refused_unless_asked(self):
        """Reaching outside the data raises; constant repeats the ends (CIE 167)."""
        x = grid(400, 700, 10)
        y = smooth(x)[0]
        with pytest.raises(RangeCoverageError, match="data cover 400-700 nm but 380-780 nm is needed"):
            resample_values(y, x, grid(380, 780, 10))
        v, _ = resample_values(y, x, grid(380, 780, 10), extrapolation="constant")
        assert v[0] == v[1] == v[2] == y[0] and v[-1] == y[-1]
        z, _ = resample_values(y, x, grid(380, 780, 10), extrapolation="zero")
        assert z[0] == 0 and z[-1] == 0 and z[2] == y[0]

    def test_notes_say_what_was_done(self):
        """The resampled spectra carry a note with method and extrapolated range."""
        s = Spectra(grid(400, 700, 10), smooth(grid(400, 700, 10))[0], kind="transmittance")
        r = s.resample(grid(390, 710, 5), extrapolation="zero")
        assert r.notes[-1] == (
            "resampled 400-700 nm at 10 nm -> 390-710 nm at 5 nm by Sprague interpolation "
            "(CIE 167:2005); extrapolated 390-400 nm and 700-710 nm as zero"
        )

    def test_zero_extrapolation_only_for_filters(self):
        """Zero extrapolation of a reflectance is refused."""
        s = Spectra(grid(400, 700, 10), np.ones(31))
        with pytest.raises(WorkbenchError, match="zero extrapolation is for filters"):
            s.resample(grid(390, 700, 10), extrapolation="zero")

    def test_sprague_needs_uniform_data(self):
        """Sprague is refused for non-uniform data."""
        with pytest.raises(WorkbenchError, match="Sprague interpolation needs uniformly spaced data"):
            resampling_matrix([400, 410, 430, 440, 450, 460], [405], method="sprague")

    def test_nodes_reproduced_exactly(self):
        """Resampling onto a grid containing the nodes returns them bit for bit."""
        x = grid(380, 780, 5)
        y = smooth(x, seed=9)[0]
        v, _ = resample_values(y, x, grid(380, 780, 1))
        assert np.array_equal(v[::5], y)

    def test_is_uniform(self):
        """Uniform grids are recognised to rounding."""
        assert is_uniform(grid(383, 830, 3))
        assert not is_uniform([400, 410, 421])
