"""Speed of a camera with real coated splitter faces (run on demand, never in the test suite).

    uv run python tests/benchmarks/bench_coating_camera.py [--repeats 60] [--refine-evaluations 30]

The demo design with its idealised dichroic splitter replaced by two real
faces of the ``coating`` kind (41 layers each, TiO2/SiO2 symmetric-period
edge filters at 25° and 12° in crown-517 glass, f/2 cone, 4 × 8 pupil
quadrature, unpolarised), on the demo design's own grid; and the same with
"refined" faces: every layer given its own physical thickness (the periodic
ones × a random factor within ±3 %, fixed seed), so no block of layers
repeats, as after ``workbench recipe`` and a refit with the layers free.

Prints:

* one camera evaluation (``DesignEvaluator.measures``) with both faces
  moved (so neither face's curve comes from the chain's cache), against the
  idealised design doing the same; the three designs take turns, one
  evaluation each per round, so that a shared machine's load falls alike on
  all three, and the ratios are of CPU medians and of best wall times;
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


def timings(fns, repeats):
    """Per function: best and median wall time, and median CPU time of this process (s); the functions take turns."""
    times = [[] for _ in fns]
    cpu = [[] for _ in fns]
    for i in range(repeats):
        for j, fn in enumerate(fns):
            t0, c0 = time.perf_counter(), time.process_time()
            fn(i)
            times[j].append(time.perf_counter() - t0)
            cpu[j].append(time.process_time() - c0)
    return [(min(t), float(np.median(t)), float(np.median(c))) for t, c in zip(times, cpu)]


def refined(face, rng):
    """The face with every layer's physical thickness written out, each × a random factor within ±3 %."""
    from workbench.optics.stacks import parse_layer_formula, physical_thicknesses, resolve_materials

    mats = resolve_materials(face["materials"])
    layers = parse_layer_formula(face["layers"], mats)
    d = physical_thicknesses(layers, mats, face["reference_nm"]) * rng.uniform(0.97, 1.03, len(layers))
    out = dict(face)
    out["layers"] = " ".join(f"{x.symbol}[{t:.4f}]" for x, t in zip(layers, d))
    out.pop("reference_nm")
    return out


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=60)
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

    def with_faces(faces, source):
        raw = tomllib.loads(demo.read_text())
        i = next(k for k, e in enumerate(raw["chain"]) if e["type"] == "dichroic-splitter")
        raw["chain"][i:i + 1] = faces
        raw.pop("tolerance", None)            # the field shift acts on the idealised splitter only
        return design_from_dict(raw, base_dir=demo.parent, source=source)

    rng = np.random.default_rng(7)
    coated = with_faces(FACES, "demo with coated faces")
    uneven = with_faces([refined(f, rng) for f in FACES], "demo with refined coated faces")
    ideal = load_design(demo)

    ev_c = DesignEvaluator(coated)
    ev_u = DesignEvaluator(uneven)
    ev_i = DesignEvaluator(ideal)
    m_c, m_u, m_i = ev_c.measures(), ev_u.measures(), ev_i.measures()

    def moved_coated(k):
        ev_c.measures({"blue-face.reference_nm": 438.74 + 0.01 * (k + 1),
                       "red-face.reference_nm": 720.83 + 0.01 * (k + 1)})

    def moved_uneven(k):
        ev_u.measures({"blue-face.thickness_scale": 1.0 + 1e-5 * (k + 1),
                       "red-face.thickness_scale": 1.0 + 1e-5 * (k + 1)})

    def moved_ideal(k):
        ev_i.measures({"prism.blue_green_nm": 532.0 + 0.01 * (k + 1), "prism.green_red_nm": 605.0 + 0.01 * (k + 1)})

    def one_face(k):
        ev_c.model.sensitivities({"blue-face.reference_nm": 438.74 - 0.01 * (k + 1)})

    def one_uneven_face(k):
        ev_u.model.sensitivities({"blue-face.thickness_scale": 1.0 - 1e-5 * (k + 1)})

    for fn in (moved_ideal, moved_coated, moved_uneven, one_face, one_uneven_face):
        fn(-2)                                # warm: scratch buffers, kept media and cone rays
    t_i, t_c, t_u = timings([moved_ideal, moved_coated, moved_uneven], args.repeats)
    t_f, t_g = timings([one_face, one_uneven_face], args.repeats)

    mats = resolve_materials({"H": "TiO2", "L": "SiO2"})
    parsed = parse_layer_formula(FACES[0]["layers"], mats)
    d = physical_thicknesses(parsed, mats, FACES[0]["reference_nm"])
    rec = Recipe(tuple(x.symbol for x in parsed), mats, d, FACES[0]["reference_nm"], material_named("crown-517"),
                 material_named("crown-517"), 25.0, 2.0)
    t0 = time.perf_counter()
    _, report = refine_in_camera(ev_c, "blue-face", rec, reflects="B", max_evaluations=args.refine_evaluations)
    t_refine = time.perf_counter() - t0

    wl = ev_c.wavelengths
    print(f"demo camera, grid {wl[0]:g}-{wl[-1]:g} nm at {wl[1] - wl[0]:g} nm ({args.repeats} rounds)")
    print(f"  Vora value: idealised {m_i.vora_value:.4f}, two 41-layer coated faces {m_c.vora_value:.4f}, "
          f"refined {m_u.vora_value:.4f}")
    print("  (wall best / wall median / CPU median, ms; the CPU time is steadier on a shared machine)")

    def row(label, t):
        print(f"  {label:<52}{t[0] * 1e3:7.2f} / {t[1] * 1e3:7.2f} / {t[2] * 1e3:7.2f} ms")

    row("evaluation, idealised splitter, both edges moved", t_i)
    row("evaluation, two coated faces, both faces moved", t_c)
    row("evaluation, two refined coated faces, both moved", t_u)
    row("chain only, one coated face moved", t_f)
    row("chain only, one refined coated face moved", t_g)
    print(f"  ratio coated / idealised evaluation (CPU medians; best)  {t_c[2] / t_i[2]:5.2f} x; "
          f"{t_c[0] / t_i[0]:5.2f} x")
    print(f"  ratio refined / idealised evaluation (CPU medians; best) {t_u[2] / t_i[2]:5.2f} x; "
          f"{t_u[0] / t_i[0]:5.2f} x")
    print(f"  refine blue face (41 layers) in the camera: {t_refine:.1f} s, {report.evaluations} evaluations, "
          f"objective {report.cost_before:.5f} -> {report.cost_after:.5f}")


if __name__ == "__main__":
    main()
