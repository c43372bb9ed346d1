"""Regenerate the SYNTHETIC viscoelastic calibration data of this folder (invented film, seeded noise).

    python scenarios/calibration/make_synthetic_viscoelastic.py

Writes, next to this script:

* ``dma_sweeps_hinge_film.csv``  temperature [degC], frequency [Hz], storage and loss modulus [MPa]:
  frequency sweeps 0.1-100 Hz at 50-100 degC of an invented network whose relaxation is a Prony
  series (11 terms, one per decade) shifted by WLF with the universal constants about Tg = 60 degC
* ``tensile_rate_1e-4.csv``, ``tensile_rate_1e-3.csv``, ``tensile_rate_1e-2.csv``: strain [%],
  stress [MPa] at 23 degC and three strain rates; Ramberg-Osgood curves whose 0.2 % offset yield
  follows the Eyring law

Nothing here is a measurement: every file says "synthetic" in its header and states the true values.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent.parent))

from actsim.calibrate.rates import eyring_yield_stress  # noqa: E402
from actsim.calibrate.viscoelastic import prony_storage_loss, wlf_log_shift  # noqa: E402
from actsim.io import write_text  # noqa: E402

TG = 60.0 + 273.15
TIMES = np.logspace(-6.0, 4.0, 11)
MODULI = 1.5e9 * np.exp(-0.5 * ((np.log10(TIMES) + 1.0) / 2.2) ** 2)
E_INF = 5e6
EYRING = {"activation_volume": 1.5e-3, "activation_energy": 250e3, "reference_rate": 1e30}
E_RATE = (1.1e9, 0.02)  # modulus at 1 1/s, exponent of rate


def csv(path, comments, header, rows, fmt):
    lines = [f"# {c}" for c in comments] + [header]
    lines += [", ".join(f.format(v) for f, v in zip(fmt, row)) for row in rows]
    write_text(path, "\n".join(lines) + "\n")


def dma_sweeps(rng):
    f = np.logspace(-1.0, 2.0, 13)
    rows = []
    for Tc in np.arange(50.0, 100.0 + 1e-9, 5.0):
        la = wlf_log_shift(Tc + 273.15, c1=17.44, c2=51.6, reference_temperature=TG)
        e1, e2 = prony_storage_loss(2 * np.pi * f * 10 ** la, long_term_modulus=E_INF, moduli=MODULI, times=TIMES)
        e1 = e1 * 10 ** rng.normal(0.0, 0.004, f.size)
        e2 = e2 * 10 ** rng.normal(0.0, 0.004, f.size)
        rows += list(zip(np.full(f.size, Tc), f, e1 / 1e6, e2 / 1e6))
    terms = "; ".join(f"{E / 1e6:.4g} MPa at {t:.0e} s" for E, t in zip(MODULI, TIMES))
    csv(HERE / "dma_sweeps_hinge_film.csv",
        ["synthetic DMA frequency sweeps of an invented hinge film, made by make_synthetic_viscoelastic.py",
         f"true model: Prony series E_inf = {E_INF / 1e6:g} MPa; {terms}",
         "shifted by WLF with C1 = 17.44, C2 = 51.6 K about Tg = 60 degC; noise 0.004 in log10 E', log10 E''"],
        "temperature [degC], frequency [Hz], storage modulus [MPa], loss modulus [MPa]", rows,
        ("{:.1f}", "{:.5g}", "{:.6g}", "{:.6g}"))


def tensile_rates(rng):
    for r in (1e-4, 1e-3, 1e-2):
        sy = eyring_yield_stress(r, temperature=296.15, **EYRING)
        E = E_RATE[0] * r ** E_RATE[1]
        s = np.linspace(0.0, 1.15 * sy, 400)
        e = s / E + 0.002 * (s / sy) ** 12
        s = s + rng.normal(0.0, 0.02e6, s.size)
        s[0] = 0.0
        csv(HERE / f"tensile_rate_{r:.0e}.csv",
            [f"synthetic tensile test of an invented film at {r:g} 1/s and 23 degC, made by make_synthetic_viscoelastic.py",
             f"true model: Ramberg-Osgood, E = {E / 1e6:.5g} MPa, 0.2 % offset yield {sy / 1e6:.5g} MPa (Eyring law: "
             "V = 1.5e-3 m^3/mol, dH = 250 kJ/mol, rate_0 = 1e30 1/s); noise 0.02 MPa"],
            "strain [%], stress [MPa]", zip(100 * e, s / 1e6), ("{:.5f}", "{:.4f}"))


def main():
    rng = np.random.default_rng(20240614)
    dma_sweeps(rng)
    tensile_rates(rng)


if __name__ == "__main__":
    main()
