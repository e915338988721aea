"""Write the bad-input corpus of tests/test_bad_corpus.py: one file per case and cases.toml.

Run from the repository root: ``uv run python tests/data/bad/cases/make_cases.py``.
Every file is invented for the test. cases.toml lists, for each file, the
group of commands that read it and the key words its error line must hold,
and the option cases (a command line and its key words). The design files
of tests/data/design_bad and the CSV files of tests/data/bad are listed too,
with the first line of their message as key words.
"""

from __future__ import annotations

import re
import sys
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
ROOT = HERE.parents[3]
WL = list(range(380, 785, 5))


def table(values=None, header="wavelength (nm),a", delimiter=",", wl=WL, rows=None) -> str:
    if rows is None:
        values = [0.5] * len(wl) if values is None else values
        rows = [f"{w}{delimiter}{v}" for w, v in zip(wl, values)]
    return header + "\n" + "\n".join(rows) + "\n"


def emission(values, names=("lamp",)) -> str:
    header = "wavelength (nm)," + ",".join(f"{n} (W/m2/nm)" for n in names)
    rows = [f"{w}," + ",".join(str(v[i]) for v in values) for i, w in enumerate(WL)]
    return header + "\n" + "\n".join(rows) + "\n"


def rgb(bad: np.ndarray) -> str:
    good = np.exp(-0.5 * ((np.array(WL) - 530) / 20) ** 2)
    return emission([bad, good, good[::-1]], names=("R", "G", "B"))


ones = np.ones(len(WL))
peak = np.exp(-0.5 * ((np.array(WL) - 600) / 30) ** 2)

CSV = {  # every reader of spectra: tristimulus, its --illuminant, light, primaries --emitters
    "stray_decimal_separator": ("wavelength;a\n400;0,5,\n500;0,6\n600;0,7\n", ["line 2", "'0,5,' is not a number"]),
    "decimal_three_commas": ("wavelength;a\n400;1,2,3\n500;0,6\n600;0,7\n", ["line 2", "'1,2,3' is not a number"]),
    "huge_cell_digits": (f"nm,a\n400,0.5\n500,{'9' * 200_000}\n600,0.7\n", ["line 3", "a cell of 200000 characters", "expected at most 1024"]),
    "huge_cell_text": (f"nm,a\n400,0.5\n500,{'x' * 100_000}\n600,0.7\n", ["line 3", "a cell of 100000 characters"]),
    "huge_name": (f"nm,{'n' * 5000}\n400,0.5\n500,0.6\n600,0.7\n", ["line 1", "a cell of 5000 characters"]),
    "only_header": ("wavelength (nm),a,b\n", ["no table found"]),
    "whitespace_only": ("   \n\t\n  \n", ["the file is empty"]),
    "only_delimiters": (",,,\n;;;\n\t\t\n", ["the file is empty"]),
    "one_column": ("wavelength\n400\n500\n600\n", ["no table found"]),
    "two_rows": ("nm,a\n400,0.5\n500,0.6\n", ["only 2 wavelengths", "at least 3"]),
    "nul_byte": ("nm,a\n400,0.5\x00\n500,0.6\n600,0.7\n", ["line 2", "a NUL character"]),
    "escape_in_cell": ("nm,a\n400,\x1b[2J\n500,0.6\n600,0.7\n", ["line 2", "'\\x1b[2J' is not a number"]),
    "bidi_in_cell": ("nm,a\n400,\u202e5.0\n500,0.6\n600,0.7\n", ["line 2", "\\u202e", "is not a number"]),
    "nan_word": ("nm,a\n400,NaN\n500,0.6\n600,0.7\n", ["line 2", "empty or NaN value"]),
    "inf_word": ("nm,a\n400,inf\n500,0.6\n600,0.7\n", ["line 2", "is not a finite number"]),
    "overflow": ("nm,a\n400,1e999\n500,0.6\n600,0.7\n", ["line 2", "is not a finite number"]),
    "hex_number": ("nm,a\n400,0x10\n500,0.6\n600,0.7\n", ["line 2", "'0x10' is not a number"]),
    "underscore_number": ("nm,a\n400,1_000\n500,0.6\n600,0.7\n", ["line 2", "'1_000' is not a number"]),
    "arabic_digits": ("nm,a\n400,٠٫٥\n500,0.6\n600,0.7\n", ["line 2", "is not a number"]),
    "percent_sign_values": ("nm,a\n400,50%\n500,60%\n600,70%\n", ["line 2", "'50%' is not a number"]),
    "unit_in_values": ("nm,a\n400,0.5 W\n500,0.6 W\n600,0.7 W\n", ["line 2", "is not a number"]),
    "formula_cell": ("nm,a\n400,=A1*2\n500,0.6\n600,0.7\n", ["line 2", "'=A1*2' is not a number"]),
    "negative_wavelength": ("nm,a\n-400,0.5\n500,0.6\n600,0.7\n", ["line 2", "is not positive"]),
    "zero_wavelength": ("nm,a\n0,0.5\n500,0.6\n600,0.7\n", ["line 2", "is not positive"]),
    "huge_wavelength": ("nm,a\n400,0.5\n500,0.6\n1e300,0.7\n", ["line 4", "outside 100-100000 nm"]),
    "tiny_um_wavelengths": ("um,a\n0.0001,0.5\n0.0002,0.6\n0.0003,0.7\n", ["line 2", "outside 100-100000 nm"]),
    "nanometre_steps_1e-9": ("nm,a\n500,0.5\n500.000000001,0.6\n500.000000002,0.7\n", ["1e-09 nm apart", "at least 0.01 nm"]),
    "trailing_text_line": ("nm,a\n400,0.5\n500,0.6\n600,0.7\nend of data\n", ["line 5", "1 cells where", "2"]),
    "mixed_delimiter_rows": ("nm;a\n400;0.5\n500,0.6\n600;0.7\n", ["line 3", "cells where"]),
    "unbalanced_quote": ('nm,a\n400,"0.5\n500,0.6\n600,0.7\n', ["line 2", "unbalanced double quote"]),
    "wavelength_text": ("nm,a\n400,0.5\nfive hundred,0.6\n600,0.7\n", ["line 3"]),
    "zig_zag_wavelengths": ("nm,a\n400,0.5\n500,0.6\n450,0.7\n600,0.7\n", ["line 4", "comes after"]),
    "same_wavelength_twice": ("nm,a,b\n400,0.5,1\n400,0.6,1\n500,0.7,1\n", ["line 3", "appears twice"]),
    "bom_metadata_no_table": ("\ufeffInstrument: X\nDate: today\nNo data exported\n", ["no table found"]),
    "cr_line_ends_bad_cell": ("nm,a\r400,0.5\r500,oops\r600,0.7\r", ["line 3", "'oops' is not a number"]),
    "long_table_text_value": ("wavelength,name,value\n400,a,0.5\n500,a,high\n600,a,0.7\n", ["line 3", "'high' is not a number"]),
    "long_table_gap": ("wavelength,name,value\n400,a,0.5\n500,a,0.6\n600,a,0.7\n400,b,0.5\n600,b,0.7\n", ["no value at 500 nm"]),
    "header_more_cells": ("wavelength (nm),a,b,c\n400,0.5,0.5\n500,0.6,0.6\n600,0.7,0.7\n", ["line 1", "the header has 4 cells"]),
    "duplicate_names": ("nm,a,a\n400,0.5,0.5\n500,0.6,0.6\n600,0.7,0.7\n", ["line 1", "'a' appears twice"]),
    "empty_name": ("nm,a,\n400,0.5,0.5\n500,0.6,0.6\n600,0.7,0.7\n", ["line 1", "empty spectrum name"]),
    "two_kind_lines": ("# kind: reflectance\n# kind: emission\nnm,a\n400,0.5\n500,0.6\n600,0.7\n", ["line 2", "a second '# kind:' line"]),
    "latin1_bytes": (b"nm,r\xe9flectance\n400,0.5\n500,0.6\n600,0.7\n", ["line 1", "is not UTF-8"]),
    "zip_archive": (b"PK\x03\x04\x14\x00\x00\x00\x08\x00garbage", ["zip archive"]),
    "utf16_le": ("nm,a\n400,0.5\n500,0.6\n600,0.7\n".encode("utf-16"), ["UTF-16"]),
    "random_binary": (bytes(np.random.default_rng(7).integers(128, 256, 300, dtype=np.uint8)), ["is not UTF-8"]),
    "empty_cell_middle": ("nm,a,b\n400,0.5,0.5\n500,,0.6\n600,0.7,0.7\n", ["line 3", "empty or NaN value"]),
    "dash_value": ("nm,a\n400,-\n500,0.6\n600,0.7\n", ["line 2", "'-' is not a number"]),
    "double_exponent": ("nm,a\n400,1e5e5\n500,0.6\n600,0.7\n", ["line 2", "'1e5e5' is not a number"]),
}

REFLECTANCE = {  # tristimulus reads these as reflectance
    "reflectance_1e308": (table([1e308] * len(WL)), ["values have a magnitude above 1e+15"]),
    "reflectance_minus_5": (table([-5] * len(WL)), ["reflectance values below -0.1", "-5"]),
    "reflectance_one_deep_negative": (table([0.5] * 10 + [-0.4] + [0.5] * (len(WL) - 11)), ["1 reflectance values below -0.1"]),
    "reflectance_above_10_after_percent": (table([2000 + i for i in range(len(WL))]), ["reflectance values above 10"]),
    "transmittance_negative": (table([-20] * len(WL), header="wavelength (nm),filter T%"), ["transmittance values below -0.1"]),
    "reflectance_tiny_step_grid": ("nm,a\n" + "".join(f"{400 + i * 0.001:.3f},0.5\n" for i in range(10)), ["nm apart", "at least 0.01 nm"]),
}

EMISSION = {  # read as emission: tristimulus --illuminant, light, primaries --emitters
    "emission_all_zero": (rgb(0 * ones), ["'R (W/m2/nm)' is all zero or negative"]),
    "emission_all_negative": (rgb(-ones), ["'R (W/m2/nm)' is all zero or negative"]),
    "emission_deep_negative": (rgb(peak - 0.5 * (np.array(WL) < 420)), ["below −5 % of the peak"]),
    "emission_1e300": (rgb(1e300 * peak), ["magnitude above 1e+15"]),
    "emission_percent_header": ("wavelength (nm),R %,G %,B %\n" + "".join(f"{w},1,2,3\n" for w in WL), ["'R %'"]),
}

OUT = {}


def write(group: str, name: str, content, suffix=".csv") -> str:
    d = HERE / group
    d.mkdir(exist_ok=True)
    p = d / f"{name}{suffix}"
    p.write_bytes(content if isinstance(content, bytes) else content.encode("utf-8"))
    return f"{group}/{p.name}"


def toml_list(items) -> str:
    return "[" + ", ".join(toml_str(i) for i in items) + "]"


def toml_str(s: str) -> str:
    return '"' + s.replace("\\", "\\\\").replace('"', '\\"').replace("\x1b", "\\u001b") + '"'


def main() -> None:
    entries = []
    for name, (content, words) in CSV.items():
        entries.append((write("csv", name, content), "spectra", words))
    for name, (content, words) in REFLECTANCE.items():
        entries.append((write("reflectance", name, content), "reflectance", words))
    for name, (content, words) in EMISSION.items():
        entries.append((write("emission", name, content), "emission", words))
    # designs: a design with no toleranced parameter, grids too fine, a FIFO-free set of TOML faults
    demo = (ROOT / "spectra-demo" / "tern3_design.toml").read_text(encoding="utf-8")
    demo = re.sub(r'file = "([^"]+)"', r'file = "../../../../../spectra-demo/\1"', demo)
    designs = {
        "grid_step_1e-300": (demo.replace("step_nm = 5", "step_nm = 1e-300"), ["grid.step_nm", "at least 0.01 nm"]),
        "grid_step_1e-9": (demo.replace("step_nm = 5", "step_nm = 1e-9"), ["grid.step_nm", "at least 0.01 nm"]),
        "grid_step_above_range": (demo.replace("step_nm = 5", "step_nm = 800"), ["grid.step_nm", "at most stop_nm - start_nm = 400 nm"]),
        "deeply_nested": ("a = " + "[" * 5000 + "]" * 5000 + "\n", ["not valid TOML"]),
        "not_utf8": (b"schema = 1\nname = \"caf\xe9\"\n", ["expected UTF-8"]),
        "binary": (bytes(range(256)), ["expected UTF-8"]),
        "empty": ("", ["problem"]),
        "name_with_escape": (demo.replace('name = "Lanternfield Tern-3, prism block rev A"',
                                          'name = "\\u001b[31mred\\u001b[0m"').replace("step_nm = 5", "step_nm = 0"),
                             ["grid"]),
        "huge_number": (demo.replace("step_nm = 5", "step_nm = 1e309"), ["problem"]),
        "int_overflow": (demo.replace("step_nm = 5", "step_nm = " + "9" * 5000), ["not valid TOML"]),
        # ordered pairs whose fit bounds touch (docs/design-file.md: refused, a fit could invert the pair)
        "splitter_bounds_touch": (demo.replace("max = 570.0", "max = 575.0", 1),
                                  ["chain[2].green_red_nm.min", "blue_green_nm may reach 575 nm"]),
        "band_pass_bounds_touch": (demo.replace("low_nm = { value = 410.0, min = 380.0, max = 440.0",
                                                "low_nm = { value = 410.0, min = 380.0, max = 460.0", 1),
                                   ["chain[7].high_nm.min", "low_nm may reach 460 nm"]),
        "coating_smoothness_1e308": (demo.replace("[fit]\n", "[fit]\ncoating_smoothness = 1e308\n", 1),
                                     ["fit.coating_smoothness", "a number in [0, 1000]"]),
    }
    for name, (content, words) in designs.items():
        entries.append((write("design", name, content, ".toml"), "design", words))
    no_tol = re.sub(r", tolerance = \{[^}]*\}", "", demo)
    entries.append((write("design", "no_toleranced_parameter", no_tol, ".toml"), "tolerance",
                    ["no parameter has a tolerance"]))
    # cubes and sidecars
    cube = HERE / "cube"
    cube.mkdir(exist_ok=True)
    sidecar = '{"wavelengths_nm": {"start": 380, "stop": 780, "step": 5}}'
    cubes = {
        "minus_one": (-np.ones((4, 5, 81)), ["reflectance values below -0.1", "-1"]),
        "percent": (np.full((4, 5, 81), 50.0), ["reflectance values above 10", "percent"]),
        "int_dtype": (np.ones((4, 5, 81), dtype=np.int16), ["expected float32 or float64"]),
        "one_d": (np.ones(81), ["expected a spectral set"]),
        "four_d": (np.ones((2, 2, 2, 81)), ["expected a spectral set"]),
        "wrong_bands": (np.ones((4, 5, 40)), ["40 bands"]),
        "nan_everywhere": (np.full((4, 5, 81), np.nan), ["non-finite"]),
        "empty": (np.ones((0, 5, 81)), ["empty"]),
        "complex": (np.ones((4, 5, 81), dtype=complex), ["expected float32 or float64"]),
    }
    for name, (a, words) in cubes.items():
        np.save(cube / f"{name}.npy", a)
        (cube / f"{name}.json").write_text(sidecar)
        entries.append((f"cube/{name}.npy", "cube", words))
    (cube / "not_npy.npy").write_bytes(b"this is not a numpy file at all")
    (cube / "not_npy.json").write_text(sidecar)
    entries.append(("cube/not_npy.npy", "cube", ["expected a NumPy .npy array"]))
    (cube / "object_array.npy").write_bytes(_object_npy())
    (cube / "object_array.json").write_text(sidecar)
    entries.append(("cube/object_array.npy", "cube", ["expected a NumPy .npy array"]))
    sidecars = {
        "step_1e-300": '{"wavelengths_nm": {"start": 380, "stop": 780, "step": 1e-300}}',
        "step_zero": '{"wavelengths_nm": {"start": 380, "stop": 780, "step": 0}}',
        "step_1e-9": '{"wavelengths_nm": {"start": 380, "stop": 780, "step": 1e-9}}',
        "huge_int": '{"wavelengths_nm": {"start": 380, "stop": 1' + "0" * 400 + ', "step": 5}}',
        "digits_5000": '{"wavelengths_nm": [' + "9" * 5000 + "]}",
        "nested": '{"wavelengths_nm": ' + "[" * 3000 + "]" * 3000 + "}",
        "not_json": "wavelengths: 380-780",
        "list_strings": '{"wavelengths_nm": ["380", "385"]}',
        "decreasing": '{"wavelengths_nm": [' + ",".join(str(w) for w in WL[::-1]) + "]}",
        "missing_key": '{"wavelengths": [380]}',
        "nan_literal": '{"wavelengths_nm": {"start": NaN, "stop": 780, "step": 5}}',
        "infinity_literal": '{"wavelengths_nm": {"start": 380, "stop": Infinity, "step": 5}}',
    }
    sc = HERE / "sidecar"
    sc.mkdir(exist_ok=True)
    for name, text in sidecars.items():
        np.save(sc / f"{name}.npy", np.full((3, 4, 81), 0.5))
        (sc / f"{name}.json").write_text(text)
        entries.append((f"sidecar/{name}.npy", "sidecar", [".json"]))
    # the older corpora
    sys.path.insert(0, str(ROOT / "tests"))
    from test_design import BAD as DESIGN_BAD  # noqa: E402
    from test_spectra_csv import BAD_FILES  # noqa: E402

    for stem, message in sorted(DESIGN_BAD.items()):
        first = message.splitlines()[0].replace("PATH", "").lstrip(":, ").strip()
        entries.append((f"../../design_bad/{stem}.toml", "design", [first]))
    for name, kwargs, message in BAD_FILES:
        if kwargs:
            continue
        entries.append((f"../{name}", "spectra", [message.split(": ", 1)[1][:60]]))
    lines = ["# The bad-input corpus: written by make_cases.py; read by tests/test_bad_corpus.py.", ""]
    for path, group, words in entries:
        lines += ["[[file]]", f"path = {toml_str(path)}", f"group = {toml_str(group)}", f"words = {toml_list(words)}", ""]
    (HERE / "cases.toml").write_text("\n".join(lines), encoding="utf-8")
    print(f"{len(entries)} files")


def _object_npy() -> bytes:
    import io

    buf = io.BytesIO()
    np.save(buf, np.array([{"a": 1}], dtype=object), allow_pickle=True)
    return buf.getvalue()


if __name__ == "__main__":
    main()
