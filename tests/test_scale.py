"""Tests of workbench.analysis.render: the batch pipeline in memory and out of core on Dask."""

from __future__ import annotations

import importlib.util
import io
import json
from pathlib import Path

import numpy as np
import pytest

from workbench import demo_dir
from workbench.analysis.camera import Camera, ColourBench, least_squares_matrix, white_preserving_matrix
from workbench.colorimetry.cie import cmfs_on, illuminant_on
from workbench.errors import InputFileError, RangeCoverageError, WorkbenchError
from workbench.colorimetry.primaries import primaries_named
from workbench.colorimetry.samples import ces_cie_224, tcs_cie_13_3
from workbench.analysis.render import (
    BatchPipeline,
    render_in_memory,
    srgb_encode,
    to_srgb8,
)
from workbench.analysis.render_dask import delta_e00_dask, render_dask
from workbench.fileio.spectral_cube import (
    MAX_AUTO_CHUNK,
    MIN_AUTO_CHUNK,
    SUB_BLOCK,
    auto_chunk_bytes,
    open_cube,
    parse_wavelengths,
    read_sidecar,
    rows_per_chunk,
    sidecar_path,
    write_sidecar,
)
from workbench.model.spectra import Spectra, grid

DEMO = demo_dir()
WL = grid(380, 780, 5)
BT709 = primaries_named("ITU-R BT.709")


def _gaussians(wl):
    # the open "Gaussian camera": peaks 610/540/450 nm, σ 30/35/25 nm
    return np.stack([np.exp(-0.5 * ((wl - p) / s) ** 2) for p, s in ((610, 30), (540, 35), (450, 25))])


def _light(name, wl=WL):
    return np.asarray(illuminant_on(wl, name)[1].values)


def _ls_matrix(S, E, *, method=least_squares_matrix, wl=WL):
    """Least-squares matrix over the 99 CIE 224 samples under E, after white balance."""
    bench = ColourBench(wl, ces_cie_224(wl), {"x": E}, BT709)
    C, _ = bench.balanced(S)
    return method(C[0], bench.target_RGB[0])


@pytest.fixture(scope="module")
def gaussian_camera():
    S = _gaussians(WL)
    return Camera("gaussian", WL, S, _ls_matrix(S, _light("D65")), BT709)


@pytest.fixture(scope="module")
def reflectances():
    """CIE 224 and CIE 13.3 samples (113, 81), reflectance 0-1."""
    return np.concatenate([ces_cie_224(WL).values, tcs_cie_13_3(WL).values])


@pytest.fixture(scope="module")
def image():
    """A 37 × 23 image of random mixtures of the open samples (odd sizes on purpose)."""
    rng = np.random.default_rng(7)
    pool = ces_cie_224(WL).values
    w = rng.dirichlet(np.ones(3), size=(37, 23))
    idx = rng.integers(0, pool.shape[0], size=(37, 23, 3))
    return np.einsum("hwk,hwkn->hwn", w, pool[idx])


def _save_cube(tmp_path, a, name="cube"):
    p = tmp_path / f"{name}.npy"
    np.save(p, a)
    write_sidecar(sidecar_path(p), WL)
    return p


# --------------------------------------------------------------------------


class TestSrgbEncode:
    def test_against_reference_library(self):
        """The sRGB transfer equals colour-science's IEC 61966-2-1 encoding."""
        import colour

        L = np.linspace(0, 1, 1001)
        # IEC 61966-2-1:1999, via colour.cctf_encoding(function='sRGB')
        np.testing.assert_allclose(srgb_encode(L), colour.cctf_encoding(L, function="sRGB"), atol=1e-12)

    def test_codes(self):
        """18 % grey is code 118, white 255, black 0; out-of-range values clip; NaN is 0."""
        # common practice: 18 % linear grey encodes to sRGB 118/255
        assert to_srgb8([0.18, 1.0, 0.0]).tolist() == [118, 255, 0]
        assert to_srgb8([-0.5, 2.0, np.nan]).tolist() == [0, 255, 0]
        assert to_srgb8(np.ones((2, 2, 3))).dtype == np.uint8


class TestBatchPipeline:
    def test_truth_against_reference_library(self, gaussian_camera, reflectances):
        """True CIELAB under A equals colour-science's integration, Bradford adaptation and CIELAB."""
        import colour

        E = _light("A")
        p = BatchPipeline(gaussian_camera, E)
        shape = colour.SpectralShape(380, 780, 5)
        cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(shape)
        sd = colour.SpectralDistribution(E, WL)
        XYZ = colour.msds_to_XYZ(reflectances, cmfs, sd, method="Integration", shape=shape) / 100
        XYZ_w = colour.sd_to_XYZ(colour.SpectralDistribution(np.ones(WL.size), WL), cmfs, sd,
                                 method="Integration") / 100
        XYZ_d = colour.xy_to_XYZ(BT709.white_xy)
        # CIE 15:2004 summation; Bradford CAT (colour.adaptation, 'Bradford'); CIELAB (CIE 15:2004 § 8.2.1)
        ref = colour.XYZ_to_Lab(colour.adaptation.chromatic_adaptation_VonKries(XYZ, XYZ_w, XYZ_d, "Bradford"),
                                BT709.white_xy)
        np.testing.assert_allclose(p.evaluate(reflectances).true_Lab, ref, atol=1e-8)

    def test_camera_and_delta_e_against_reference_library(self, gaussian_camera, reflectances):
        """Camera RGB, its CIELAB and ΔE00 under FL2 equal colour-science's pipeline."""
        import colour
        from colour.characterisation import RGB_CameraSensitivities, training_data_sds_to_RGB

        E = _light("FL2")
        p = BatchPipeline(gaussian_camera, E)
        ev = p.evaluate(reflectances)
        sens = RGB_CameraSensitivities(gaussian_camera.sensitivities.T, WL, labels=("R", "G", "B"))
        sd = colour.SpectralDistribution(E, WL)
        RGB, _ = training_data_sds_to_RGB(colour.MultiSpectralDistributions(reflectances.T, WL), sens, sd)
        RGB_white, _ = training_data_sds_to_RGB(
            colour.MultiSpectralDistributions(np.ones((WL.size, 1)), WL), sens, sd)
        C = RGB / RGB_white[0]                      # the white balanced to (1, 1, 1)
        np.testing.assert_allclose(ev.camera_RGB, C, rtol=1e-12)
        XYZ = colour.RGB_to_XYZ(C @ gaussian_camera.matrix.T, "ITU-R BT.709",
                                chromatic_adaptation_transform=None)
        lab = colour.XYZ_to_Lab(XYZ, BT709.white_xy)
        np.testing.assert_allclose(ev.camera_Lab, lab, atol=1e-8)
        # CIE 142-2001 via colour.delta_E(method='CIE 2000')
        ref = colour.delta_E(lab, ev.true_Lab, method="CIE 2000")
        np.testing.assert_allclose(ev.delta_E00, ref, atol=1e-8)

    def test_equals_colour_bench(self, gaussian_camera, reflectances):
        """ΔE00 and CIELAB equal ColourBench.evaluate with the camera's fixed matrix, under D65 and A."""
        E = {"D65": _light("D65"), "A": _light("A")}
        bench = ColourBench(WL, reflectances, E, BT709)
        res = bench.evaluate(gaussian_camera.sensitivities, matrices=gaussian_camera.matrix)
        for j, name in enumerate(E):
            ev = BatchPipeline(gaussian_camera, E[name]).evaluate(reflectances)
            np.testing.assert_allclose(ev.true_Lab, res.true_Lab[j], atol=1e-10)
            np.testing.assert_allclose(ev.camera_Lab, res.camera_Lab[j], atol=1e-10)
            np.testing.assert_allclose(ev.delta_E00, res.delta_E00[j], atol=1e-10)

    def test_luther_camera_per_illuminant_matrix(self):
        """A camera whose sensitivities are CMFs × T has ΔE00 ≈ 0 with its own matrix per light."""
        X = cmfs_on(WL).values
        T = np.array([[1.0, 0.2, 0.1], [0.1, 1.0, 0.2], [0.05, 0.1, 1.0]])
        S = (X @ T).T
        M65, MA = _ls_matrix(S, _light("D65")), _ls_matrix(S, _light("A"))
        cam = Camera("luther", WL, S, M65, BT709, per_illuminant=(("A", MA),))
        R = np.random.default_rng(3).random((500, WL.size))
        # Luther (1927): S = X̄T ⇒ an exact 3×3 matrix exists for each light
        assert BatchPipeline(cam, _light("A"), illuminant_name="A").evaluate(R).delta_E00.max() < 1e-8
        assert BatchPipeline(cam, _light("D65"), illuminant_name="D65").evaluate(R).delta_E00.max() < 1e-8
        # the D65 matrix under A is not exact: the per-illuminant matrix was really used
        assert BatchPipeline(cam, _light("A")).evaluate(R).delta_E00.max() > 0.01

    def test_perfect_diffuser(self, gaussian_camera):
        """The perfect diffuser renders as display white; a white-preserving matrix gives ΔE00 0."""
        E = _light("A")
        white = np.ones(WL.size)
        rb = BatchPipeline(gaussian_camera, E).render_block(white[None, None])
        # common practice: the white-balanced white is the display white
        assert rb.truth_sRGB8.tolist() == [[[255, 255, 255]]]
        S = gaussian_camera.sensitivities
        cam = Camera("wp", WL, S, _ls_matrix(S, E, method=white_preserving_matrix), BT709)
        ev = BatchPipeline(cam, E).evaluate(white)
        np.testing.assert_allclose(ev.display_RGB, [1, 1, 1], atol=1e-12)
        assert ev.delta_E00 < 1e-9

    def test_shape_ladder(self, gaussian_camera, reflectances):
        """One spectrum (n,), a list (k, n) and an image (h, w, n) give the same numbers."""
        p = BatchPipeline(gaussian_camera, _light("D65"))
        flat = p.evaluate(reflectances[:12]).delta_E00
        assert p.evaluate(reflectances[0]).delta_E00.shape == ()
        assert p.evaluate(reflectances[0]).delta_E00 == flat[0]
        img = p.evaluate(reflectances[:12].reshape(3, 4, -1)).delta_E00
        np.testing.assert_array_equal(img.ravel(), flat)
        assert p.render_block(reflectances[:12].reshape(3, 4, -1)).truth_sRGB8.shape == (3, 4, 3)

    def test_render_block_equals_evaluate(self, gaussian_camera, image):
        """The folded render weights give the same ΔE00 and images as every step done in turn."""
        p = BatchPipeline(gaussian_camera, _light("FL2"))
        ev = p.evaluate(image)
        rb = p.render_block(image)
        np.testing.assert_allclose(rb.delta_E00, ev.delta_E00, atol=1e-12)
        np.testing.assert_array_equal(rb.camera_sRGB8, to_srgb8(ev.display_RGB))
        np.testing.assert_array_equal(rb.truth_sRGB8, to_srgb8(ev.true_XYZ / 100 @ BT709.matrix_XYZ_to_RGB.T))

    def test_threads_and_sub_blocks(self, gaussian_camera):
        """Several blocks on several threads give the same numbers as one thread."""
        R = np.random.default_rng(1).random((2 * SUB_BLOCK + 17, WL.size))
        p = BatchPipeline(gaussian_camera, _light("D65"))
        a = p.render_block(R, images=False)
        b = p.render_block(R, images=False, workers=3)
        np.testing.assert_array_equal(a.delta_E00, b.delta_E00)
        np.testing.assert_allclose(a.delta_E00[-5:], p.evaluate(R[-5:]).delta_E00, atol=1e-12)

    def test_float32_input(self, gaussian_camera, image):
        """float32 spectra give exactly the float64 result of the same numbers."""
        p = BatchPipeline(gaussian_camera, _light("D65"))
        a32 = image.astype(np.float32)
        np.testing.assert_array_equal(p.render_block(a32).delta_E00,
                                      p.render_block(a32.astype(float)).delta_E00)

    def test_other_grid_is_resampled(self, gaussian_camera, reflectances):
        """Data at 10 nm are resampled to the camera grid by Sprague, as Spectra.resample does."""
        wl10 = grid(380, 780, 10)
        R10 = ces_cie_224(wl10).values
        p = BatchPipeline(gaussian_camera, _light("D65"), wavelengths=wl10)
        R5 = Spectra(wl10, R10).resample(WL).values
        ref = BatchPipeline(gaussian_camera, _light("D65")).evaluate(R5)
        np.testing.assert_allclose(p.evaluate(R10).delta_E00, ref.delta_E00, atol=1e-10)
        assert any("Sprague" in n and "CIE 167" in n for n in p.notes)

    def test_short_grid_refused_unless_asked(self, gaussian_camera):
        """Data not covering the camera grid are refused; extrapolation='constant' extends them."""
        wl = grid(400, 700, 10)
        with pytest.raises(RangeCoverageError, match="cover 400-700 nm but 380-780 nm"):
            BatchPipeline(gaussian_camera, _light("D65"), wavelengths=wl)
        p = BatchPipeline(gaussian_camera, _light("D65"), wavelengths=wl, extrapolation="constant")
        assert p.weights.shape == (wl.size, 6)
        assert any("end values" in n for n in p.notes)

    def test_rejections(self, gaussian_camera):
        """Wrong band count, integer data and a bad light are refused with one-line messages."""
        p = BatchPipeline(gaussian_camera, _light("D65"))
        with pytest.raises(WorkbenchError, match=r"spectra must have 81 values on the last axis \(got shape \(4, 80\)\)"):
            p.evaluate(np.ones((4, 80)))
        with pytest.raises(WorkbenchError, match="float32 or float64 reflectance 0-1 \\(got int64\\)"):
            p.render_block(np.ones((4, 81), dtype=np.int64))
        with pytest.raises(WorkbenchError, match="illuminant must have 81 values"):
            BatchPipeline(gaussian_camera, np.ones(10))
        with pytest.raises(WorkbenchError, match="finite, ≥ 0 and not all zero"):
            BatchPipeline(gaussian_camera, np.zeros(81))

    def test_non_finite_counted(self, gaussian_camera, image):
        """A NaN or inf makes that pixel's ΔE00 NaN; they are counted and the first is found."""
        a = image.copy()
        a[5, 7, 40] = np.nan
        a[20, 1, 0] = np.inf
        p = BatchPipeline(gaussian_camera, _light("D65"))
        r = render_in_memory(p, a)
        assert r.nonfinite == 2 and r.first_nonfinite_index() == (5, 7)
        assert np.isnan(r.delta_E00[5, 7]) and np.isnan(r.delta_E00[20, 1])
        ok = render_in_memory(p, image)
        mask = np.isfinite(r.delta_E00)
        np.testing.assert_array_equal(r.delta_E00[mask], ok.delta_E00[mask])
        assert r.stats()["mean"] == pytest.approx(float(np.mean(ok.delta_E00[mask])), abs=1e-12)


class TestRenderDask:
    @pytest.mark.parametrize("rows", [1, 4, 36, 37])
    def test_npy_equals_in_memory(self, tmp_path, gaussian_camera, image, rows):
        """A memory-mapped .npy in chunks of any height gives the in-memory result bit for bit."""
        path = _save_cube(tmp_path, image)
        cube = open_cube(path)
        p = BatchPipeline(gaussian_camera, _light("D65"))
        ref = render_in_memory(p, image)
        arr, r = cube.to_dask(rows * 23 * 81 * 8)
        assert r == rows and arr.chunks[0][0] == rows
        out = render_dask(p, arr, progress=False)
        assert out.chunks == -(-37 // rows)
        np.testing.assert_array_equal(out.delta_E00, ref.delta_E00)
        np.testing.assert_array_equal(out.truth_sRGB8, ref.truth_sRGB8)
        np.testing.assert_array_equal(out.camera_sRGB8, ref.camera_sRGB8)
        assert (out.clipped_truth, out.clipped_camera) == (ref.clipped_truth, ref.clipped_camera)
        assert out.stats() == ref.stats()

    def test_zarr_equals_in_memory(self, tmp_path, gaussian_camera, image):
        """A Zarr array (chunked 5 rows, bands split) gives the in-memory result bit for bit."""
        import zarr

        path = tmp_path / "cube.zarr"
        z = zarr.create_array(str(path), shape=image.shape, chunks=(5, 23, 27), dtype="f8")
        z[...] = image
        write_sidecar(sidecar_path(path), WL)
        cube = open_cube(path)
        assert cube.format == "zarr" and sidecar_path(path).name == "cube.json"
        p = BatchPipeline(gaussian_camera, _light("A"))
        arr, rows = cube.to_dask(12 * 23 * 81 * 8)
        assert rows == 10                       # whole Zarr chunks of 5 rows
        out = render_dask(p, arr, progress=False)
        ref = render_in_memory(p, image)
        np.testing.assert_array_equal(out.delta_E00, ref.delta_E00)
        np.testing.assert_array_equal(out.camera_sRGB8, ref.camera_sRGB8)

    def test_spectral_set(self, tmp_path, gaussian_camera):
        """A spectral set (N, bands) in chunks: ΔE00 per spectrum equal to memory, no images."""
        R = np.random.default_rng(5).random((3 * SUB_BLOCK + 101, WL.size)).astype(np.float32)
        cube = open_cube(_save_cube(tmp_path, R, "set"))
        assert cube.layout == "set"
        p = BatchPipeline(gaussian_camera, _light("D65"))
        arr, rows = cube.to_dask(SUB_BLOCK * 81 * 4 + 1000)
        assert rows == SUB_BLOCK
        out = render_dask(p, arr, progress=False)
        ref = render_in_memory(p, R)
        assert out.truth_sRGB8 is None and out.chunks == 4
        np.testing.assert_array_equal(out.delta_E00, ref.delta_E00)

    def test_distributed_local_cluster(self, tmp_path, gaussian_camera, image):
        """The same tasks on a dask.distributed LocalCluster (by Client and by address) give the same result."""
        from distributed import Client, LocalCluster

        path = _save_cube(tmp_path, image)
        p = BatchPipeline(gaussian_camera, _light("D65"))
        arr, _ = open_cube(path).to_dask(8 * 23 * 81 * 8)
        ref = render_in_memory(p, image)
        with LocalCluster(processes=False, n_workers=1, threads_per_worker=2,
                          dashboard_address=None) as cluster, Client(cluster) as client:
            a = render_dask(p, arr, scheduler=client, progress=False)
            b = render_dask(p, arr, scheduler=cluster.scheduler_address, progress=False)
            lazy = client.compute(delta_e00_dask(p, arr)).result()
        for out in (a, b):
            np.testing.assert_array_equal(out.delta_E00, ref.delta_E00)
            np.testing.assert_array_equal(out.truth_sRGB8, ref.truth_sRGB8)
        np.testing.assert_array_equal(lazy, ref.delta_E00)

    def test_lazy_delta_e(self, tmp_path, gaussian_camera, image):
        """delta_e00_dask is lazy and computes, on the threaded scheduler, to the in-memory ΔE00."""
        p = BatchPipeline(gaussian_camera, _light("D65"))
        arr, _ = open_cube(_save_cube(tmp_path, image)).to_dask(3 * 23 * 81 * 8)
        lazy = delta_e00_dask(p, arr)
        assert lazy.shape == (37, 23)
        np.testing.assert_array_equal(lazy.compute(), render_in_memory(p, image).delta_E00)

    def test_progress_bar_on_stderr(self, tmp_path, gaussian_camera, image, capsys):
        """The progress bar counts chunks on stderr; stdout stays empty."""
        p = BatchPipeline(gaussian_camera, _light("D65"))
        arr, _ = open_cube(_save_cube(tmp_path, image)).to_dask(10 * 23 * 81 * 8)
        render_dask(p, arr, progress=True, desc="testing")
        cap = capsys.readouterr()
        assert cap.out == "" and "testing" in cap.err and "4/4" in cap.err

    def test_interrupt_propagates(self, tmp_path, gaussian_camera, image, monkeypatch):
        """Ctrl-C inside a chunk stops the render with KeyboardInterrupt (nothing returned)."""
        import workbench.analysis.render_dask as scale

        calls = []

        def boom(pipeline, block, images):
            calls.append(1)
            raise KeyboardInterrupt

        monkeypatch.setattr(scale, "_render_chunk", boom)
        p = BatchPipeline(gaussian_camera, _light("D65"))
        arr, _ = open_cube(_save_cube(tmp_path, image)).to_dask(5 * 23 * 81 * 8)
        with pytest.raises(KeyboardInterrupt):
            render_dask(p, arr, progress=False)
        assert calls

    def test_rejects_wrong_input(self, gaussian_camera):
        """Not a dask array, or the wrong band count, is refused."""
        import dask.array as da

        p = BatchPipeline(gaussian_camera, _light("D65"))
        with pytest.raises(WorkbenchError, match="needs a dask.array"):
            render_dask(p, np.ones((2, 81)))
        with pytest.raises(WorkbenchError, match=r"must be \(N, 81\) or \(h, w, 81\)"):
            render_dask(p, da.ones((2, 80)))


class TestChunking:
    def test_auto_rule(self):
        """available / (8 · workers), at most total / (4 · workers), within 4-128 MiB."""
        assert auto_chunk_bytes(2, available=8 * 2 * 50 * 2 ** 20) == 50 * 2 ** 20
        assert auto_chunk_bytes(2, available=2 ** 40) == MAX_AUTO_CHUNK
        assert auto_chunk_bytes(4, available=2 ** 20) == MIN_AUTO_CHUNK
        assert auto_chunk_bytes(2, available=2 ** 40, total=8 * 40 * 2 ** 20) == 40 * 2 ** 20
        assert auto_chunk_bytes(2, available=2 ** 40, total=2 ** 20) == MIN_AUTO_CHUNK

    def test_auto_reads_psutil(self, monkeypatch):
        """Without ``available`` the rule asks psutil for the memory available now."""
        import psutil

        class VM:
            available = 8 * 3 * 20 * 2 ** 20

        monkeypatch.setattr(psutil, "virtual_memory", lambda: VM())
        assert auto_chunk_bytes(3) == 20 * 2 ** 20

    def test_rows_per_chunk(self):
        """Chunks stay within the size, hold at least one row, and sets round to whole blocks."""
        assert rows_per_chunk((100, 64, 81), 4, 10 * 64 * 81 * 4 + 5) == 10
        assert rows_per_chunk((100, 64, 81), 4, 1) == 1
        assert rows_per_chunk((5, 64, 81), 4, 2 ** 30) == 5
        r = rows_per_chunk((10 ** 7, 81), 8, 64 * 2 ** 20)
        assert r % SUB_BLOCK == 0 and r * 81 * 8 <= 64 * 2 ** 20
        assert rows_per_chunk((1000, 81), 8, 100 * 81 * 8) == 100


class TestCubeFiles:
    def test_parse_wavelengths(self):
        """START:STOP:STEP includes STOP; bad syntax names the option and an example."""
        np.testing.assert_array_equal(parse_wavelengths("380:780:5"), WL)
        assert parse_wavelengths("400.5:410.5:2.5").tolist() == [400.5, 403.0, 405.5, 408.0, 410.5]
        for bad in ("380-780-5", "380:780", "a:b:c", "380:780:nan"):
            with pytest.raises(WorkbenchError, match=r"^--wavelengths must be START:STOP:STEP in nm, e\.g\. 380:780:5"):
                parse_wavelengths(bad)
        with pytest.raises(WorkbenchError, match="^--wavelengths '380:781:5': grid 380.0-781.0 nm is not a whole number"):
            parse_wavelengths("380:781:5")

    def test_sidecar_forms(self, tmp_path):
        """A sidecar holds a list or start/stop/step; its path is the cube's with .json."""
        assert sidecar_path("a/scene.npy") == Path("a/scene.json")
        assert sidecar_path("a/scene.zarr") == Path("a/scene.json")
        p = tmp_path / "s.json"
        p.write_text(json.dumps({"wavelengths_nm": {"start": 400, "stop": 700, "step": 10}}))
        assert read_sidecar(p)[0].size == 31
        write_sidecar(p, WL, description="x")
        wl, data = read_sidecar(p)
        np.testing.assert_array_equal(wl, WL)
        assert data["description"] == "x"

    @pytest.mark.parametrize("text, message", [
        ("{", r"s\.json, line 1: not valid JSON"),
        ('{"wl": []}', r"s\.json: expected a JSON object with the key 'wavelengths_nm'"),
        ('{"wavelengths_nm": [400, 390, 380]}', r"s\.json: 'wavelengths_nm' must be strictly increasing"),
        ('{"wavelengths_nm": {"start": 400, "stop": 700}}', r"s\.json: 'wavelengths_nm' needs start, stop and step \(missing step\)"),
        ('{"wavelengths_nm": ["400", "410", "420"]}', r"s\.json: 'wavelengths_nm' must be a list of numbers in nm"),
        ('{"wavelengths_nm": 5}', r"s\.json: 'wavelengths_nm' must be a list of numbers or \{start, stop, step\}"),
    ])
    def test_bad_sidecar(self, tmp_path, text, message):
        """Each fault of a sidecar is one line naming the file."""
        p = tmp_path / "s.json"
        p.write_text(text)
        with pytest.raises(InputFileError, match=message):
            read_sidecar(p)

    def test_missing_sidecar(self, tmp_path):
        """A cube without sidecar and without --wavelengths names the sidecar it looked for."""
        p = tmp_path / "c.npy"
        np.save(p, np.zeros((3, 81)))
        with pytest.raises(InputFileError, match=r"c\.json: no such sidecar file; give the wavelengths with --wavelengths"):
            open_cube(p)
        assert open_cube(p, wavelengths="380:780:5").wavelengths_from == "--wavelengths 380:780:5"

    def test_band_count_mismatch(self, tmp_path):
        """Band count against the wavelengths: the message names the cube and the source."""
        p = tmp_path / "c.npy"
        np.save(p, np.zeros((3, 4, 80)))
        with pytest.raises(InputFileError, match=r"c\.npy: 80 bands on the last axis but --wavelengths gives 81 wavelengths \(380-780 nm at 5 nm\)"):
            open_cube(p, wavelengths="380:780:5")
        write_sidecar(sidecar_path(p), WL)
        with pytest.raises(InputFileError, match=r"c\.npy: 80 bands on the last axis but .*c\.json gives 81"):
            open_cube(p)

    @pytest.mark.parametrize("array, message", [
        (np.zeros((3, 81), dtype=np.int16), r"expected float32 or float64 reflectance 0-1 \(got int16\)"),
        (np.zeros(81), r"expected a spectral set \(N, bands\) or image \(height, width, bands\) \(got shape \(81,\)\)"),
        (np.asfortranarray(np.zeros((3, 5, 81))), r"expected a C-ordered array \(got Fortran order\)"),
        (np.zeros((0, 81)), r"the cube is empty"),
    ])
    def test_bad_arrays(self, tmp_path, array, message):
        """Integer data, wrong dimensions, Fortran order and empty cubes are refused, naming the file."""
        p = tmp_path / "c.npy"
        np.save(p, array)
        with pytest.raises(InputFileError, match=r"c\.npy: " + message):
            open_cube(p, wavelengths="380:780:5")

    def test_not_a_cube(self, tmp_path):
        """A missing path, another suffix and a broken .npy are refused, naming the file."""
        with pytest.raises(InputFileError, match=r"nope\.npy: no such file or directory"):
            open_cube(tmp_path / "nope.npy")
        (tmp_path / "c.csv").write_text("x")
        with pytest.raises(InputFileError, match=r"c\.csv: expected a \.npy file or a \.zarr array directory"):
            open_cube(tmp_path / "c.csv")
        (tmp_path / "b.npy").write_bytes(b"not numpy")
        with pytest.raises(InputFileError, match=r"b\.npy: expected a NumPy \.npy array"):
            open_cube(tmp_path / "b.npy")

    def test_npy_chunks_are_views_that_pickle_small(self, tmp_path):
        """Chunks read from .npy are memory-mapped views of the asked rows; the reader pickles as its path."""
        import pickle

        from workbench.fileio.spectral_cube import _NpyChunks

        a = np.arange(2 * 3 * 81, dtype=float).reshape(2, 3, 81)
        np.save(tmp_path / "c.npy", a)
        v = _NpyChunks(str(tmp_path / "c.npy"), a.shape, a.dtype)
        block = v[1:2]
        assert isinstance(block, np.memmap) and block.shape == (1, 3, 81)
        np.testing.assert_array_equal(block, a[1:2])
        assert len(pickle.dumps(v)) < 500
        np.testing.assert_array_equal(pickle.loads(pickle.dumps(v))[0:1], a[0:1])


class TestDemoScene:
    def test_regenerates_byte_for_byte(self):
        """make_scene.py makes exactly the committed scene_small.npy and its sidecar."""
        spec = importlib.util.spec_from_file_location("make_scene", DEMO / "make_scene.py")
        mod = importlib.util.module_from_spec(spec)
        spec.loader.exec_module(mod)
        buf = io.BytesIO()
        np.save(buf, mod.small_scene(), allow_pickle=False)
        assert buf.getvalue() == (DEMO / "scene_small.npy").read_bytes()
        cube = open_cube(DEMO / "scene_small.npy")
        assert cube.shape == (48, 64, 81) and cube.dtype == np.float32
        np.testing.assert_array_equal(cube.wavelengths, WL)
        a = cube.to_numpy()
        assert 0.0 <= a.min() and a.max() <= 1.0
        assert (DEMO / "scene_small.npy").stat().st_size < 2 * 2 ** 20
