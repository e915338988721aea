"""Near-infrared leakage: how much of each channel's signal comes from beyond a cut-off.

A silicon sensor responds to about 1100 nm, where the colour-matching
functions are zero: whatever an IR cut lets through there adds signal the
eye never sees, and the colour error it causes grows under lights rich in
the near infrared (tungsten, CIE illuminant A). Two measures, per channel
and illuminant:

* the **infrared share**: the fraction of a channel's raw signal from the
  perfect diffuser that comes from wavelengths above the cut-off,
  Σ_{λ>λc} S(λ) E(λ) / Σ_λ S(λ) E(λ) (summation on the design grid,
  CIE 15:2004 § 7; a point exactly at the cut-off counts as visible);
* the **ΔE00 change when the infrared part is removed**: the mean ΔE00
  over the design's samples with the sensitivities as they are, against
  the same with every sensitivity set to zero above the cut-off (an ideal
  IR cut), the white balance and the matrix fitted again by the design's
  rule for each (so the change is what the leakage costs after the
  pipeline has done its best).

The default cut-off is 700 nm, the usual edge of the visible in imaging
(common practice; ȳ(700 nm) = 0.0041, CIE 15:2004 Table T.4). The design
(``[fit] infrared_cutoff_nm``) or the command line may add another.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from workbench.errors import WorkbenchError

__all__ = ["DEFAULT_CUTOFF_NM", "infrared_share", "InfraredReport", "infrared_report", "infrared_residuals"]

#: The default cut-off between visible and near infrared, nm.
DEFAULT_CUTOFF_NM = 700.0

#: Weight of the soft cap in the fit's residuals: the excess share over the cap times this.
CAP_WEIGHT = 10.0

CHANNELS = ("R", "G", "B")


def infrared_share(S, E, wavelengths, *, cutoff_nm: float = DEFAULT_CUTOFF_NM) -> np.ndarray:
    """The fraction of each channel's white signal from above ``cutoff_nm``.

    Parameters
    ----------
    S : (..., 3, n) array_like
        Channel sensitivities on ``wavelengths``.
    E : (J, n) or (n,) array_like
        Relative SPDs of the illuminants.
    wavelengths : (n,) array_like, nm
        A uniform grid (summation, CIE 15:2004 § 7).
    cutoff_nm : float, nm

    Returns
    -------
    (..., J, 3) ndarray, 0-1
        Σ_{λ>λc} S E / Σ S E; 0 for a channel that records nothing.
    """
    wl = np.asarray(wavelengths, dtype=float)
    S = np.asarray(S, dtype=float)
    E = np.atleast_2d(np.asarray(E, dtype=float))
    if S.shape[-2:] != (3, wl.size) or E.shape[-1] != wl.size:
        raise WorkbenchError(
            f"sensitivities must be shaped (..., 3, {wl.size}) and illuminants (J, {wl.size}) "
            f"(got {S.shape} and {E.shape})")
    St = np.swapaxes(S, -1, -2)                                # (..., n, 3)
    total = E @ St                                             # (..., J, 3)
    above = (E * (wl > cutoff_nm)) @ St
    return np.divide(above, total, out=np.zeros_like(total), where=total > 0)


@dataclass(frozen=True, eq=False)
class InfraredReport:
    """Near-infrared measures of one design state.

    ``cutoffs_nm`` (C,); ``share`` (C, J, 3) the infrared share of each
    channel's white signal; ``mean_delta_E00`` (J,) with the sensitivities
    as they are and ``mean_delta_E00_without`` (C, J) with them cut to zero
    above each cut-off (pipeline refitted for both, see module notes).
    """

    cutoffs_nm: tuple[float, ...]
    illuminants: tuple[str, ...]
    share: np.ndarray
    mean_delta_E00: np.ndarray
    mean_delta_E00_without: np.ndarray
    method: str

    def summary(self) -> dict:
        """Plain JSON-ready data: by cut-off (``'700'``), then by illuminant.

        The change is the difference of the two means (left out: a difference
        of nearly equal numbers is not worth pinning to 1e-12).
        """
        out = {}
        for c, cut in enumerate(self.cutoffs_nm):
            out[f"{cut:g}"] = {
                ill: {
                    "share": {ch: float(self.share[c, j, k]) for k, ch in enumerate(CHANNELS)},
                    "mean_delta_E00": float(self.mean_delta_E00[j]),
                    "mean_delta_E00_without_infrared": float(self.mean_delta_E00_without[c, j]),
                }
                for j, ill in enumerate(self.illuminants)
            }
        return out

    def rows(self) -> list[dict]:
        """One row per cut-off × illuminant for a table (shares in percent)."""
        rows = []
        for c, cut in enumerate(self.cutoffs_nm):
            for j, ill in enumerate(self.illuminants):
                rows.append({
                    "cutoff_nm": cut, "illuminant": ill,
                    **{f"{ch}_ir_%": 100 * float(self.share[c, j, k]) for k, ch in enumerate(CHANNELS)},
                    "mean_dE00": float(self.mean_delta_E00[j]),
                    "without_ir": float(self.mean_delta_E00_without[c, j]),
                    "change": float(self.mean_delta_E00[j] - self.mean_delta_E00_without[c, j]),
                })
        return rows


def infrared_report(bench, S, *, cutoffs_nm=(DEFAULT_CUTOFF_NM,), method="least-squares",
                    scope="shared") -> InfraredReport:
    """The near-infrared measures of sensitivities ``S`` (3, n) on a :class:`ColourBench`.

    Parameters
    ----------
    bench : workbench.analysis.camera.ColourBench
    S : (3, n) array_like
    cutoffs_nm : sequence of float, nm
    method, scope : the matrix rule (as :meth:`ColourBench.evaluate`).
    """
    S = np.asarray(S, dtype=float)
    wl = bench.wavelengths
    cutoffs = tuple(dict.fromkeys(float(c) for c in cutoffs_nm))
    share = np.stack([infrared_share(S, bench.E, wl, cutoff_nm=c) for c in cutoffs])
    with_ir = bench.evaluate(S, method, scope).delta_E00.mean(axis=-1)
    without = []
    for c in cutoffs:
        cut = S * (wl <= c)
        if np.any((bench.E @ cut.T) <= 0):
            raise WorkbenchError(
                f"a channel records nothing at or below {c:g} nm; the ΔE00 without the infrared part "
                "cannot be computed (choose a longer cut-off)")
        without.append(bench.evaluate(cut, method, scope).delta_E00.mean(axis=-1))
    return InfraredReport(
        cutoffs, bench.illuminant_names, share, with_ir, np.stack(without),
        method=(f"infrared share: Σ_(λ>cut-off) S·E / Σ S·E of each channel for the perfect diffuser, "
                f"summation at {bench.step:g} nm; ΔE00 change: mean ΔE00 over the samples with the "
                f"sensitivities as they are minus with them set to zero above the cut-off, white "
                f"balance and {method} matrix ({scope}) fitted for each"),
    )


def infrared_residuals(S, E, wavelengths, *, cutoff_nm: float, weight: float = 0.0,
                       cap: float | None = None) -> np.ndarray | None:
    """Residuals that weight or cap the infrared share in a least-squares fit, (B, m) or None.

    ``weight``·share for every channel and illuminant (a penalty on the
    leakage), and, with ``cap``, CAP_WEIGHT·max(0, share − cap) (a soft
    cap: no cost below it, a steep one above). ``S`` (B, 3, n), ``E`` (J, n).
    """
    parts = []
    if weight <= 0 and cap is None:
        return None
    share = infrared_share(S, E, wavelengths, cutoff_nm=cutoff_nm)   # (B, J, 3)
    B = share.shape[0]
    if weight > 0:
        parts.append(weight * share.reshape(B, -1))
    if cap is not None:
        parts.append(CAP_WEIGHT * np.maximum(share - cap, 0.0).reshape(B, -1))
    return np.concatenate(parts, axis=-1)
