"""Generate the invented demo data of spectra-demo/ (deterministic; rerun at will).

Every spectrum here is INVENTED: built from smooth textbook shapes
(logistic steps, Gaussians, Planck's law) plus, for the "measured-style"
files, a little seeded noise and rounding, so they look like instrument
exports. None is a measurement of any real product.

Run from the repository root::

    uv run python spectra-demo/make_demo.py

It rewrites the files listed in README.md, byte for byte the same each time
(numpy's default generator with seed SEED, numbers written with fixed
formats).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

SEED = 20240404
HERE = Path(__file__).resolve().parent


def logistic(x):
    return 0.5 * (1.0 + np.tanh(0.5 * x))


def gaussian(wl, peak, sigma):
    return np.exp(-0.5 * ((wl - peak) / sigma) ** 2)


def write(name: str, text: str) -> None:
    (HERE / name).write_text(text, encoding="utf-8", newline="\n")


def table(header: list[str], wl, columns, fmt: str, *, sep=",", decimal_comma=False,
          preamble: list[str] = ()) -> str:
    lines = list(preamble) + [sep.join(header)]
    for i, w in enumerate(wl):
        cells = [f"{w:g}"] + [format(c[i], fmt) for c in columns]
        if decimal_comma:
            cells = [c.replace(".", ",") for c in cells]
        lines.append(sep.join(cells))
    return "\n".join(lines) + "\n"


def main() -> None:
    rng = np.random.default_rng(SEED)

    # -- sensor quantum efficiency: silicon-like, one sensor type for all three
    wl = np.arange(350.0, 1001.0, 5.0)
    qe = 0.64 * logistic((wl - 395.0) / 18.0) * np.exp(-0.5 * ((wl - 560.0) / 230.0) ** 2)
    qe *= 1.0 - 0.85 * logistic((wl - 960.0) / 25.0)
    write("sensor_qe.csv", table(
        ["wavelength_nm", "qe"], wl, [np.round(qe, 4)], ".4f",
        preamble=["# Invented silicon-like sensor quantum efficiency (electrons per photon, 0-1)",
                  "# Lanternfield Tern-3 demo data, made by spectra-demo/make_demo.py"]))

    # -- lens: high transmittance, UV fall-off, slight decline into the IR (percent)
    lens = 100 * (0.93 * logistic((wl - 392.0) / 7.0) - 0.03 * logistic((wl - 850.0) / 60.0))
    lens += rng.normal(0.0, 0.05, wl.size)
    write("lens.csv", table(
        ["wavelength (nm)", "lens T%"], wl, [np.clip(lens, 0, 100)], ".2f",
        preamble=["# Invented zoom-lens transmittance, percent, measured-style (seeded noise)"]))

    # -- IR cut: interference short-pass at 2 nm steps, fraction
    wl2 = np.arange(350.0, 1001.0, 2.0)
    ir = 0.002 + (0.965 - 0.002) * logistic((665.0 - wl2) / (25.0 / (2 * np.log(9.0))))
    ir *= 1.0 + 0.008 * np.sin(2 * np.pi * wl2 / 37.0) * (wl2 < 640)
    write("ir_cut.csv", table(["wavelength_nm", "ir-cut"], wl2, [np.clip(ir, 0, 1)], ".4f",
                              preamble=["# Invented IR-cut filter, transmittance 0-1"]))

    # -- two absorbing trim glasses, measured at 1.00 mm (total transmittance, percent)
    n_glass = 1.54
    P_d = 2 * n_glass / (n_glass ** 2 + 1)
    k_amber = 3.2 * logistic((545.0 - wl) / 14.0) + 0.012  # absorbance per mm (natural log)
    k_green = 1.3 * logistic((wl - 655.0) / 38.0) + 0.025 + 0.6 * logistic((400.0 - wl) / 12.0)
    t_amber = 100 * P_d * np.exp(-k_amber) + rng.normal(0.0, 0.03, wl.size)
    t_green = 100 * P_d * np.exp(-k_green) + rng.normal(0.0, 0.03, wl.size)
    write("trim_glasses_1mm.csv", table(
        ["wavelength (nm)", "amber-1mm", "sea-green-1mm"], wl,
        [np.clip(t_amber, 0, None), np.clip(t_green, 0, None)], ".2f",
        preamble=["# Invented absorbing trim glasses, total transmittance in percent,",
                  f"# samples 1.00 mm thick, refractive index {n_glass} (measured-style, seeded noise)"]))

    # -- invented reflectance samples, 380-780 nm at 10 nm (wide CSV, fractions)
    wlr = np.arange(380.0, 781.0, 10.0)
    refl = {
        "scarlet-costume": 0.05 + 0.80 * logistic((wlr - 595.0) / 12.0),
        "moss-set-paint": 0.04 + 0.22 * gaussian(wlr, 545.0, 35.0) + 0.45 * logistic((wlr - 700.0) / 12.0),
        "sky-backdrop": 0.10 + 0.55 * gaussian(wlr, 470.0, 60.0),
        "warm-skin": 0.12 + 0.10 * logistic((wlr - 500.0) / 20.0) + 0.35 * logistic((wlr - 590.0) / 15.0)
        - 0.05 * gaussian(wlr, 575.0, 12.0),
        "violet-gel": 0.06 + 0.45 * gaussian(wlr, 420.0, 30.0) + 0.55 * logistic((wlr - 650.0) / 15.0),
        "grey-card": 0.18 + 0.0 * wlr,
    }
    write("studio_reflectances.csv", table(
        ["wavelength_nm", *refl], wlr, [np.clip(v, 0, 1) for v in refl.values()], ".4f"))

    # -- luminaire 1: phosphor-converted white LED, spectrometer export
    wll = np.arange(380.0, 781.0, 1.0)
    led = 1.00 * gaussian(wll, 451.0, 9.5) + 0.62 * gaussian(wll, 560.0, 48.0) + 0.33 * gaussian(wll, 628.0, 38.0)
    led = 0.0042 * led / led.max() + rng.normal(0.0, 2e-6, wll.size)
    write("luminaire_led_export.csv", table(
        ["Wavelength [nm]", "Irradiance [W/m2/nm]"], wll, [np.clip(led, 0, None)], ".7f",
        sep=";", decimal_comma=True,
        preamble=["Spectrometer export (invented)", "Device;LS-demo", "Integration time [ms];180",
                  "Averages;8", "Lamp;Lanternfield stage-wash LED (invented)"]))

    # -- luminaire 2: tungsten-halogen as a Planckian at 3200 K, irregular steps
    steps = np.resize([3.0, 4.0, 5.0, 7.0, 4.0, 6.0], 200)
    wlh = 370.0 + np.concatenate([[0.0], np.cumsum(steps)])
    wlh = wlh[wlh <= 790.0]
    c2 = 1.4388e7  # nm K (CIE 15:2004)
    planck = wlh ** -5.0 / np.expm1(c2 / (wlh * 3200.0))
    planck = 100 * planck / (560.0 ** -5.0 / np.expm1(c2 / (560.0 * 3200.0)))
    write("luminaire_halogen_3200K.csv", table(
        ["wavelength_nm", "halogen-3200K"], wlh, [planck], ".4f",
        preamble=["# kind: emission; units: relative",
                  "# Invented tungsten-halogen: Planck's law at 3200 K, 100 at 560 nm, irregular steps"]))

    # -- phosphor-like emitter set for a display target
    emit = {
        "R": gaussian(wll, 626.0, 11.0) + 0.35 * gaussian(wll, 611.0, 6.0),
        "G": gaussian(wll, 532.0, 21.0),
        "B": gaussian(wll, 456.0, 10.5),
    }
    write("emitters_phosphor.csv", table(
        ["wavelength_nm", *emit], wll, [v / v.max() for v in emit.values()], ".6f",
        preamble=["# kind: emission; units: relative",
                  "# Invented phosphor-like display emitters, each 1 at its peak"]))

    write("tern3_design.toml", DESIGN)
    write("tern3_nir_design.toml", nir_variant(DESIGN))


def nir_variant(design: str) -> str:
    """The same camera on a 380-1000 nm grid: the near infrared the sensor sees, for the IR measures.

    CIE D65 is defined to 830 nm only, so the variant judges the camera under
    illuminant A (its formula holds at every wavelength) and the LED, whose
    export ends at 780 nm and is extended with its end value (near zero);
    the sample sets are extended with their end values (CIE 167).
    """
    edits = [
        ('name = "Lanternfield Tern-3, prism block rev A"',
         'name = "Lanternfield Tern-3, prism block rev A, 380-1000 nm"'),
        ("stop_nm = 780", "stop_nm = 1000"),
        # the variant judges the near infrared; it keeps the ν objective
        ('# one shared least-squares matrix for every light; the fit balances the lights: it minimises\n'
         "# (smoothly) the worst light's mean ΔE00 instead of the average\n"
         'objective = "mean-delta-e00"\nacross_illuminants = "worst"', 'objective = "vora"'),
        ('source = "cie-13.3"', 'source = "cie-13.3"\nextrapolation = "constant"'),
        ('source = "cie-224"', 'source = "cie-224"\nextrapolation = "constant"'),
        ('file = "studio_reflectances.csv"', 'file = "studio_reflectances.csv"\nextrapolation = "constant"'),
        ('file = "luminaire_led_export.csv"', 'file = "luminaire_led_export.csv"\nextrapolation = "constant"'),
        ('[[illuminants]]\nname = "daylight"\ncie = "D65"\n\n', ""),
        ('recording_illuminant = "daylight"\nviewing_illuminant = "daylight"',
         'recording_illuminant = "tungsten"\nviewing_illuminant = "tungsten"'),
        ('illuminants = ["daylight", "tungsten", "stage-led"]', 'illuminants = ["tungsten", "stage-led"]\n'
         '# report the share of each channel above 680 nm too (700 nm is always reported)\n'
         'infrared_cutoff_nm = 680.0'),
    ]
    for old, new in edits:
        if old not in design:
            raise SystemExit(f"make_demo: the design text lacks {old!r}")
        design = design.replace(old, new)
    return design.replace("# Tern-3: an INVENTED", "# Tern-3 over 380-1000 nm (near infrared): an INVENTED", 1)


DESIGN = '''\
# Tern-3: an INVENTED three-sensor prism camera for the (fictional)
# Lanternfield studio. Schema: docs/design-file.md. Data: spectra-demo/README.md.
schema = 1
name = "Lanternfield Tern-3, prism block rev A"
description = "Invented demo design: lens, IR cut, two-edge dichroic prism, two trim glasses, three trim coatings, one sensor type."
observer = 2

[grid]
start_nm = 380
stop_nm = 780
# every free edge width (10-90 %) has min = 10 nm: a 5 nm step then keeps 2 grid points across the sharpest edge
step_nm = 5

[target]
kind = "primaries"
name = "ITU-R BT.709"

[[chain]]
name = "lens"
type = "measured"
file = "lens.csv"

[[chain]]
name = "ir-cut"
type = "measured"
file = "ir_cut.csv"

[[chain]]
name = "prism"
type = "dichroic-splitter"
order = "blue-first"
# 50 % points at normal incidence; the chief ray meets the faces at 25 and 12 degrees in glass
blue_green_nm = { value = 532.0, min = 500.0, max = 570.0, free = true, tolerance = { distribution = "normal", width = 3.0 } }
green_red_nm = { value = 605.0, min = 575.0, max = 640.0, free = true, tolerance = { distribution = "normal", width = 3.0 } }
blue_green_width_nm = { value = 18.0, min = 10.0, max = 60.0, free = true }
green_red_width_nm = { value = 20.0, min = 10.0, max = 60.0, free = true }
blue_green_aoi_deg = 25.0
green_red_aoi_deg = 12.0
medium_index = 1.52
n_eff_s = 1.95
n_eff_p = 1.62
f_number = { value = 2.0, tolerance = { distribution = "uniform", width = 0.2 } }
loss = 0.01

[[chain]]
name = "red-trim"
type = "glass"
paths = ["R"]
file = "trim_glasses_1mm.csv"
column = "amber-1mm"
measured_thickness_mm = 1.0
thickness_mm = { value = 2.0, min = 0.5, max = 4.0, free = true, tolerance = { distribution = "normal", width = 0.05 } }
refractive_index = 1.54

[[chain]]
name = "green-trim"
type = "glass"
paths = ["G"]
file = "trim_glasses_1mm.csv"
column = "sea-green-1mm"
measured_thickness_mm = 1.0
thickness_mm = { value = 1.5, min = 0.3, max = 4.0, free = true, tolerance = { distribution = "normal", width = 0.05 } }
refractive_index = 1.54
reflection = "exact"

# trim coatings on the channel paths (parametric until the coating vendor's curves arrive)
[[chain]]
name = "red-edge"
type = "short-pass"
paths = ["R"]
center_nm = { value = 660.0, min = 600.0, max = 700.0, free = true, tolerance = { distribution = "normal", width = 3.0 } }
width_nm = { value = 25.0, min = 10.0, max = 100.0, free = true }

[[chain]]
name = "green-edge"
type = "long-pass"
paths = ["G"]
center_nm = { value = 480.0, min = 400.0, max = 540.0, free = true, tolerance = { distribution = "normal", width = 3.0 } }
width_nm = { value = 30.0, min = 10.0, max = 100.0, free = true }

[[chain]]
name = "blue-trim"
type = "band-pass"
paths = ["B"]
low_nm = { value = 410.0, min = 380.0, max = 440.0, free = true }
high_nm = { value = 500.0, min = 460.0, max = 540.0, free = true, tolerance = { distribution = "normal", width = 3.0 } }
width_nm = { value = 30.0, min = 10.0, max = 100.0, free = true }

[[chain]]
name = "sensor"
type = "sensor-qe"
file = "sensor_qe.csv"
column = "qe"

[[samples]]
name = "tcs"
source = "cie-13.3"

[[samples]]
name = "ces"
source = "cie-224"

[[samples]]
name = "studio"
source = "csv"
file = "studio_reflectances.csv"

[[illuminants]]
name = "stage-led"
file = "luminaire_led_export.csv"

[[illuminants]]
name = "halogen"
file = "luminaire_halogen_3200K.csv"

[[illuminants]]
name = "daylight"
cie = "D65"

[[illuminants]]
name = "tungsten"
cie = "A"

[fit]
# one shared least-squares matrix for every light; the fit balances the lights: it minimises
# (smoothly) the worst light's mean ΔE00 instead of the average
objective = "mean-delta-e00"
across_illuminants = "worst"
recording_illuminant = "daylight"
viewing_illuminant = "daylight"
# ΔE00 statistics under these; the halogen stays available to the light-source tools
illuminants = ["daylight", "tungsten", "stage-led"]
matrix = "least-squares"
matrix_scope = "shared"

[fit.weights]
tcs = 1.0
ces = 1.0
studio = 2.0

# the sensor for the noise measures: shot noise from the full well plus read noise
[noise]
full_well_e = 15000.0
read_noise_e = 6.0
exposure = 0.8
grey = 0.18

# what a unit must meet, and where in the image the angle on the prism faces differs
[tolerance]
max_mean_delta_E00 = 1.5
min_vora = 0.95

[[tolerance.field]]
name = "centre"
aoi_offset_deg = 0.0

[[tolerance.field]]
name = "edge"
aoi_offset_deg = 3.0

[[tolerance.field]]
name = "corner"
aoi_offset_deg = 5.0
'''


if __name__ == "__main__":
    main()
