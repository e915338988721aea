"""Tests of workbench.model.design: the design file, its validation, saving and the chain model."""

from __future__ import annotations

import atexit
import shutil
import tempfile
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from workbench import demo_dir
from workbench.model.design import CHANNELS, DesignError
from workbench.fileio.design_toml import load_design, save_design
from workbench.errors import InputFileError, WorkbenchError
from workbench.fileio.spectra_csv import read_spectra_csv

ROOT = Path(__file__).resolve().parents[1]
DEMO = demo_dir() / "tern3_design.toml"  # module level: the fuzz strategies below are built at import
BAD_DIR = ROOT / "tests" / "data" / "design_bad"

# Exact messages, one bad file per validation rule (PATH stands for the file name).
BAD = {
    'bad_choice': (
        'PATH: 1 problem in the design file (chain[0].shape)\n'
        "  chain[0].shape: expected one of logistic, erf (got 'cosine')"
    ),
    'bad_paths': (
        'PATH: 1 problem in the design file (chain[0].paths)\n'
        '  chain[0].paths: expected a non-empty array of distinct channels from "R", "G", "B" (got ["R", "Y"])'
    ),
    'band_pass_order': (
        'PATH: 1 problem in the design file (chain[0].high_nm)\n'
        '  chain[0].high_nm: expected a wavelength above low_nm = 600 nm (got 500.0)'
    ),
    # a fit must not be able to put an ordered pair out of order (workbench/fileio/design_toml.py)
    'band_pass_bounds_overlap': (
        'PATH: 1 problem in the design file (chain[0].high_nm.min)\n'
        '  chain[0].high_nm.min: expected bounds that keep high_nm above low_nm in a fit (low_nm may reach '
        '560 nm, high_nm may fall to 550 nm) (got 550.0)'
    ),
    'band_pass_fixed_low_overlap': (
        'PATH: 1 problem in the design file (chain[0].high_nm.min)\n'
        '  chain[0].high_nm.min: expected bounds that keep high_nm above low_nm in a fit (low_nm may reach '
        '600 nm, high_nm may fall to 590 nm) (got 590.0)'
    ),
    'bounds_order': (
        'PATH: 1 problem in the design file (chain[0].center_nm.max)\n'
        '  chain[0].center_nm.max: expected a number greater than min = 680 (got 620.0)'
    ),
    'chain_empty': (
        'PATH: 1 problem in the design file (chain)\n'
        '  chain: expected at least one [[chain]] element'
    ),
    'chain_missing': (
        'PATH: 1 problem in the design file (chain)\n'
        '  chain: expected at least one [[chain]] element (missing)'
    ),
    'duplicate_name': (
        'PATH: 1 problem in the design file (chain[1].name)\n'
        "  chain[1].name: expected a name not used before in chain (got 'ir')"
    ),
    'fit_objective': (
        'PATH: 1 problem in the design file (fit.objective)\n'
        "  fit.objective: expected one of vora, mean-delta-e00, luther-residual (got 'smallest-error')"
    ),
    'fit_unknown_illuminant': (
        'PATH: 1 problem in the design file (fit.viewing_illuminant)\n'
        "  fit.viewing_illuminant: expected the name of one of the [[illuminants]] (day) (got 'D65')"
    ),
    'fit_weights': (
        'PATH: 2 problems in the design file (fit.weights.tcs, fit.weights.ces)\n'
        '  fit.weights.tcs: expected a number >= 0 (got -1)\n'
        "  fit.weights.ces: expected the name of one of the [[samples]] (tcs) (got 'ces')"
    ),
    'free_not_bool': (
        'PATH: 1 problem in the design file (chain[0].center_nm.free)\n'
        "  chain[0].center_nm.free: expected true or false (got 'yes')"
    ),
    'free_without_bounds': (
        'PATH: 1 problem in the design file (chain[0].center_nm)\n'
        '  chain[0].center_nm: expected both min and max when free = true'
    ),
    'glass_missing_thickness': (
        'PATH: 1 problem in the design file (chain[0].measured_thickness_mm)\n'
        '  chain[0].measured_thickness_mm: expected a number > 0 (missing)'
    ),
    'grid_missing_key': (
        'PATH: 1 problem in the design file (grid.step_nm)\n'
        '  grid.step_nm: expected a number in (0, 3000] nm (missing)'
    ),
    'grid_past_1100': (
        'PATH: 1 problem in the design file (grid.stop_nm)\n'
        '  grid.stop_nm: expected a number in [300, 1100] nm (got 1200)'
    ),
    'grid_stop_before_start': (
        'PATH: 1 problem in the design file (grid.stop_nm)\n'
        '  grid.stop_nm: expected a number above start_nm = 700 nm (got 400)'
    ),
    'grid_not_whole': (
        'PATH: 1 problem in the design file (grid)\n'
        "  grid: expected stop_nm - start_nm to be a positive whole number of step_nm steps (got '400-705 nm at 10 nm')"
    ),
    'illuminant_both': (
        'PATH: 1 problem in the design file (illuminants[0])\n'
        '  illuminants[0]: expected exactly one of cie (a CIE illuminant name) or file (a CSV SPD)'
    ),
    'illuminant_unknown_cie': (
        'PATH: 1 problem in the design file (illuminants[0].cie)\n'
        "  illuminants[0].cie: expected a CIE illuminant name such as A, D50, D65, FL2, LED-B1 (got 'D66')"
    ),
    'many_problems': (
        'PATH: 5 problems in the design file (schema, name, grid.step_nm, ...)\n'
        '  schema: expected 1 (the schema version this workbench reads) (got 3)\n'
        "  name: expected a non-empty string (got '')\n"
        '  grid.step_nm: expected a number in (0, 3000] nm (got 0)\n'
        '  chain[0].color: expected no such key (unknown; allowed: name, type, paths, center_nm, width_nm, pass_level, block_level, shape)\n'
        '  chain[0].width_nm: expected a number in (0, 1000] nm (got 0)'
    ),
    'missing_file': (
        'PATH: 1 problem in the design file (chain[0].file)\n'
        "  chain[0].file: expected an existing file (names are relative to the design file's folder) (got 'no_such_lens.csv')"
    ),
    'missing_param': (
        'PATH: 1 problem in the design file (chain[0].center_nm)\n'
        '  chain[0].center_nm: expected a number in [100, 3000] nm (missing)'
    ),
    'name_missing': (
        'PATH: 1 problem in the design file (name)\n'
        '  name: expected a non-empty string (missing)'
    ),
    'observer': (
        'PATH: 1 problem in the design file (observer)\n'
        '  observer: expected 2 (CIE 1931 2°) or 10 (CIE 1964 10°) (got 5)'
    ),
    'param_domain': (
        'PATH: 1 problem in the design file (chain[0].width_nm)\n'
        '  chain[0].width_nm: expected a number in (0, 1000] nm (got -3)'
    ),
    'param_not_number': (
        'PATH: 1 problem in the design file (chain[0].center_nm)\n'
        "  chain[0].center_nm: expected a number in [100, 3000] nm (got '650 nm')"
    ),
    'samples_csv_without_file': (
        'PATH: 1 problem in the design file (samples[0].file)\n'
        '  samples[0].file: expected a file name (missing)'
    ),
    'samples_not_array': (
        'PATH: 1 problem in the design file (samples)\n'
        "  samples: expected an array of tables ([[samples]] sections) (got 'cie-13.3')"
    ),
    'samples_source': (
        'PATH: 1 problem in the design file (samples[0].source)\n'
        "  samples[0].source: expected one of cie-13.3, cie-224, csv (got 'cie-13')"
    ),
    'schema_missing': (
        'PATH: 1 problem in the design file (schema)\n'
        '  schema: expected 1 (the schema version this workbench reads) (missing)'
    ),
    'schema_wrong': (
        'PATH: 1 problem in the design file (schema)\n'
        '  schema: expected 1 (the schema version this workbench reads) (got 2)'
    ),
    'sensor_column_and_columns': (
        'PATH: 1 problem in the design file (chain[0])\n'
        '  chain[0]: expected either column (one curve for all channels) or columns (one per channel), not both'
    ),
    'sensor_columns_channels': (
        'PATH: 1 problem in the design file (chain[0].columns)\n'
        "  chain[0].columns: expected a table naming the file's column for each channel (R, G, B) (got a table with keys R, G)"
    ),
    'splitter_count': (
        'PATH: 1 problem in the design file (chain[0].rings)\n'
        '  chain[0].rings: expected an integer in 1-64 (got 0)'
    ),
    'splitter_edges_order': (
        'PATH: 1 problem in the design file (chain[0].green_red_nm)\n'
        '  chain[0].green_red_nm: expected a wavelength above blue_green_nm = 600 nm (got 580.0)'
    ),
    'splitter_paths': (
        'PATH: 1 problem in the design file (chain[0].paths)\n'
        '  chain[0].paths: expected no such key (unknown; allowed: name, type, blue_green_nm, green_red_nm, blue_green_width_nm, green_red_width_nm, blue_green_aoi_deg, green_red_aoi_deg, n_eff_s, n_eff_p, medium_index, f_number, loss, order, shape, rings, azimuths)'
    ),
    'target_chromaticity': (
        'PATH: 1 problem in the design file (target.white)\n'
        '  target.white: expected a chromaticity with x > 0, y > 0 and x + y <= 1 (got [0.7, 0.5])'
    ),
    'target_extra_key': (
        'PATH: 1 problem in the design file (target.white)\n'
        '  target.white: expected no such key (unknown; allowed: kind, name)'
    ),
    'target_kind': (
        'PATH: 1 problem in the design file (target.kind)\n'
        "  target.kind: expected one of observer, primaries, chromaticities, emitters (got 'primary')"
    ),
    'tolerance_distribution': (
        'PATH: 1 problem in the design file (chain[0].center_nm.tolerance.distribution)\n'
        "  chain[0].center_nm.tolerance.distribution: expected one of normal, uniform (got 'triangular')"
    ),
    'tolerance_width': (
        'PATH: 1 problem in the design file (chain[0].center_nm.tolerance.width)\n'
        '  chain[0].center_nm.tolerance.width: expected a number > 0 (the standard deviation or half-width) (got 0)'
    ),
    'toml_syntax': (
        "PATH, line 11, column 6: not valid TOML: Expected '=' after a key in a key/value pair"
    ),
    'two_splitters': (
        'PATH: 1 problem in the design file (chain[1].type)\n'
        "  chain[1].type: expected at most one dichroic-splitter in a chain (got 'dichroic-splitter')"
    ),
    'unknown_element_key': (
        'PATH: 1 problem in the design file (chain[0].centre_nm)\n'
        '  chain[0].centre_nm: expected no such key (unknown; allowed: name, type, paths, center_nm, width_nm, pass_level, block_level, shape)'
    ),
    'unknown_param_key': (
        'PATH: 1 problem in the design file (chain[0].width_nm.maximum)\n'
        '  chain[0].width_nm.maximum: expected no such key (unknown; allowed: value, min, max, free, tolerance)'
    ),
    'unknown_section': (
        'PATH: 1 problem in the design file (output)\n'
        '  output: expected no such key (unknown; allowed: schema, name, description, observer, grid, target, chain, samples, illuminants, fit, noise, matrix, tolerance)'
    ),
    'unknown_top_key': (
        'PATH: 1 problem in the design file (colour_space)\n'
        '  colour_space: expected no such key (unknown; allowed: schema, name, description, observer, grid, target, chain, samples, illuminants, fit, noise, matrix, tolerance)'
    ),
    'unknown_type': (
        'PATH: 1 problem in the design file (chain[0].type)\n'
        "  chain[0].type: expected one of measured, glass, long-pass, short-pass, band-pass, neutral-density, colour-correction, dichroic-splitter, coating, sensor-qe (got 'shortpass')"
    ),
    'fit_across_illuminants': (
        'PATH: 4 problems in the design file (fit.across_illuminants, fit.illuminant_weights.day, '
        'fit.illuminant_weights.night, ...)\n'
        "  fit.across_illuminants: expected one of weighted-mean, worst (got 'median')\n"
        '  fit.illuminant_weights.day: expected a number > 0 (got 0)\n'
        "  fit.illuminant_weights.night: expected the name of one of the [[illuminants]] (day) (got 'night')\n"
        '  fit.objective: expected "mean-delta-e00" when illuminant_weights or across_illuminants = "worst" '
        "is given (got 'vora')"
    ),
    'fit_matrix_rule': (
        'PATH: 3 problems in the design file (fit.matrix, fit.matrix_scope, fit.seed)\n'
        "  fit.matrix: expected one of least-squares, white-preserving, delta-e00 (got 'fancy')\n"
        "  fit.matrix_scope: expected one of shared, per-illuminant (got 'each')\n"
        '  fit.seed: expected a whole number >= 0 (got -1)'
    ),
    'noise_values': (
        'PATH: 2 problems in the design file (noise.full_well_e, noise.exposure)\n'
        '  noise.full_well_e: expected a number > 0 (electrons) (got 0)\n'
        '  noise.exposure: expected a number in (0, 1] (fraction of the full well) (got 1.5)'
    ),
    'matrix_singular': (
        'PATH: 1 problem in the design file (matrix.values)\n'
        "  matrix.values: expected an invertible 3×3 matrix (this one's determinant is 0)"
    ),
    'tolerance_section': (
        'PATH: 2 problems in the design file (tolerance.min_vora, tolerance.field[0].aoi_offset_deg)\n'
        '  tolerance.min_vora: expected a number in [0, 1] (got 1.5)\n'
        '  tolerance.field[0].aoi_offset_deg: expected a number of degrees in [-30, 30] (got 45)'
    ),
    'value_outside_bounds': (
        'PATH: 1 problem in the design file (chain[0].center_nm.value)\n'
        '  chain[0].center_nm.value: expected a number within [min, max] = [620.0, 680.0] (got 700.0)'
    ),
}


class TestBadFiles:
    def test_every_rule_has_a_file_and_every_file_a_message(self):
        """Each bad file in tests/data/design_bad has its exact message here, and vice versa."""
        files = {p.stem for p in BAD_DIR.glob("*.toml")}
        assert files == set(BAD)

    @pytest.mark.parametrize("stem", sorted(BAD))
    def test_exact_message(self, stem):
        """Loading the bad file raises the package's error with the exact message."""
        path = BAD_DIR / f"{stem}.toml"
        with pytest.raises(WorkbenchError) as info:
            load_design(path)
        assert str(info.value) == BAD[stem].replace("PATH", str(path))
        first = str(info.value).splitlines()[0]
        assert first.startswith(str(path))

    def test_syntax_error_names_line_and_column(self):
        """A TOML syntax error is an InputFileError with the line and column."""
        with pytest.raises(InputFileError) as info:
            load_design(BAD_DIR / "toml_syntax.toml")
        assert (info.value.line, info.value.column) == (11, 6)

    def test_many_problems_reported_at_once(self):
        """Every problem of a file is listed, each with its key path."""
        with pytest.raises(DesignError) as info:
            load_design(BAD_DIR / "many_problems.toml")
        keys = [k for k, _ in info.value.problems]
        assert keys == ["schema", "name", "grid.step_nm", "chain[0].color", "chain[0].width_nm"]

    def test_missing_file_and_not_utf8(self, tmp_path):
        """An unreadable or non-UTF-8 design is an InputFileError."""
        with pytest.raises(InputFileError, match="cannot read"):
            load_design(tmp_path / "nothing.toml")
        p = tmp_path / "latin.toml"
        p.write_bytes(b'schema = 1\nname = "caf\xe9"\n')
        with pytest.raises(InputFileError, match="UTF-8"):
            load_design(p)


class TestDemoDesign:
    def test_loads(self):
        """The demo design loads with its chain, samples, illuminants and fit."""
        d = load_design(DEMO)
        assert [e.name for e in d.chain] == ["lens", "ir-cut", "prism", "red-trim", "green-trim",
                                             "red-edge", "green-edge", "blue-trim", "sensor"]
        assert d.observer == "2"
        assert d.target.kind == "primaries" and d.target.name == "ITU-R BT.709"
        assert set(d.free_parameters()) == {
            "prism.blue_green_nm", "prism.green_red_nm", "prism.blue_green_width_nm",
            "prism.green_red_width_nm", "red-trim.thickness_mm", "green-trim.thickness_mm",
            "red-edge.center_nm", "red-edge.width_nm", "green-edge.center_nm", "green-edge.width_nm",
            "blue-trim.low_nm", "blue-trim.high_nm", "blue-trim.width_nm",
        }
        p = d.parameters()["prism.f_number"]
        assert p.tolerance.distribution == "uniform" and p.tolerance.width == 0.2

    def test_round_trip(self, tmp_path):
        """load -> save -> load gives an equal design, and saving again the same bytes."""
        work = tmp_path / "demo"
        shutil.copytree(DEMO.parent, work)
        d1 = load_design(work / DEMO.name)
        out = work / "saved.toml"
        save_design(d1, out)
        d2 = load_design(out)
        assert d1 == d2
        text = out.read_text()
        d2.save(out)
        assert out.read_text() == text
        assert not [p for p in work.iterdir() if p.name.endswith(".tmp")]

    def test_save_elsewhere_rebases_paths(self, tmp_path):
        """Saved to another folder, relative file names still name the same files."""
        d1 = load_design(DEMO)
        out = tmp_path / "sub" / "moved.toml"
        out.parent.mkdir()
        save_design(d1, out)
        d2 = load_design(out)
        f1 = {e.name: d1.resolve(e.option("file")).resolve() for e in d1.chain if e.option("file")}
        f2 = {e.name: d2.resolve(e.option("file")).resolve() for e in d2.chain if e.option("file")}
        assert f1 == f2
        np.testing.assert_allclose(d2.channel_sensitivities().values, d1.channel_sensitivities().values)

    def test_with_values_does_not_mutate(self):
        """with_values returns a new design and checks the bounds."""
        d = load_design(DEMO)
        d2 = d.with_values({"red-trim.thickness_mm": 3.0})
        assert d.parameters()["red-trim.thickness_mm"].value == 2.0
        assert d2.parameters()["red-trim.thickness_mm"].value == 3.0
        with pytest.raises(DesignError, match=r"red-trim.thickness_mm: expected a value in \[0.5, 4.0\]"):
            d.with_values({"red-trim.thickness_mm": 9.0})
        with pytest.raises(DesignError, match="nonsense.x"):
            d.with_values({"nonsense.x": 1.0})


class TestChainModel:
    def test_sensitivities_spectra(self):
        """channel_sensitivities is Spectra of kind sensitivity named R, G, B on the grid."""
        d = load_design(DEMO)
        s = d.channel_sensitivities()
        assert s.kind == "sensitivity" and s.names == CHANNELS
        assert s.shape == (3, 81)
        np.testing.assert_array_equal(s.wavelengths, np.arange(380.0, 781.0, 5.0))

    def test_product_of_element_curves(self):
        """The sensitivities are the product of the element curves along each path."""
        d = load_design(DEMO)
        curves = d.element_curves()
        prod = np.prod(np.stack([c.values for c in curves]), axis=0)
        np.testing.assert_allclose(d.channel_sensitivities().values, prod, rtol=1e-14)
        trim = {c.name: c for c in curves}["red-trim"]
        np.testing.assert_array_equal(trim.values[1:], 1.0)  # only on R

    def test_glass_scaled_from_file(self):
        """The red trim is the 1 mm file curve scaled to 2 mm (Smith Eqs 10.2-10.6)."""
        d = load_design(DEMO)
        wl = d.grid.wavelengths
        T1 = read_spectra_csv(DEMO.parent / "trim_glasses_1mm.csv", kind="transmittance")
        T1 = T1.select(["amber-1mm"]).resample(wl).flat()[0]
        P = 2 * 1.54 / (1.54 ** 2 + 1)
        expected = P * (T1 / P) ** 2.0
        got = {c.name: c for c in d.element_curves()}["red-trim"].values[0]
        np.testing.assert_allclose(got, expected, rtol=1e-12)

    def test_batch(self):
        """A batch of parameter values gives a batch of sensitivities equal to one-by-one."""
        d = load_design(DEMO)
        m = d.model()
        t = np.array([1.0, 2.0, 3.0])
        bg = np.array([[520.0], [540.0]])
        batch = m.sensitivities({"red-trim.thickness_mm": t, "prism.blue_green_nm": bg})
        assert batch.shape == (2, 3, 3, 81)
        one = m.sensitivities({"red-trim.thickness_mm": 3.0, "prism.blue_green_nm": 520.0})
        np.testing.assert_allclose(batch[0, 2], one, rtol=1e-12)
        with pytest.raises(WorkbenchError, match="unknown parameter"):
            m.sensitivities({"prism.centre": 1.0})

    def test_forward_difference_batch_equals_rows_alone(self):
        """A batch whose rows repeat the first row's values but for one parameter each gives every row's own curves (to 2 ulp)."""
        d = load_design(DEMO)
        m = d.model()
        free = [k for k, p in d.parameters().items() if p.free]
        base = np.array([d.parameters()[k].value for k in free])
        X = np.repeat(base[None], len(free) + 1, axis=0)
        X[1 + np.arange(len(free)), np.arange(len(free))] += 0.37
        batch = m.element_curves({k: X[:, i] for i, k in enumerate(free)})
        for r in (0, 1, 5, len(free)):
            alone = d.model().element_curves({k: X[r, i] for i, k in enumerate(free)})
            for b, a in zip(batch, alone):
                rows = np.broadcast_to(b.values, (len(X),) + a.values.shape)      # fixed elements: one curve
                # numpy's power may round an array exponent differently from a scalar one by an ulp
                np.testing.assert_array_max_ulp(rows[r], a.values, maxulp=2)

    def test_missing_column_in_file(self, tmp_path):
        """A column the file does not hold is named in the error."""
        text = DEMO.read_text().replace('column = "qe"', 'column = "quantum"')
        shutil.copytree(DEMO.parent, tmp_path / "d")
        p = tmp_path / "d" / "x.toml"
        p.write_text(text)
        with pytest.raises(WorkbenchError, match=r"chain\[8\]: expected column 'quantum'"):
            load_design(p).channel_sensitivities()

    def test_per_channel_qe(self, tmp_path):
        """A per-channel sensor QE puts each column on its own channel."""
        (tmp_path / "qe.csv").write_text(
            "wavelength_nm,r,g,b\n400,0.1,0.2,0.3\n550,0.1,0.2,0.3\n700,0.1,0.2,0.3\n")
        (tmp_path / "d.toml").write_text(
            'schema = 1\nname = "qe"\n[grid]\nstart_nm = 400\nstop_nm = 700\nstep_nm = 50\n'
            '[[chain]]\nname = "nd"\ntype = "neutral-density"\ndensity = 0.3\n'
            '[[chain]]\nname = "s"\ntype = "sensor-qe"\nfile = "qe.csv"\n'
            'columns = { R = "r", G = "g", B = "b" }\nextrapolation = "none"\n')
        d = load_design(tmp_path / "d.toml")
        s = d.channel_sensitivities(values=None)
        np.testing.assert_allclose(s.values[:, 0], np.array([0.1, 0.2, 0.3]) * 10 ** -0.3)


class TestLoadThenCompute:
    @pytest.fixture
    def loaded_then_deleted(self, tmp_path):
        """The demo design loaded from a copy whose folder is then deleted."""
        work = tmp_path / "demo"
        shutil.copytree(DEMO.parent, work)
        before = load_design(DEMO)
        d = load_design(work / DEMO.name)
        shutil.rmtree(work)
        return before, d

    def test_computes_without_its_files(self, loaded_then_deleted):
        """Once loaded, the chain, evaluator, illuminants and samples need none of the files."""
        from workbench.analysis.evaluator import DesignEvaluator

        before, d = loaded_then_deleted
        np.testing.assert_array_equal(d.channel_sensitivities().values, before.channel_sensitivities().values)
        label, values, notes = d.illuminant_values("halogen")
        assert label == "halogen (luminaire_halogen_3200K.csv)" and values.shape == (81,)
        assert d.sample_set("studio").shape[1] == 81
        m, m0 = DesignEvaluator(d).measures(), DesignEvaluator(before).measures()
        assert m.vora_value == m0.vora_value
        np.testing.assert_array_equal(m.per_sample, m0.per_sample)

    def test_resolved_data_read_only(self):
        """The curves a design carries are read-only arrays with their notes."""
        d = load_design(DEMO)
        lens = d.chain[0].data
        assert lens.values.shape == (1, 81) and not lens.values.flags.writeable
        assert not d.illuminants[0].spd.values.flags.writeable
        assert not [s for s in d.samples if s.source == "csv"][0].spd.values.flags.writeable
        with pytest.raises(ValueError):
            lens.values[0, 0] = 2.0

    def test_bad_entry_raises_where_used(self, tmp_path):
        """A file that cannot be used stops only what uses it, with its message, and is not read again."""
        work = tmp_path / "demo"
        shutil.copytree(DEMO.parent, work)
        p = work / DEMO.name
        p.write_text(DEMO.read_text().replace('name = "halogen"\n', 'name = "halogen"\ncolumn = "none"\n'))
        d = load_design(p)
        shutil.rmtree(work)
        assert d.channel_sensitivities().shape == (3, 81)
        assert d.illuminant_values("daylight")[1].shape == (81,)
        for _ in range(2):
            with pytest.raises(WorkbenchError) as e:
                d.illuminant_values("halogen")
            assert str(e.value) == "no spectrum named 'none' (have halogen-3200K)"

    def test_unresolved_design_is_one_line(self):
        """A design assembled in code without its files says how to read it, in one line."""
        from dataclasses import replace

        d = load_design(DEMO)
        bare = replace(d, chain=tuple(replace(e, data=None) for e in d.chain))
        with pytest.raises(WorkbenchError, match=r"^chain\[0\] \(lens\): its files have not been read"):
            bare.channel_sensitivities()
        ill = replace(d, illuminants=tuple(replace(i, spd=None) for i in d.illuminants))
        with pytest.raises(WorkbenchError, match="^illuminant 'halogen' has not been read"):
            ill.illuminant_values("halogen")


def test_plot_chain():
    """The chain plot draws each element on its own channels plus the cumulative curve."""
    import matplotlib

    matplotlib.use("Agg")
    from workbench.plots.chain import plot_chain

    d = load_design(DEMO)
    ax = plot_chain(d.grid.wavelengths, d.element_curves())
    # R: lens, ir-cut, prism, red-trim, red-edge, sensor + cumulative; G: green-trim and
    # green-edge instead; B: blue-trim
    assert [len(a.lines) for a in ax] == [7, 7, 6]
    np.testing.assert_allclose(ax[0].lines[-1].get_ydata(), d.channel_sensitivities()["R"])
    assert "nm" in ax[-1].get_xlabel()
    import matplotlib.pyplot as plt

    plt.close(ax[0].figure)


# --------------------------------------------------------------------------
# Fuzz: mangled TOML never gives anything but the package's own error
# --------------------------------------------------------------------------

_FUZZ_DIR = Path(tempfile.mkdtemp(prefix="design-fuzz-"))
atexit.register(shutil.rmtree, _FUZZ_DIR, True)
shutil.copytree(DEMO.parent, _FUZZ_DIR, dirs_exist_ok=True)
_LINES = DEMO.read_text().splitlines()
_JUNK = st.sampled_from([
    "", "=", "[", "]", "[[chain]]", "[fit]", '"', "'", "{", "}", ",", "1e400", "-1", "nan",
    "inf", "true", "0", "1979-05-27", '"R"', "[1, 2]", "{ value = 1 }", "\\", "\x00", "é",
    "name", "type", "value", "free = true", "min = 9", "paths = []", "tolerance = {}",
])


@st.composite
def mangled(draw):
    lines = list(_LINES)
    for _ in range(draw(st.integers(1, 4))):
        op = draw(st.sampled_from(["delete", "insert", "replace", "splice", "duplicate"]))
        i = draw(st.integers(0, len(lines) - 1)) if lines else 0
        if op == "delete" and lines:
            del lines[i]
        elif op == "insert":
            lines.insert(i, draw(_JUNK) + draw(st.text(max_size=6)))
        elif op == "replace" and lines:
            lines[i] = draw(_JUNK)
        elif op == "splice" and lines:
            j = draw(st.integers(0, len(lines[i])))
            lines[i] = lines[i][:j] + draw(_JUNK) + lines[i][j:]
        elif op == "duplicate" and lines:
            lines.insert(i, lines[draw(st.integers(0, len(lines) - 1))])
    return "\n".join(lines)


@pytest.mark.slow  # 200 fuzzed design files, each loaded and evaluated
@settings(max_examples=200, derandomize=True, deadline=None,
          suppress_health_check=[HealthCheck.too_slow])
@given(text=mangled())
def test_fuzz_mangled_toml(text):
    """Mangled design files load, or raise WorkbenchError; loaded ones round-trip and evaluate or raise WorkbenchError."""
    path = _FUZZ_DIR / "fuzz.toml"
    path.write_text(text, encoding="utf-8", errors="surrogatepass")
    try:
        d = load_design(path)
    except WorkbenchError:
        return
    out = _FUZZ_DIR / "fuzz_saved.toml"
    save_design(d, out)
    assert load_design(out) == d
    try:
        d.channel_sensitivities()
    except WorkbenchError:
        pass
