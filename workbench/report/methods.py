"""The method of every measure, written once.

Each text says what a number is, how it is computed and its source and
scale. The evaluator's ``methods``, the JSON ``method`` fields of the
commands, the HTML views and the notebooks all read :data:`METHODS`, so a
measure is described the same way wherever it is shown.
"""

from __future__ import annotations

__all__ = ["METHODS", "noise_method", "smi_method"]

#: measure → its method (what it is, how, source, scale).
METHODS = {
    "vora_value": ("Tr(P_A P_M)/3, QR projectors, A = diag(l_view)·x̄ȳz̄, M = diag(l_rec)·S "
                   "(Vora & Trussell 1993), 0-1"),
    "neugebauer_q": "‖P_A m‖²/‖m‖² per channel (Neugebauer 1956), 0-1",
    "luther_residual": ("‖(I − P_M)·diag(l_view)·T‖_F / ‖diag(l_view)·T‖_F, T the target "
                        "colour-matching functions, 0 = Luther"),
    "delta_E00": ("CIEDE2000 (CIE 142-2001) between the camera (white balance on the perfect "
                  "diffuser, then the matrix) and the truth adapted to the display white "
                  "(linear Bradford), CIELAB against the display white; over the samples of "
                  "each illuminant"),
    "sensitivities": "product of the element curves along each path of the chain",
    "peak_nm": "grid point of the maximum, nm",
    "half_max_nm": "50 % of the peak, linear interpolation between grid points, nm",
}


def smi_method(slope: float, n_samples: int) -> str:
    """The method of the ISO 17321-1-style sensitivity metamerism index."""
    return (f"ISO 17321-1-style SMI = 100 − {slope:g} × mean ΔE*ab over {n_samples} samples, "
            "least-squares raw RGB → XYZ matrix")


def noise_method(noise) -> str:
    """The method of the noise report for a :class:`workbench.model.design.NoiseModel`."""
    return (f"shot + read noise: full well {noise.full_well_e:g} e⁻, read "
            f"{noise.read_noise_e:g} e⁻ rms, white at "
            f"{noise.exposure:g} of full well in the strongest channel, grey "
            f"{noise.grey:g}; σ_out in display RGB (white = 1); row norms = "
            "noise gain for independent channel noise")
