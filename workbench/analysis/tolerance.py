"""Tolerance analysis: what manufacturing tolerances do to the camera's colour.

:func:`run_tolerance` draws every toleranced parameter of a design (the
``tolerance = {distribution, width}`` of its ``[[chain]]`` parameters, see
docs/design-file.md) for a number of simulated units with a seed, evaluates
all units as batched array computations through
:class:`workbench.analysis.evaluator.DesignEvaluator` (chunks of trials, no per-unit
loop through the chain), and summarises:

- the distributions (p5, p50, p95, mean, standard deviation) of the Vora
  value ν, the mean and the maximum ΔE00 under each illuminant, the
  white-balance gains and the noise gain of the matrix;
- the yield against the design's ``[tolerance]`` specification (mean ΔE00
  ≤ ``max_mean_delta_E00`` under every illuminant and ν ≥ ``min_vora``) with
  its 95 % Wilson interval;
- which tolerance drives the error: the first-order variance contribution
  of each parameter (correlation ratio), the squared standardized
  regression coefficients, and the one-at-a-time change with each
  parameter alone at ±1 tolerance width;
- the colour shift across the image (:func:`field_shift`).

Two matrix cases: ``fixed`` — every unit uses the colour-correction matrix
of the nominal design (the ``[matrix]`` stored in the design when it has
one, else fitted to the nominal design by its ``[fit]`` rule), as when one
matrix is loaded into every camera; ``recalibrated`` — every unit gets its
own matrix by the design's rule, as when each camera is calibrated at the
factory. In both cases each unit is white-balanced on its own white, as a
camera is at every shoot.

:class:`ToleranceResult` is a frozen value: it renders in a notebook,
serialises to JSON (:meth:`ToleranceResult.summary`,
:meth:`ToleranceResult.to_json`) and writes the trials as CSV
(:meth:`ToleranceResult.trials_csv`); :func:`save_trials` writes both
atomically.

References
----------
- Saltelli, A. et al., *Global Sensitivity Analysis. The Primer*, Wiley
  (2008), ch. 1 (standardized regression coefficients; first-order
  sensitivity index as the variance of the conditional mean).
- McKay, M. D., *Evaluating Prediction Uncertainty*, NUREG/CR-6311 (1995)
  (the correlation ratio estimated from a sample).
- Wilson, E. B., *J. Am. Stat. Assoc.* 22:209 (1927) (score interval of a
  proportion).
"""

from __future__ import annotations

import copy
import os
import threading
import time
from concurrent.futures import FIRST_COMPLETED, ThreadPoolExecutor, wait
from dataclasses import replace

import numpy as np

from workbench.analysis.evaluator import DesignEvaluator
from workbench.analysis.measures_report import noise_report
from workbench.analysis.progress import progress_bar
from workbench.analysis.tolerance_draws import (
    check_trials_seed,
    one_at_a_time_values,
    parameter_unit,
    sample_parameters,
    toleranced_parameters,
)
from workbench.analysis.tolerance_field import (
    DEFAULT_CORNER_OFFSET_DEG,
    DEFAULT_EDGE_OFFSET_DEG,
    FieldShift,
    default_field_positions,
    field_shift,
    splitter_element,
)
from workbench.analysis.tolerance_stats import (
    ToleranceResult,
    correlation_ratio,
    distribution,
    passes_spec,
    standardized_regression,
    wilson_interval,
)
from workbench.errors import WorkbenchError
from workbench.fileio.atomic import write_text_atomically
from workbench.model.design import Design, ToleranceSpec

__all__ = [
    "CASES",
    "MATRIX_CHOICES",
    "DEFAULT_CHUNK",
    "DEFAULT_EDGE_OFFSET_DEG",
    "DEFAULT_CORNER_OFFSET_DEG",
    "parameter_unit",
    "toleranced_parameters",
    "sample_parameters",
    "one_at_a_time_values",
    "distribution",
    "wilson_interval",
    "correlation_ratio",
    "standardized_regression",
    "default_field_positions",
    "field_shift",
    "FieldShift",
    "ToleranceResult",
    "run_tolerance",
    "save_trials",
]

CASES = ("fixed", "recalibrated")
MATRIX_CHOICES = ("fixed", "recalibrated", "both")
#: Trials evaluated together (bounds the memory of the cone-of-rays splitter: ~30 MB per chunk).
DEFAULT_CHUNK = 250

# --------------------------------------------------------------------------
# Evaluation of a batch
# --------------------------------------------------------------------------


def _evaluate(ev, design: Design, values: dict, cases, fixed_matrices, n: int) -> dict:
    """Per-unit arrays for a batch of ``n`` units (values: dict of (n,) arrays)."""
    out: dict = {}
    for case in cases:
        r = ev.batch(values, matrices=fixed_matrices if case == "fixed" else None)
        st = r.delta_E00
        mean = np.stack([np.broadcast_to(st[i].mean, (n,)) for i in r.illuminants], axis=-1)   # (n, J)
        mx = np.stack([np.broadcast_to(st[i].max, (n,)) for i in r.illuminants], axis=-1)
        gains = np.broadcast_to(r.gains, (n,) + r.gains.shape[-2:])
        M = np.broadcast_to(r.matrices, (n,) + r.matrices.shape[-3:])
        noise = noise_report(M, 1.0 / gains, design.noise)
        out[case] = {
            "delta_E00_mean": mean,
            "delta_E00_max": mx,
            "gains": np.asarray(gains),
            "noise_gain": np.linalg.norm(M, axis=-1),                                     # (n, J, 3)
            "grey_snr_db": np.asarray(noise["snr_db"]),                                    # (n, J, 3)
            "matrix_method": r.method,
        }
        out["vora_value"] = np.broadcast_to(r.vora_value, (n,)).astype(float)
    return out


def _concat(parts: list[dict], cases) -> dict:
    out = {"vora_value": np.concatenate([p["vora_value"] for p in parts])}
    for c in cases:
        out[c] = {k: np.concatenate([p[c][k] for p in parts]) for k in parts[0][c] if k != "matrix_method"}
        out[c]["matrix_method"] = parts[0][c]["matrix_method"]
    return out



# --------------------------------------------------------------------------
# The run
# --------------------------------------------------------------------------


def _workers(n_chunks: int, workers) -> int:
    if workers is None:
        workers = min(2, os.cpu_count() or 1)
    if isinstance(workers, bool) or not isinstance(workers, int) or workers < 1:
        raise WorkbenchError(f"workers must be a whole number >= 1 (got {workers!r})")
    return max(1, min(workers, n_chunks))


def run_tolerance(design: Design, *, trials: int = 2000, seed: int = 0, matrix: str = "both",
                  tolerances=None, scale: float = 1.0, spec: ToleranceSpec | None = None,
                  field: bool | None = None, chunk: int = DEFAULT_CHUNK, workers: int | None = None,
                  progress: bool = True, stop: threading.Event | None = None,
                  evaluator=None) -> ToleranceResult:
    """Monte Carlo tolerance analysis of a design.

    Parameters
    ----------
    design : Design
        Its parameters' ``tolerance`` tables say what varies; its
        ``[tolerance]`` the specification and field positions.
    trials : int
        Simulated units (≥ 1).
    seed : int
        Seed (≥ 0); the same seed gives the same draws and results.
    matrix : {'both', 'fixed', 'recalibrated'}
        Which matrix case(s) to evaluate (module docstring); the first is
        the summary's top level.
    tolerances : mapping of str to Tolerance or None, optional
        Overrides of the design's tolerances; ``scale`` multiplies every
        width (see :func:`toleranced_parameters`).
    spec : ToleranceSpec, optional
        Overrides the design's ``[tolerance]`` limits (and field positions).
    field : bool, optional
        Evaluate the colour shift across the image (:func:`field_shift`).
        Default: when the design has a dichroic splitter.
    chunk : int
        Trials per batched evaluation (bounds memory; ~30 MB for the demo
        design at 250).
    workers : int, optional
        Threads evaluating chunks at once (default: up to 2, the machine's
        cores); the numbers do not depend on it.
    progress : bool
        A tqdm progress bar over the trials (terminal or notebook).
    stop : threading.Event, optional
        Set it to stop after the chunks under way; Ctrl-C does the same.
        The finished trials are kept and ``interrupted`` says so.
    evaluator : DesignEvaluator, optional
        Reuse one already built for ``design``.

    Returns
    -------
    ToleranceResult

    References
    ----------
    Saltelli, A. et al. (2008). *Global Sensitivity Analysis. The Primer*. Wiley.
    Wilson, E. B. (1927). *J. Am. Stat. Assoc.* 22, 209-212 (yield interval).
    docs/methods.md §16.
    """
    t0 = time.perf_counter()
    check_trials_seed(trials, seed)
    if matrix not in MATRIX_CHOICES:
        raise WorkbenchError(f"matrix must be one of {', '.join(MATRIX_CHOICES)} (got {matrix!r})")
    if isinstance(chunk, bool) or not isinstance(chunk, int) or chunk < 1:
        raise WorkbenchError(f"chunk must be a whole number >= 1 (got {chunk!r})")
    if spec is not None:
        design = replace(design, tolerance=spec)
    spec = design.tolerance
    cases = CASES if matrix == "both" else (matrix,)
    tol = toleranced_parameters(design, tolerances, scale=scale)
    samples = sample_parameters(design, int(trials), int(seed), tolerances=tolerances, scale=scale)
    oat_values, oat_labels = one_at_a_time_values(design, {k: t for k, t in tol.items() if t.width > 0})
    ev = evaluator or DesignEvaluator(design)
    notes = list(ev.notes)
    if not tol:
        notes.append("no parameter carries a tolerance: every trial is the nominal design")
    elif all(t.width == 0 for t in tol.values()):
        notes.append("every tolerance width is 0: every trial is the nominal design")
    if design.fit.matrix == "delta-e00" and "recalibrated" in cases:
        notes.append("recalibrated case: the ΔE00-minimising matrix is not fitted per unit; least squares is used")
    nominal_measures = ev.measures(use_stored_matrix=design.matrix is not None)
    fixed_M = nominal_measures.matrices
    if "fixed" in cases:
        notes.append(f"fixed case: the nominal design's matrix ({nominal_measures.matrix_method}, "
                     f"{nominal_measures.matrix_scope}) for every unit")

    known = design.parameters()
    anchor = next(iter(known), None)

    def with_anchor(values: dict, n: int) -> dict:
        # a batch needs at least one batched parameter to carry its length
        if values or anchor is None:
            return values
        return {anchor: np.full(n, known[anchor].value)}

    nominal = _evaluate(ev, design, with_anchor({k: np.array([known[k].value]) for k in tol}, 1), cases, fixed_M, 1)
    n_oat = len(oat_labels)
    try:
        oat_eval = _evaluate(ev, design, oat_values, cases, fixed_M, n_oat) if n_oat else None
    except WorkbenchError as err:
        raise WorkbenchError(f"one-at-a-time units (nominal ± width): {str(err).splitlines()[0]}") from None
    oat = (oat_eval if n_oat else
           {"vora_value": np.zeros(0), **{c: {k: np.zeros((0,) + v.shape[1:]) for k, v in nominal[c].items()
                                              if k != "matrix_method"} for c in cases}})

    N = int(trials)
    slices = [slice(i, min(N, i + chunk)) for i in range(0, N, chunk)]
    nw = _workers(len(slices), workers)
    done: dict[int, dict] = {}
    local = threading.local()

    def job(i: int) -> dict:
        e = getattr(local, "ev", None)
        if e is None:
            if nw == 1:
                e = ev
            else:
                # each thread its own chain model (its curve memo is per instance)
                e = copy.copy(ev)
                e.model = design.model()
            local.ev = e
        sl = slices[i]
        n = sl.stop - sl.start
        try:
            return _evaluate(e, design, with_anchor({k: v[sl] for k, v in samples.items()}, n), cases, fixed_M, n)
        except WorkbenchError as err:
            raise WorkbenchError(f"trials {sl.start}-{sl.stop - 1}: {str(err).splitlines()[0]}") from None

    bar = None
    if progress:
        bar = progress_bar(total=N, desc="tolerance trials", unit="trial", leave=False)
    interrupted = False
    try:
        if nw == 1:
            for i in range(len(slices)):
                if stop is not None and stop.is_set():
                    interrupted = True
                    break
                done[i] = job(i)
                if bar is not None:
                    bar.update(slices[i].stop - slices[i].start)
        else:
            ex = ThreadPoolExecutor(max_workers=nw, thread_name_prefix="tolerance")
            pending = {}
            it = iter(range(len(slices)))
            try:
                for _ in range(nw * 2):
                    i = next(it, None)
                    if i is not None:
                        pending[ex.submit(job, i)] = i
                while pending:
                    finished, _ = wait(pending, timeout=0.2, return_when=FIRST_COMPLETED)
                    for f in finished:
                        i = pending.pop(f)
                        done[i] = f.result()
                        if bar is not None:
                            bar.update(slices[i].stop - slices[i].start)
                    if stop is not None and stop.is_set():
                        interrupted = True
                        break
                    for _ in finished:
                        i = next(it, None)
                        if i is not None:
                            pending[ex.submit(job, i)] = i
            except KeyboardInterrupt:
                interrupted = True
            finally:
                ex.shutdown(wait=True, cancel_futures=True)
                for f, i in pending.items():
                    if f.done() and not f.cancelled() and f.exception() is None:
                        done[i] = f.result()
    except KeyboardInterrupt:
        interrupted = True
    finally:
        if bar is not None:
            bar.close()
    if not done:
        raise KeyboardInterrupt("tolerance analysis stopped before the first chunk finished")
    keep = sorted(done)
    if interrupted or len(keep) < len(slices):
        interrupted = True
    arr = _concat([done[i] for i in keep], cases)
    idx = np.concatenate([np.arange(slices[i].start, slices[i].stop) for i in keep])
    kept_samples = {k: v[idx] for k, v in samples.items()}
    if interrupted:
        notes.append(f"interrupted: {idx.size} of {N} trials finished; statistics are over those")
    for c in cases:
        arr[c]["passed"] = passes_spec(arr, c, arr["vora_value"], spec)
    fs = None
    if field is None:
        field = splitter_element(design) is not None or bool(design.tolerance.field)
    if field:
        fs = field_shift(design, evaluator=ev, matrices=fixed_M)
        if not design.tolerance.field:
            notes.append(f"no [[tolerance.field]] in the design: field positions at the centre, edges "
                         f"±{DEFAULT_EDGE_OFFSET_DEG:g}° and corners ±{DEFAULT_CORNER_OFFSET_DEG:g}° in glass")
    elif splitter_element(design) is None:
        notes.append("no dichroic-splitter in the chain: no field analysis")
    return ToleranceResult(
        design=design, trials=int(idx.size), trials_requested=N, seed=int(seed), cases=cases,
        tolerances=tol, samples=kept_samples, trial_index=idx, vora_value=arr["vora_value"],
        per_case={c: arr[c] for c in cases}, nominal=nominal, one_at_a_time=oat,
        oat_labels=tuple(oat_labels), illuminants=tuple(ev.bench.illuminant_names), spec=spec,
        field=fs, interrupted=interrupted, seconds=time.perf_counter() - t0, chunk=chunk,
        notes=tuple(dict.fromkeys(notes)),
    )


def save_trials(result: ToleranceResult, *, csv_path=None, json_path=None) -> None:
    """Write the trials as CSV and/or the summary with every trial as JSON, each atomically."""
    if csv_path is not None:
        write_text_atomically(csv_path, result.trials_csv())
    if json_path is not None:
        write_text_atomically(json_path, result.to_json(trials=True) + "\n")
