"""Units and kinds of real exports: spectral units, photon units, metadata lines, header kinds."""

import colour
import numpy as np
import pytest

from workbench.analysis.light import read_light
from workbench.analysis.light_indices import light_indices
from workbench.colorimetry.cie import illuminant_A
from workbench.errors import WorkbenchError
from workbench.fileio.spectra_csv import read_spectra_csv
from workbench.fileio.units import spectral_unit, to_watts
from workbench.model.spectra import grid

UNKNOWN = ("x.csv: units: unknown unit 'W/m2'; expected spectral irradiance such as W/(m² nm), mW/(m² nm) "
           "or µW/(cm² nm), radiance W/(sr m² nm), photon units photons/(s m² nm) or µmol/(s m² nm), or "
           "relative")


class TestSpectralUnit:
    @pytest.mark.parametrize("text, quantity, photons, factor", [
        ("W/(m² nm)", "irradiance", False, 1.0),
        ("W/m2/nm", "irradiance", False, 1.0),
        ("W·m⁻²·nm⁻¹", "irradiance", False, 1.0),
        ("mW/(m² nm)", "irradiance", False, 1e-3),
        ("µW/(cm² nm)", "irradiance", False, 1e-2),   # 1 µW/cm² = 10⁻⁶ W / 10⁻⁴ m² (SI prefixes)
        ("uW/cm2/nm", "irradiance", False, 1e-2),
        ("W/(sr m² nm)", "radiance", False, 1.0),
        ("photons/(s m² nm)", "irradiance", True, 1.0),
        ("photons s-1 m-2 nm-1", "irradiance", True, 1.0),
        ("µmol/(m² s nm)", "irradiance", True, 6.02214076e17),  # 10⁻⁶ mol × N_A (SI 2019)
        ("counts", "relative", False, 1.0),
        ("a.u.", "relative", False, 1.0),
    ])
    def test_spellings(self, text, quantity, photons, factor):
        """Each spelling gives its quantity, photon flag and factor to SI."""
        u = spectral_unit(text)
        assert (u.quantity, u.photons) == (quantity, photons)
        assert u.factor == pytest.approx(factor, rel=1e-15)

    @pytest.mark.parametrize("text", ["W/m2", "lux", "photons/(m2 nm)", "umol/m2/nm"])
    def test_unknown_refused(self, text):
        """Integrated, photometric or incomplete units are refused, naming where."""
        with pytest.raises(WorkbenchError) as e:
            spectral_unit(text, where="x.csv: units")
        assert str(e.value) == UNKNOWN.replace("'W/m2'", repr(text))


class TestToWatts:
    def test_one_watt_of_555_nm_photons(self):
        """2.793935e18 photons/s at 555 nm carry 1 W."""
        # by hand: λ/(h c) = 555e-9 m / (6.62607015e-34 J s × 299792458 m/s) = 2.793935e18 per J
        w = to_watts(np.array([2.793935e18]), np.array([555.0]), spectral_unit("photons/(s m² nm)"))
        assert w[0] == pytest.approx(1.0, rel=1e-6)


def _write(path, wl, values, header_unit=None, metadata_unit=None):
    lines = ["Spectrometer export (invented)", "Integration time [ms];100"]
    if metadata_unit:
        lines.append(f"Units;{metadata_unit}")
    lines.append("Wavelength [nm];Irradiance" + (f" [{header_unit}]" if header_unit else ""))
    lines += [f"{w:g};{v:.10e}".replace(".", ",") for w, v in zip(wl, values)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


class TestIlluminanceFromUnits:
    wl = grid(380, 780, 5)
    watts = 0.01 * illuminant_A(grid(380, 780, 5)) / 100          # W/(m² nm), 0.01 at 560 nm
    # colour-science 0.4.7 luminous_flux: 683 lm/W × ∫ V(λ) E(λ) dλ (CIE 1924 V(λ), trapezoid)
    reference = colour.luminous_flux(colour.SpectralDistribution(watts, grid(380, 780, 5)))
    photons = watts * (grid(380, 780, 5) * 1e-9) / (6.62607015e-34 * 299792458.0)

    @pytest.mark.parametrize("unit, scale", [
        ("W/(m² nm)", 1.0), ("W/m2/nm", 1.0), ("mW/(m² nm)", 1e3), ("µW/(cm² nm)", 1e2),
        ("uW/cm2/nm", 1e2), ("photons/(s m² nm)", None), ("µmol/(m² s nm)", None),
    ])
    @pytest.mark.parametrize("where", ["header", "metadata"])
    def test_matches_reference_library(self, tmp_path, unit, scale, where):
        """An SPD in each unit spelling, in the header or a metadata line, gives colour-science's flux."""
        if scale is None:
            values = self.photons / (6.02214076e17 if unit.startswith("µmol") else 1.0)
        else:
            values = self.watts * scale
        p = tmp_path / "spd.csv"
        _write(p, self.wl, values, **({"header_unit": unit} if where == "header" else {"metadata_unit": unit}))
        s = read_light(p)
        r = light_indices(s)
        assert r.illuminance_unit == "lx"
        # summation and trapezoid differ only by half the end terms, where V < 4e-5 (CIE 15:2004 T.4)
        assert r.illuminance == pytest.approx(self.reference, rel=1e-5)

    def test_unknown_unit_in_metadata(self, tmp_path):
        """A metadata unit the workbench cannot read: one line naming the file."""
        p = tmp_path / "spd.csv"
        _write(p, self.wl, self.watts, metadata_unit="W/m2")
        with pytest.raises(WorkbenchError) as e:
            read_light(p)
        assert str(e.value) == UNKNOWN.replace("x.csv", str(p))


class TestHeaderKinds:
    @pytest.mark.parametrize("header, kind", [
        ("T", "transmittance"), ("Ti (%)", "transmittance"), ("τ", "transmittance"),
        ("transmittance", "transmittance"), ("QE", "sensitivity"), ("responsivity (A/W)", "sensitivity"),
        ("A/W", "sensitivity"), ("R", "reflectance"), ("reflectance", "reflectance"),
    ])
    def test_kind_from_header(self, tmp_path, header, kind):
        """Common headers name the kind, and the note states the rule."""
        p = tmp_path / "k.csv"
        p.write_text(f"wavelength_nm,{header}\n400,0.5\n500,0.6\n600,0.7\n", encoding="utf-8")
        s = read_spectra_csv(p)
        assert s.kind == kind
        assert any("header rule: T, Ti, τ" in n for n in s.notes)

    @pytest.mark.parametrize("unit", ["W/(m2 nm)", "photons/(s m2 nm)"])
    def test_absolute_units_in_metadata_say_emission(self, tmp_path, unit):
        """A metadata units line in spectral irradiance makes an unnamed column an emission spectrum."""
        p = tmp_path / "lamp.csv"
        p.write_text(f"Units,{unit}\nwavelength_nm,lamp\n400,2e14\n500,3e14\n600,4e14\n", encoding="utf-8")
        s = read_spectra_csv(p)
        assert s.kind == "emission" and s.values.max() == 4e14  # no percent or plausibility repair
        assert any("kind emission taken from the metadata line 1" in n for n in s.notes)
        assert read_light(p).kind == "emission"

    def test_relative_units_in_metadata_say_nothing(self, tmp_path):
        """'counts' in a metadata line names no kind: the unsaid rule stands."""
        p = tmp_path / "k.csv"
        p.write_text("Units,counts\nwavelength_nm,a\n400,0.5\n500,0.6\n600,0.7\n", encoding="utf-8")
        assert read_spectra_csv(p).kind == "reflectance"

    def test_rgb_channels_are_not_reflectance(self, tmp_path):
        """R, G, B columns are channel names, not the reflectance symbol."""
        p = tmp_path / "k.csv"
        p.write_text("wavelength_nm,R,G,B\n400,0.5,1,1\n500,0.6,1,1\n600,0.7,1,1\n", encoding="utf-8")
        assert any("none given and the header names none" in n for n in read_spectra_csv(p).notes)


class TestKindFitsCommand:
    def test_light_refuses_transmittance(self, tmp_path):
        """`light` on a lens transmittance: one line naming the file and --kind."""
        p = tmp_path / "lens.csv"
        p.write_text("wavelength (nm),lens T%\n400,90\n500,91\n600,92\n", encoding="utf-8")
        with pytest.raises(WorkbenchError) as e:
            read_light(p)
        assert str(e.value) == (f"{p}: holds transmittance (so says the header 'lens T%'), but `workbench "
                                "light` takes emission; pass --kind emission if it is one")

    def test_unsaid_kind_read_as_emission(self, tmp_path):
        """An SPD whose header names no kind is read as emission (not as percent reflectance)."""
        p = tmp_path / "lamp.csv"
        p.write_text("wavelength_nm,lamp\n400,50\n500,80\n600,100\n", encoding="utf-8")
        s = read_light(p)
        assert s.kind == "emission" and s.values.max() == 100

    def test_tristimulus_refuses_sensitivity(self, tmp_path, capsys):
        """`tristimulus` on a QE file: one line naming the file and --kind, exit 2."""
        from workbench.cli.main import main

        p = tmp_path / "qe.csv"
        p.write_text("wavelength_nm,QE\n400,0.3\n500,0.5\n600,0.6\n700,0.4\n", encoding="utf-8")
        assert main(["tristimulus", str(p)]) == 2
        assert capsys.readouterr().err.strip().splitlines()[-1] == (
            f"error: {p}: holds sensitivity (so says the header 'QE'), but `workbench tristimulus` takes "
            "reflectance, transmittance or emission; pass --kind reflectance if it is one")
