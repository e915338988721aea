"""The outcome of a fit: :class:`FitResult` (frozen), its status codes and their one table of messages.

:class:`FitStatus` is why a fit ended, an integer code; :data:`FIT_STATUS_TABLE`
gives each code its short name, message and command-line exit status.
:class:`FitStopped` carries a status out of the solver loop of
:func:`workbench.analysis.fit.fit_design`. Moved out of ``fit.py`` unchanged.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import IntEnum

import numpy as np

from workbench.analysis.measures_report import Measures
from workbench.model.design import CHANNELS, Design
from workbench.optics.kinds import element_param_spec
from workbench.report.html import fit_result_html
from workbench.report.json_text import json_text

__all__ = ["FitResult", "FitStatus", "FIT_STATUS_TABLE", "FitStopped", "BOUND_COSTS_METHOD", "parameter_unit"]


class FitStatus(IntEnum):
    """Why a fit ended: an integer code; words and exit status in :data:`FIT_STATUS_TABLE`."""

    CONVERGED = 0
    BUDGET_SPENT = 1
    TIME_LIMIT = 2
    STOPPED = 3
    INFEASIBLE = 4


#: The one table of status messages: code → (short name, message, command-line exit status).
FIT_STATUS_TABLE: dict[FitStatus, tuple[str, str, int]] = {
    FitStatus.CONVERGED: (
        "converged", "the best point passed the local solver's convergence test", 0),
    FitStatus.BUDGET_SPENT: (
        "budget spent", "the evaluation budget was spent before the best point passed the local "
        "convergence test; the best point found is kept", 3),
    FitStatus.TIME_LIMIT: (
        "time limit", "the time limit was reached before the best point passed the local "
        "convergence test; the best point found is kept", 4),
    FitStatus.STOPPED: (
        "stopped", "stopped by the user (Stop button or Ctrl-C); the best point found is kept", 130),
    FitStatus.INFEASIBLE: (
        "infeasible", "no parameter values tried gave a valid design (every evaluation failed); "
        "the start values are kept", 5),
}



BOUND_COSTS_METHOD = (
    "first-order change per unit of relaxing each bound a parameter ends at (a min lowered, a max "
    "raised), the other parameters off their bounds re-optimised: dx from the Gauss-Newton Hessian JᵀJ, "
    "objective change = its gradient·dx (the bound's Lagrange multiplier), ν and weighted mean ΔE00 "
    "changes = their gradients·dx; forward differences at the fitted point, matrix as in the objective")


class FitStopped(Exception):
    """Raised inside the objective to stop a fit; ``status`` says why."""

    def __init__(self, status: FitStatus, detail: str = ""):
        super().__init__(detail or FIT_STATUS_TABLE[status][1])
        self.status = status
        self.detail = detail


# --------------------------------------------------------------------------
# The fit
# --------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class FitResult:
    """The outcome of :func:`fit_design`: a frozen value that renders and serialises.

    ``parameters`` rows: name, unit, start, value, min, max, at_bound
    ('min', 'max' or None). ``status`` a :class:`FitStatus` (its words in
    :data:`FIT_STATUS_TABLE`: :attr:`status_name`, :attr:`status_message`);
    ``message`` the local solver's own words for its last run;
    ``budget`` the evaluation budget and ``time_limit_s`` the wall-time
    limit (None: none) that capped the whole fit. ``smoothness`` (None
    without the term): the ``[fit] coating_smoothness`` weight, the coating
    elements it applies to and the cost split into the colour objective
    and the smoothness term at the start and fitted (they add to
    ``cost_before`` / ``cost_after``), with its method.
    """

    design: Design
    start_design: Design
    parameters: tuple[dict, ...]
    before: Measures
    after: Measures
    objective: str
    cost_before: float
    cost_after: float
    status: FitStatus
    message: str
    evaluations: int
    seconds: float
    global_start: str
    seed: int
    notes: tuple[str, ...] = field(default=())
    budget: int = 0
    time_limit_s: float | None = None
    bound_costs: tuple[dict, ...] = ()
    across_illuminants: str = "weighted-mean"
    illuminant_weights: tuple[tuple[str, float], ...] = ()
    front: tuple[dict, ...] = ()
    robust: dict | None = None
    smoothness: dict | None = None

    @property
    def converged(self) -> bool:
        return self.status == FitStatus.CONVERGED

    @property
    def status_name(self) -> str:
        return FIT_STATUS_TABLE[self.status][0]

    @property
    def status_message(self) -> str:
        return FIT_STATUS_TABLE[self.status][1]

    @property
    def exit_status(self) -> int:
        """The command line's exit status for this outcome (0 only when converged)."""
        return FIT_STATUS_TABLE[self.status][2]

    @property
    def residual_per_wavelength(self) -> np.ndarray:
        """(3, n): camera after balance and matrix minus the target, under the curve illuminant."""
        return self.after.curves - self.after.targets

    def to_dict(self) -> dict:
        return {
            "design": self.design.name,
            "objective": self.objective,
            "status": int(self.status),
            "status_name": self.status_name,
            "status_message": self.status_message,
            "message": self.message,
            "evaluations": self.evaluations,
            "budget": self.budget,
            "time_limit_s": self.time_limit_s,
            "seconds": self.seconds,
            "global_start": self.global_start,
            "seed": self.seed,
            "cost_before": self.cost_before,
            "cost_after": self.cost_after,
            "smoothness": self.smoothness,
            "parameters": list(self.parameters),
            "parameters_at_bounds": [p["name"] for p in self.parameters if p["at_bound"]],
            "bound_costs": list(self.bound_costs),
            "bound_costs_method": BOUND_COSTS_METHOD,
            "across_illuminants": self.across_illuminants,
            "illuminant_weights": dict(self.illuminant_weights),
            "front": list(self.front),
            "robust": self.robust,
            "before": self.before.summary(),
            "after": self.after.summary(),
            "residual_per_wavelength": {
                "wavelength_nm": self.after.wavelengths.tolist(),
                **{ch: self.residual_per_wavelength[i].tolist() for i, ch in enumerate(CHANNELS)},
                "illuminant": self.after.curve_illuminant,
            },
            "per_sample": self.after.per_sample_table(),
            "methods": self.after.methods,
            "notes": list(self.notes),
        }

    def to_json(self) -> str:
        return json_text(self.to_dict())

    def _repr_html_(self) -> str:
        return fit_result_html(self)


def parameter_unit(design: Design, name: str) -> str:
    """The unit of the chain parameter ``element.key`` from its element kind's registry entry ('°' for degrees)."""
    element, _, key = name.rpartition(".")
    for e in design.chain:
        if e.name == element:
            spec = element_param_spec(e, key)
            if spec is not None:
                return {"deg": "°"}.get(spec.unit, spec.unit) or "1"
    return ""

