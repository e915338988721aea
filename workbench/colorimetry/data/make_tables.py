"""Write ``cie_tables.npz``: the CIE tables the workbench reads, taken from colour-science.

Run from the repository root after changing the pinned colour-science::

    uv run python workbench/colorimetry/data/make_tables.py

The package then reads the tables from the ``.npz`` (numpy only, loaded in
a few milliseconds) and never imports colour-science for them;
``tests/test_cie_tables.py`` checks that every array equals colour-science's
own table exactly.

Contents (float64 unless said; wavelengths in nm)
-------------------------------------------------
``cmfs_2_wl`` (471,), ``cmfs_2`` (471, 3)
    CIE 1931 2° x̄ȳz̄, 360-830 nm at 1 nm (CIE 15:2004, Table T.4).
``cmfs_10_wl``, ``cmfs_10``
    CIE 1964 10° x̄₁₀ȳ₁₀z̄₁₀ (CIE 15:2004, Table T.5).
``illuminant_names`` (m,) str, ``illuminant_offsets`` (m + 1,) int64, ``illuminant_wl``, ``illuminant_values``
    Every relative SPD of ``colour.SDS_ILLUMINANTS``, concatenated; table
    ``i`` is ``[offsets[i]:offsets[i + 1]]``.
``ccs_2_names``, ``ccs_2_xy`` (k, 2); ``ccs_10_names``, ``ccs_10_xy``
    Illuminant chromaticities ``colour.CCS_ILLUMINANTS`` for each observer
    (CIE 15:2004, Table T.3, and the others colour-science lists).
``daylight_wl`` (107,), ``daylight_S`` (3, 107)
    The CIE daylight basis S0, S1, S2, 300-830 nm at 5 nm (CIE 15:2004, Table T.2).
``tcs_names`` (14,), ``tcs_wl`` (95,), ``tcs`` (14, 95)
    CIE 13.3-1995 test colour samples TCS01-TCS14, 360-830 nm at 5 nm.
``ces_wl`` (401,), ``ces`` (99, 401)
    CIE 224:2017 colour evaluation samples CES01-CES99, 380-780 nm at 1 nm.
    colour-science's 5 nm table is every fifth column of it exactly
    (checked here and in the test), so it is not stored twice.
``tcs_1nm`` (14, 471)
    TCS01-TCS14 put on 360-830 nm at 1 nm the way colour-science does for
    CIE 13.3 (Sprague 1880 interpolation of the 5 nm table).
``daylight_S_1nm`` (3, 471)
    S0, S1, S2 put on 360-830 nm at 1 nm by colour-science's Sprague
    interpolation (what its CIE 224 reference daylight uses at 1 nm).
``robertson_lines`` (31, 4)
    Robertson (1968) isotemperature lines: reciprocal megakelvin, u, v and
    slope t (Wyszecki & Stiles 1982, Table 1(3.11)), as colour-science holds them.
``ohno_planckian`` (m, 3)
    The Planckian table of colour-science's Ohno 2013 CCT: T (K), CIE 1960
    u, v from 1000 to 100000 K (ratio steps from 1.001, the last two rows
    99999 and 100000 K), CIE 1931 2° over 360-780 nm at 1 nm. Stored
    because computing its 6849 blackbodies costs a tenth of a second at
    start-up; ``workbench.colorimetry.cct.uv_planckian`` recomputes any row
    (checked in tests/test_light_indices_native.py).
``source`` () str
    The colour-science version the tables came from.
"""

from __future__ import annotations

from pathlib import Path

import colour
import numpy as np
from colour.colorimetry.datasets.illuminants import SDS_BASIS_FUNCTIONS_CIE_ILLUMINANT_D_SERIES
from colour.quality.cfi2017 import load_TCS_CIE2017
from colour.temperature.ohno2013 import planckian_table
from colour.temperature.robertson1968 import DATA_ISOTEMPERATURE_LINES_ROBERTSON1968

OUT = Path(__file__).with_name("cie_tables.npz")
OBSERVER_NAMES = {
    "2": "CIE 1931 2 Degree Standard Observer",
    "10": "CIE 1964 10 Degree Standard Observer",
}


def collect() -> dict[str, np.ndarray]:
    """Every table as a plain array, straight from colour-science."""
    out: dict[str, np.ndarray] = {"source": np.array(f"colour-science {colour.__version__}")}
    for key, name in OBSERVER_NAMES.items():
        msds = colour.MSDS_CMFS[name]
        out[f"cmfs_{key}_wl"] = np.array(msds.wavelengths, dtype=np.float64)
        out[f"cmfs_{key}"] = np.array(msds.values, dtype=np.float64)
        ccs = colour.CCS_ILLUMINANTS[name]
        out[f"ccs_{key}_names"] = np.array(list(ccs), dtype=str)
        out[f"ccs_{key}_xy"] = np.array([np.asarray(ccs[n], dtype=np.float64) for n in ccs])
    names = list(colour.SDS_ILLUMINANTS)
    sds = [colour.SDS_ILLUMINANTS[n] for n in names]
    out["illuminant_names"] = np.array(names, dtype=str)
    out["illuminant_offsets"] = np.cumsum([0] + [sd.wavelengths.size for sd in sds]).astype(np.int64)
    out["illuminant_wl"] = np.concatenate([np.asarray(sd.wavelengths, dtype=np.float64) for sd in sds])
    out["illuminant_values"] = np.concatenate([np.asarray(sd.values, dtype=np.float64) for sd in sds])
    basis = SDS_BASIS_FUNCTIONS_CIE_ILLUMINANT_D_SERIES
    out["daylight_wl"] = np.array(basis["S0"].wavelengths, dtype=np.float64)
    out["daylight_S"] = np.stack([np.array(basis[k].values, dtype=np.float64) for k in ("S0", "S1", "S2")])
    tcs = colour.quality.SDS_TCS["CIE 1995"]
    tcs_names = list(tcs)
    out["tcs_names"] = np.array(tcs_names, dtype=str)
    out["tcs_wl"] = np.array(tcs[tcs_names[0]].wavelengths, dtype=np.float64)
    out["tcs"] = np.stack([np.array(tcs[n].values, dtype=np.float64) for n in tcs_names])
    shape_1nm = colour.SpectralShape(360, 830, 1)
    out["tcs_1nm"] = np.stack([np.array(colour.colorimetry.reshape_sd(tcs[n], shape_1nm, copy=True).values,
                                        dtype=np.float64) for n in tcs_names])
    out["daylight_S_1nm"] = np.stack([np.array(colour.colorimetry.reshape_sd(basis[k], shape_1nm, copy=True).values,
                                               dtype=np.float64) for k in ("S0", "S1", "S2")])
    cmfs_2_default = colour.colorimetry.reshape_msds(colour.MSDS_CMFS[OBSERVER_NAMES["2"]],
                                                     colour.SpectralShape(360, 780, 1), copy=True)
    out["ohno_planckian"] = np.array(planckian_table(cmfs_2_default, 1000, 100000, 1.001), dtype=np.float64)
    out["robertson_lines"] = np.array(DATA_ISOTEMPERATURE_LINES_ROBERTSON1968, dtype=np.float64)
    ces = {step: load_TCS_CIE2017(colour.SpectralShape(380, 780, step)) for step in (1, 5)}
    out["ces_wl"] = np.array(ces[1].wavelengths, dtype=np.float64)
    out["ces"] = np.array(ces[1].values, dtype=np.float64).T.copy()
    if not (np.array_equal(out["ces_wl"][::5], ces[5].wavelengths)
            and np.array_equal(out["ces"][:, ::5], np.asarray(ces[5].values).T)):
        raise SystemExit("the 5 nm CIE 224 table is no longer the 1 nm one's every fifth column; store both")
    return out


def main() -> None:
    tables = collect()
    np.savez_compressed(OUT, **tables)
    print(f"wrote {OUT} ({OUT.stat().st_size / 1024:.0f} KiB) from {tables['source']}")


if __name__ == "__main__":
    main()
