"""Speed of a camera with real coated splitter faces (run on demand, never in the test suite).

    uv run python tests/benchmarks/bench_coating_camera.py [--repeats 20] [--refine-evaluations 30]

The demo design with its idealised dichroic splitter replaced by two real
faces of the ``coating`` kind (41 layers each, TiO2/SiO2 symmetric-period
edge filters at 25° and 12° in crown-517 glass, f/2 cone, 4 × 8 pupil
quadrature, unpolarised), on the demo design's own grid.

Prints:

* one camera evaluation (``DesignEvaluator.measures``) with both faces
  moved (so neither face's curve comes from the chain's cache), against the
  idealised design doing the same;
* the chain alone with one face moved;
* refining the blue face's 41 thicknesses against the camera objective
  (``recipe.refine_in_camera``) for a fixed number of evaluations.

Goals: ≤ 5 ms for the evaluation, ≤ 30 s for the refinement.

To compare with an older version of the engine in one run, export that
commit (``git archive <commit> | tar -x -C /tmp/before``) and alternate
``PYTHONPATH=/tmp/before uv run python tests/benchmarks/bench_coating_camera.py``
with the plain command a few times; compare the CPU medians.
"""

from __future__ import annotations

import argparse
import time
import tomllib
import warnings

import numpy as np

FACES = [
    {"name": "blue-face", "type": "coating", "paths": ["R", "G", "B"], "reflects": "B",
     "layers": "(0.5L H 0.5L)^20", "materials": {"H": "TiO2", "L": "SiO2"}, "reference_nm": 438.74,
     "aoi_deg": 25.0, "f_number": 2.0, "incident": "crown-517", "substrate": "crown-517"},
    {"name": "red-face", "type": "coating", "paths": ["R", "G"], "reflects": "R",
     "layers": "(0.5H L 0.5H)^20", "materials": {"H": "TiO2", "L": "SiO2"}, "reference_nm": 720.83,
     "aoi_deg": 12.0, "f_number": 2.0, "incident": "crown-517", "substrate": "crown-517"},
]


def timings(fn, repeats):
    """Best and median wall time, and median CPU time of this process (s)."""
    times, cpu = [], []
    for i in range(repeats):
        t0, c0 = time.perf_counter(), time.process_time()
        fn(i)
        times.append(time.perf_counter() - t0)
        cpu.append(time.process_time() - c0)
    return min(times), float(np.median(times)), float(np.median(cpu))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=20)
    ap.add_argument("--refine-evaluations", type=int, default=30)
    args = ap.parse_args()

    from workbench import demo_dir
    from workbench.analysis.evaluator import DesignEvaluator
    from workbench.analysis.recipe import Recipe, refine_in_camera
    from workbench.fileio.design_toml import design_from_dict, load_design
    from workbench.optics.materials import material_named
    from workbench.optics.stacks import parse_layer_formula, physical_thicknesses, resolve_materials

    warnings.simplefilter("ignore")
    demo = demo_dir() / "tern3_design.toml"
    raw = tomllib.loads(demo.read_text())
    i = next(k for k, e in enumerate(raw["chain"]) if e["type"] == "dichroic-splitter")
    raw["chain"][i:i + 1] = FACES
    raw.pop("tolerance", None)            # the field shift acts on the idealised splitter only
    coated = design_from_dict(raw, base_dir=demo.parent, source="demo with coated faces")
    ideal = load_design(demo)

    ev_c = DesignEvaluator(coated)
    ev_i = DesignEvaluator(ideal)
    m_c, m_i = ev_c.measures(), ev_i.measures()

    def moved_coated(k):
        ev_c.measures({"blue-face.reference_nm": 438.74 + 0.01 * (k + 1),
                       "red-face.reference_nm": 720.83 + 0.01 * (k + 1)})

    def moved_ideal(k):
        ev_i.measures({"prism.blue_green_nm": 532.0 + 0.01 * (k + 1), "prism.green_red_nm": 605.0 + 0.01 * (k + 1)})

    def one_face(k):
        ev_c.model.sensitivities({"blue-face.reference_nm": 438.74 - 0.01 * (k + 1)})

    t_c = timings(moved_coated, args.repeats)
    t_i = timings(moved_ideal, args.repeats)
    t_f = timings(one_face, args.repeats)

    mats = resolve_materials({"H": "TiO2", "L": "SiO2"})
    parsed = parse_layer_formula(FACES[0]["layers"], mats)
    d = physical_thicknesses(parsed, mats, FACES[0]["reference_nm"])
    rec = Recipe(tuple(x.symbol for x in parsed), mats, d, FACES[0]["reference_nm"], material_named("crown-517"),
                 material_named("crown-517"), 25.0, 2.0)
    t0 = time.perf_counter()
    _, report = refine_in_camera(ev_c, "blue-face", rec, reflects="B", max_evaluations=args.refine_evaluations)
    t_refine = time.perf_counter() - t0

    wl = ev_c.wavelengths
    print(f"demo camera, grid {wl[0]:g}-{wl[-1]:g} nm at {wl[1] - wl[0]:g} nm (best / median of {args.repeats})")
    print(f"  Vora value: idealised {m_i.vora_value:.4f}, two 41-layer coated faces {m_c.vora_value:.4f}")
    print("  (wall best / wall median / CPU median, ms; the CPU time is steadier on a shared machine)")
    print(f"  evaluation, idealised splitter, both edges moved   {t_i[0] * 1e3:7.2f} / {t_i[1] * 1e3:7.2f} / "
          f"{t_i[2] * 1e3:7.2f} ms")
    print(f"  evaluation, two coated faces, both faces moved     {t_c[0] * 1e3:7.2f} / {t_c[1] * 1e3:7.2f} / "
          f"{t_c[2] * 1e3:7.2f} ms")
    print(f"  chain only, one coated face moved                  {t_f[0] * 1e3:7.2f} / {t_f[1] * 1e3:7.2f} / "
          f"{t_f[2] * 1e3:7.2f} ms")
    print(f"  ratio coated / idealised evaluation (CPU medians)  {t_c[2] / t_i[2]:7.1f} x")
    print(f"  refine blue face (41 layers) in the camera: {t_refine:.1f} s, {report.evaluations} evaluations, "
          f"objective {report.cost_before:.5f} -> {report.cost_after:.5f}")


if __name__ == "__main__":
    main()
