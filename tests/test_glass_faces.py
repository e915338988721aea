"""Glass as internal transmittance plus two Fresnel faces, or from a total transmittance at a known thickness."""

import numpy as np
import pytest

from workbench.errors import WorkbenchError
from workbench.fileio.design_toml import load_design
from workbench.optics.elements import glass_transmittance


class TestGlassTransmittanceFaces:
    def test_clear_plate_n15(self):
        """A clear plate of n = 1.5 (τ = 1) with two faces and multiple reflections transmits 92.3 %."""
        T = glass_transmittance([1.0], 1.0, 3.0, 1.5, reflection="exact", data="internal")
        # textbook: (1 − R)²/(1 − R²) = 2n/(n² + 1) = 3/3.25 = 0.923077 (Smith, Modern Optical Engineering, Eq. 10.5)
        assert T[0] == pytest.approx(2 * 1.5 / (1.5 ** 2 + 1), rel=1e-12)
        assert round(100 * T[0], 1) == 92.3

    def test_internal_scaled_then_faces(self):
        """Internal τ(1 mm) = 0.8 at 2 mm with exact faces: (1−R)²τ²/(1−R²τ⁴)."""
        R = (0.5 / 2.5) ** 2
        tau = 0.8 ** 2   # Bouguer-Lambert: τ(d) = τ(d₀)^(d/d₀) (SCHOTT TIE-35)
        T = glass_transmittance([0.8], 1.0, 2.0, 1.5, reflection="exact", data="internal")
        assert T[0] == pytest.approx((1 - R) ** 2 * tau / (1 - R * R * tau * tau), rel=1e-12)

    def test_total_round_trip(self):
        """A total transmittance measured at 1 mm, asked at 1 mm, comes back unchanged (exact faces)."""
        T = glass_transmittance([0.6, 0.9], 1.0, 1.0, 1.54, reflection="exact", data="total")
        np.testing.assert_allclose(T, [0.6, 0.9], rtol=1e-12)

    def test_bad_data(self):
        """An unknown data kind is refused."""
        with pytest.raises(WorkbenchError, match="data"):
            glass_transmittance([0.8], 1.0, 2.0, 1.5, data="both")


def _design(tmp_path, header, extra=""):
    (tmp_path / "g.csv").write_text(f"wavelength_nm,{header}\n400,0.8\n550,0.8\n700,0.8\n", encoding="utf-8")
    (tmp_path / "d.toml").write_text(
        'schema = 1\nname = "g"\n[grid]\nstart_nm = 400\nstop_nm = 700\nstep_nm = 50\n'
        '[[chain]]\nname = "trim"\ntype = "glass"\nfile = "g.csv"\nmeasured_thickness_mm = 1.0\n'
        f'thickness_mm = 1.0\nrefractive_index = 1.5\nreflection = "exact"\n{extra}', encoding="utf-8")
    return tmp_path / "d.toml"


class TestGlassElement:
    def test_internal_key(self, tmp_path):
        """transmittance = "internal" adds the faces from the index to the file's τ."""
        s = load_design(_design(tmp_path, "glass", 'transmittance = "internal"\n')).channel_sensitivities()
        R = 0.04
        np.testing.assert_allclose(s.values[0], (1 - R) ** 2 * 0.8 / (1 - R * R * 0.64), rtol=1e-12)

    def test_internal_from_header(self, tmp_path):
        """A column headed 'Ti' is internal transmittance, with a note."""
        s = load_design(_design(tmp_path, "Ti")).channel_sensitivities()
        np.testing.assert_allclose(s.values[0], 0.96 ** 2 * 0.8 / (1 - 0.04 ** 2 * 0.64), rtol=1e-12)
        assert any("read as internal transmittance (its header says so)" in n for n in s.notes)

    def test_header_and_key_disagree(self, tmp_path):
        """transmittance = "total" on a column headed 'Ti': one line naming the element, file and key."""
        with pytest.raises(WorkbenchError) as e:
            load_design(_design(tmp_path, "Ti", 'transmittance = "total"\n')).channel_sensitivities()
        assert str(e.value) == ("chain[0] 'trim' (g.csv): the header 'Ti' says internal transmittance but "
                                'transmittance = "total"; set transmittance = "internal" (or name the column '
                                "as total)")

    def test_total_and_no_faces_contradict(self, tmp_path):
        """transmittance = "total" with reflection = "none" (internal, no faces) is a design-file problem."""
        p = _design(tmp_path, "glass", 'transmittance = "total"\n').read_text().replace(
            'reflection = "exact"', 'reflection = "none"')
        (tmp_path / "d.toml").write_text(p, encoding="utf-8")
        with pytest.raises(WorkbenchError) as e:
            load_design(tmp_path / "d.toml")
        assert str(e.value).endswith(
            'chain[0]: expected one statement of what the file holds: transmittance = "total" (faces '
            'included) contradicts reflection = "none" (an internal transmittance with no faces)')
