"""A straightforward camera evaluation built from colour-science calls, one sample at a time.

The reference for the tests of workbench.analysis.camera / workbench.analysis.evaluator and the
"colour-science" column of tests/benchmarks/bench_fit.py. It follows the
same definitions (white balance on the perfect diffuser, least-squares
matrix to the display's linear RGB, truth adapted to the display white by
the Bradford transform, CIELAB against the display white, CIEDE2000) but
computes every step with colour-science's own functions and plain loops.
"""

from __future__ import annotations

import numpy as np


def gaussian_camera(wl):
    """The open synthetic test camera (docs/methods.md §8): peaks 610/540/450 nm, σ 30/35/25 nm."""
    return np.stack([np.exp(-0.5 * ((wl - p) / s) ** 2) for p, s in ((610, 30), (540, 35), (450, 25))])


def evaluate_with_colour(wl, S, reflectances, illuminants: dict, primaries_name="ITU-R BT.709",
                         matrix="least-squares"):
    """ΔE00 (J, K) of camera ``S`` (3, n) over ``reflectances`` (K, n) under each illuminant (n,).

    Every tristimulus value is ``colour.sd_to_XYZ`` of a SpectralDistribution
    (integration), the matrix ``colour.characterisation.matrix_colour_correction``
    (least squares, "Cheung 2004" with 3 terms) and the comparison
    ``colour.delta_E(..., method="CIE 2000")``.
    """
    import colour

    shape = colour.SpectralShape(float(wl[0]), float(wl[-1]), float(wl[1] - wl[0]))
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(shape)
    cs = colour.RGB_COLOURSPACES["ITU-R BT.709"]
    N = cs.matrix_RGB_to_XYZ
    white_d = N.sum(axis=1)
    out = []
    for name, E in illuminants.items():
        sd_E = colour.SpectralDistribution(dict(zip(wl, E)), name=name)
        XYZ_w = colour.sd_to_XYZ(sd_E, cmfs, method="Integration") / 100  # emission: k = 1 → scale
        XYZ_w = XYZ_w / XYZ_w[1]
        A = colour.adaptation.matrix_chromatic_adaptation_VonKries(XYZ_w, white_d, transform="Bradford")
        raw_w = S @ E
        C, T = [], []
        for R in reflectances:
            sd = colour.SpectralDistribution(dict(zip(wl, R)))
            XYZ = colour.sd_to_XYZ(sd, cmfs, sd_E, method="Integration") / 100
            T.append(np.linalg.inv(N) @ (A @ XYZ))
            C.append((S @ (R * E)) / raw_w)
        C, T = np.array(C), np.array(T)
        if matrix == "least-squares":
            M = colour.characterisation.matrix_colour_correction(C, T, method="Cheung 2004", terms=3)
        else:
            raise ValueError(matrix)
        d = []
        for c, t in zip(C, T):
            lab_c = colour.XYZ_to_Lab(N @ (M @ c), colour.XYZ_to_xy(white_d))
            lab_t = colour.XYZ_to_Lab(N @ t, colour.XYZ_to_xy(white_d))
            d.append(colour.delta_E(lab_c, lab_t, method="CIE 2000"))
        out.append(d)
    return np.array(out)
