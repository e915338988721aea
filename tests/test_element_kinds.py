"""Tests of workbench.optics.kinds: the registry of element kinds, adding a kind, and the docs table."""

from __future__ import annotations

import shutil
from pathlib import Path

import numpy as np
import pytest

from workbench.analysis.evaluator import DesignEvaluator
from workbench.analysis.tolerance import sample_parameters
from workbench.errors import WorkbenchError
from workbench.fileio.design_toml import load_design, save_design
from workbench.model.design import DesignError
from workbench.optics.kinds import (
    ELEMENT_KINDS,
    CurveInput,
    ElementKind,
    KindProblem,
    LoadInput,
    OptionSpec,
    ParamSpec,
    element_kind,
    element_param_spec,
    parameter_spec,
    register_kind,
    unregister_kind,
)
from workbench.optics.kinds.docs_table import kinds_table, main as docs_table_main, updated_text

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "spectra-demo" / "tern3_design.toml"
DOCS = ROOT / "docs" / "design-file.md"

BUILT_IN = ("measured", "glass", "long-pass", "short-pass", "band-pass", "neutral-density",
            "colour-correction", "dichroic-splitter", "coating", "sensor-qe")


# --------------------------------------------------------------------------
# A throwaway kind, declared here and nowhere in the package: a Gaussian notch
# --------------------------------------------------------------------------


def _notch_curve(x: CurveInput) -> np.ndarray:
    c = np.asarray(x.p("center_nm"))[..., None]
    fwhm = np.asarray(x.p("fwhm_nm"))[..., None]
    depth = np.asarray(x.p("depth"))[..., None]
    return 1.0 - depth * np.exp(-4.0 * np.log(2.0) * (x.wavelengths - c) ** 2 / fwhm ** 2)


def _notch_check(raw: dict, params: dict, options: dict):
    if options.get("style") == "narrow" and "fwhm_nm" in params and params["fwhm_nm"].value > 30:
        yield KindProblem("fwhm_nm", "at most 30 nm with style = \"narrow\"", params["fwhm_nm"].value)


NOTCH = ElementKind(
    name="test-notch",
    summary="Gaussian notch (test only)",
    curve=_notch_curve,
    params={
        "center_nm": ParamSpec(100.0, 3000.0, False, False, "nm", meaning="centre"),
        "fwhm_nm": ParamSpec(0.0, 500.0, True, False, "nm", 20.0, meaning="full width at half depth"),
        "depth": ParamSpec(0.0, 1.0, False, False, "", 0.5, meaning="1 − T at the centre"),
    },
    options={"style": OptionSpec(("narrow", "wide"), default="wide")},
    check=_notch_check,
)

NOTCH_TOML = """
[[chain]]
name = "notch"
type = "test-notch"
paths = ["G"]
center_nm = { value = 580, min = 560, max = 600, tolerance = { distribution = "normal", width = 2 } }
fwhm_nm = 25
depth = 0.4
"""


@pytest.fixture
def notch():
    """The throwaway kind, registered for one test and removed afterwards."""
    register_kind(NOTCH)
    yield NOTCH
    unregister_kind(NOTCH.name)


def _design_with(tmp_path, extra: str) -> Path:
    shutil.copytree(DEMO.parent, tmp_path / "d")
    p = tmp_path / "d" / "with_notch.toml"
    p.write_text(DEMO.read_text() + extra)
    return p


class TestRegistry:
    def test_built_in_kinds_in_order(self):
        """The nine built-in kinds are registered, in the order the validator lists them."""
        assert tuple(ELEMENT_KINDS) == BUILT_IN

    def test_element_kind_unknown(self):
        """An unknown kind name is one line naming the known ones."""
        with pytest.raises(WorkbenchError) as e:
            element_kind("prism")
        assert str(e.value) == f"'type' must be one of {', '.join(BUILT_IN)} (got 'prism')"

    def test_parameter_spec(self):
        """A parameter's spec comes from its kind; unknown kinds and keys give None."""
        assert parameter_spec("long-pass", "center_nm").unit == "nm"
        assert parameter_spec("dichroic-splitter", "blue_green_aoi_deg").unit == "deg"
        assert parameter_spec("long-pass", "nothing") is None
        assert parameter_spec("nothing", "center_nm") is None

    def test_registry_is_read_only(self):
        """The mapping cannot be written to directly."""
        with pytest.raises(TypeError):
            ELEMENT_KINDS["x"] = NOTCH  # type: ignore[index]


class TestRegisterKind:
    def test_duplicate_name(self, notch):
        """Registering a second kind under a taken name is refused."""
        other = ElementKind(name="test-notch", curve=_notch_curve)
        with pytest.raises(WorkbenchError, match="^element kind 'test-notch' is already registered$"):
            register_kind(other)

    def test_unregister_unknown(self):
        """Removing a kind that is not there names the registered ones."""
        with pytest.raises(WorkbenchError, match="^no element kind 'x' to remove"):
            unregister_kind("x")

    def test_not_a_kind(self):
        """Only ElementKind values are accepted."""
        with pytest.raises(WorkbenchError, match="^kind must be an ElementKind \\(got dict\\)$"):
            register_kind({"name": "x"})

    def test_declaration_checked(self):
        """A kind whose parameter clashes with an option or whose ordered pair names no parameter is refused."""
        with pytest.raises(WorkbenchError, match="parameter names must differ from the options"):
            ElementKind(name="x", curve=_notch_curve, params={"file": ParamSpec(0, 1, False, False, "")},
                        options={"file": OptionSpec("file")})
        with pytest.raises(WorkbenchError, match="ordered pairs must name parameters"):
            ElementKind(name="x", curve=_notch_curve, ordered=(("a", "b"),))
        with pytest.raises(WorkbenchError, match="option kind must be one of"):
            OptionSpec("colour")

    def test_new_kind_loads_and_evaluates(self, notch, tmp_path):
        """A kind declared only in a test module is validated, loaded, evaluated and saved like a built-in one."""
        base = load_design(DEMO)
        d = load_design(_design_with(tmp_path, NOTCH_TOML))
        assert d.chain[-1].type == "test-notch"
        wl = d.grid.wavelengths
        notch_curve = 1 - 0.4 * np.exp(-4 * np.log(2) * (wl - 580) ** 2 / 25 ** 2)  # the Gaussian, written out
        S = d.channel_sensitivities().values
        S0 = base.channel_sensitivities().values
        np.testing.assert_allclose(S[1], S0[1] * notch_curve, rtol=1e-12)
        np.testing.assert_allclose(S[[0, 2]], S0[[0, 2]], rtol=1e-12)
        m = DesignEvaluator(d).measures()
        np.testing.assert_allclose(m.sensitivities, S, rtol=1e-12)
        assert 0 < m.vora_value < 1 and m.vora_value != DesignEvaluator(base).measures().vora_value
        # batched, as a fit or a tolerance run evaluates it
        batch = d.model().sensitivities({"notch.center_nm": np.array([570.0, 590.0])})
        assert batch.shape == (2, 3, wl.size)
        # tolerance draws read its domain and tolerance
        draws = sample_parameters(d, 50, 1)
        assert "notch.center_nm" in draws and draws["notch.center_nm"].shape == (50,)
        # saved and read back equal
        save_design(d, tmp_path / "d" / "again.toml")
        assert load_design(tmp_path / "d" / "again.toml") == d

    def test_new_kind_validation(self, notch, tmp_path):
        """The validator applies the new kind's domains, options and own check, with the usual messages."""
        bad = NOTCH_TOML.replace("depth = 0.4", 'depth = 2\nstyle = "narrow"\ncolour = 1')
        with pytest.raises(DesignError) as e:
            load_design(_design_with(tmp_path, bad))
        lines = str(e.value).splitlines()[1:]
        assert lines == [
            "  chain[9].colour: expected no such key (unknown; allowed: name, type, paths, center_nm, "
            "fwhm_nm, depth, style)",
            "  chain[9].depth: expected a number in [0, 1] (got 2)",
        ]
        narrow = NOTCH_TOML.replace("fwhm_nm = 25", 'fwhm_nm = 40\nstyle = "narrow"')
        with pytest.raises(DesignError) as e:
            load_design(_design_with(tmp_path / "n", narrow))
        assert str(e.value).splitlines()[1:] == [
            '  chain[9].fwhm_nm: expected at most 30 nm with style = "narrow" (got 40.0)']

    def test_unknown_type_lists_new_kind(self, notch, tmp_path):
        """While registered, the new kind is among the types the validator offers."""
        with pytest.raises(DesignError) as e:
            load_design(_design_with(tmp_path, NOTCH_TOML.replace('"test-notch"', '"notch-filter"')))
        assert f"one of {', '.join(BUILT_IN)}, test-notch (got 'notch-filter')" in str(e.value)

    def test_docs_table_row(self, notch):
        """The documentation table gets a row for the new kind from its declaration."""
        row = kinds_table().splitlines()[-1]
        assert row.startswith("| `test-notch` | Gaussian notch (test only) | `center_nm` ([100, 3000] nm; required)")
        assert "`style` (`narrow`/`wide`, default `wide`)" in row


# --------------------------------------------------------------------------
# A throwaway kind with parameters that follow from its options and data read at load:
# absorbing layers, each with its own thickness parameter, the absorption from a file
# --------------------------------------------------------------------------


def _layer_names(v):
    if not isinstance(v, list) or not v or any(not isinstance(x, str) or not x.isidentifier() for x in v):
        raise ValueError("an array of layer names")
    return tuple(v)


def _layer_params(options: dict) -> dict:
    return {f"{n}_nm": ParamSpec(0.0, 1e4, True, False, "nm", meaning=f"thickness of {n}")
            for n in options.get("layers", ())}


class _Absorption:
    """What the test kind reads at load: an absorption coefficient per nm and a note."""

    def __init__(self, alpha: float, notes: tuple):
        self.alpha, self.notes = alpha, notes


def _load_absorption(x: LoadInput) -> _Absorption:
    text = x.resolve(x.option("absorption")).read_text()
    return _Absorption(float(text.strip()), (f"{x.key}: absorption {text.strip()} per nm",))


def _layers_curve(x: CurveInput) -> np.ndarray:
    total = sum(np.asarray(v) for k, v in x.params.items())
    return np.exp(-x.data.alpha * np.asarray(total)[..., None]) * np.ones_like(x.wavelengths)


LAYERS = ElementKind(
    name="test-layers",
    summary="absorbing layers (test only)",
    curve=_layers_curve,
    options={"layers": OptionSpec(_layer_names, required=True), "absorption": OptionSpec("file", required=True)},
    more_params=_layer_params,
    load=_load_absorption,
)

LAYERS_TOML = """
[[chain]]
name = "film"
type = "test-layers"
layers = ["a", "b"]
absorption = "alpha.txt"
a_nm = { value = 100, min = 50, max = 200, free = true }
b_nm = 300
"""


@pytest.fixture
def layers():
    """The throwaway layered kind, registered for one test."""
    register_kind(LAYERS)
    yield LAYERS
    unregister_kind(LAYERS.name)


class TestKindWithOwnParameters:
    def test_loads_evaluates_and_needs_no_disk_afterwards(self, layers, tmp_path):
        """Parameters named by the options are fitted and saved; the load function's data reach the curve."""
        p = _design_with(tmp_path, LAYERS_TOML)
        (p.parent / "alpha.txt").write_text("0.001")
        d = load_design(p)
        film = d.chain[-1]
        assert [k for k, _ in film.params] == ["a_nm", "b_nm"]
        assert "film.a_nm" in d.free_parameters()
        assert element_param_spec(film, "b_nm").unit == "nm" and parameter_spec("test-layers", "b_nm") is None
        base = load_design(DEMO).channel_sensitivities().values
        save_design(d, tmp_path / "saved.toml")
        shutil.rmtree(p.parent)
        S = d.channel_sensitivities().values
        np.testing.assert_allclose(S, base * np.exp(-0.001 * 400), rtol=1e-12)  # Beer-Lambert, written out
        S2 = d.with_values({"film.a_nm": 200.0}).channel_sensitivities().values
        np.testing.assert_allclose(S2, base * np.exp(-0.001 * 500), rtol=1e-12)
        assert "chain[9]: absorption 0.001 per nm" in d.model().notes

    def test_bad_option_and_unknown_layer(self, layers, tmp_path):
        """A bad option value and a parameter no option names are reported like any other."""
        bad = LAYERS_TOML.replace('layers = ["a", "b"]', 'layers = ["a"]').replace("b_nm = 300", "b_nm = 300\nc = 1")
        p = _design_with(tmp_path, bad)
        (p.parent / "alpha.txt").write_text("0.001")
        with pytest.raises(DesignError) as e:
            load_design(p)
        assert str(e.value).splitlines()[1:] == [
            "  chain[9].b_nm: expected no such key (unknown; allowed: name, type, paths, a_nm, layers, absorption)",
            "  chain[9].c: expected no such key (unknown; allowed: name, type, paths, a_nm, layers, absorption)",
        ]
        p.write_text(p.read_text().replace('layers = ["a"]', "layers = 3"))
        with pytest.raises(DesignError) as e:
            load_design(p)
        assert "  chain[9].layers: expected an array of layer names (got 3)" in str(e.value).splitlines()


class TestKindGroups:
    def test_one_splitter_whichever_kind(self, tmp_path):
        """A second splitter kind in the splitters' group shares the one-per-chain limit."""
        other = ElementKind(name="test-splitter", curve=lambda x: np.ones((3, x.wavelengths.size)),
                            per_path=True, paths_key=False, at_most_one=True, group="dichroic-splitter")
        register_kind(other)
        try:
            extra = '\n[[chain]]\nname = "second"\ntype = "test-splitter"\n'
            with pytest.raises(DesignError) as e:
                load_design(_design_with(tmp_path, extra))
            assert str(e.value).splitlines()[1:] == [
                "  chain[9].type: expected at most one dichroic-splitter in a chain (got 'test-splitter')"]
        finally:
            unregister_kind("test-splitter")


class TestDocsTable:
    def test_design_file_doc_is_current(self):
        """docs/design-file.md's table of kinds is the one the registry writes."""
        text = DOCS.read_text(encoding="utf-8")
        assert updated_text(text) == text, "run: uv run python -m workbench.optics.kinds.docs_table"

    def test_check_mode(self, tmp_path, capsys):
        """--check exits 1 on a stale table and leaves the file alone; without it the file is rewritten."""
        p = tmp_path / "design-file.md"
        stale = DOCS.read_text(encoding="utf-8").replace("| `glass` |", "| `glas` |")
        p.write_text(stale, encoding="utf-8")
        assert docs_table_main(["--check", str(p)]) == 1
        assert p.read_text(encoding="utf-8") == stale
        assert docs_table_main([str(p)]) == 0
        assert p.read_text(encoding="utf-8") == DOCS.read_text(encoding="utf-8")

    def test_missing_markers(self):
        """A file without the markers is one clear error."""
        with pytest.raises(WorkbenchError, match="^x.md: expected the markers"):
            updated_text("no table here", source="x.md")
