"""Fuzzing the readers and the numeric options: only the package's own error class ever escapes."""

import json
import os

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from workbench import demo_dir
from workbench.cli.main import main
from workbench.errors import WorkbenchError
from workbench.fileio.design_toml import design_from_bytes
from workbench.fileio.spectral_cube import read_sidecar

DEMO = str(demo_dir())
DESIGN_TEXT = open(os.path.join(DEMO, "tern3_design.toml"), encoding="utf-8").read()

_toml_values = st.one_of(
    st.integers(-10**20, 10**20).map(str), st.floats(allow_nan=True).map(lambda f: repr(f).replace("inf", "inf")),
    st.sampled_from(["true", "false", '""', '"x"', "[]", "[1, 2]", "{}", "nan", "-inf", "1e-300", "1e308",
                     "0", "-1", '"../../etc/passwd"', '"/dev/zero"', "[[1]]"]),
    st.text(max_size=10).map(json.dumps),
)


class TestDesignLoader:
    @settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
    @given(st.binary(max_size=300))
    def test_bytes(self, raw):
        """Any bytes as a design file: a Design or a WorkbenchError."""
        try:
            design_from_bytes(raw, source="d.toml", base_dir=DEMO)
        except WorkbenchError:
            pass

    @pytest.mark.slow  # many hypothesis examples, each loading the demo
    @settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
    @given(st.data())
    def test_demo_with_one_value_replaced(self, data):
        """The demo design with one `key = value` line given a random value: a Design or a WorkbenchError."""
        lines = DESIGN_TEXT.splitlines()
        candidates = [i for i, l in enumerate(lines) if "=" in l and not l.lstrip().startswith("#")]
        i = data.draw(st.sampled_from(candidates))
        key = lines[i].split("=", 1)[0]
        lines[i] = f"{key}= {data.draw(_toml_values)}"
        try:
            design_from_bytes("\n".join(lines).encode(), source="d.toml", base_dir=DEMO)
        except WorkbenchError:
            pass

    @settings(max_examples=100, deadline=None, suppress_health_check=[HealthCheck.too_slow])
    @given(st.data())
    def test_demo_with_one_line_dropped_or_doubled(self, data):
        """The demo design with a line removed or repeated: a Design or a WorkbenchError."""
        lines = DESIGN_TEXT.splitlines()
        i = data.draw(st.integers(0, len(lines) - 1))
        if data.draw(st.booleans()):
            del lines[i]
        else:
            lines.insert(i, lines[i])
        try:
            design_from_bytes("\n".join(lines).encode(), source="d.toml", base_dir=DEMO)
        except WorkbenchError:
            pass


_json_numbers = st.one_of(st.integers(-10**400, 10**400), st.floats(allow_nan=False, allow_infinity=False),
                          st.sampled_from([0, 1e-300, 1e-9, 0.01, 5, 1e308, -5]))


class TestSidecar:
    @settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
    @given(raw=st.one_of(
        st.binary(max_size=200),
        st.fixed_dictionaries({"start": _json_numbers, "stop": _json_numbers, "step": _json_numbers})
          .map(lambda d: json.dumps({"wavelengths_nm": d}).encode()),
        st.lists(_json_numbers, max_size=12).map(lambda v: json.dumps({"wavelengths_nm": v}).encode()),
        st.recursive(st.none() | st.booleans() | _json_numbers | st.text(max_size=4),
                     lambda c: st.lists(c, max_size=3) | st.dictionaries(st.text(max_size=3), c, max_size=3),
                     max_leaves=8).map(lambda x: json.dumps({"wavelengths_nm": x}).encode()),
        st.integers(100, 3000).map(lambda n: (b'{"wavelengths_nm": ' + b"[" * n + b"]" * n + b"}")),
    ))
    def test_sidecar(self, raw, tmp_path):
        """Any sidecar content: wavelengths or a WorkbenchError, never a hang or another exception."""
        p = tmp_path / "c.json"
        p.write_bytes(raw)
        try:
            wl, _ = read_sidecar(p)
            assert np.all(np.isfinite(wl)) and np.all(np.diff(wl) > 0)
        except WorkbenchError:
            pass


def _numbers():
    return st.one_of(st.integers(-10**12, 10**12).map(str), st.floats().map(repr),
                     st.sampled_from(["0", "-1", "1e9", "1e-300", "nan", "inf", "-inf", "1e308", "", " ", "x",
                                      "1,2", "0x10", "1_000", "١"]))


# (command line before the option, option) for every numeric option of the quick commands
NUMERIC_OPTIONS = [
    (["tristimulus", "{csv}"], "--resample"),
    (["primaries", "bt709", "--targets", "{tmp}/t.csv"], "--grid"),
    (["primaries", "--xy", "0.64,0.33,0.3,0.6,0.15,0.06"], "--luminance"),
    (["primaries", "bt709", "--bars"], "--bar-amplitude"),
    (["primaries", "bt709", "--bars"], "--bar-white"),
    (["bars"], "--amplitude"),
    (["light", "{spd}"], "--match"),
    (["light", "{spd}"], "--differ"),
    (["tolerance", "{design}", "--quiet", "--no-field"], "--trials"),
    (["tolerance", "{design}", "--quiet", "--no-field", "--trials", "3"], "--seed"),
    (["tolerance", "{design}", "--quiet", "--no-field", "--trials", "3"], "--scale"),
    (["tolerance", "{design}", "--quiet", "--no-field", "--trials", "3"], "--chunk"),
    (["tolerance", "{design}", "--quiet", "--no-field", "--trials", "3"], "--min-vora"),
    (["tolerance", "{design}", "--quiet", "--no-field", "--trials", "3"], "--max-mean-de00"),
    (["render", "{design}", "{cube}", "--out", "{tmp}/r"], "--chunk-mb"),
    (["render", "{design}", "{cube}", "--out", "{tmp}/r"], "--wavelengths"),
    (["fit", "{design}", "--out", "{tmp}/f", "--quiet", "--max-evaluations", "3"], "--seed"),
    (["fit", "{design}", "--out", "{tmp}/f", "--quiet"], "--max-evaluations"),
    (["fit", "{design}", "--out", "{tmp}/f", "--quiet", "--max-evaluations", "3"], "--time-limit"),
]


@pytest.mark.slow
class TestNumericOptions:
    @pytest.mark.parametrize("before, option", NUMERIC_OPTIONS, ids=[f"{b[0]}{o}" for b, o in NUMERIC_OPTIONS])
    def test_option(self, before, option, tmp_path_factory, capsys):
        """Random values of each numeric option: exit 0, 1 (not converged) or 2 with one error line, never a traceback."""
        tmp = tmp_path_factory.mktemp("opt")
        fill = {"csv": os.path.join(DEMO, "studio_reflectances.csv"),
                "spd": os.path.join(DEMO, "luminaire_led_export.csv"),
                "design": os.path.join(DEMO, "tern3_design.toml"),
                "cube": os.path.join(DEMO, "scene_small.npy"), "tmp": str(tmp)}

        @settings(max_examples=12, deadline=None, suppress_health_check=list(HealthCheck))
        @given(_numbers())
        def check(value):
            argv = [a.format(**fill) for a in before] + [f"{option}={value}"]
            try:
                code = main(argv)
            except SystemExit as e:  # argparse: a value of the wrong type
                code = e.code
            cap = capsys.readouterr()
            assert "Traceback" not in cap.err
            assert code in (0, 1, 2, 3, 4), (argv, code, cap.err[-300:])
            if code == 2:
                assert cap.err.strip().splitlines()[-1].startswith(("error:", "workbench")), cap.err[-300:]
        check()
