"""Tests of ``workbench render`` through workbench.cli.main.main."""

from __future__ import annotations

import json

import numpy as np
import pytest

from workbench import demo_dir
from workbench.colorimetry.cie import illuminant_on
from workbench.cli.main import main
from workbench.analysis.render import BatchPipeline, render_in_memory
from workbench.fileio.spectral_cube import open_cube, sidecar_path, write_sidecar
from workbench.model.spectra import Spectra, grid
from workbench.fileio.spectra_csv import write_spectra_csv

DEMO = demo_dir()
DESIGN = DEMO / "tern3_design.toml"
SCENE = DEMO / "scene_small.npy"
WL = grid(380, 780, 5)


def _png(path, mode="RGB"):
    from PIL import Image

    with Image.open(path) as im:
        assert im.mode == mode
        return np.asarray(im)


@pytest.fixture(scope="module")
def gaussian_csv(tmp_path_factory):
    """The open Gaussian camera (peaks 610/540/450 nm, σ 30/35/25 nm) as a sensitivity CSV."""
    S = np.stack([np.exp(-0.5 * ((WL - p) / s) ** 2) for p, s in ((610, 30), (540, 35), (450, 25))])
    path = tmp_path_factory.mktemp("camera") / "gaussian.csv"
    write_spectra_csv(Spectra(WL, S, ("R", "G", "B"), kind="sensitivity", units="relative"), path)
    return path


@pytest.fixture(scope="module")
def demo_expected():
    """The demo scene under the design's stage LED, through the public functions in memory."""
    from workbench.fileio.design_toml import load_design
    from workbench.analysis.evaluator import load_camera

    camera = load_camera(DESIGN)
    E = load_design(DESIGN).illuminant_values("stage-led")[1]
    p = BatchPipeline(camera, E, illuminant_name="stage-led")
    return render_in_memory(p, open_cube(SCENE).to_numpy())


def _run(capsys, *argv):
    code = main(["render", *map(str, argv)])
    return code, capsys.readouterr()


def _cube(tmp_path, a, name="c", sidecar=True):
    p = tmp_path / f"{name}.npy"
    np.save(p, a)
    if sidecar:
        write_sidecar(sidecar_path(p), WL)
    return p


def _mixtures(shape, seed=0):
    from workbench.colorimetry.samples import ces_cie_224

    rng = np.random.default_rng(seed)
    pool = ces_cie_224(WL).values
    w = rng.dirichlet(np.ones(2), size=shape)
    idx = rng.integers(0, 99, size=shape + (2,))
    return np.einsum("...k,...kn->...n", w, pool[idx])


class TestRenderCommand:
    @pytest.mark.slow  # renders the demo scene
    def test_demo_scene_contract(self, tmp_path, capsys, demo_expected, out_dir):
        """The demo scene: PNGs, the ΔE00 map, ΔE00 per pixel and summary.json equal the in-memory path."""
        out = out_dir
        code, cap = _run(capsys, DESIGN, SCENE, "--out", out, "--illuminant", "stage-led")
        assert code == 0, cap.err
        assert sorted(p.name for p in out.iterdir()) == [".workbench-output",
            "camera.png", "delta_e00.npy", "delta_e00.png", "summary.json", "truth.png"]
        s = json.loads((out / "summary.json").read_text())
        ref = demo_expected.stats()
        for k in ("mean", "p95", "max"):
            assert s["delta_E00"][k] == pytest.approx(ref[k], abs=1e-12)
        assert "CIEDE2000" in s["delta_E00"]["unit"]
        assert s["pixels"] == 48 * 64 and s["layout"] == "image" and s["shape"] == [48, 64, 81]
        assert s["grid"] == "380-780 nm at 5 nm" and s["wavelengths_from"].startswith("sidecar")
        assert s["illuminant"].startswith("stage-led")
        assert s["chunking"]["chunks"] >= 1 and "psutil" in s["chunking"]["rule"]
        assert "sRGB" in s["images"]["encoding"] and "IEC 61966-2-1" in s["images"]["encoding"]
        np.testing.assert_array_equal(_png(out / "truth.png"), demo_expected.truth_sRGB8)
        np.testing.assert_array_equal(_png(out / "camera.png"), demo_expected.camera_sRGB8)
        np.testing.assert_array_equal(np.load(out / "delta_e00.npy"), demo_expected.delta_E00)
        assert _png(out / "delta_e00.png", "RGBA").shape[0] > 100          # a figure, not the raw map
        assert "mean" in cap.out and "p95" in cap.out and "note: wrote" in cap.err
        assert not list(out.glob(".*.tmp"))                         # no temporary files left

    @pytest.mark.slow  # renders in many small chunks
    def test_wavelengths_option_and_small_chunks(self, tmp_path, capsys, gaussian_csv, out_dir):
        """--wavelengths replaces the sidecar; --chunk-mb splits the cube; results equal memory."""
        a = _mixtures((21, 13)).astype(np.float32)
        cube = _cube(tmp_path, a, sidecar=False)
        out = out_dir
        code, cap = _run(capsys, gaussian_csv, cube, "--out", out, "--wavelengths", "380:780:5",
                         "--chunk-mb", "0.02", "--illuminant", "A")
        assert code == 0, cap.err
        s = json.loads((out / "summary.json").read_text())
        assert s["wavelengths_from"] == "--wavelengths 380:780:5"
        assert s["chunking"]["rule"] == "--chunk-mb"
        assert s["chunking"]["rows_per_chunk"] == 4 and s["chunking"]["chunks"] == 6
        from workbench.analysis.evaluator import load_camera

        cam = load_camera(gaussian_csv)
        ref = render_in_memory(BatchPipeline(cam, np.asarray(illuminant_on(WL, "A")[1].values), illuminant_name="A"), a)
        np.testing.assert_array_equal(np.load(out / "delta_e00.npy"), ref.delta_E00)
        np.testing.assert_array_equal(_png(out / "camera.png"), ref.camera_sRGB8)

    def test_spectral_set(self, tmp_path, capsys, gaussian_csv, out_dir):
        """A spectral set (N, bands) writes ΔE00 per spectrum and the summary, no images."""
        a = _mixtures((500,), seed=2)
        out = out_dir
        code, cap = _run(capsys, gaussian_csv, _cube(tmp_path, a), "--out", out)
        assert code == 0, cap.err
        assert sorted(p.name for p in out.iterdir()) == [".workbench-output", "delta_e00.npy", "summary.json"]
        s = json.loads((out / "summary.json").read_text())
        assert s["layout"] == "set" and s["images"] is None and s["pixels"] == 500
        d = np.load(out / "delta_e00.npy")
        assert d.shape == (500,)
        assert s["delta_E00"]["p95"] == pytest.approx(float(np.percentile(d, 95)), abs=1e-12)
        assert "500 spectra" in cap.out

    @pytest.mark.slow  # starts a dask.distributed cluster
    def test_zarr_on_a_local_cluster(self, tmp_path, capsys, gaussian_csv):
        """A Zarr cube rendered on a dask.distributed LocalCluster by address equals the threaded run."""
        import zarr
        from distributed import LocalCluster

        a = _mixtures((12, 9), seed=4)
        path = tmp_path / "c.zarr"
        z = zarr.create_array(str(path), shape=a.shape, chunks=(2, 9, 81), dtype="f8")
        z[...] = a
        write_sidecar(sidecar_path(path), WL)
        code, cap = _run(capsys, gaussian_csv, path, "--out", tmp_path / "t", "--chunk-mb", "0.02")
        assert code == 0, cap.err
        with LocalCluster(processes=False, n_workers=1, threads_per_worker=2, protocol="tcp",
                          host="127.0.0.1", dashboard_address=None) as cluster:
            code, cap = _run(capsys, gaussian_csv, path, "--out", tmp_path / "d", "--chunk-mb", "0.02",
                             "--scheduler", cluster.scheduler_address)
        assert code == 0, cap.err
        s = json.loads((tmp_path / "d" / "summary.json").read_text())
        assert s["format"] == "zarr" and s["chunking"]["scheduler"].startswith("dask.distributed at")
        np.testing.assert_array_equal(np.load(tmp_path / "d" / "delta_e00.npy"),
                                      np.load(tmp_path / "t" / "delta_e00.npy"))
        np.testing.assert_array_equal(_png(tmp_path / "d" / "truth.png"), _png(tmp_path / "t" / "truth.png"))

    def test_percent_cube_refused(self, tmp_path, capsys, gaussian_csv):
        """A cube in percent (reflectances far above 10) is refused before rendering, asking if it is percent."""
        code, cap = _run(capsys, gaussian_csv, _cube(tmp_path, 100 * _mixtures((3, 4))), "--out", tmp_path / "r")
        assert code == 2 and cap.err.count("\n") == 1
        assert "reflectance values above 10" in cap.err and "is the cube in percent?" in cap.err
        assert not (tmp_path / "r").exists()

    def test_slightly_negative_cube_notice(self, tmp_path, capsys, gaussian_csv):
        """Small negatives (measurement noise) are rendered as written, with a notice naming the file and count."""
        a = _mixtures((3, 4))
        a[0, 0, :5] = -0.01
        cube = _cube(tmp_path, a)
        code, cap = _run(capsys, gaussian_csv, cube, "--out", tmp_path / "r")
        assert code == 0, cap.err
        assert f"{cube}: 5 reflectance values below 0" in cap.err

    def test_interrupt_exits_130_and_writes_nothing(self, tmp_path, capsys, gaussian_csv, monkeypatch, out_dir):
        """Ctrl-C during the render ends with status 130 and leaves no output files."""
        import workbench.analysis.render_dask as scale

        def interrupted(pipeline, block, images):
            raise KeyboardInterrupt

        monkeypatch.setattr(scale, "_render_chunk", interrupted)
        out = out_dir
        code, cap = _run(capsys, gaussian_csv, _cube(tmp_path, _mixtures((6, 5))), "--out", out,
                         "--chunk-mb", "0.01")
        assert code == 130 and "interrupted" in cap.err
        assert not out.exists() or not any(out.iterdir())


class TestRenderErrors:
    @pytest.mark.parametrize("extra, message", [
        (["--wavelengths", "380-780"], "error: --wavelengths must be START:STOP:STEP in nm, e.g. 380:780:5 (got '380-780')"),
        (["--wavelengths", "400:780:5"], "c.npy: 81 bands on the last axis but --wavelengths gives 77 wavelengths"),
        (["--chunk-mb", "0"], "error: --chunk-mb must be a number of MiB > 0 and ≤ 65536 (got '0')"),
        (["--illuminant", "XYZ"], "error: --illuminant: unknown 'XYZ'; expected a CIE name such as A, D50, D65"),
        (["--scheduler", "nonsense"], "error: --scheduler must be 'threads' or a dask scheduler address"),
    ])
    def test_bad_options(self, tmp_path, capsys, gaussian_csv, extra, message):
        """Each bad option ends with status 2 and one line naming the option or file."""
        code, cap = _run(capsys, gaussian_csv, _cube(tmp_path, _mixtures((2, 3))), "--out", tmp_path / "r", *extra)
        assert code == 2
        assert cap.err.startswith("error: ") and cap.err.count("\n") == 1
        assert message in cap.err
        assert not (tmp_path / "r").exists()

    def test_missing_sidecar(self, tmp_path, capsys, gaussian_csv):
        """No sidecar and no --wavelengths: the error names the sidecar it looked for."""
        code, cap = _run(capsys, gaussian_csv, _cube(tmp_path, _mixtures((2, 3)), sidecar=False), "--out", tmp_path / "r")
        assert code == 2
        assert cap.err.startswith("error: ") and "c.json: no such sidecar file" in cap.err

    def test_non_finite(self, tmp_path, capsys, gaussian_csv, out_dir):
        """A NaN pixel: one line naming the cube, the count and the first pixel; nothing written."""
        a = _mixtures((4, 5))
        a[2, 3, 10] = np.nan
        out = out_dir
        code, cap = _run(capsys, gaussian_csv, _cube(tmp_path, a), "--out", out)
        assert code == 2
        line = cap.err.strip().splitlines()[-1]
        assert line.startswith("error: ") and "c.npy: 1 spectrum holds non-finite values (NaN or inf); " \
            "the first is pixel (row 2, column 3)" in line
        assert not out.exists()

    def test_short_grid(self, tmp_path, capsys, gaussian_csv):
        """A cube not covering the camera grid is refused unless --extrapolate constant is given."""
        wl = grid(400, 700, 10)
        p = tmp_path / "c.npy"
        np.save(p, np.full((2, 2, wl.size), 0.5))
        write_sidecar(sidecar_path(p), wl)
        code, cap = _run(capsys, gaussian_csv, p, "--out", tmp_path / "r")
        assert code == 2 and "c.npy: the cube covers 400-700 nm but the camera needs 380-780 nm; " \
            "add --extrapolate constant" in cap.err
        code, cap = _run(capsys, gaussian_csv, p, "--out", tmp_path / "r", "--extrapolate", "constant")
        assert code == 0, cap.err
        s = json.loads((tmp_path / "r" / "summary.json").read_text())
        assert any("end values" in m for m in s["method"])

    def test_out_is_a_file(self, tmp_path, capsys, gaussian_csv):
        """--out naming an existing file is refused."""
        f = tmp_path / "file"
        f.write_text("x")
        code, cap = _run(capsys, gaussian_csv, _cube(tmp_path, _mixtures((2, 2))), "--out", f)
        assert code == 2 and "expected a folder, found a file" in cap.err
