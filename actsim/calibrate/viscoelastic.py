"""Viscoelastic fit of DMA frequency sweeps: shift factors, WLF or Arrhenius shift, master curve, Prony series.

Input: storage and loss modulus at several frequencies, measured at several temperatures (one
frequency sweep per temperature). The fit runs in four steps:

1. **Shift factors by overlap** (time–temperature superposition). Curves are taken in order of
   temperature; each curve is slid along log frequency onto its colder neighbour until log E' and
   log E'' of the two overlap best (least squares over the overlapping points of both, in both
   directions), and the pairwise shifts are chained. No vertical shift is applied.
2. **Shift law**. The chained log10 a_T are fitted by the WLF equation (C1, C2 at the reference
   temperature) or by an Arrhenius law (activation energy), each with a free offset that places
   log10 a_T = 0 at the reference temperature.
3. **Master curve**: every point at its reduced frequency :math:`\\omega a_T`.
4. **Prony series** on the master curve: relaxation times fixed and log-spaced (one or two per
   decade over the reduced-frequency range of the data), moduli from non-negative least squares on
   E' and E'' jointly, each residual relative to its datum (``scipy.optimize.nnls``). The confidence
   intervals are those of the linear model restricted to the active set (the terms NNLS left
   positive): covariance :math:`s^2 (J_a^T J_a)^{-1}` with :math:`J_a` the weighted design columns
   of the active terms, as in :func:`actsim.calibrate.fitstats.fit_statistics`. Terms at zero sit on
   their bound and get no interval. The intervals do not include the uncertainty of the shift
   factors.

Steps 1 and 2 (reading the sweeps, the shift factors and the shift laws) live in
:mod:`actsim.calibrate.shift`; their public names are re-exported here. This module does steps 3
and 4, the whole fit (:func:`fit_master_curve`), the scenario snippet and the figure.

The fitted material goes into a scenario as a ``[materials.NAME.relaxation]`` table
(:func:`relaxation_table`, :func:`relaxation_toml`).

References
----------
.. [1] J. D. Ferry, *Viscoelastic Properties of Polymers*, 3rd ed., Wiley, 1980 (Prony series,
   storage and loss moduli, time–temperature superposition, WLF).
.. [2] M. L. Williams, R. F. Landel and J. D. Ferry, "The temperature dependence of relaxation
   mechanisms in amorphous polymers and other glass-forming liquids", J. Am. Chem. Soc. 77 (1955) 3701.
.. [3] C. L. Lawson and R. J. Hanson, *Solving Least Squares Problems*, Prentice-Hall, 1974 (NNLS).
.. [4] S. W. Park and R. A. Schapery, "Methods of interconversion between linear viscoelastic
   material functions. Part I", Int. J. Solids Struct. 36 (1999) 1653 (Prony fits with fixed,
   log-spaced relaxation times).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import ActsimInputError
from .fitstats import FitResult, fit_statistics
from .shift import (  # re-exported (listed in __all__): callers import them from here too
    DmaSweeps,
    arrhenius_log_shift,
    dma_sweeps,
    fit_arrhenius,
    fit_wlf,
    pairwise_log_shifts,
    read_dma_sweeps,
    wlf_log_shift,
)

__all__ = [
    "prony_storage_loss",
    "prony_relaxation_modulus",
    "wlf_log_shift",
    "arrhenius_log_shift",
    "DmaSweeps",
    "read_dma_sweeps",
    "dma_sweeps",
    "pairwise_log_shifts",
    "fit_wlf",
    "fit_arrhenius",
    "fit_prony",
    "PronyFit",
    "MasterCurveFit",
    "fit_master_curve",
    "relaxation_table",
    "relaxation_toml",
    "plot_master_curve",
]


# ----------------------------------------------------------------------------------------------
# the models
# ----------------------------------------------------------------------------------------------

def prony_storage_loss(omega, *, long_term_modulus, moduli, times):
    """Storage and loss modulus of a Prony series (generalised Maxwell model).

    Parameters
    ----------
    omega : float or array_like
        Angular frequency [rad/s].
    long_term_modulus : float
        Equilibrium modulus :math:`E_\\infty` [Pa].
    moduli : array_like
        Term moduli :math:`E_k` [Pa].
    times : array_like
        Relaxation times :math:`\\tau_k`, > 0 [s].

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        E'(omega) and E''(omega) [Pa], shaped like ``omega``.

    Notes
    -----
    .. math::

        E'(\\omega) = E_\\infty + \\sum_k E_k \\frac{\\omega^2\\tau_k^2}{1 + \\omega^2\\tau_k^2}, \\qquad
        E''(\\omega) = \\sum_k E_k \\frac{\\omega\\tau_k}{1 + \\omega^2\\tau_k^2}

    References
    ----------
    .. [1] J. D. Ferry, *Viscoelastic Properties of Polymers*, 3rd ed., Wiley, 1980, ch. 3.
    """
    w = np.asarray(omega, dtype=float)
    Ek = np.asarray(moduli, dtype=float).ravel()
    tk = np.asarray(times, dtype=float).ravel()
    wt = w[..., None] * tk
    d = 1.0 + wt * wt
    e1 = long_term_modulus + np.sum(Ek * wt * wt / d, axis=-1)
    e2 = np.sum(Ek * wt / d, axis=-1)
    return e1, e2


def prony_relaxation_modulus(time, *, long_term_modulus, moduli, times):
    """Relaxation modulus of a Prony series.

    Parameters
    ----------
    time : float or array_like
        Time since the step strain, >= 0 [s].
    long_term_modulus : float
        :math:`E_\\infty` [Pa].
    moduli : array_like
        :math:`E_k` [Pa].
    times : array_like
        :math:`\\tau_k` [s].

    Returns
    -------
    numpy.ndarray
        E(t) [Pa].

    Notes
    -----
    .. math::

        E(t) = E_\\infty + \\sum_k E_k e^{-t/\\tau_k}

    References
    ----------
    .. [1] J. D. Ferry, *Viscoelastic Properties of Polymers*, 3rd ed., Wiley, 1980, ch. 3.
    """
    t = np.asarray(time, dtype=float)
    Ek = np.asarray(moduli, dtype=float).ravel()
    tk = np.asarray(times, dtype=float).ravel()
    return long_term_modulus + np.sum(Ek * np.exp(-t[..., None] / tk), axis=-1)


# ----------------------------------------------------------------------------------------------
# step 4: Prony series by NNLS
# ----------------------------------------------------------------------------------------------

@dataclass
class PronyFit:
    """Prony series with non-negative terms fitted to a master curve.

    Attributes
    ----------
    long_term_modulus : float
        :math:`E_\\infty` [Pa].
    moduli : numpy.ndarray
        :math:`E_k` >= 0 [Pa].
    times : numpy.ndarray
        :math:`\\tau_k` [s] at the reference temperature.
    stats : FitResult or None
        Intervals of the active (positive) parameters, named ``long_term_modulus`` and ``E_k``
        (k counted from 1 over all terms) [Pa]; None if no term is active.
    relative_rms : float
        Root-mean-square relative residual over E' and E'' [1].
    """

    long_term_modulus: float
    moduli: np.ndarray
    times: np.ndarray
    stats: FitResult | None
    relative_rms: float

    def storage_loss(self, omega):
        """E', E'' of the series at reduced angular frequency ``omega`` [rad/s] -> [Pa]."""
        return prony_storage_loss(omega, long_term_modulus=self.long_term_modulus, moduli=self.moduli,
                                  times=self.times)

    def ci(self, k):
        """Confidence interval of term ``k`` (0-based; -1 for E_inf) [Pa]; (0, 0) style None for a zero term."""
        name = "long_term_modulus" if k < 0 else f"E_{k + 1}"
        if self.stats is None or name not in self.stats.names:
            return None
        lo, hi = self.stats.ci(name)
        return max(lo, 0.0), hi


def fit_prony(omega, storage, loss, *, terms_per_decade=1, confidence=0.95, times=None) -> PronyFit:
    """Prony series with non-negative terms fitted to E'(omega), E''(omega) by NNLS.

    Parameters
    ----------
    omega : array_like
        (Reduced) angular frequency [rad/s].
    storage, loss : array_like
        E' and E'' [Pa], positive.
    terms_per_decade : int
        Relaxation times per decade of frequency: 1 or 2.
    confidence : float
        Confidence level of the intervals [1].
    times : array_like, optional
        Relaxation times [s]; default log-spaced from :math:`1/\\omega_{max}` to
        :math:`1/\\omega_{min}`, ``terms_per_decade`` per decade.

    Returns
    -------
    PronyFit

    Notes
    -----
    Rows of the weighted design matrix (each residual relative to its datum):

    .. math::

        \\frac{1}{E'_i}\\left[1,\\; \\frac{\\omega_i^2\\tau_k^2}{1+\\omega_i^2\\tau_k^2}\\right], \\qquad
        \\frac{1}{E''_i}\\left[0,\\; \\frac{\\omega_i\\tau_k}{1+\\omega_i^2\\tau_k^2}\\right],
        \\qquad \\min_{x \\ge 0} \\lVert A x - \\mathbf 1 \\rVert

    with :math:`x = (E_\\infty, E_1, \\dots)`. The intervals come from the Jacobian at the active
    set (the columns of the positive terms), see the module notes.

    References
    ----------
    .. [1] C. L. Lawson and R. J. Hanson, *Solving Least Squares Problems*, Prentice-Hall, 1974.
    .. [2] S. W. Park and R. A. Schapery, Int. J. Solids Struct. 36 (1999) 1653.
    """
    from scipy.optimize import nnls

    if terms_per_decade not in (1, 2):
        raise ActsimInputError(f"terms_per_decade: {terms_per_decade!r} is outside the allowed range (1 or 2)")
    w = np.asarray(omega, dtype=float).ravel()
    e1 = np.asarray(storage, dtype=float).ravel()
    e2 = np.asarray(loss, dtype=float).ravel()
    if times is None:
        lo, hi = -math.log10(w.max()), -math.log10(w.min())
        n = max(1, int(math.ceil((hi - lo) * terms_per_decade - 1e-9))) + 1
        times = np.logspace(lo, hi, n)
    tk = np.asarray(times, dtype=float)
    wt = w[:, None] * tk
    d = 1.0 + wt * wt
    A1 = np.column_stack([np.ones_like(w), wt * wt / d]) / e1[:, None]
    A2 = np.column_stack([np.zeros_like(w), wt / d]) / e2[:, None]
    A = np.vstack([A1, A2])
    b = np.ones(A.shape[0])
    # scale columns to unit norm for NNLS conditioning, then undo
    cs = np.sqrt(np.sum(A * A, axis=0))
    cs[cs == 0] = 1.0
    xs, _ = nnls(A / cs, b, maxiter=50 * A.shape[1])
    x = xs / cs
    r = A @ x - b
    names = ["long_term_modulus"] + [f"E_{k + 1}" for k in range(tk.size)]
    active = np.flatnonzero(x > 0)
    stats = None
    if active.size and A.shape[0] > active.size:
        stats = fit_statistics(A[:, active], r, values=x[active], names=[names[i] for i in active],
                               units=["Pa"] * active.size, confidence=confidence,
                               message="NNLS; intervals from the Jacobian at the active set", corr_warn=0.999)
    return PronyFit(long_term_modulus=float(x[0]), moduli=x[1:].copy(), times=tk, stats=stats,
                    relative_rms=float(math.sqrt(r @ r / r.size)))


# ----------------------------------------------------------------------------------------------
# the whole fit
# ----------------------------------------------------------------------------------------------

@dataclass
class MasterCurveFit:
    """Result of :func:`fit_master_curve`.

    Attributes
    ----------
    sweeps : DmaSweeps
        The data.
    reference_temperature : float
        T_r [K].
    measured_log_shift : numpy.ndarray
        log10 a_T of each temperature level from the overlap, referred to T_r by the chosen law's
        offset [1].
    pair_mismatch : numpy.ndarray
        rms log10 mismatch of each overlapped pair [1].
    wlf : FitResult or None
        ``C1`` [1], ``C2`` [K], ``offset``; None with fewer than 4 temperatures.
    arrhenius : FitResult
        ``activation_energy`` [J/mol], ``offset``.
    law : str
        "WLF" or "Arrhenius": the law used for the master curve and the scenario.
    reduced_omega : numpy.ndarray
        Every point's reduced angular frequency :math:`\\omega a_T` [rad/s].
    prony : PronyFit
        The series at T_r.
    notes : list of str
        What a user should read.
    """

    sweeps: DmaSweeps
    reference_temperature: float
    measured_log_shift: np.ndarray
    pair_mismatch: np.ndarray
    wlf: FitResult | None
    arrhenius: FitResult
    law: str
    reduced_omega: np.ndarray
    prony: PronyFit
    notes: list = field(default_factory=list)

    @property
    def shift(self) -> FitResult:
        """The chosen law's fit."""
        return self.wlf if self.law == "WLF" else self.arrhenius

    def law_log_shift(self, temperature):
        """log10 a_T of the chosen fitted law at ``temperature`` [K] -> [1]."""
        if self.law == "WLF":
            return wlf_log_shift(temperature, c1=self.wlf.value("C1"), c2=self.wlf.value("C2"),
                                 reference_temperature=self.reference_temperature)
        return arrhenius_log_shift(temperature, activation_energy=self.arrhenius.value("activation_energy"),
                                   reference_temperature=self.reference_temperature)

    def to_table(self) -> str:
        """Plain-text summary: shift factors, shift laws, Prony terms with intervals."""
        s = self.sweeps
        pct = f"{100 * self.shift.confidence:g} %"
        lines = [f"viscoelastic DMA fit of {s.source}" + (" (synthetic data)" if s.synthetic else "")
                 + f": {s.levels.size} temperatures, {s.omega.size} points, reference "
                 f"{self.reference_temperature - 273.15:.4g} degC, shift law {self.law}",
                 "shift factors (overlap of the curves; law value for comparison):",
                 "  T [degC]   log10 aT (overlap)   log10 aT (law)"]
        law = self.law_log_shift(s.levels)
        for T, m, f in zip(s.levels, self.measured_log_shift, law):
            lines.append(f"  {T - 273.15:8.4g}   {m:18.4f}   {f:14.4f}")
        if self.wlf is not None:
            lines += ["WLF:", self.wlf.to_table()]
        lines += ["Arrhenius:", self.arrhenius.to_table()]
        p = self.prony
        lines.append(f"Prony series at {self.reference_temperature - 273.15:.4g} degC ({p.times.size} terms, "
                     f"NNLS on E' and E'' relative; rms relative residual {p.relative_rms:.3g}; {pct} CI from the "
                     "Jacobian at the active set):")
        lines.append("  term   tau [s]       E [MPa]      CI [MPa]")

        def row(lab, tau, E, ci):
            cis = "at bound 0" if ci is None and E == 0 else ("n/a" if ci is None else f"{ci[0] / 1e6:.4g}..{ci[1] / 1e6:.4g}")
            return f"  {lab:5s}  {tau:11s}  {E / 1e6:11.5g}  {cis}"

        lines.append(row("inf", "-", p.long_term_modulus, p.ci(-1)))
        for k, (tau, E) in enumerate(zip(p.times, p.moduli)):
            lines.append(row(str(k + 1), f"{tau:.4g}", E, p.ci(k)))
        if p.stats is not None:
            lines += [f"warning (Prony): {w}" for w in p.stats.warnings if "strongly correlated" not in w]
            nc = sum("strongly correlated" in w for w in p.stats.warnings)
            if nc:
                lines.append(f"note: {nc} pairs of Prony terms are strongly correlated (neighbouring times trade "
                             "modulus); the sum over neighbours is better determined than each term")
        lines += [f"note: {n}" for n in self.notes]
        return "\n".join(lines)

    def to_dict(self) -> dict:
        """Plain Python types (SI) for fit.json."""
        p = self.prony
        return {
            "source": self.sweeps.source, "synthetic": self.sweeps.synthetic,
            "reference_temperature_K": self.reference_temperature, "law": self.law,
            "temperatures_K": self.sweeps.levels.tolist(),
            "log10_shift_factors": self.measured_log_shift.tolist(),
            "pair_mismatch_log10": self.pair_mismatch.tolist(),
            "wlf": None if self.wlf is None else self.wlf.to_dict(),
            "arrhenius": self.arrhenius.to_dict(),
            "prony": {"long_term_modulus_Pa": p.long_term_modulus, "moduli_Pa": p.moduli.tolist(),
                      "times_s": p.times.tolist(), "relative_rms": p.relative_rms,
                      "ci_Pa": [p.ci(k) for k in range(-1, p.times.size)],
                      "stats": None if p.stats is None else p.stats.to_dict()},
            "notes": list(self.notes),
        }


def fit_master_curve(data, *, reference_temperature=None, law="WLF", terms_per_decade=1,
                     confidence=0.95) -> MasterCurveFit:
    """Shift factors, shift law, master curve and Prony series from DMA frequency sweeps.

    Parameters
    ----------
    data : str, os.PathLike or DmaSweeps
        A CSV file (:func:`read_dma_sweeps`) or sweeps already read.
    reference_temperature : float, optional
        T_r [K]; default the measured temperature nearest the middle of the range.
    law : {"WLF", "Arrhenius"}
        Shift law used for the master curve and the scenario (both are fitted and reported).
    terms_per_decade : int
        Prony relaxation times per decade: 1 or 2.
    confidence : float
        Confidence level [1].

    Returns
    -------
    MasterCurveFit

    Notes
    -----
    The measured shifts are referred to T_r through the chosen law's fitted offset
    :math:`y_0`: :math:`\\log_{10} a_T = y_i - y_0`; reduced frequency :math:`\\omega a_T`.

    .. math::

        E'(\\omega, T) = E'_{T_r}(\\omega a_T), \\qquad E''(\\omega, T) = E''_{T_r}(\\omega a_T)

    References
    ----------
    .. [1] J. D. Ferry, *Viscoelastic Properties of Polymers*, 3rd ed., Wiley, 1980, ch. 11.
    """
    law_key = str(law).strip().lower()
    if law_key not in ("wlf", "arrhenius"):
        raise ActsimInputError(f"law: {law!r} is not one of 'WLF', 'Arrhenius'")
    law = "WLF" if law_key == "wlf" else "Arrhenius"
    sw = data if isinstance(data, DmaSweeps) else read_dma_sweeps(data)
    if law == "WLF" and sw.levels.size < 4:
        raise ActsimInputError(f"{sw.source}: {sw.levels.size} temperatures; a WLF shift needs 4 or more "
                               "(use --shift-law Arrhenius)")
    if reference_temperature is None:
        mid = 0.5 * (sw.levels[0] + sw.levels[-1])
        reference_temperature = float(sw.levels[np.argmin(np.abs(sw.levels - mid))])
    Tr = float(reference_temperature)
    if not (sw.levels[0] - 50.0 <= Tr <= sw.levels[-1] + 50.0):
        raise ActsimInputError(f"reference_temperature: {Tr - 273.15:.4g} degC is outside the allowed range "
                               f"({sw.levels[0] - 323.15:.4g} to {sw.levels[-1] - 223.15:.4g} degC: the measured "
                               "range +- 50 K)")
    rel, mism = pairwise_log_shifts(sw)
    wlf = fit_wlf(sw.levels, rel, reference_temperature=Tr, confidence=confidence) if sw.levels.size >= 4 else None
    arr = fit_arrhenius(sw.levels, rel, reference_temperature=Tr, confidence=confidence)
    chosen = wlf if law == "WLF" else arr
    logs = rel - chosen.value("offset")
    red = sw.omega * 10.0 ** logs[sw.group]
    prony = fit_prony(red, sw.storage, sw.loss, terms_per_decade=terms_per_decade, confidence=confidence)
    notes = []
    if law == "WLF" and sw.levels[0] < Tr - wlf.value("C2") + 1.0:
        notes.append("the WLF pole T_r - C2 lies within 1 K of the coldest temperature")
    worst = int(np.argmax(mism)) if mism.size else 0
    if mism.size and mism[worst] > 0.05:
        notes.append(f"the curves at {sw.levels[worst] - 273.15:.4g} and {sw.levels[worst + 1] - 273.15:.4g} degC "
                     f"overlap with an rms mismatch of {mism[worst]:.3g} in log10 E (> 0.05): superposition may "
                     "not hold there (thermorheological complexity, or a vertical shift is needed)")
    notes.append("no vertical shift applied; the Prony intervals do not include the shift-factor uncertainty")
    return MasterCurveFit(sweeps=sw, reference_temperature=Tr, measured_log_shift=logs, pair_mismatch=mism,
                          wlf=wlf, arrhenius=arr, law=law, reduced_omega=red, prony=prony, notes=notes)


# ----------------------------------------------------------------------------------------------
# the scenario snippet (the one place the scenario names live)
# ----------------------------------------------------------------------------------------------

def _q(value, unit, digits=6):
    return f"{value:.{digits}g} {unit}"


def relaxation_table(fit: MasterCurveFit) -> dict:
    """The fitted material's fields as plain TOML values: its ``modulus`` and its ``relaxation`` table.

    Parameters
    ----------
    fit : MasterCurveFit
        The fit.

    Returns
    -------
    dict
        ``modulus`` (the long-term modulus E_inf, which is what a relaxing material's ``modulus`` means) and
        ``relaxation``: ``terms`` (a list of ``{modulus, time}``, zero terms left out), ``shift`` ("wlf" or
        "arrhenius"), ``reference_temperature`` and ``wlf_c1``, ``wlf_c2`` or ``activation_energy``; strings
        with units, as the scenario reads them (docs/scenario.md, "Viscoelastic material").

    Notes
    -----
    This is the only function that knows the scenario's field names.
    """
    p = fit.prony
    terms = [{"modulus": _q(E / 1e6, "MPa"), "time": _q(t, "s")} for E, t in zip(p.moduli, p.times) if E > 0]
    relaxation = {"terms": terms, "reference_temperature": _q(fit.reference_temperature - 273.15, "degC")}
    if fit.law == "WLF":
        relaxation.update(shift="wlf", wlf_c1=float(f"{fit.wlf.value('C1'):.6g}"), wlf_c2=_q(fit.wlf.value("C2"), "K"))
    else:
        relaxation.update(shift="arrhenius",
                          activation_energy=_q(fit.arrhenius.value("activation_energy") / 1e3, "kJ/mol"))
    return {"modulus": _q(p.long_term_modulus / 1e6, "MPa"), "relaxation": relaxation}


def relaxation_toml(fit: MasterCurveFit, *, material="fitted") -> str:
    """TOML text of the fitted material's relaxation table, ready to paste into a scenario.

    Parameters
    ----------
    fit : MasterCurveFit
        The fit.
    material : str
        Material name in ``[materials.NAME.relaxation]``.

    Returns
    -------
    str
        A commented ``[materials.NAME.relaxation]`` table (one term per line).
    """
    t = relaxation_table(fit)
    r = t["relaxation"]

    def value(v):
        return f"{v}" if isinstance(v, (int, float)) else f'"{v}"'

    def inline(d):
        return "{ " + ", ".join(f"{k} = {value(v)}" for k, v in d.items()) + " }"

    key = material if material.replace("_", "").replace("-", "").isalnum() else f'"{material}"'
    lines = [f"# Prony series and {fit.law} shift fitted by 'actsim fit dma --viscoelastic' to {fit.sweeps.source}"
             + (" (SYNTHETIC data)" if fit.sweeps.synthetic else ""),
             f"# in [materials.{key}] set: modulus = {value(t['modulus'])}   (the long-term modulus E_inf)",
             f"[materials.{key}.relaxation]",
             "terms = ["]
    lines += [f"    {inline(term)}," for term in r["terms"]]
    lines += ["]"] + [f"{k} = {value(v)}" for k, v in r.items() if k != "terms"] + [""]
    return "\n".join(lines)


# ----------------------------------------------------------------------------------------------
# the figure
# ----------------------------------------------------------------------------------------------

def plot_master_curve(fit: MasterCurveFit, path):
    """Figure: data per temperature, shifted master curve with the Prony fit, and the shift factors.

    Parameters
    ----------
    fit : MasterCurveFit
        The fit.
    path : str or os.PathLike
        PNG file (written atomically).

    Returns
    -------
    pathlib.Path
    """
    from pathlib import Path

    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    from ..io import save_figure

    s = fit.sweeps
    fig = Figure(figsize=(12.0, 4.4))
    FigureCanvasAgg(fig)
    a1, a2, a3 = fig.subplots(1, 3)
    cmap = __import__("matplotlib").colormaps["coolwarm"]
    nlev = s.levels.size
    for g, T in enumerate(s.levels):
        m = s.group == g
        c = cmap(g / max(nlev - 1, 1))
        lab = f"{T - 273.15:.4g} degC" if nlev <= 8 or g in (0, nlev - 1) else None
        a1.loglog(s.omega[m] / (2 * np.pi), s.storage[m] / 1e6, "o-", ms=3, lw=0.8, color=c, label=lab)
        a1.loglog(s.omega[m] / (2 * np.pi), s.loss[m] / 1e6, "s--", ms=2.5, lw=0.6, color=c)
        a2.loglog(fit.reduced_omega[m] / (2 * np.pi), s.storage[m] / 1e6, "o", ms=3, color=c)
        a2.loglog(fit.reduced_omega[m] / (2 * np.pi), s.loss[m] / 1e6, "s", ms=2.5, color=c, mfc="none")
    wr = np.geomspace(fit.reduced_omega.min() / 3, fit.reduced_omega.max() * 3, 400)
    e1, e2 = fit.prony.storage_loss(wr)
    a2.loglog(wr / (2 * np.pi), e1 / 1e6, "k-", lw=1.4, label=f"Prony E' ({fit.prony.times.size} terms)")
    a2.loglog(wr / (2 * np.pi), e2 / 1e6, "k--", lw=1.2, label="Prony E''")
    a1.set_xlabel("frequency [Hz]")
    a1.set_ylabel("E' (o), E'' (s) [MPa]")
    a1.set_title("data", fontsize=10)
    a1.legend(fontsize=7)
    a2.set_xlabel(f"reduced frequency f a_T [Hz] at {fit.reference_temperature - 273.15:.4g} degC")
    a2.set_ylabel("E', E'' [MPa]")
    a2.set_title("master curve and Prony fit", fontsize=10)
    a2.legend(fontsize=7)
    Tf = np.linspace(s.levels[0], s.levels[-1], 200)
    a3.plot(s.levels - 273.15, fit.measured_log_shift, "o", color="0.2", label="overlap")
    a3.plot(Tf - 273.15, fit.law_log_shift(Tf), "-", color="C0", label=f"{fit.law} fit")
    a3.set_xlabel("temperature [degC]")
    a3.set_ylabel("log10 a_T [1]")
    a3.set_title("shift factors", fontsize=10)
    a3.legend(fontsize=7)
    for a in (a1, a2, a3):
        a.grid(True, which="both", alpha=0.3)
    fig.suptitle(f"viscoelastic DMA fit: {s.source}" + (" (synthetic data)" if s.synthetic else ""), fontsize=10)
    fig.tight_layout()
    save_figure(fig, path)
    return Path(path)
