"""Decadic molar absorptivities of reactant and product from UV-Vis spectra (Beer–Lambert).

For a film of thickness :math:`d` holding a chromophore at total concentration :math:`c_0`
that converts A -> B (conversion :math:`x`, so :math:`c_A = (1-x)c_0`, :math:`c_B = x c_0`),

.. math::

    A(\\lambda) = d\\,\\big(\\varepsilon_{10,A}(\\lambda)\\,c_A + \\varepsilon_{10,B}(\\lambda)\\,c_B\\big)
                 + A_\\text{matrix}(\\lambda).

Units inside: wavelength [m], absorbance [1] (decadic), ``epsilon10`` [m^2/mol],
concentration [mol/m^3], thickness [m]. (1 L mol^-1 cm^-1 = 0.1 m^2/mol.)

Absorbance as measured includes reflection and scattering losses; subtract a blank or give
``absorbance_matrix``. Spectrometers are unreliable above an absorbance of roughly 2 to 3
(common practice, no source); such points should be left out before calling these functions.

References
----------
.. [1] IUPAC, *Compendium of Chemical Terminology* (the "Gold Book"), entries "absorbance",
   "molar (decadic) absorption coefficient", "isosbestic point".
.. [2] H. Mauser and G. Gauglitz, *Photokinetics: Theoretical Fundamentals and Applications*,
   Comprehensive Chemical Kinetics vol. 36, Elsevier, 1998.
.. [3] E. Fischer, "The calculation of photostationary states in systems A <-> B when only A
   is known", J. Phys. Chem. 71 (1967) 3704-3706.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import ActsimInputError
from ..units import check_range
from .readers import XYData, as_xy

__all__ = [
    "read_spectrum",
    "common_grid",
    "absorptivity_reactant",
    "absorptivity_product",
    "conversion_lower_bound",
    "relative_conversion",
    "fischer_conversions",
    "isosbestic_points",
    "isosbestic_consistency",
    "fit_spectra",
    "SpectraResult",
    "ConversionEstimate",
]


def read_spectrum(data, *, wavelength_unit=None, min_points=3) -> XYData:
    """Read a spectrum (wavelength column, decadic absorbance column).

    Parameters
    ----------
    data : str, os.PathLike, XYData or (array_like, array_like)
        CSV such as ``wavelength [nm], absorbance [1]`` or arrays (wavelength [m] unless
        ``wavelength_unit`` is given, absorbance [1]).
    wavelength_unit : str, optional
        Unit of the wavelength if the header has none.
    min_points : int
        Fewest points accepted.

    Returns
    -------
    XYData
        Wavelength [m] (sorted increasing, distinct) and absorbance [1].

    Notes
    -----
    The absorbance column must be decadic absorbance, not transmittance:

    .. math::

        A = -\\log_{10}(I / I_0)

    References
    ----------
    .. [1] IUPAC, *Compendium of Chemical Terminology* (Gold Book), entry "absorbance".
    """
    xy = as_xy(data, x_kind="wavelength", y_kind="absorbance", x_unit=wavelength_unit, min_points=min_points,
               x_name="wavelength", y_name="absorbance")
    order = np.argsort(xy.x, kind="stable")
    wl, A = xy.x[order], xy.y[order]
    if np.any(np.diff(wl) <= 0):
        i = int(np.flatnonzero(np.diff(wl) <= 0)[0])
        raise ActsimInputError(f"{xy.source} wavelength: {wl[i] * 1e9:g} nm appears twice; each wavelength once")
    if np.any(wl <= 0):
        raise ActsimInputError(f"{xy.source} wavelength: {wl[0]:g} m is not positive")
    return XYData(x=wl, y=A, x_name=xy.x_name, y_name=xy.y_name, x_unit=xy.x_unit, y_unit=xy.y_unit,
                  source=xy.source, comments=xy.comments, synthetic=xy.synthetic)


def common_grid(*spectra):
    """Bring spectra onto one wavelength grid over their common overlap.

    The grid is the first spectrum's wavelengths inside the overlap
    :math:`[\\max_k \\lambda_{\\min,k},\\ \\min_k \\lambda_{\\max,k}]`; the other spectra are
    interpolated linearly onto it. Nothing is extrapolated.

    Parameters
    ----------
    *spectra : XYData or (array_like, array_like)
        Wavelength [m] and absorbance [1] of each spectrum.

    Returns
    -------
    wavelength : numpy.ndarray
        Common grid [m].
    absorbances : list of numpy.ndarray
        Each spectrum on the grid [1].
    note : str
        "" if all grids were already the same, else a sentence saying what was interpolated.

    Notes
    -----
    Linear interpolation between neighbouring points :math:`\\lambda_j \\le \\lambda \\le \\lambda_{j+1}`:

    .. math::

        A(\\lambda) = A_j + \\frac{\\lambda - \\lambda_j}{\\lambda_{j+1} - \\lambda_j}(A_{j+1} - A_j)

    Its error is at most :math:`h^2 \\max|A''|/8` for grid spacing :math:`h`.

    References
    ----------
    .. [1] G. Dahlquist and A. Björck, *Numerical Methods*, Prentice-Hall, 1974 (linear
       interpolation error bound).
    """
    data = [read_spectrum(s) for s in spectra]
    lo = max(float(d.x[0]) for d in data)
    hi = min(float(d.x[-1]) for d in data)
    if not hi > lo:
        raise ActsimInputError(f"wavelength: the spectra do not overlap (common range {lo * 1e9:g} to {hi * 1e9:g} nm)")
    ref = data[0].x
    grid = ref[(ref >= lo) & (ref <= hi)]
    if grid.size < 3:
        raise ActsimInputError(f"wavelength: only {grid.size} points of the first spectrum lie in the overlap "
                               f"{lo * 1e9:g} to {hi * 1e9:g} nm")
    same = all(d.x.size == ref.size and np.allclose(d.x, ref, rtol=0, atol=1e-15) for d in data)
    out = [np.interp(grid, d.x, d.y) for d in data]
    note = "" if same else (
        f"spectra on different wavelength grids: interpolated linearly onto the first spectrum's grid over the "
        f"common overlap {lo * 1e9:.6g} to {hi * 1e9:.6g} nm ({grid.size} points)"
    )
    return grid, out, note


def _check_c_d(concentration, thickness):
    check_range(concentration, field="concentration", unit="mol/m^3", lo=0.0, lo_open=True)
    check_range(thickness, field="thickness", unit="m", lo=0.0, lo_open=True)


def absorptivity_reactant(*, absorbance_before, concentration, thickness, absorbance_matrix=0.0):
    """Decadic molar absorptivity of the reactant from the spectrum before irradiation.

    Parameters
    ----------
    absorbance_before : array_like
        Absorbance before irradiation, all chromophore as A [1].
    concentration : float
        Total chromophore concentration :math:`c_0` [mol/m^3].
    thickness : float
        Optical path (film thickness) [m].
    absorbance_matrix : float or array_like
        Absorbance of everything else (matrix, substrate, reflection) [1].

    Returns
    -------
    numpy.ndarray
        :math:`\\varepsilon_{10,A}` [m^2/mol].

    Notes
    -----
    .. math::

        \\varepsilon_{10,A} = \\frac{A_\\text{before} - A_\\text{matrix}}{c_0\\,d}

    References
    ----------
    .. [1] IUPAC Gold Book, "Beer–Lambert law", "molar (decadic) absorption coefficient".
    """
    _check_c_d(concentration, thickness)
    return (np.asarray(absorbance_before, dtype=float) - absorbance_matrix) / (concentration * thickness)


def absorptivity_product(*, absorbance_before, absorbance_after, conversion, concentration, thickness,
                         absorbance_matrix=0.0):
    """Decadic molar absorptivity of the product from spectra before and after, at known conversion.

    Parameters
    ----------
    absorbance_before : array_like
        Absorbance before irradiation [1].
    absorbance_after : array_like
        Absorbance after irradiation (same grid) [1].
    conversion : float
        Fraction :math:`x` of A converted to B in the "after" state, 0 < x <= 1 [1].
    concentration : float
        :math:`c_0` [mol/m^3].
    thickness : float
        Optical path [m].
    absorbance_matrix : float or array_like
        Absorbance of everything else [1].

    Returns
    -------
    numpy.ndarray
        :math:`\\varepsilon_{10,B}` [m^2/mol].

    Notes
    -----
    With :math:`A' = A - A_\\text{matrix}`:

    .. math::

        \\varepsilon_{10,B} = \\frac{A'_\\text{after} - (1 - x)\\,A'_\\text{before}}{x\\,c_0\\,d}

    (for :math:`A_\\text{matrix} = 0` this is
    :math:`(A_\\text{after} - (1-x)A_\\text{before})/(x c_0 d)`).

    References
    ----------
    .. [1] H. Mauser and G. Gauglitz, *Photokinetics: Theoretical Fundamentals and Applications*,
       Elsevier, 1998.
    """
    _check_c_d(concentration, thickness)
    check_range(conversion, field="conversion", unit="1", lo=0.0, hi=1.0, lo_open=True)
    Ab = np.asarray(absorbance_before, dtype=float) - absorbance_matrix
    Aa = np.asarray(absorbance_after, dtype=float) - absorbance_matrix
    if Ab.shape != Aa.shape:
        raise ActsimInputError(f"absorbance_after: shape {Aa.shape} differs from absorbance_before {Ab.shape}; "
                               "put them on one grid (common_grid)")
    return (Aa - (1.0 - conversion) * Ab) / (conversion * concentration * thickness)


@dataclass
class ConversionEstimate:
    """Conversion estimated from spectra without knowing it.

    Attributes
    ----------
    conversion : float
        Estimated conversion of the final (photostationary) state [1].
    is_lower_bound : bool
        True when the estimate is only the smallest conversion compatible with a non-negative
        product spectrum (see :func:`conversion_lower_bound`).
    at_wavelength : float or None
        Wavelength that set the bound [m].
    partial_conversion : float or None
        Conversion of the partial spectrum, if one was given [1].
    method : str
        What was done, in one sentence.
    """

    conversion: float
    is_lower_bound: bool
    at_wavelength: float | None
    partial_conversion: float | None
    method: str


def conversion_lower_bound(wavelength, *, absorbance_before, absorbance_after, absorbance_matrix=0.0,
                           min_relative_absorbance=0.1):
    """Smallest conversion for which the implied product spectrum is nowhere negative.

    Parameters
    ----------
    wavelength : array_like
        Common grid [m].
    absorbance_before, absorbance_after : array_like
        Spectra before irradiation and at the final state [1].
    absorbance_matrix : float or array_like
        Absorbance of everything else [1].
    min_relative_absorbance : float
        Only wavelengths where the reactant absorbs at least this fraction of its maximum enter
        (elsewhere the ratio is mostly noise) [1]. Common practice, no source.

    Returns
    -------
    (float, float)
        Lower bound of the conversion [1] and the wavelength that sets it [m].

    Notes
    -----
    From :math:`\\varepsilon_{10,B} = \\varepsilon_{10,A} + (A'_\\text{after} - A'_\\text{before})/(x c_0 d) \\ge 0`
    at every wavelength:

    .. math::

        x \\ge x_\\text{min} = \\max_\\lambda \\left(1 - \\frac{A'_\\text{after}(\\lambda)}{A'_\\text{before}(\\lambda)}\\right)

    This is only a bound: any larger x also gives a non-negative product spectrum. It equals the
    true conversion exactly when the product does not absorb at some wavelength where the reactant
    does (a product band-gap inside the reactant band); otherwise the true conversion is larger.
    Noise in :math:`A'_\\text{after}` near zero biases the bound upward slightly.

    References
    ----------
    .. [1] H. Mauser and G. Gauglitz, *Photokinetics: Theoretical Fundamentals and Applications*,
       Elsevier, 1998 (non-negativity of absorption spectra as a constraint).
    """
    wl = np.asarray(wavelength, dtype=float)
    Ab = np.asarray(absorbance_before, dtype=float) - absorbance_matrix
    Aa = np.asarray(absorbance_after, dtype=float) - absorbance_matrix
    check_range(min_relative_absorbance, field="min_relative_absorbance", unit="1", lo=0.0, hi=1.0, lo_open=True)
    amax = float(np.max(Ab))
    if amax <= 0:
        raise ActsimInputError("absorbance_before: no positive absorbance above the matrix; cannot estimate conversion")
    sel = Ab >= min_relative_absorbance * amax
    ratio = 1.0 - Aa[sel] / Ab[sel]
    i = int(np.argmax(ratio))
    xmin = float(ratio[i])
    if xmin <= 0:
        raise ActsimInputError("absorbance_after: nowhere below the 'before' spectrum where the reactant absorbs; "
                               "the spectra show no conversion of A")
    return min(xmin, 1.0), float(wl[sel][i])


def relative_conversion(*, absorbance_before, absorbance_partial, absorbance_after):
    """Conversion of a partial spectrum relative to the final one, from difference spectra.

    Parameters
    ----------
    absorbance_before, absorbance_partial, absorbance_after : array_like
        Spectra on one grid [1].

    Returns
    -------
    (float, float)
        Ratio :math:`\\rho = x_\\text{partial}/x_\\text{after}` [1] and the relative rms misfit of
        :math:`\\Delta A_\\text{partial} = \\rho\\,\\Delta A_\\text{after}` [1] (near 0 for a clean
        A -> B reaction; large values mean a third species or a changing baseline).

    Notes
    -----
    For A -> B every difference spectrum is a multiple of :math:`\\varepsilon_{10,B} - \\varepsilon_{10,A}`:
    :math:`\\Delta A_k = x_k c_0 d (\\varepsilon_{10,B} - \\varepsilon_{10,A})`. Least squares:

    .. math::

        \\rho = \\frac{\\sum \\Delta A_\\text{partial} \\Delta A_\\text{after}}{\\sum \\Delta A_\\text{after}^2}

    References
    ----------
    .. [1] H. Mauser and G. Gauglitz, *Photokinetics: Theoretical Fundamentals and Applications*,
       Elsevier, 1998 (difference spectra, linear dependence for a single reaction).
    """
    Ab = np.asarray(absorbance_before, dtype=float)
    dP = np.asarray(absorbance_partial, dtype=float) - Ab
    dS = np.asarray(absorbance_after, dtype=float) - Ab
    den = float(dS @ dS)
    if den == 0:
        raise ActsimInputError("absorbance_after: identical to the 'before' spectrum; no conversion to compare with")
    rho = float(dP @ dS) / den
    res = dP - rho * dS
    misfit = float(np.sqrt(np.mean(res ** 2)) / np.sqrt(np.mean(dP ** 2))) if np.any(dP) else 0.0
    return rho, misfit


def fischer_conversions(wavelength, *, absorbance_reactant, absorbance_pss1, absorbance_pss2,
                        irradiation_wavelength1, irradiation_wavelength2, absorbance_matrix=0.0):
    """Photostationary conversions from two PSS at two irradiation wavelengths (Fischer's assumption).

    Parameters
    ----------
    wavelength : array_like
        Common grid [m].
    absorbance_reactant : array_like
        Spectrum of pure A [1].
    absorbance_pss1, absorbance_pss2 : array_like
        Photostationary spectra reached under irradiation at ``irradiation_wavelength1`` and
        ``irradiation_wavelength2`` [1].
    irradiation_wavelength1, irradiation_wavelength2 : float
        Irradiation wavelengths, inside the grid [m].
    absorbance_matrix : float or array_like
        Absorbance of everything else [1].

    Returns
    -------
    (float, float, float)
        Conversions :math:`x_1, x_2` [1] and the quantum-yield ratio
        :math:`\\Phi = \\phi_{A\\to B}/\\phi_{B\\to A}` [1].

    Notes
    -----
    Fischer's assumption: :math:`\\Phi` does not depend on the irradiation wavelength. With no
    thermal back reaction the photostationary state under light at :math:`\\lambda_i` obeys
    :math:`x_i/(1-x_i) = \\Phi\\,\\varepsilon_{10,A}(\\lambda_i)/\\varepsilon_{10,B}(\\lambda_i)`.
    With :math:`\\delta_i = \\Delta A_i(\\lambda_i)/A'_A(\\lambda_i)` (relative change at the own
    irradiation wavelength) and :math:`\\rho = x_1/x_2` from the proportional difference spectra
    (:func:`relative_conversion`), this gives in closed form

    .. math::

        \\Phi = \\frac{\\delta_1 - \\rho\\,\\delta_2}{1 - \\rho}, \\qquad
        x_i = \\frac{\\Phi - \\delta_i}{1 + \\Phi}.

    The derivation is written here from the stated assumptions (following the idea of
    Fischer 1967, from memory, not checked line by line against the paper). It needs two clearly
    different photostationary states (:math:`\\rho` away from 1) and fails, with an error, when
    the results leave 0 < x <= 1.

    References
    ----------
    .. [1] E. Fischer, "The calculation of photostationary states in systems A <-> B when only A
       is known", J. Phys. Chem. 71 (1967) 3704-3706.
    """
    wl = np.asarray(wavelength, dtype=float)
    AA = np.asarray(absorbance_reactant, dtype=float) - absorbance_matrix
    A1 = np.asarray(absorbance_pss1, dtype=float) - absorbance_matrix
    A2 = np.asarray(absorbance_pss2, dtype=float) - absorbance_matrix
    for lam, nm in ((irradiation_wavelength1, "irradiation_wavelength1"), (irradiation_wavelength2,
                                                                            "irradiation_wavelength2")):
        check_range(lam, field=nm, unit="m", lo=float(wl[0]), hi=float(wl[-1]))
    rho, misfit = relative_conversion(absorbance_before=AA, absorbance_partial=A1, absorbance_after=A2)
    if abs(1.0 - rho) < 1e-3:
        raise ActsimInputError("absorbance_pss1/pss2: the two photostationary states are the same "
                               f"(x1/x2 = {rho:.4f}); Fischer's method needs two different ones")
    deltas = []
    for lam, Ai in ((irradiation_wavelength1, A1), (irradiation_wavelength2, A2)):
        a_ref = float(np.interp(lam, wl, AA))
        if a_ref <= 0:
            raise ActsimInputError(f"absorbance_reactant: zero at the irradiation wavelength {lam * 1e9:g} nm")
        deltas.append((float(np.interp(lam, wl, Ai)) - a_ref) / a_ref)
    d1, d2 = deltas
    phi = (d1 - rho * d2) / (1.0 - rho)
    x1, x2 = (phi - d1) / (1.0 + phi), (phi - d2) / (1.0 + phi)
    for x, nm in ((x1, "x1"), (x2, "x2")):
        if not (0.0 < x <= 1.0 + 1e-9):
            raise ActsimInputError(f"fischer {nm}: {x:.4g} is outside the allowed range (> 0 and <= 1); "
                                   "the assumption of a wavelength-independent quantum-yield ratio does not fit")
    return float(x1), float(x2), float(phi)


def _noise_std(y):
    """Noise standard deviation of a sampled curve from its point-to-point differences [unit of y].

    The DER_SNR estimator: the median of :math:`|2y_i - y_{i-2} - y_{i+2}|` scaled to a standard
    deviation. A straight line contributes nothing; curvature of the signal makes it an
    overestimate, so it errs towards the safe side for a threshold. Fewer than five points: 0.

    .. math::

        \\hat\\sigma = \\frac{1.482602}{\\sqrt{6}}\\,\\operatorname{median}_i\\,|2y_i - y_{i-2} - y_{i+2}|

    References
    ----------
    .. [1] F. Stoehr et al., "DER_SNR: a simple and general spectroscopic signal-to-noise
       measurement algorithm", ASP Conference Series 394 (2008) 505 (from memory).
    """
    y = np.asarray(y, dtype=float)
    if y.size < 5:
        return 0.0
    return float(1.482602 / np.sqrt(6.0) * np.median(np.abs(2.0 * y[2:-2] - y[:-4] - y[4:])))


def isosbestic_points(wavelength, absorbance_1, absorbance_2, *, absorbance_matrix=0.0,
                      min_relative_absorbance=0.02, noise=None, significance=3.0):
    """Wavelengths where two spectra cross, with crossings made by noise left out.

    Parameters
    ----------
    wavelength : array_like
        Common grid, increasing [m].
    absorbance_1, absorbance_2 : array_like
        Two spectra on the grid [1].
    absorbance_matrix : float or array_like
        Absorbance of everything but the chromophore (film matrix, substrate, reflection) [1];
        subtracted before the thresholds are applied, so that a flat baseline where the
        chromophore does not absorb does not count as absorbance.
    min_relative_absorbance : float
        Crossings where the chromophore absorbance (absorbance minus matrix) is below this
        fraction of its peak over both spectra are dropped [1]. Common practice, no source.
    noise : float, optional
        Standard deviation of the absorbance noise [1]; default: estimated from each spectrum's
        point-to-point differences (DER_SNR, see Notes), the larger of the two.
    significance : float
        Multiple of the noise that counts as a real difference [1]. Default 3 (common practice,
        no source).

    Returns
    -------
    numpy.ndarray
        Crossing wavelengths [m], increasing.

    Notes
    -----
    With :math:`A'_k = A_k - A_\\text{matrix}` and :math:`D = A'_2 - A'_1`, a crossing is a change
    of sign of :math:`D` between two points where :math:`|D|` exceeds ``significance`` times its
    noise (hysteresis: wiggles of a noisy :math:`D` about zero count once, or not at all when
    :math:`D` never leaves the noise band). Its wavelength is the root of the least-squares
    line through :math:`D` from the last significant point before to the first after; when these
    are neighbours this is plain linear interpolation,

    .. math::

        \\lambda^* = \\lambda_i + \\frac{D_i}{D_i - D_{i+1}}(\\lambda_{i+1} - \\lambda_i).

    A crossing is kept when the chromophore absorbance there is at least the floor
    :math:`\\max(f\\,\\max A',\\; s\\,\\sigma)` (``f = min_relative_absorbance``,
    ``s = significance``, :math:`\\sigma` the absorbance noise): where both spectra are at the
    matrix baseline they cross at random.

    References
    ----------
    .. [1] IUPAC Gold Book, "isosbestic point".
    .. [2] F. Stoehr et al., "DER_SNR: a simple and general spectroscopic signal-to-noise
       measurement algorithm", ASP Conference Series 394 (2008) 505 (noise estimate; from memory).
    """
    wl = np.asarray(wavelength, dtype=float)
    A1 = np.asarray(absorbance_1, dtype=float)
    A2 = np.asarray(absorbance_2, dtype=float)
    if not (wl.shape == A1.shape == A2.shape):
        raise ActsimInputError("spectra: wavelength and absorbance arrays differ in length; use common_grid first")
    if not (np.isfinite(significance) and significance >= 0):
        raise ActsimInputError(f"significance: {significance!r} is outside the allowed range (>= 0)")
    matrix = np.broadcast_to(np.asarray(absorbance_matrix, dtype=float), wl.shape)
    C1, C2 = A1 - matrix, A2 - matrix
    if noise is None:
        sigma = max(_noise_std(C1), _noise_std(C2))
    else:
        if not (np.isfinite(noise) and noise >= 0):
            raise ActsimInputError(f"noise: {noise!r} is outside the allowed range (>= 0, absorbance [1])")
        sigma = float(noise)
    peak = max(float(np.max(C1)), float(np.max(C2))) if wl.size else 0.0
    floor = max(min_relative_absorbance * peak, significance * sigma)
    D = C2 - C1
    # noise of the difference of two independent spectra: sqrt(2) sigma
    band = significance * np.sqrt(2.0) * sigma
    sig = np.flatnonzero(np.abs(D) > band)
    out = []
    for i, j in zip(sig[:-1], sig[1:]):
        if np.sign(D[i]) == np.sign(D[j]):
            continue
        x, y = wl[i:j + 1], D[i:j + 1]
        if j == i + 1:
            lam = wl[i] + D[i] / (D[i] - D[j]) * (wl[j] - wl[i])
        else:
            slope, icpt = np.polyfit(x - x[0], y, 1)
            lam = x[0] - icpt / slope if slope != 0 else 0.5 * (x[0] + x[-1])
            lam = min(max(lam, x[0]), x[-1])
        a = float(np.interp(lam, wl, 0.5 * (C1 + C2)))
        if a >= floor:
            out.append(lam)
    return np.array(out, dtype=float)


def isosbestic_consistency(wavelength, reference, others, *, tolerance=1e-9, absorbance_matrix=0.0):
    """Check that every spectrum crosses the reference at the same wavelengths.

    Parameters
    ----------
    wavelength : array_like
        Common grid [m].
    reference : array_like
        Reference spectrum, usually before irradiation [1].
    others : sequence of array_like
        Further spectra on the grid [1].
    tolerance : float
        Largest accepted spread of a crossing between spectra [m].
    absorbance_matrix : float or array_like
        Absorbance of everything but the chromophore [1] (see :func:`isosbestic_points`).

    Returns
    -------
    dict
        ``points`` (list of arrays, one per spectrum [m]), ``spread`` (largest spread of matching
        crossings [m], or inf if the counts differ), ``consistent`` (bool).

    Notes
    -----
    For a clean A -> B reaction every difference spectrum is proportional to
    :math:`\\varepsilon_{10,B} - \\varepsilon_{10,A}`, so all cross at the same wavelengths.

    .. math::

        A_k(\\lambda^*) = A_\\text{ref}(\\lambda^*) \\iff \\varepsilon_{10,A}(\\lambda^*) = \\varepsilon_{10,B}(\\lambda^*)

    References
    ----------
    .. [1] IUPAC Gold Book, "isosbestic point".
    """
    pts = [isosbestic_points(wavelength, reference, o, absorbance_matrix=absorbance_matrix) for o in others]
    counts = {p.size for p in pts}
    if len(counts) > 1:
        spread = float("inf")
    elif not pts or pts[0].size == 0:
        spread = 0.0
    else:
        arr = np.vstack(pts)
        spread = float(np.max(np.ptp(arr, axis=0)))
    return {"points": pts, "spread": spread, "consistent": bool(spread <= tolerance)}


@dataclass
class SpectraResult:
    """Absorptivities from :func:`fit_spectra`.

    Attributes
    ----------
    wavelength : numpy.ndarray
        Common grid [m].
    epsilon10_reactant : numpy.ndarray
        Decadic molar absorptivity of A [m^2/mol].
    epsilon10_product : numpy.ndarray
        Decadic molar absorptivity of B [m^2/mol].
    conversion : float
        Conversion of the "after" state used [1].
    conversion_method : str
        "given", "non-negativity lower bound" or similar.
    partial_conversion : float or None
        Conversion of the partial spectrum, if given [1].
    isosbestic_points : numpy.ndarray
        Crossings of before and after [m].
    isosbestic_check : dict or None
        :func:`isosbestic_consistency` result when a partial spectrum was given.
    notes : list of str
        Interpolation, estimation caveats, negative values found.
    """

    wavelength: np.ndarray
    epsilon10_reactant: np.ndarray
    epsilon10_product: np.ndarray
    conversion: float
    conversion_method: str
    partial_conversion: float | None
    isosbestic_points: np.ndarray
    isosbestic_check: dict | None = None
    notes: list = field(default_factory=list)

    def to_dict(self) -> dict:
        return {
            "wavelength_m": self.wavelength.tolist(),
            "epsilon10_reactant_m2_per_mol": self.epsilon10_reactant.tolist(),
            "epsilon10_product_m2_per_mol": self.epsilon10_product.tolist(),
            "conversion": self.conversion,
            "conversion_method": self.conversion_method,
            "partial_conversion": self.partial_conversion,
            "isosbestic_points_m": self.isosbestic_points.tolist(),
            "notes": list(self.notes),
        }


def fit_spectra(before, after, *, concentration, thickness, conversion=None, partial=None, absorbance_matrix=0.0,
                wavelength_unit=None) -> SpectraResult:
    """Reactant and product absorptivities from spectra before and after irradiation.

    Parameters
    ----------
    before, after : str, os.PathLike, XYData or (array_like, array_like)
        Spectra before irradiation (all A) and after (photostationary or at conversion x).
    concentration : float
        Total chromophore concentration :math:`c_0` [mol/m^3].
    thickness : float
        Optical path [m].
    conversion : float, optional
        Known conversion of ``after`` [1]. If omitted it is estimated: the smallest value that
        keeps the product spectrum non-negative (:func:`conversion_lower_bound`), which is a
        lower bound; the result says so.
    partial : spectrum, optional
        A spectrum part-way; its conversion relative to ``after`` comes from the difference
        spectra and the isosbestic points are checked for consistency.
    absorbance_matrix : float
        Absorbance of everything else [1].
    wavelength_unit : str, optional
        Unit of wavelength for array input or headers without units.

    Returns
    -------
    SpectraResult

    Notes
    -----
    .. math::

        \\varepsilon_{10,A} = \\frac{A'_\\text{before}}{c_0 d}, \\qquad
        \\varepsilon_{10,B} = \\frac{A'_\\text{after} - (1-x)A'_\\text{before}}{x c_0 d}

    References
    ----------
    .. [1] H. Mauser and G. Gauglitz, *Photokinetics: Theoretical Fundamentals and Applications*,
       Elsevier, 1998.
    """
    _check_c_d(concentration, thickness)
    specs = [read_spectrum(s, wavelength_unit=wavelength_unit) for s in ([before, after] + ([partial] if partial is not None else []))]
    wl, absd, note = common_grid(*specs)
    notes = [note] if note else []
    Ab, Aa = absd[0], absd[1]
    Ap = absd[2] if partial is not None else None
    if conversion is None:
        x, lam = conversion_lower_bound(wl, absorbance_before=Ab, absorbance_after=Aa,
                                        absorbance_matrix=absorbance_matrix)
        method = "non-negativity lower bound"
        notes.append(f"conversion not given: estimated as {x:.4g}, the smallest value that keeps the product spectrum "
                     f"non-negative (set at {lam * 1e9:.5g} nm); it is exact only if the product is transparent there, "
                     "otherwise the true conversion is larger and the product absorptivity is overestimated")
    else:
        x = float(conversion)
        method = "given"
    eA = absorptivity_reactant(absorbance_before=Ab, concentration=concentration, thickness=thickness,
                               absorbance_matrix=absorbance_matrix)
    eB = absorptivity_product(absorbance_before=Ab, absorbance_after=Aa, conversion=x, concentration=concentration,
                              thickness=thickness, absorbance_matrix=absorbance_matrix)
    scale = max(float(np.max(np.abs(eA))), 1e-300)
    if np.min(eB) < -0.02 * scale:
        i = int(np.argmin(eB))
        notes.append(f"product absorptivity negative ({eB[i]:.3g} m^2/mol at {wl[i] * 1e9:.5g} nm): the given conversion "
                     "is too small, or baseline drift or a side product")
    iso = isosbestic_points(wl, Ab, Aa, absorbance_matrix=absorbance_matrix)
    check = None
    xp = None
    if Ap is not None:
        rho, misfit = relative_conversion(absorbance_before=Ab, absorbance_partial=Ap, absorbance_after=Aa)
        xp = rho * x
        check = isosbestic_consistency(wl, Ab, [Aa, Ap], absorbance_matrix=absorbance_matrix)
        check["relative_misfit"] = misfit
        if misfit > 0.05:
            notes.append(f"partial spectrum is not a multiple of the final change (relative misfit {misfit:.2g}); "
                         "not a clean A -> B reaction")
        if not check["consistent"]:
            notes.append("isosbestic points of the partial and final spectra differ (spread "
                         f"{check['spread'] * 1e9:.3g} nm)")
    return SpectraResult(wavelength=wl, epsilon10_reactant=eA, epsilon10_product=eB, conversion=x,
                         conversion_method=method, partial_conversion=xp, isosbestic_points=iso,
                         isosbestic_check=check, notes=notes)
