"""Regenerate the SYNTHETIC calibration data of this folder (invented film, seeded noise).

    python scenarios/calibration/make_synthetic.py

Writes, next to this script:

* ``tensile_flap_film.csv``    strain [%], stress [MPa] of the unexposed film
* ``dma_flap_film.csv``        temperature [degC], storage modulus [MPa]
* ``uvvis_before.csv``, ``uvvis_after.csv``  decadic absorbance of a 1 um film before and after
  irradiation (conversion 0.8)
* ``bend_05mWcm2.csv``, ``bend_15mWcm2.csv``, ``bend_40mWcm2.csv``  bend angle [deg] against
  time [s] of the strip of ``vent_flap_strip.toml`` at three irradiances, simulated by actsim
  with the true photo parameters plus normal noise
* ``truth.toml``               the true values, for ``actsim fit demo``

Nothing here is a measurement: every file says "synthetic" in its header and states the true
parameters.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent.parent))

from actsim.calibrate.dma import smooth_step_log_modulus  # noqa: E402
from actsim.io import write_text  # noqa: E402
from actsim.scenario import apply_overrides, load_scenario  # noqa: E402
from actsim.solver import simulate  # noqa: E402

SEED = 20240611

#: True values of the invented film (SI unless the key says otherwise).
TRUTH = {
    "tensile": {"modulus": 1.1e9, "yield_scale": 35e6, "noise": 0.05e6},
    "dma": {"glassy_modulus": 1.1e9, "rubbery_modulus": 12e6, "glass_transition": 358.15, "width": 6.0,
            "noise_log10": 0.008},
    "spectra": {"thickness": 1e-6, "concentration": 400.0, "conversion": 0.8, "matrix": 0.02, "noise": 0.002,
                # Gaussian bands (centre m, FWHM m, peak m^2/mol, decadic)
                "reactant_bands": [(350e-9, 60e-9, 1300.0), (250e-9, 40e-9, 600.0)],
                "product_bands": [(300e-9, 50e-9, 800.0), (380e-9, 60e-9, 100.0)]},
    "bend": {"materials.flap_film.photo_strain": -0.018, "materials.flap_film.forward_quantum_yield": 0.22,
             "materials.flap_film.thermal_back_rate": 0.008, "noise_deg": 0.5,
             "irradiances": ["5 mW/cm^2", "15 mW/cm^2", "40 mW/cm^2"]},
}


def bands(lam, spec):
    """Sum of Gaussian bands [m^2/mol] at wavelengths ``lam`` [m]."""
    out = np.zeros_like(lam)
    for c, w, p in spec:
        out += p * np.exp(-4.0 * np.log(2.0) * ((lam - c) / w) ** 2)
    return out


def csv(path, header_comments, header, rows, fmt):
    lines = [f"# {c}" for c in header_comments] + [header]
    lines += [", ".join(f.format(v) for f, v in zip(fmt, row)) for row in rows]
    write_text(path, "\n".join(lines) + "\n")


def tensile(rng):
    T = TRUTH["tensile"]
    e = np.arange(0.0, 0.04 + 1e-12, 0.0002)
    s = T["yield_scale"] * np.tanh(T["modulus"] * e / T["yield_scale"]) + rng.normal(0.0, T["noise"], e.size)
    s[0] = 0.0
    csv(HERE / "tensile_flap_film.csv",
        ["synthetic tensile test of the invented vent flap film (unexposed), made by make_synthetic.py",
         f"true model: stress = {T['yield_scale'] / 1e6:g} MPa * tanh(E strain / {T['yield_scale'] / 1e6:g} MPa), "
         f"E = {T['modulus'] / 1e9:g} GPa; normal noise {T['noise'] / 1e6:g} MPa"],
        "strain [%], stress [MPa]", zip(100 * e, s / 1e6), ("{:.3f}", "{:.4f}"))


def dma(rng):
    T = TRUTH["dma"]
    temp = np.arange(20.0, 150.0 + 1e-9, 2.5) + 273.15
    E = smooth_step_log_modulus(temp, glassy_modulus=T["glassy_modulus"], rubbery_modulus=T["rubbery_modulus"],
                                glass_transition=T["glass_transition"], width=T["width"])
    E = E * 10 ** rng.normal(0.0, T["noise_log10"], temp.size)
    csv(HERE / "dma_flap_film.csv",
        ["synthetic DMA temperature sweep of the invented vent flap film, made by make_synthetic.py",
         f"true smooth step in log E: glassy {T['glassy_modulus'] / 1e9:g} GPa, rubbery {T['rubbery_modulus'] / 1e6:g} MPa, "
         f"Tg {T['glass_transition'] - 273.15:g} degC, width {T['width']:g} K; noise {T['noise_log10']:g} in log10 E"],
        "temperature [degC], storage modulus [MPa]", zip(temp - 273.15, E / 1e6), ("{:.2f}", "{:.3f}"))


def spectra(rng):
    T = TRUTH["spectra"]
    lam = np.arange(230e-9, 500e-9 + 1e-15, 2e-9)
    eA, eB = bands(lam, T["reactant_bands"]), bands(lam, T["product_bands"])
    cd = T["concentration"] * T["thickness"]
    x = T["conversion"]
    before = cd * eA + T["matrix"] + rng.normal(0.0, T["noise"], lam.size)
    after = cd * ((1 - x) * eA + x * eB) + T["matrix"] + rng.normal(0.0, T["noise"], lam.size)
    l365 = np.array([365e-9])
    note = (f"true: 1 um film, 0.4 mol/L, conversion after = {x:g}, matrix absorbance {T['matrix']:g}; "
            f"epsilon10 at 365 nm: reactant {bands(l365, T['reactant_bands'])[0] * 10:.4g} L/(mol*cm), "
            f"product {bands(l365, T['product_bands'])[0] * 10:.4g} L/(mol*cm)")
    for name, A, state in (("uvvis_before.csv", before, "before irradiation"),
                           ("uvvis_after.csv", after, f"after irradiation (conversion {x:g})")):
        csv(HERE / name, [f"synthetic UV-Vis absorbance of the invented vent flap film, {state}, made by make_synthetic.py",
                          note], "wavelength [nm], absorbance [1]", zip(lam * 1e9, A), ("{:.1f}", "{:.5f}"))


def bend(rng):
    T = TRUTH["bend"]
    base = load_scenario(HERE / "vent_flap_strip.toml")
    truth = {k: v for k, v in T.items() if k.startswith("materials.")}
    ov_truth = {k: (f"{v!r} 1/s" if k.endswith("rate") else v) for k, v in truth.items()}
    for irr in T["irradiances"]:
        sc = apply_overrides(base, {"protocol[0].light.uv_lamp": irr, **ov_truth})
        ds = simulate(sc)
        t = ds["time"].values[::2]
        a = np.degrees(ds["bend_angle"].values[::2]) + rng.normal(0.0, T["noise_deg"], t.size)
        tag = irr.split()[0].zfill(2)
        csv(HERE / f"bend_{tag}mWcm2.csv",
            [f"synthetic bend angle of the invented vent flap strip (vent_flap_strip.toml) at {irr}, "
             "simulated by actsim with seeded normal noise, made by make_synthetic.py",
             "true: photo_strain = {:g}, forward_quantum_yield = {:g}, thermal_back_rate = {:g} 1/s; noise {:g} deg".format(
                 *truth.values(), T["noise_deg"])],
            "time [s], bend angle [deg]", zip(t, a), ("{:.1f}", "{:.4f}"))


def truth_file():
    S, D, B = TRUTH["spectra"], TRUTH["dma"], TRUTH["bend"]
    l365 = np.array([365e-9])
    text = f"""# synthetic: the true values behind the data of this folder (make_synthetic.py)
[tensile]
modulus = "{TRUTH['tensile']['modulus'] / 1e9:g} GPa"

[dma]
glassy_modulus = "{D['glassy_modulus'] / 1e9:g} GPa"
rubbery_modulus = "{D['rubbery_modulus'] / 1e6:g} MPa"
glass_transition = "{D['glass_transition'] - 273.15:g} degC"
width = "{D['width']:g} K"

[spectra]
thickness = "1 um"
concentration = "0.4 mol/L"
conversion = {S['conversion']:g}
absorbance_matrix = {S['matrix']:g}
reactant_absorptivity_365nm = "{bands(l365, S['reactant_bands'])[0] * 10:.5g} L/(mol*cm)"
product_absorptivity_365nm = "{bands(l365, S['product_bands'])[0] * 10:.5g} L/(mol*cm)"

[bend]
"materials.flap_film.photo_strain" = {B['materials.flap_film.photo_strain']!r}
"materials.flap_film.forward_quantum_yield" = {B['materials.flap_film.forward_quantum_yield']!r}
"materials.flap_film.thermal_back_rate" = "{B['materials.flap_film.thermal_back_rate']!r} 1/s"
noise = "{B['noise_deg']:g} deg"
"""
    write_text(HERE / "truth.toml", text)


def main():
    rng = np.random.default_rng(SEED)
    tensile(rng)
    dma(rng)
    spectra(rng)
    bend(rng)
    truth_file()
    print(f"synthetic calibration data written to {HERE}")


if __name__ == "__main__":
    main()
