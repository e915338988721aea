"""How much of each channel's signal each element of the chain passes.

For channel c with sensitivity S_c = Π_e T_e (the product along its path)
under an illuminant E, the share of the channel's signal that element e
passes is

    P_e,c = Σ_λ E S_c / Σ_λ E S_c^(−e),    S_c^(−e) = Π_{f≠e} T_f

(summation on the design grid): what the channel collects with the element,
against the same chain with that element taken out. The optics as a whole
pass Σ E S_c / Σ E Q_c, Q_c the sensor's curve (the ``sensor-qe``
elements) alone. Elements not on a channel's path pass 100 % of it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Throughput", "throughput"]

CHANNELS = ("R", "G", "B")


@dataclass(frozen=True)
class Throughput:
    """``passed`` (elements, 3): the share of each channel's signal each element passes, 0-1;
    ``optics`` (3,): what all but the sensor pass together; ``illuminant``: the weighting."""

    elements: tuple[str, ...]
    types: tuple[str, ...]
    passed: np.ndarray
    optics: np.ndarray
    illuminant: str
    method: str

    def rows(self) -> list[dict]:
        """One row per element, then one for the optics together (percent)."""
        rows = [{"element": n, "type": t, **{ch: 100 * float(self.passed[i, k]) for k, ch in enumerate(CHANNELS)}}
                for i, (n, t) in enumerate(zip(self.elements, self.types))]
        rows.append({"element": "optics together", "type": "all but sensor-qe",
                     **{ch: 100 * float(self.optics[k]) for k, ch in enumerate(CHANNELS)}})
        return rows

    def to_dict(self) -> dict:
        return {"illuminant": self.illuminant, "method": self.method, "unit": "% of the channel's signal",
                "rows": self.rows()}


def throughput(curves, illuminant_values, *, illuminant: str = "equal energy") -> Throughput:
    """The share of each channel's signal each element passes (see module notes).

    Parameters
    ----------
    curves : sequence of ElementCurve
        One set of values (each ``values`` (3, n)), as
        :meth:`workbench.optics.chain.ChainModel.element_curves` gives them.
    illuminant_values : (n,) array_like
        The relative SPD weighting the signal.
    illuminant : str
        Its name, for the method text.

    Returns
    -------
    Throughput
    """
    E = np.asarray(illuminant_values, dtype=float)
    T = np.stack([np.asarray(c.values, dtype=float) for c in curves])       # (m, 3, n)
    S = np.prod(T, axis=0)                                                   # (3, n)
    signal = S @ E                                                           # (3,)
    passed = np.empty((len(curves), 3))
    for i in range(len(curves)):
        without = np.prod(np.delete(T, i, axis=0), axis=0) @ E if len(curves) > 1 else E.sum() * np.ones(3)
        passed[i] = np.divide(signal, without, out=np.zeros(3), where=without > 0)
    sensor = [i for i, c in enumerate(curves) if c.type == "sensor-qe"]
    Q = np.prod(T[sensor], axis=0) @ E if sensor else np.full(3, E.sum())
    optics = np.divide(signal, Q, out=np.zeros(3), where=Q > 0)
    return Throughput(tuple(c.name for c in curves), tuple(c.type for c in curves), passed, optics, illuminant,
                      method=(f"Σ E·S / Σ E·S without the element, under {illuminant}, summation on the design grid; "
                              "'optics together': Σ E·S / Σ E·QE (every element but the sensor)"))
