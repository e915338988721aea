"""Tests of workbench.analysis.measures against Vora & Trussell (1993), Neugebauer (1956) and docs/methods.md §8 (the synthetic "Gaussian camera")."""

from __future__ import annotations

import colour
import numpy as np
import pytest
from scipy.linalg import subspace_angles

from workbench.errors import WorkbenchError
from workbench.analysis.measures import neugebauer_q, vora_value

WL = np.arange(400.0, 701.0, 10.0)


def cmfs():
    # CIE 1931 2° from colour-science, tabulated at whole nm (no interpolation at 10 nm)
    c = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    return np.asarray(c.values)[np.searchsorted(c.wavelengths, WL)]


def gaussian_camera():
    # docs/methods.md §8: normalised Gaussians, peaks 610/540/450 nm, σ 30/35/25 nm
    peaks, sig = np.array([610.0, 540.0, 450.0]), np.array([30.0, 35.0, 25.0])
    return np.exp(-0.5 * ((WL[:, None] - peaks) / sig) ** 2)


def d65():
    sd = colour.SDS_ILLUMINANTS["D65"]
    return np.asarray(sd.values)[np.searchsorted(sd.wavelengths, WL)]


class TestVoraValue:
    def test_cmfs_and_transform(self):
        """ν(X̄) = ν(X̄T) = 1 (Luther 1927; Vora & Trussell 1993; docs/methods.md §8)."""
        X = cmfs()
        T = np.array([[0.9, 0.3, 0.0], [-0.2, 1.1, 0.1], [0.05, -0.1, 1.3]])
        assert abs(vora_value(X, X) - 1.0) < 1e-12
        assert abs(vora_value(X @ T, X) - 1.0) < 1e-12

    def test_gaussian_camera(self):
        """Gaussian camera: ν 0.9769 (equal energy), 0.9758 (D65 both sides)."""
        # Vora & Trussell (1993); docs/methods.md §8: recomputed here as the mean cos² of the principal angles
        S, X, l = gaussian_camera(), cmfs(), d65()
        ref_e = np.mean(np.cos(subspace_angles(S, X)) ** 2)
        ref_d = np.mean(np.cos(subspace_angles(l[:, None] * S, l[:, None] * X)) ** 2)
        nu_e = vora_value(S, X)
        nu_d = vora_value(S, X, l, l)
        assert abs(nu_e - ref_e) < 1e-12 and abs(nu_d - ref_d) < 1e-12
        assert round(nu_e, 4) == 0.9769
        assert round(nu_d, 4) == 0.9758

    def test_scale_invariance_and_batch(self):
        """Channel scaling does not change ν; a (2, n, 3) batch gives (2,)."""
        S, X = gaussian_camera(), cmfs()
        nu = vora_value(S, X)
        batch = vora_value(np.stack([S, S * [2.0, 0.5, 7.0]]), X)
        assert batch.shape == (2,)
        np.testing.assert_allclose(batch, nu, rtol=1e-12)

    def test_errors(self):
        """Dependent channels, wrong shapes and mismatched grids are errors."""
        X = cmfs()
        S = gaussian_camera()
        S[:, 2] = S[:, 0]
        with pytest.raises(WorkbenchError, match="linearly dependent"):
            vora_value(S, X)
        with pytest.raises(WorkbenchError, match=r"\(\.\.\., n_wavelengths, 3\)"):
            vora_value(X[:, :2], X)
        with pytest.raises(WorkbenchError, match="wavelengths"):
            vora_value(X[:-1], X)
        with pytest.raises(WorkbenchError, match="illuminant_rec"):
            vora_value(X, X, np.ones(5))


class TestNeugebauerQ:
    def test_gaussian_camera(self):
        """q(R, G, B) = 0.9467 / 0.9928 / 0.9865 (Neugebauer 1956; computed, docs/methods.md §8)."""
        S, X = gaussian_camera(), cmfs()
        q = neugebauer_q(S, X)
        # Neugebauer (1956), recomputed: squared cosine of each channel with its projection by lstsq
        coef, *_ = np.linalg.lstsq(X, S, rcond=None)
        P = X @ coef
        ref = np.sum(P * P, axis=0) / np.sum(S * S, axis=0)
        np.testing.assert_allclose(q, ref, rtol=1e-10)
        np.testing.assert_allclose(np.round(q, 4), [0.9467, 0.9928, 0.9865])

    def test_cmfs(self):
        """q(x̄, ȳ, z̄) = 1."""
        X = cmfs()
        np.testing.assert_allclose(neugebauer_q(X, X), 1.0, rtol=1e-12)

    def test_zero_channel(self):
        """An all-zero channel is an error."""
        S = gaussian_camera()
        S[:, 1] = 0
        with pytest.raises(WorkbenchError, match="zero"):
            neugebauer_q(S, cmfs())
