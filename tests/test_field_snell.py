"""The field angle in air turned into the prism glass by Snell's law at the entrance face."""

import math
import shutil

import numpy as np
import pytest

from workbench import demo_dir
from workbench.analysis.tolerance_field import angle_in_glass, field_shift
from workbench.errors import WorkbenchError
from workbench.fileio.design_toml import load_design
from workbench.model.design import FieldPosition


class TestAngleInGlass:
    def test_snell(self):
        """10° in air enters n = 1.52 glass at 6.5599°."""
        # Snell's law: sin θ_glass = sin 10° / 1.52 = 0.114240 → 6.5599° (by hand)
        assert angle_in_glass(10.0, 1.52) == pytest.approx(math.degrees(math.asin(math.sin(math.radians(10)) / 1.52)),
                                                           rel=1e-15)
        assert angle_in_glass(10.0, 1.52) == pytest.approx(6.5599, abs=1e-4)
        assert angle_in_glass(-10.0, 1.0) == pytest.approx(-10.0, rel=1e-15)


class TestFieldShiftInAir:
    def test_air_angle_equals_its_glass_angle(self):
        """A position given as 10° in air shifts the colours as one given as 6.5599° in the glass."""
        d = load_design(demo_dir() / "tern3_design.toml")
        a = field_shift(d, positions=[FieldPosition("air", 10.0, 10.0)])
        g = field_shift(d, positions=[FieldPosition("glass", angle_in_glass(10.0, 1.52))])
        np.testing.assert_allclose(a.sample_shift_mean, g.sample_shift_mean, rtol=1e-12)
        assert a.aoi_deg["blue_green"][0] == pytest.approx(25.0 + 6.559919524, abs=1e-8)
        assert "Snell's law" in a.method
        assert a.rows()[0]["field_angle_deg"] == 10.0

    def test_design_key_and_both_refused(self, tmp_path):
        """[[tolerance.field]] field_angle_deg is read; with aoi_offset_deg too it is one clear problem."""
        shutil.copytree(demo_dir(), tmp_path / "d")
        p = tmp_path / "d" / "tern3_design.toml"
        text = p.read_text()
        p.write_text(text.replace('name = "edge"\naoi_offset_deg = 3.0', 'name = "edge"\nfield_angle_deg = 12.0'))
        d = load_design(p)
        assert d.tolerance.field[1].field_angle_deg == 12.0
        p.write_text(text.replace('name = "edge"\naoi_offset_deg = 3.0',
                                  'name = "edge"\naoi_offset_deg = 3.0\nfield_angle_deg = 12.0'))
        with pytest.raises(WorkbenchError) as e:
            load_design(p)
        assert str(e.value).endswith("tolerance.field[1]: expected either aoi_offset_deg (in the prism glass) or "
                                     "field_angle_deg (in air), not both")
