"""The edge of a reflection band, the ripple of its transition and pass band (docs/methods.md §15, "Edges and ripple")."""

from __future__ import annotations

import math

import numpy as np
import pytest

from workbench.analysis.recipe import starting_stack
from workbench.analysis.transition import edge_transition, face_edges
from workbench.errors import WorkbenchError
from workbench.optics.thinfilm import stack_response

N_H, N_L, LAMBDA0 = 2.35, 1.46, 600.0


def _quarter_wave_R(periods, wl, outer="L"):
    """R at normal incidence of (0.5L H 0.5L)^N (or 0.5H L 0.5H) in glass 1.52, QWOT at 600 nm."""
    a, b = (N_L, N_H) if outer == "L" else (N_H, N_L)
    n = np.array([a] + [b, a] * periods)
    q = np.ones(n.size)
    q[0] = q[-1] = 0.5
    return stack_response(n[:, None].astype(complex), q * LAMBDA0 / (4 * n), wl, 0.0, incident=1.52,
                          substrate=1.52).R[0, 0]


def _logistic(wl, centre, width):
    """A falling logistic edge (R 1 → 0), ``width`` its scale in nm."""
    return 1.0 / (1.0 + np.exp((wl - centre) / width))


class TestEdgeTransition:
    def test_quarter_wave_band_edges(self):
        """80 periods: the crossings bounding the band lie on the closed-form band edges λ0 / (1 ± Δg/2)."""
        wl = np.arange(450.0, 800.0, 0.01)
        R = _quarter_wave_R(80, wl)
        # Macleod, Thin-Film Optical Filters, quarter-wave stack zone width (from memory; docs/methods.md §15):
        # Δg = (4/π) arcsin((n_H − n_L)/(n_H + n_L)) in g = λ0/λ, centred on 1
        dg = 4.0 / math.pi * math.asin((N_H - N_L) / (N_H + N_L))
        long_side = edge_transition(wl, R, reflects="short")
        short_side = edge_transition(wl, R, reflects="long")
        assert long_side.band_edge_nm == pytest.approx(LAMBDA0 / (1 - dg / 2), rel=1e-3)
        assert short_side.band_edge_nm == pytest.approx(LAMBDA0 / (1 + dg / 2), rel=1e-3)
        # its side lobes go back above 50 % (glass on both sides, no matching): flagged, no single edge
        assert not long_side.monotone and len(long_side.crossings_nm) > 1 and math.isnan(long_side.edge_nm)

    def test_ten_periods_one_crossing(self):
        """A 10-period stack falls through 50 % once on its long side: a single, monotone edge."""
        wl = np.arange(450.0, 850.0, 0.02)
        t = edge_transition(wl, _quarter_wave_R(10, wl), reflects="short")
        assert t.monotone and len(t.crossings_nm) == 1 and t.edge_nm == t.band_edge_nm
        assert t.transition_nm[0] < t.edge_nm < t.transition_nm[1] and t.reversal_pct == 0.0

    def test_monotone_synthetic_one_crossing(self):
        """A logistic edge has exactly one crossing, at its centre, no reversal and no pass-band ripple."""
        wl = np.arange(400.0, 700.0, 0.5)
        t = edge_transition(wl, _logistic(wl, 520.3, 6.0), reflects="short")
        assert t.crossings_nm == pytest.approx((520.3,), abs=1e-3) and t.edge_nm == pytest.approx(520.3, abs=1e-3)
        assert t.monotone and t.reversal_pct == 0.0
        # the transition 90 % → 10 % of a logistic spans 2·ln 9 widths (common practice); pass band one width on
        lo, hi = t.transition_nm
        assert hi - lo == pytest.approx(2 * math.log(9) * 6.0, abs=1.0)
        assert t.pass_band_nm[0] == pytest.approx(hi + (hi - lo)) and t.pass_band_nm[1] == 699.5
        assert t.pass_ripple_pct < 0.2

    def test_long_reflector_is_the_mirror(self):
        """A face reflecting the long side gives the mirrored edge and pass band."""
        wl = np.arange(400.0, 700.0, 0.5)
        t = edge_transition(wl, 1.0 - _logistic(wl, 560.0, 5.0), reflects="long")
        assert t.edge_nm == pytest.approx(560.0, abs=1e-3) and t.monotone
        assert t.pass_band_nm[0] == 400.0 and t.pass_band_nm[1] < t.transition_nm[0]

    def test_pass_band_ripple_peak_to_peak(self):
        """A 3 % sine on the pass band reads as 6 % peak-to-peak over the stated band."""
        wl = np.arange(400.0, 700.0, 0.1)
        R = _logistic(wl, 500.0, 4.0) + np.where(wl > 540.0, 0.05 + 0.03 * np.sin(2 * np.pi * wl / 17.0), 0.0)
        t = edge_transition(wl, R, reflects="short", pass_band_nm=(560.0, 690.0))
        assert t.pass_band_nm == (560.0, 690.0)
        assert t.pass_ripple_pct == pytest.approx(6.0, abs=0.01) and t.pass_max_pct == pytest.approx(8.0, abs=0.01)

    def test_rippled_transition_flagged(self):
        """A lobe back above 50 % in the transition: three crossings, no single edge, the lobe's rise reported."""
        wl = np.arange(400.0, 700.0, 0.05)
        R = _logistic(wl, 500.0, 2.0) + 0.7 * np.exp(-0.5 * ((wl - 512.0) / 1.5) ** 2)
        t = edge_transition(wl, R, reflects="short")
        assert len(t.crossings_nm) == 3 and math.isnan(t.edge_nm) and not t.monotone
        assert t.span_nm[0] == pytest.approx(500.0, abs=0.01) and 510.0 < t.span_nm[1] < 515.0
        rise = R[np.argmin(np.abs(wl - 512.0))] - R[(wl > 500) & (wl < 512)].min()
        assert t.reversal_pct == pytest.approx(100 * rise, abs=0.1)
        assert t.band_edge_nm == t.span_nm[0] and "3 crossings of 50 % at 500.0-51" in t.describe()

    def test_small_ripple_is_one_crossing_but_not_monotone(self):
        """A 3 % wiggle in the transition keeps one crossing but is flagged non-monotone (tolerance 1 %)."""
        wl = np.arange(400.0, 700.0, 0.05)
        R = _logistic(wl, 500.0, 5.0) + 0.03 * np.exp(-0.5 * ((wl - 507.0) / 0.2) ** 2)
        t = edge_transition(wl, R, reflects="short")
        assert len(t.crossings_nm) == 1 and not t.monotone and 1.0 < t.reversal_pct < 3.0
        assert "(non-monotone, reversal" in t.describe()

    def test_band_off_the_window(self):
        """A band that runs off the window on its pass-band side gives no edge and says why."""
        wl = np.arange(400.0, 700.0, 1.0)
        t = edge_transition(wl, _logistic(wl, 800.0, 5.0), reflects="short")
        assert math.isnan(t.edge_nm) and t.problem == "the reflection band runs off the window on its pass-band side"
        assert edge_transition(wl, np.zeros(wl.size), reflects="long").problem == (
            "no reflection band (R < 50 % everywhere)")

    def test_rejects_bad_side(self):
        """A side other than short or long is refused."""
        with pytest.raises(WorkbenchError) as err:
            edge_transition([1.0, 2.0, 3.0], [1.0, 0.5, 0.0], reflects="both")
        assert str(err.value) == "'reflects' must be one of short, long (got 'both')"


class TestFaceEdges:
    def test_three_angles_s_above_p(self):
        """A short-reflecting face at 30° in glass: three angles, p below s (Macleod 2010, ch. 6 edge filters)."""
        rec = starting_stack(500.0, reflects="short", periods=8, high="2.35", low="1.46", aoi_deg=30.0,
                             incident="1.52", substrate="1.52")
        rows = face_edges(rec, reflects="short", window_nm=(400.0, 700.0), step_nm=0.1)
        assert [a for a, _ in rows] == [25.0, 30.0, 35.0]
        for _, by in rows:
            assert by["s"].band_edge_nm > by["p"].band_edge_nm
        # the edge moves to shorter wavelengths with angle
        assert rows[0][1]["mean"].band_edge_nm > rows[2][1]["mean"].band_edge_nm


class TestPlotHalfPointsVsAngle:
    def test_rippled_edges_are_hollow(self):
        """A 20-period stack in glass ripples above 50 % beside its band: its edges are drawn hollow and said so."""
        from workbench.plots.coating import plot_half_points_vs_angle

        rec = starting_stack(500.0, reflects="short", periods=20, high="2.35", low="1.46", incident="1.52",
                             substrate="1.52")
        wl = np.arange(380.0, 780.0, 0.2)
        res = stack_response(rec.indices(wl), rec.thicknesses_nm, wl, [0.0, 20.0], incident=1.52, substrate=1.52)
        ax = plot_half_points_vs_angle(res).axes[0]
        hollow = [ln for ln in ax.get_lines() if ln.get_markerfacecolor() == "none" and len(ln.get_xdata())]
        assert hollow and "hollow: transition not monotone" in ax.get_title()
