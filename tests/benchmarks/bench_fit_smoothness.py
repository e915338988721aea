"""The refit of coated faces with and without ``[fit] coating_smoothness`` (run on demand, never in the test suite).

    uv run python tests/benchmarks/bench_fit_smoothness.py [--weights 0,1,3] [--evaluations 400] [--coated PATH]

The README flow: the demo design fitted, its idealised splitter faces
turned into layer recipes with every layer free (``workbench recipe
--free-layers``: ``splitter_recipes`` then ``coated_design(free_layers=True,
keep_free=False)``), then ``workbench fit`` of that design with each
``coating_smoothness`` weight for the same evaluation budget. ``--coated``
takes a coated design already written by ``workbench recipe --free-layers
--out DIR`` (``DIR/design.toml``) instead of making one (about 30 s).

Prints per weight: evaluations and the fit's own seconds (median of the
repeats), ν, mean ΔE00 per illuminant, the cost split (colour objective +
smoothness) and, per face, its chief ray's pass-band ripple for s and p and
whether its transition stays monotone (``analysis.transition.edge_transition``
on a 0.05 nm grid at the face's own angle, docs/methods.md §15); then the CPU
time of the smoothness term alone on one batch of forward differences
against the whole objective on that batch.
"""

from __future__ import annotations

import argparse
import time
import warnings
from dataclasses import replace

import numpy as np

from workbench import demo_dir
from workbench.analysis.evaluator import DesignEvaluator
from workbench.analysis.fit import fit_design
from workbench.analysis.fit_objective import CoatingSmoothness, Objective
from workbench.analysis.recipe import coated_design, splitter_recipes
from workbench.analysis.transition import edge_transition
from workbench.fileio.design_toml import load_design
from workbench.optics.kinds.coating import layer_thicknesses
from workbench.optics.materials import material_named
from workbench.optics.thinfilm import stack_response


def face_ripples(design) -> dict:
    """Per coating face: (pass-band ripple % for s, for p, all transitions monotone)."""
    wl0 = design.grid.wavelengths
    wl = np.arange(wl0[0], wl0[-1] + 0.025, 0.05)
    out = {}
    for e in design.chain:
        if e.type != "coating" or e.option("reflects") == "none":
            continue
        params = {k: p.value for k, p in e.params}
        N = np.stack([e.data.materials[x.symbol].index(wl) for x in e.data.layers])
        res = stack_response(N, layer_thicknesses(e.data, params), wl, [params["aoi_deg"]],
                             incident=material_named(e.option("incident")).index(wl).real,
                             substrate=material_named(e.option("substrate")).index(wl))
        side = "short" if e.option("reflects") == "B" else "long"
        t = [edge_transition(wl, res.R[i, 0], reflects=side) for i in (0, 1)]
        out[f"{e.name} @{params['aoi_deg']:g}°"] = (t[0].pass_ripple_pct, t[1].pass_ripple_pct,
                                                    t[0].monotone and t[1].monotone)
    return out


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--weights", default="0,1,3")
    ap.add_argument("--evaluations", type=int, default=400)
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--coated", default=None)
    args = ap.parse_args()
    warnings.simplefilter("ignore")
    if args.coated:
        coated = load_design(args.coated)
    else:
        fitted = fit_design(load_design(demo_dir() / "tern3_design.toml"), progress=False).design
        coated = coated_design(fitted, splitter_recipes(fitted), free_layers=True, keep_free=False)
    start = DesignEvaluator(coated).measures()
    print(f"start: ν {start.vora_value:.4f}; mean ΔE00 "
          + " / ".join(f"{start.delta_E00[i]['mean']:.3f}" for i in start.illuminants)
          + f" ({', '.join(start.illuminants)})")
    for face, (s, p, mono) in face_ripples(coated).items():
        print(f"  {face}: pass-band ripple s {s:.2f} %, p {p:.2f} %, monotone {mono}")
    for w in (float(x) for x in args.weights.split(",")):
        design = replace(coated, fit=replace(coated.fit, coating_smoothness=w, max_evaluations=args.evaluations))
        secs = []
        for _ in range(args.repeats):
            res = fit_design(design, progress=False)
            secs.append(res.seconds)
        a = res.after
        sm = res.smoothness
        split = ("" if sm is None else f"; cost = colour {sm['colour_cost_after']:.4g} + smoothness "
                 f"{sm['smoothness_cost_after']:.4g}")
        print(f"weight {w:g}: {res.evaluations} evaluations, {np.median(secs):.2f} s (median of {args.repeats}); "
              f"ν {a.vora_value:.4f}; mean ΔE00 " + " / ".join(f"{a.delta_E00[i]['mean']:.3f}" for i in a.illuminants)
              + split)
        for face, (s, p, mono) in face_ripples(res.design).items():
            print(f"  {face}: pass-band ripple s {s:.2f} %, p {p:.2f} %, monotone {mono}")
    # the term's own cost on one batch of forward differences (alternating two bases defeats the caches)
    ev = DesignEvaluator(replace(coated, fit=replace(coated.fit, coating_smoothness=1.0)))
    obj = Objective(ev)
    n = ev.start.size
    batches = []
    for f in (1.0, 1.0001):
        X = np.repeat((ev.start * f)[None], n + 1, axis=0)
        X[1 + np.arange(n), np.arange(n)] *= 1.0001
        batches.append(X)
    alone = CoatingSmoothness(ev, 1.0)                  # its own cache: the two timings never share one
    m = obj.colour(batches[0]).shape[-1]
    whole, term = [], []
    for i in range(40):
        X = batches[i % 2]
        t = time.process_time()
        obj(X)
        whole.append(time.process_time() - t)
        t = time.process_time()
        alone(X, m)
        term.append(time.process_time() - t)
    print(f"one batch of {n + 1} forward-difference rows: the whole objective {1e3 * np.median(whole):.1f} ms CPU, "
          f"of which the smoothness term about {1e3 * np.median(term):.1f} ms (medians of 40)")

if __name__ == "__main__":
    main()
