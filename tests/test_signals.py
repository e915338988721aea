"""Luma, colour-difference signals, U/V, Cb/Cr, code values and colour bars."""

import colour
import numpy as np
import pytest

from workbench.errors import WorkbenchError
from workbench.colorimetry.primaries import PRIMARIES
from workbench.colorimetry.signals import (
    BAR_ORDER,
    UV_PAL,
    YCbCr,
    code_values_narrow_range,
    colour_bars,
    colour_difference_signals,
    luma,
    luma_coefficients_of,
)

K_COLOUR = {"BT.601": "ITU-R BT.601", "BT.709": "ITU-R BT.709", "BT.2020": "ITU-R BT.2020"}
BAR_RGB = np.array([[1, 1, 1], [1, 1, 0], [0, 1, 1], [0, 1, 0], [1, 0, 1], [1, 0, 0], [0, 0, 1], [0, 0, 0]], float)


def _rows(rows, *keys):
    return np.array([[r[k] for k in keys] for r in rows], dtype=float)


class TestLuma:
    def test_bt601_bars_published(self):
        """100 % BT.601 bar luma: yellow 0.886 (ITU-R BT.801-1 worked example, second-hand; docs/methods.md §7)."""
        assert luma([1, 1, 0], "BT.601") == pytest.approx(0.886)

    @pytest.mark.parametrize("system", ["BT.601", "BT.709"])
    def test_bar_luma_against_colour(self, system):
        """Bar luma equals colour.RGB_to_YCbCr's Y′ (float, full range; reference library)."""
        ref = colour.RGB_to_YCbCr(BAR_RGB, K=colour.WEIGHTS_YCBCR[K_COLOUR[system]], out_legal=False, out_int=False)
        np.testing.assert_allclose(_rows(colour_bars(1.0, system), "Y'")[:, 0], ref[:, 0], atol=1e-12)

    def test_bar_order_descending_luma(self):
        """Bars run white, yellow, cyan, green, magenta, red, blue, black in falling luma (common practice)."""
        assert BAR_ORDER == ("white", "yellow", "cyan", "green", "magenta", "red", "blue", "black")
        for s in ("BT.601", "BT.709", "BT.2020"):
            y = _rows(colour_bars(1.0, s), "Y'")[:, 0]
            assert np.all(np.diff(y) < 0)

    def test_shape_ladder(self):
        """(3,) → scalar, (2, 3) → (2,), (2, 2, 3) → (2, 2)."""
        assert np.shape(luma([1, 0, 0])) == ()
        assert luma(np.ones((2, 3))).shape == (2,)
        assert colour_difference_signals(np.ones((2, 2, 3))).shape == (2, 2, 3)

    def test_primaries_set(self):
        """Luma of a primaries set uses its RP 177 coefficients."""
        _, K = luma_coefficients_of(PRIMARIES["NTSC 1953"])
        np.testing.assert_array_equal(K.round(3), [0.299, 0.587, 0.114])  # ITU-R BT.601-7 § 2.5.1

    def test_unknown_system(self):
        """An unknown system names the choices."""
        with pytest.raises(WorkbenchError, match="unknown luma system 'BT.999'"):
            luma([1, 1, 1], "BT.999")

    def test_nan_propagates(self):
        """NaN in gives NaN out (nothing repaired)."""
        assert np.isnan(luma([np.nan, 0, 0]))


class TestColourDifference:
    @pytest.mark.parametrize("system", ["BT.601", "BT.709", "BT.2020"])
    def test_cbcr_against_colour(self, system):
        """Cb, Cr = 0.5(B′−Y′)/(1−K_B), 0.5(R′−Y′)/(1−K_R) against colour.RGB_to_YCbCr (reference library)."""
        rgb = np.random.default_rng(3).random((20, 3))
        ref = colour.RGB_to_YCbCr(rgb, K=colour.WEIGHTS_YCBCR[K_COLOUR[system]], out_legal=False, out_int=False)
        np.testing.assert_allclose(YCbCr(rgb, system), ref, atol=1e-12)

    def test_cbcr_range(self):
        """Blue gives Cb = +0.5 and red Cr = +0.5 (ITU-R BT.601-7 § 2.5.2)."""
        assert YCbCr([0, 0, 1], "BT.601")[1] == pytest.approx(0.5)
        assert YCbCr([1, 0, 0], "BT.709")[2] == pytest.approx(0.5)

    def test_pal_75_bars(self):
        """75 % PAL bars: yellow chroma 0.336 at 167°, cyan 0.474 at 283° (EBU bars table, ±0.01; secondary)."""
        for rgb, amp, phase in (([0.75, 0.75, 0], 0.336, 167), ([0, 0.75, 0.75], 0.474, 283)):
            _, U, V = UV_PAL(rgb)
            assert np.hypot(U, V) == pytest.approx(amp, abs=0.01)
            assert np.degrees(np.arctan2(V, U)) % 360 == pytest.approx(phase, abs=1)


class TestCodeValues:
    @pytest.mark.parametrize("system", ["BT.601", "BT.709"])
    @pytest.mark.parametrize("bits", [8, 10])
    @pytest.mark.parametrize("amp", [1.0, 0.75])
    def test_bars_against_colour(self, system, bits, amp):
        """Bar code values equal colour.RGB_to_YCbCr(out_legal, out_int) (reference library; docs/methods.md §7)."""
        ref = colour.RGB_to_YCbCr(BAR_RGB * amp, K=colour.WEIGHTS_YCBCR[K_COLOUR[system]],
                                  out_bits=bits, out_legal=True, out_int=True)
        got = _rows(colour_bars(amp, system), f"Y{bits}", f"Cb{bits}", f"Cr{bits}")
        np.testing.assert_array_equal(got, ref)

    def test_levels(self):
        """Black 16/128/128, white 235, 10-bit 64/940 (ITU-R BT.709-6 item 6.10)."""
        assert code_values_narrow_range([0, 0, 0]).tolist() == [16, 128, 128]
        assert code_values_narrow_range([1, 0, 0])[0] == 235
        assert code_values_narrow_range([[0, 0, 0], [1, 0.5, -0.5]], 10).tolist() == [[64, 512, 512], [940, 960, 64]]

    def test_bits(self):
        """Only 8 and 10 bits."""
        with pytest.raises(WorkbenchError, match=r"bits must be 8 or 10 \(got 12\)"):
            code_values_narrow_range([0, 0, 0], 12)

    def test_out_of_range(self):
        """Values beyond the code range are an error, never clipped."""
        with pytest.raises(WorkbenchError, match="out of the 8-bit code range"):
            code_values_narrow_range([1.2, 0, 0])


class TestBars:
    def test_white_amplitude(self):
        """100/0/75/0: white bar at 100 %, colours at 75 % (common practice, EBU bars)."""
        rows = colour_bars(0.75, "BT.601", white_amplitude=1.0)
        assert rows[0]["Y8"] == 235 and rows[1]["R'"] == 0.75

    def test_75_white(self):
        """75 % white = 180/128/128 (ITU-R BT.601-7 / BT.709-6 code levels, computed; docs/methods.md §7)."""
        r = colour_bars(0.75, "BT.709")[0]
        assert (r["Y8"], r["Cb8"], r["Cr8"]) == (180, 128, 128)

    def test_amplitude_range(self):
        """Amplitude 0 is refused."""
        with pytest.raises(WorkbenchError, match=r"amplitude must be in \(0, 1\]"):
            colour_bars(0.0)
