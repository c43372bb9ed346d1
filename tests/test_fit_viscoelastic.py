"""Viscoelastic calibration: DMA sweeps -> shift factors, WLF/Arrhenius, master curve, Prony series; Eyring yield.

Synthetic data are made from a known Prony series, shifted by WLF with the universal constants, so every check
compares the fit with the truth it was made from, or with an independent closed form or numerical transform.
"""

import math

import numpy as np
import pytest

import actsim
from scipy import integrate

from actsim.calibrate.rates import eyring_yield_stress, fit_eyring, fit_tensile_rates
from actsim.calibrate.viscoelastic import (
    arrhenius_log_shift,
    dma_sweeps,
    fit_master_curve,
    fit_prony,
    prony_relaxation_modulus,
    prony_storage_loss,
    read_dma_sweeps,
    relaxation_table,
    relaxation_toml,
    wlf_log_shift,
)
from actsim.cli import main
from actsim.errors import ActsimInputError

TG = 60.0 + 273.15
TIMES = np.logspace(-6.0, 4.0, 11)
MODULI = 1.5e9 * np.exp(-0.5 * ((np.log10(TIMES) + 1.0) / 2.2) ** 2)  # invented spectrum
E_INF = 5e6
C1U, C2U = 17.44, 51.6  # Williams, Landel & Ferry, J. Am. Chem. Soc. 77 (1955) 3701: "universal" values about Tg


def sweeps(*, temps=np.arange(50.0, 100.1, 5.0), noise=0.004, seed=1, law="WLF", ea=None):
    f = np.logspace(-1.0, 2.0, 13)
    rng = np.random.default_rng(seed)
    T, W, E1, E2 = [], [], [], []
    for Tc in temps:
        TK = Tc + 273.15
        la = (wlf_log_shift(TK, c1=C1U, c2=C2U, reference_temperature=TG) if law == "WLF"
              else arrhenius_log_shift(TK, activation_energy=ea, reference_temperature=TG))
        w = 2 * np.pi * f
        e1, e2 = prony_storage_loss(w * 10 ** la, long_term_modulus=E_INF, moduli=MODULI, times=TIMES)
        T += [TK] * f.size
        W += list(w)
        E1 += list(e1 * 10 ** rng.normal(0.0, noise, f.size))
        E2 += list(e2 * 10 ** rng.normal(0.0, noise, f.size))
    return dma_sweeps(T, W, E1, E2, synthetic=True)


def write_sweeps(path, sw, header="temperature [degC], frequency [Hz], storage modulus [MPa], loss modulus [MPa]"):
    rows = [f"{T - 273.15:.3f}, {w / (2 * np.pi):.8g}, {a / 1e6:.8g}, {b / 1e6:.8g}"
            for T, w, a, b in zip(sw.temperature, sw.omega, sw.storage, sw.loss)]
    path.write_text("# synthetic DMA sweeps for a test\n" + header + "\n" + "\n".join(rows) + "\n")
    return path


def test_prony_storage_loss_is_the_fourier_transform_of_the_relaxation_modulus():
    # Ferry, Viscoelastic Properties of Polymers, 3rd ed. (1980), ch. 3: E'(w) = E_inf + w int_0^inf (E(t) - E_inf)
    # sin(wt) dt, E''(w) = w int_0^inf (E(t) - E_inf) cos(wt) dt; integrated by scipy's QAWF (independent of the
    # closed form under test), one term at a time on [0, 60 tau] (the tail is below 1e-26). Tolerance: quadrature.
    times = np.array([0.01, 1.0, 30.0])
    mod = np.array([2e8, 5e8, 1e8])
    for w in (0.05, 1.0, 20.0):
        s = c = 0.0
        for E, tau in zip(mod, times):
            def transient(t, E=E, tau=tau):
                return float(prony_relaxation_modulus(t, long_term_modulus=0.0, moduli=[E], times=[tau]))
            s += integrate.quad(transient, 0, 60 * tau, weight="sin", wvar=w, limit=500)[0]
            c += integrate.quad(transient, 0, 60 * tau, weight="cos", wvar=w, limit=500)[0]
        e1, e2 = prony_storage_loss(w, long_term_modulus=3e6, moduli=mod, times=times)
        assert e1 == pytest.approx(3e6 + w * s, rel=1e-7)
        assert e2 == pytest.approx(w * c, rel=1e-7)


def test_wlf_universal_constants_closed_form():
    # Williams, Landel & Ferry (1955): log10 aT = -C1 (T - Tg)/(C2 + T - Tg); at T = Tg + C2 it is -C1/2.
    assert wlf_log_shift(TG + C2U, c1=C1U, c2=C2U, reference_temperature=TG) == pytest.approx(-C1U / 2, rel=1e-14)
    # Arrhenius: log10 aT = Ea/(R ln 10) (1/T - 1/Tr) (Ferry 1980, ch. 11); R = 8.314462618 J/(mol K) (CODATA 2018)
    assert arrhenius_log_shift(300.0, activation_energy=100e3, reference_temperature=350.0) == pytest.approx(
        100e3 / (8.314462618 * math.log(10)) * (1 / 300 - 1 / 350), rel=1e-9)


@pytest.fixture(scope="module")
def wlf_fit():
    return fit_master_curve(sweeps(), reference_temperature=TG, terms_per_decade=2)


def test_fit_recovers_wlf_constants(wlf_fit):
    # Data made with C1 = 17.44, C2 = 51.6 K about Tg (WLF 1955) and 0.4 % (0.004 in log10) noise on E', E''.
    # Tolerance: 1 % on C1 and C2 (measured 0.03 % and 0.2 %); the truth must lie in the 95 % interval
    # widened by 3x (the interval ignores the correlation of the chained pairwise shifts).
    w = wlf_fit.wlf
    print("C1", w.value("C1"), w.ci("C1"), "C2", w.value("C2"), w.ci("C2"))
    assert w.value("C1") == pytest.approx(C1U, rel=0.01)
    assert w.value("C2") == pytest.approx(C2U, rel=0.01)
    for name, true in (("C1", C1U), ("C2", C2U)):
        lo, hi = w.ci(name)
        mid, half = 0.5 * (lo + hi), 0.5 * (hi - lo)
        assert abs(true - mid) <= 3 * half + 1e-12
    # shift factors against the true WLF values (closed form), within 0.02 decades
    true = wlf_log_shift(wlf_fit.sweeps.levels, c1=C1U, c2=C2U, reference_temperature=TG)
    assert np.max(np.abs(wlf_fit.measured_log_shift - true)) < 0.02


def test_master_curve_matches_the_true_prony_series(wlf_fit):
    # The fitted series against the series the data were made from (Ferry 1980 closed forms), over the
    # reduced-frequency range of the data. Tolerance: 3 % rms, 8 % at worst (measured below).
    wr = np.geomspace(wlf_fit.reduced_omega.min(), wlf_fit.reduced_omega.max(), 300)
    t1, t2 = prony_storage_loss(wr, long_term_modulus=E_INF, moduli=MODULI, times=TIMES)
    f1, f2 = wlf_fit.prony.storage_loss(wr)
    r = np.concatenate([f1 / t1 - 1, f2 / t2 - 1])
    print("master curve rel rms", np.sqrt(np.mean(r ** 2)), "max", np.max(np.abs(r)))
    assert np.sqrt(np.mean(r ** 2)) < 0.03
    assert np.max(np.abs(r)) < 0.08
    assert wlf_fit.prony.long_term_modulus == pytest.approx(E_INF, rel=0.03)


def test_prony_terms_are_non_negative(wlf_fit):
    # The constraint of the fit (Lawson & Hanson 1974 NNLS); noise makes an unconstrained fit go negative,
    # which is checked too so that the test sees the constraint at work.
    assert wlf_fit.prony.long_term_modulus >= 0 and np.all(wlf_fit.prony.moduli >= 0)
    sw = sweeps(noise=0.02, seed=5)
    fit = fit_master_curve(sw, reference_temperature=TG, terms_per_decade=2)
    assert np.all(fit.prony.moduli >= 0)
    w, e1, e2 = fit.reduced_omega, sw.storage, sw.loss
    wt = w[:, None] * fit.prony.times
    A = np.vstack([np.column_stack([np.ones_like(w), wt ** 2 / (1 + wt ** 2)]) / e1[:, None],
                   np.column_stack([np.zeros_like(w), wt / (1 + wt ** 2)]) / e2[:, None]])
    x = np.linalg.lstsq(A, np.ones(A.shape[0]), rcond=None)[0]
    assert np.min(x) < 0


def _kk_loss_from_storage(storage, w):
    # Kramers-Kronig for moduli (H. C. Booij and G. P. J. M. Thoone, Rheol. Acta 21 (1982) 15, from memory):
    # E''(w) = (2 w / pi) int_0^inf [E'(x) - E'(w)] / (x^2 - w^2) dx; the subtraction removes the pole.
    # Integrated in u = ln x, the integrand is smooth (removable singularity at x = w).
    def f(u):
        x = math.exp(u)
        if abs(x - w) < 1e-9 * w:
            x = w * (1 + 1e-6)
        return (storage(x) - storage(w)) / (x * x - w * w) * x
    c = math.log(w)
    val = sum(integrate.quad(f, a, b, limit=400, epsabs=0, epsrel=1e-10)[0]
              for a, b in ((c - 40, c), (c, c + 40)))
    return 2 * w / math.pi * val


def test_fitted_moduli_obey_kramers_kronig(wlf_fit):
    # The fitted E'' against the KK transform of the fitted E' (Booij & Thoone 1982), at frequencies inside
    # the data; tolerance 1e-5 relative (quadrature accuracy).
    p = wlf_fit.prony
    store = (lambda x: float(p.storage_loss(x)[0]))
    for w in np.geomspace(wlf_fit.reduced_omega.min(), wlf_fit.reduced_omega.max(), 7):
        kk = _kk_loss_from_storage(store, w)
        assert kk == pytest.approx(float(p.storage_loss(w)[1]), rel=1e-5)
    # a pair that is not KK-consistent fails the same check: E'' of a series with one term's time doubled
    tb = p.times.copy()
    k = int(np.argmax(p.moduli))
    tb[k] *= 2
    bad = prony_storage_loss(1 / p.times[k], long_term_modulus=p.long_term_modulus, moduli=p.moduli, times=tb)[1]
    assert abs(_kk_loss_from_storage(store, 1 / p.times[k]) / bad - 1) > 0.02


def test_arrhenius_shift_recovers_activation_energy():
    # Data shifted by an Arrhenius law with Ea = 200 kJ/mol (Ferry 1980 ch. 11); tolerance 2 % (measured ~0.3 %).
    sw = sweeps(temps=np.arange(40.0, 100.1, 10.0), law="Arrhenius", ea=200e3)
    fit = fit_master_curve(sw, reference_temperature=TG, law="Arrhenius")
    print("Ea", fit.arrhenius.value("activation_energy"))
    assert fit.arrhenius.value("activation_energy") == pytest.approx(200e3, rel=0.02)
    assert fit.law == "Arrhenius" and relaxation_table(fit)["relaxation"]["shift"] == "arrhenius"


def test_eyring_fit_recovers_activation_volume_and_energy():
    # Eyring law (Ward & Sweeney, Mechanical Properties of Solid Polymers, 3rd ed., 2013, ch. 13):
    # sigma_y / T = (R/V) (ln(2 rate/rate_0) + dH/(R T)); invented V = 1.5e-3 m^3/mol, dH = 250 kJ/mol.
    V, dH, r0 = 1.5e-3, 250e3, 1e30
    r = np.tile(np.logspace(-4, -1, 4), 3)
    T = np.repeat([296.15, 313.15, 333.15], 4)
    s = eyring_yield_stress(r, temperature=T, activation_volume=V, activation_energy=dH, reference_rate=r0)
    exact = fit_eyring(r, T, s)  # noiseless: exact recovery (1e-8)
    assert exact.params.value("activation_volume") == pytest.approx(V, rel=1e-8)
    assert exact.params.value("activation_energy") == pytest.approx(dH, rel=1e-8)
    assert exact.params.value("log10_reference_rate") == pytest.approx(30.0, rel=1e-8)
    noisy = fit_eyring(r, T, s * (1 + np.random.default_rng(3).normal(0, 0.005, s.size)))
    for name, true in (("activation_volume", V), ("activation_energy", dH)):
        lo, hi = noisy.params.ci(name)
        print(name, noisy.params.value(name), lo, hi)
        assert lo <= true <= hi
        assert noisy.params.value(name) == pytest.approx(true, rel=0.05)
    # prediction at a rate and temperature inside the tests, against the law itself (within its interval)
    v, lo, hi = noisy.predict(1e-2, 313.15)
    assert lo <= eyring_yield_stress(1e-2, temperature=313.15, activation_volume=V, activation_energy=dH,
                                     reference_rate=r0) <= hi


def test_tensile_rates_from_ramberg_osgood_curves(tmp_path):
    # Ramberg & Osgood, NACA TN 902 (1943): eps = s/E + 0.002 (s/s0)^n puts the 0.2 % offset yield at s0 exactly;
    # s0 follows the Eyring law at 23 degC. Tolerance 1 % on V (offset yield read from the curve, measured 0.1 %).
    V, dH, r0, T = 1.5e-3, 250e3, 1e30, 296.15
    files, rates = [], [1e-4, 1e-3, 1e-2, 1e-1]
    for r in rates:
        s0 = eyring_yield_stress(r, temperature=T, activation_volume=V, activation_energy=dH, reference_rate=r0)
        s = np.linspace(0, 1.1 * s0, 20001)
        e = s / 1e9 + 0.002 * (s / s0) ** 20
        f = tmp_path / f"r{r:g}.csv"
        f.write_text("# synthetic\nstrain [1], stress [Pa]\n" + "\n".join(f"{a:.12g}, {b:.12g}" for a, b in zip(e, s)))
        files.append(f)
    series = fit_tensile_rates(files, rates=rates, temperatures=T, at_rate=1.0)
    print("V", series.eyring.params.value("activation_volume"))
    assert series.eyring.params.value("activation_volume") == pytest.approx(V, rel=0.01)
    assert series.modulus_law.value("rate_exponent") == pytest.approx(0.0, abs=1e-3)
    assert "actuation rate 1 1/s" in series.to_table()


def test_cli_writes_snippet_and_fitted_scenario(tmp_path, capsys):
    import tomllib

    from actsim.cli import scenarios_folder

    data = write_sweeps(tmp_path / "sweeps.csv", sweeps())
    base = scenarios_folder() / "calibration" / "vent_flap_strip.toml"
    out = tmp_path / "ve"
    assert main(["fit", "dma", str(data), "--viscoelastic", "--reference-temperature", "60 degC",
                 "--material", "flap_film", "--scenario", str(base), "-o", str(out)]) == 0
    text = capsys.readouterr().out
    assert "[materials.flap_film.relaxation]" in text
    snip = tomllib.loads((out / "relaxation.toml").read_text())
    rel = snip["materials"]["flap_film"]["relaxation"]
    assert rel["shift"] == "wlf" and rel["reference_temperature"] == "60 degC" and rel["wlf_c1"] > 0
    assert all(set(t) == {"modulus", "time"} for t in rel["terms"])
    full = tomllib.loads((out / "fitted.toml").read_text())
    assert full["materials"]["flap_film"]["relaxation"] == rel
    # a relaxing material's modulus is its long-term modulus, the fitted E_inf; the rest of the base is kept
    assert full["materials"]["flap_film"]["modulus"] == relaxation_table_of(out)["modulus"]
    assert full["strip"] == tomllib.loads(base.read_text())["strip"]
    sc = actsim.load_scenario(out / "fitted.toml")  # the fitted scenario runs as written
    assert sc.layers[[la.material.name for la in sc.layers].index("flap_film")].material.relaxation is not None
    assert (out / "figures" / "master_curve.png").is_file() and (out / "fit.json").is_file()


def relaxation_table_of(out):
    """The long-term modulus line the snippet asks for, read back from its comment."""
    import re

    line = next(ln for ln in (out / "relaxation.toml").read_text().splitlines() if "set: modulus" in ln)
    return {"modulus": re.search(r'modulus = "([^"]+)"', line).group(1)}


def test_bad_input_gives_one_line_errors(tmp_path, capsys):
    sw = sweeps()
    with pytest.raises(ActsimInputError, match=r"1 temperature \(60 degC\); time-temperature superposition") as e:
        sweeps(temps=[60.0])
    assert "\n" not in str(e.value)
    neg = sw.storage.copy()
    neg[4] = -1e6
    with pytest.raises(ActsimInputError, match="storage modulus -1e\\+06 Pa at data row 5 is not positive"):
        dma_sweeps(sw.temperature, sw.omega, neg, sw.loss)
    f = write_sweeps(tmp_path / "noloss.csv", sw, header="temperature [degC], frequency [Hz], storage modulus [MPa], "
                     "tan delta [1]")
    with pytest.raises(ActsimInputError, match="no loss modulus column"):
        read_dma_sweeps(f)
    with pytest.raises(ActsimInputError, match="terms_per_decade"):
        fit_prony(sw.omega, sw.storage, sw.loss, terms_per_decade=3)
    with pytest.raises(ActsimInputError, match="WLF shift needs 4 or more"):
        fit_master_curve(sweeps(temps=[50.0, 55.0, 60.0]))
    with pytest.raises(ActsimInputError, match="falls with strain rate"):
        fit_eyring([1e-3, 1e-2, 1e-1], 296.15, [50e6, 45e6, 40e6])
    # through the command line: exit 2 and one line
    bad = write_sweeps(tmp_path / "one.csv", dma_sweeps(*(a[sw.group == 0] for a in (sw.temperature, sw.omega,
                                                                                      sw.storage, sw.loss)),
                                                        min_temperatures=1))
    assert main(["fit", "dma", str(bad), "--viscoelastic", "-o", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "time-temperature superposition needs" in err[0]
    assert main(["fit", "tensile", str(bad), "--rate", "1 1/s", "-o", str(tmp_path / "o2")]) == 2


def test_snippet_text_is_the_table(wlf_fit):
    import tomllib

    t = tomllib.loads(relaxation_toml(wlf_fit, material="film"))["materials"]["film"]["relaxation"]
    assert t == relaxation_table(wlf_fit)["relaxation"]
