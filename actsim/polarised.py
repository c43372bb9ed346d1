"""Polarised light through an ordered, possibly twisted film: dichroic absorption and birefringence.

A species' absorptivity for light polarised along :math:`\\mathbf e`, averaged over transition moments of
order :math:`S_s = f_s Q` about the director :math:`\\mathbf n` (molecular ratio :math:`r = \\varepsilon_\\perp/
\\varepsilon_\\parallel`), is :math:`\\varepsilon_{iso}\\, g` with

.. math:: g = \\frac{3}{1 + 2r}\\Big[r + (1 - r)\\Big(\\frac{1 - S_s}{3} + S_s\\cos^2\\beta\\Big)\\Big]
   = 1 + \\frac{1 - r}{1 + 2r}\\, S_s\\, (3\\cos^2\\beta - 1), \\qquad \\cos\\beta = \\mathbf e\\cdot\\mathbf n

(the second form is exactly 1 when :math:`S_s = 0`). At normal incidence each cell has an e-wave along the
director's in-plane projection (:math:`\\cos^2\\beta = \\cos^2 t`, index :math:`n_e(t)`) and an o-wave across it
(:math:`\\cos^2\\beta = 0`, :math:`n_o`), each with its own Beer–Lambert coefficient; the cell's Jones matrix in
the lab axes is [1]_ [2]_

.. math:: M = R(-p)\\,\\mathrm{diag}\\big(e^{-\\tau_e/2 + i k n_e \\Delta z},\\ e^{-\\tau_o/2 + i k n_o \\Delta z}\\big)\\,R(p)

and it absorbs exactly :math:`\\sum_{ch} I_{ch}(1 - e^{-\\tau_{ch}})`, :math:`I_{ch}` the channel intensities at its
entry. The kernel propagates the coherency matrix :math:`J \\to M J M^\\dagger` (polarised and unpolarised beams
in one pass); the readable :func:`polarised_light_field` propagates Jones vectors. Equations, limits and
measured accuracy: docs/models.md, "Polarised light and dichroic absorption".

References
----------
.. [1] Jones, R. C. "A new calculus for the treatment of optical systems." J. Opt. Soc. Am. 31 (1941) 488.
.. [2] Yariv, A. and Yeh, P. Optical Waves in Crystals. Wiley 1984, ch. 5 (Jones calculus, twisted media).
.. [3] Michl, J. and Thulstrup, E. W. Spectroscopy with Polarized Light. VCH 1986 (dichroic ratio and order).
.. [4] Gooch, C. H. and Tarry, H. A. J. Phys. D 8 (1975) 1575 (transmission of twisted nematic layers).
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np
from numba import njit

from .errors import ActsimInputError
from .optics import LN10
from .units import check_range


class PolarParams(NamedTuple):
    """Order, director and polarisation data of one design, SI (built by :func:`polar_params`).

    Attributes
    ----------
    director_angle : numpy.ndarray, shape (n_cell,)
        In-plane angle p of the director from the strip axis x [rad].
    director_tilt : numpy.ndarray, shape (n_cell,)
        Tilt t of the director out of the film plane [rad] (pi/2: homeotropic).
    birefringence : numpy.ndarray, shape (n_cell,)
        n_e - n_o of the cell at order Q = order_reference [1].
    order_reference : numpy.ndarray, shape (n_cell,)
        Q at which ``birefringence`` holds; the birefringence scales as dn Q / q_ref [1].
    refractive_index : numpy.ndarray, shape (n_cell,)
        Ordinary index n_o [1].
    order_factor_a, order_factor_b : numpy.ndarray, shape (n_cell,)
        Species order per unit nematic order, S_s = f_s Q, of reactant and product [1].
    ratio_a, ratio_b : numpy.ndarray, shape (n_cell,)
        Molecular absorptivity ratio r = eps_perp/eps_par of reactant and product [1].
    polarised : numpy.ndarray of bool, shape (n_beam,)
        True: the beam is linearly polarised; False: unpolarised.
    polarisation_angle : numpy.ndarray, shape (n_beam,)
        Polarisation direction of a polarised beam, from x [rad].
    """

    director_angle: np.ndarray
    director_tilt: np.ndarray
    birefringence: np.ndarray
    order_reference: np.ndarray
    refractive_index: np.ndarray
    order_factor_a: np.ndarray
    order_factor_b: np.ndarray
    ratio_a: np.ndarray
    ratio_b: np.ndarray
    polarised: np.ndarray
    polarisation_angle: np.ndarray


def _per(value, n, field, unit, lo, hi):
    """``value`` (scalar or length-n array) as a float array of length n, each entry checked."""
    arr = np.asarray(value, dtype=float)
    if arr.ndim == 0:
        arr = np.full(n, float(arr))
    if arr.shape != (n,):
        raise ActsimInputError(f"{field}: shape {arr.shape}, expected a number or {n} values ({unit}, {lo:g} to {hi:g})")
    for k, v in enumerate(arr):
        if not math.isfinite(v):
            raise ActsimInputError(f"{field}[{k}]: {v:g} is not finite; allowed range {lo:g} to {hi:g} {unit}")
        check_range(float(v), field=f"{field}[{k}]", unit=unit, lo=lo, hi=hi)
    return arr


def polar_params(*, n_cell, n_beam, director_angle=0.0, director_tilt=0.0, birefringence=0.0, order_reference=1.0,
                 refractive_index=1.5, order_factor_a=0.0, order_factor_b=0.0, ratio_a=0.0, ratio_b=0.0,
                 polarised=False, polarisation_angle=0.0) -> PolarParams:
    """Check plain per-cell and per-beam values and pack them for :func:`polarised_light_pass`.

    Numbers broadcast to every cell (or beam). The defaults describe an isotropic film and unpolarised
    beams, for which the pass equals :func:`actsim.optics.light_pass`.

    Parameters
    ----------
    n_cell, n_beam : int
        Number of cells and of beams.
    director_angle : float or array_like
        In-plane director angle p from x, |p| <= 1e3 [rad].
    director_tilt : float or array_like
        Director tilt t, -pi/2 to pi/2 [rad].
    birefringence : float or array_like
        dn at Q = order_reference, -1 to 1 [1]; n_o + dn must stay >= 1.
    order_reference : float or array_like
        q_ref, 0 to 1, > 0 where dn != 0 [1].
    refractive_index : float or array_like
        n_o, 1 to 4 [1].
    order_factor_a, order_factor_b : float or array_like
        f_s, -0.5 to 1 [1] (S_s = f_s Q stays in the physical range -1/2..1 for 0 <= Q <= 1).
    ratio_a, ratio_b : float or array_like
        r = eps_perp/eps_par, 0 to 1e3 [1].
    polarised : bool or array_like of bool
        Linearly polarised beams.
    polarisation_angle : float or array_like
        Polarisation direction from x, |angle| <= 1e3 [rad].

    Returns
    -------
    PolarParams
    """
    c = {}
    for name, value, unit, lo, hi in (
        ("director_angle", director_angle, "rad", -1e3, 1e3), ("director_tilt", director_tilt, "rad", -math.pi / 2, math.pi / 2),
        ("birefringence", birefringence, "1", -1.0, 1.0), ("order_reference", order_reference, "1", 0.0, 1.0),
        ("refractive_index", refractive_index, "1", 1.0, 4.0), ("order_factor_a", order_factor_a, "1", -0.5, 1.0),
        ("order_factor_b", order_factor_b, "1", -0.5, 1.0), ("ratio_a", ratio_a, "1", 0.0, 1e3),
        ("ratio_b", ratio_b, "1", 0.0, 1e3),
    ):
        c[name] = _per(value, n_cell, name, unit, lo, hi)
    bad = np.flatnonzero((c["birefringence"] != 0) & (c["order_reference"] <= 0))
    if bad.size:
        k = int(bad[0])
        raise ActsimInputError(f"order_reference[{k}]: 0 where birefringence is {c['birefringence'][k]:g}; allowed range > 0 to 1")
    bad = np.flatnonzero(c["refractive_index"] + c["birefringence"] < 1.0)
    if bad.size:
        k = int(bad[0])
        raise ActsimInputError(f"birefringence[{k}]: {c['birefringence'][k]:g} gives n_o + dn below 1; allowed range >= "
                               f"{1.0 - c['refractive_index'][k]:g} for n_o = {c['refractive_index'][k]:g}")
    pol = np.asarray(polarised, dtype=np.bool_)
    pol = np.full(n_beam, bool(pol)) if pol.ndim == 0 else pol
    if pol.shape != (n_beam,):
        raise ActsimInputError(f"polarised: shape {pol.shape}, expected a bool or {n_beam} values")
    angle = _per(polarisation_angle, n_beam, "polarisation_angle", "rad", -1e3, 1e3)
    return PolarParams(polarised=pol, polarisation_angle=angle, **c)


def absorption_factor(*, order, cos2_angle, ratio):
    """Ratio g of the absorptivity for light polarised at angle b to the director to the isotropic one.

    .. math:: g = 1 + \\frac{1 - r}{1 + 2r}\\, S\\,(3\\cos^2 b - 1)

    Parameters
    ----------
    order : float or numpy.ndarray
        Order S of the species' transition moments about the director, -1/2 to 1 [1].
    cos2_angle : float or numpy.ndarray
        cos^2 b of the angle between polarisation and director [1].
    ratio : float or numpy.ndarray
        r = eps_perp/eps_par of one molecule [1].

    Returns
    -------
    float or numpy.ndarray
        g [1]; 1 exactly for S = 0, and (1/3) sum over three orthogonal directions is 1.

    References
    ----------
    .. [1] Michl, J. and Thulstrup, E. W. Spectroscopy with Polarized Light. VCH 1986.
    """
    order, cos2_angle, ratio = np.asarray(order, float), np.asarray(cos2_angle, float), np.asarray(ratio, float)
    return 1.0 + (1.0 - ratio) / (1.0 + 2.0 * ratio) * order * (3.0 * cos2_angle - 1.0)


@njit(cache=True)
def absorption_factor_nb(order, cos2_angle, ratio):
    """Scalar numba version of :func:`absorption_factor` [1].

    Parameters
    ----------
    order : float
        S [1].
    cos2_angle : float
        cos^2 b [1].
    ratio : float
        r [1].
    """
    return 1.0 + (1.0 - ratio) / (1.0 + 2.0 * ratio) * order * (3.0 * cos2_angle - 1.0)


@njit(cache=True)
def extraordinary_excess_nb(n_o, dn, tilt):
    """n_e(t) - n_o without cancellation [1].

    .. math:: n_e - n_o = \\frac{n_o \\cos^2 t\\, \\Delta n (2 n_o + \\Delta n)}{\\sqrt D (n_o + \\Delta n + \\sqrt D)},
       \\qquad D = (n_o + \\Delta n)^2 \\sin^2 t + n_o^2 \\cos^2 t

    Parameters
    ----------
    n_o : float
        Ordinary index [1].
    dn : float
        Birefringence for light along the director's in-plane projection at zero tilt [1].
    tilt : float
        Director tilt [rad].
    """
    c2 = math.cos(tilt) ** 2
    ne0 = n_o + dn
    root = math.sqrt(ne0 * ne0 * (1.0 - c2) + n_o * n_o * c2)
    return n_o * c2 * dn * (2.0 * n_o + dn) / (root * (ne0 + root))


@njit(cache=True)
def polarised_light_pass(x, Q, dz, light, pol, q_surface, mean_flux, absorbed, flux_a, flux_b):
    """Kernel step: polarised light through the stack; fills the four (n_cell, n_beam) outputs in place.

    Each beam's coherency matrix (normalised to unit trace; the photon flux is carried apart, so photons
    are conserved to round-off as in :func:`actsim.optics.light_pass`) is propagated cell by cell,
    n-1 .. 0 from the top, 0 .. n-1 from the bottom, with the Jones matrices in the lab axes. The
    common phase :math:`e^{i k n_o \\Delta z}` is left out (it changes no intensity).

    Parameters
    ----------
    x : numpy.ndarray, shape (n_cell,)
        Conversion [1].
    Q : numpy.ndarray, shape (n_cell,)
        Nematic order parameter of each cell [1].
    dz : numpy.ndarray, shape (n_cell,)
        Cell widths [m].
    light : actsim.optics.LightParams
        The design's optics parameters.
    pol : actsim.polarised.PolarParams
        Director, order and polarisation data.
    q_surface : numpy.ndarray, shape (n_beam,)
        Incident photon flux of each beam before reflection [mol m-2 s-1].
    mean_flux, absorbed : numpy.ndarray, shape (n_cell, n_beam)
        Cell-mean photon flux summed over both channels and photons absorbed (background included)
        [mol m-2 s-1].
    flux_a, flux_b : numpy.ndarray, shape (n_cell, n_beam)
        Species-weighted mean flux sum_ch g_s,ch q_ch of reactant and product [mol m-2 s-1] (equal to
        ``mean_flux`` in an isotropic film).

    Returns
    -------
    float
        Photon flux leaving through the far faces, summed over beams [mol m-2 s-1].
    """
    n_cell, n_beam = light.eps_a.shape
    transmitted = 0.0
    for b in range(n_beam):
        q = q_surface[b] * light.entry[b]
        k = 2.0 * math.pi / light.beam_wavelength[b]
        if pol.polarised[b]:  # J = e e^T, e = (cos psi, sin psi)
            cp, sp = math.cos(pol.polarisation_angle[b]), math.sin(pol.polarisation_angle[b])
            jxx, jyy, jre, jim = cp * cp, sp * sp, cp * sp, 0.0
        else:
            jxx, jyy, jre, jim = 0.5, 0.5, 0.0, 0.0
        for j in range(n_cell):
            i = n_cell - 1 - j if light.from_top[b] else j
            c, s = math.cos(pol.director_angle[i]), math.sin(pol.director_angle[i])
            cos2t = math.cos(pol.director_tilt[i]) ** 2
            # coherency matrix in the cell's (e, o) axes
            cs = c * s
            jee = c * c * jxx + 2.0 * cs * jre + s * s * jyy
            joo = 1.0 - jee
            jeo = cs * (jyy - jxx) + (c * c - s * s) * jre  # real part; the imaginary part is jim
            # absorption_factor_nb of both species in both channels, the common products once (same floats)
            ra, rb = pol.ratio_a[i], pol.ratio_b[i]
            fa = (1.0 - ra) / (1.0 + 2.0 * ra) * (pol.order_factor_a[i] * Q[i])
            fb = (1.0 - rb) / (1.0 + 2.0 * rb) * (pol.order_factor_b[i] * Q[i])
            ga_e, ga_o = 1.0 + fa * (3.0 * cos2t - 1.0), 1.0 - fa
            gb_e, gb_o = 1.0 + fb * (3.0 * cos2t - 1.0), 1.0 - fb
            ca = LN10 * light.c0[i]
            tau_e = (ca * (light.eps_a[i, b] * ga_e * (1.0 - x[i]) + light.eps_b[i, b] * gb_e * x[i])
                     + light.alpha_bg[i, b]) * dz[i]
            tau_o = (ca * (light.eps_a[i, b] * ga_o * (1.0 - x[i]) + light.eps_b[i, b] * gb_o * x[i])
                     + light.alpha_bg[i, b]) * dz[i]
            q_e = q * jee
            q_o = q - q_e
            m_e = -math.expm1(-tau_e)  # absorbed fraction of the channel
            m_o = -math.expm1(-tau_o)
            a_e = q_e * m_e
            a_o = q_o * m_o
            mf_e = a_e / tau_e if tau_e > 1e-12 else q_e
            mf_o = a_o / tau_o if tau_o > 1e-12 else q_o
            mean_flux[i, b] = mf_e + mf_o
            flux_a[i, b] = ga_e * mf_e + ga_o * mf_o
            flux_b[i, b] = gb_e * mf_e + gb_o * mf_o
            absorbed[i, b] = a_e + a_o
            q -= a_e + a_o
            # attenuation and retardation of the cell, J -> D J D^+, then back to the lab axes
            t_e = 1.0 - m_e
            t_o = 1.0 - m_o
            trace = jee * t_e + joo * t_o
            if trace <= 0.0:  # everything absorbed (underflow): the state no longer matters
                continue
            damp = math.sqrt(t_e * t_o) / trace
            cd, sd = 1.0, 0.0
            dn = pol.birefringence[i]
            if dn != 0.0:
                dn = dn * Q[i] / pol.order_reference[i]
                delta = k * dz[i] * extraordinary_excess_nb(pol.refractive_index[i], dn, pol.director_tilt[i])
                cd, sd = math.cos(delta), math.sin(delta)
            jee = jee * t_e / trace
            joo = joo * t_o / trace
            re = damp * (jeo * cd - jim * sd)
            jim = damp * (jeo * sd + jim * cd)
            jxx = c * c * jee - 2.0 * cs * re + s * s * joo
            jyy = 1.0 - jxx
            jre = cs * (jee - joo) + (c * c - s * s) * re
        transmitted += q
    return transmitted


class PolarisedField(NamedTuple):
    """Result of :func:`polarised_light_field`.

    Attributes
    ----------
    mean_flux, absorbed, flux_a, flux_b : numpy.ndarray, shape (n_cell, n_beam)
        As the outputs of :func:`polarised_light_pass` [mol m-2 s-1].
    transmitted : numpy.ndarray, shape (n_beam,)
        Photon flux leaving through the far face [mol m-2 s-1].
    exit_field : numpy.ndarray of complex, shape (n_beam, 2, 2)
        Jones vectors (x, y) at the exit of the one (polarised) or two (unpolarised: x and y halves)
        incoherent parts of each beam, with |E|^2 a photon flux [sqrt(mol m-2 s-1)].
    """

    mean_flux: np.ndarray
    absorbed: np.ndarray
    flux_a: np.ndarray
    flux_b: np.ndarray
    transmitted: np.ndarray
    exit_field: np.ndarray


def _rotation(angle):
    c, s = math.cos(angle), math.sin(angle)
    return np.array([[c, s], [-s, c]])


def polarised_light_field(*, conversion, order, dz, light, pol, surface_flux):
    """Readable reference of :func:`polarised_light_pass`: Jones vectors, complex numpy, plain loops.

    .. math:: \\mathbf E_{out} = R(-p)\\,\\mathrm{diag}\\big(e^{-\\tau_e/2 + i k n_e \\Delta z},
       e^{-\\tau_o/2 + i k n_o \\Delta z}\\big)\\,R(p)\\,\\mathbf E_{in}

    Parameters
    ----------
    conversion : numpy.ndarray, shape (n_cell,)
        x [1].
    order : numpy.ndarray, shape (n_cell,)
        Nematic order Q of each cell [1].
    dz : numpy.ndarray, shape (n_cell,)
        Cell widths [m].
    light : actsim.optics.LightParams
        The design's optics parameters.
    pol : actsim.polarised.PolarParams
        Director, order and polarisation data.
    surface_flux : numpy.ndarray, shape (n_beam,)
        Incident photon flux before reflection [mol m-2 s-1].

    Returns
    -------
    PolarisedField
    """
    x, Q, dz = (np.asarray(a, float) for a in (conversion, order, dz))
    n_cell, n_beam = light.eps_a.shape
    out = {name: np.zeros((n_cell, n_beam)) for name in ("mean_flux", "absorbed", "flux_a", "flux_b")}
    transmitted = np.zeros(n_beam)
    exit_field = np.zeros((n_beam, 2, 2), complex)

    def g(S, cos2, r):  # the bracket form of the module docstring
        return 3.0 / (1.0 + 2.0 * r) * (r + (1.0 - r) * ((1.0 - S) / 3.0 + S * cos2))

    for b in range(n_beam):
        q_in = surface_flux[b] * light.entry[b]
        k = 2.0 * math.pi / light.beam_wavelength[b]
        if pol.polarised[b]:
            psi = pol.polarisation_angle[b]
            parts = [math.sqrt(q_in) * np.array([math.cos(psi), math.sin(psi)], complex)]
        else:
            parts = [math.sqrt(q_in / 2) * np.array([1, 0], complex), math.sqrt(q_in / 2) * np.array([0, 1], complex)]
        cells = range(n_cell - 1, -1, -1) if light.from_top[b] else range(n_cell)
        for n_part, E in enumerate(parts):
            for i in cells:
                p, t, n_o = pol.director_angle[i], pol.director_tilt[i], pol.refractive_index[i]
                dn = pol.birefringence[i] * Q[i] / pol.order_reference[i] if pol.birefringence[i] != 0 else 0.0
                n_e = 1.0 / math.sqrt(math.sin(t) ** 2 / n_o ** 2 + math.cos(t) ** 2 / (n_o + dn) ** 2)
                weights = {}
                for ch, cos2 in (("e", math.cos(t) ** 2), ("o", 0.0)):
                    ga = g(pol.order_factor_a[i] * Q[i], cos2, pol.ratio_a[i])
                    gb = g(pol.order_factor_b[i] * Q[i], cos2, pol.ratio_b[i])
                    alpha = (LN10 * light.c0[i] * (light.eps_a[i, b] * ga * (1 - x[i]) + light.eps_b[i, b] * gb * x[i])
                             + light.alpha_bg[i, b])
                    weights[ch] = (ga, gb, alpha * dz[i])
                e_hat = np.array([math.cos(p), math.sin(p)])
                o_hat = np.array([-math.sin(p), math.cos(p)])
                for (ga, gb, tau), axis in zip(weights.values(), (e_hat, o_hat)):
                    intensity = abs(axis @ E) ** 2
                    a = -intensity * math.expm1(-tau)
                    mean = a / tau if tau > 1e-12 else intensity
                    out["absorbed"][i, b] += a
                    out["mean_flux"][i, b] += mean
                    out["flux_a"][i, b] += ga * mean
                    out["flux_b"][i, b] += gb * mean
                tau_e, tau_o = weights["e"][2], weights["o"][2]
                D = np.diag([np.exp(-tau_e / 2 + 1j * k * n_e * dz[i]), np.exp(-tau_o / 2 + 1j * k * n_o * dz[i])])
                E = _rotation(-p) @ D @ _rotation(p) @ E
            transmitted[b] += float(np.vdot(E, E).real)
            exit_field[b, n_part] = E
    return PolarisedField(transmitted=transmitted, exit_field=exit_field, **out)


class PolarisationState(NamedTuple):
    """Light leaving the film, from :func:`transmitted_polarisation`.

    Attributes
    ----------
    transmittance_x, transmittance_y : float
        Exit photon flux polarised along x and along y, per unit flux entering the film [1].
    azimuth : float
        Azimuth of the major axis of the exit polarisation ellipse from x, in [-pi/2, pi/2) [rad].
    rotation : float
        Azimuth minus the input polarisation angle, wrapped into [-pi/2, pi/2) [rad] (x for unpolarised input).
    ellipticity : float
        Ellipticity angle chi, sin 2 chi = S3/S_pol [rad] (0: linear); chi > 0: the field turns from +y to +x
        (clockwise seen from above the film), whichever way the light travels.
    degree_of_polarisation : float
        Polarised part of the exit flux [1].
    """

    transmittance_x: float
    transmittance_y: float
    azimuth: float
    rotation: float
    ellipticity: float
    degree_of_polarisation: float


def _wrap_half_turn(angle):
    return (angle + math.pi / 2) % math.pi - math.pi / 2


def transmitted_polarisation(*, conversion, order, dz, light, pol, beam):
    """Intensities along x and y and the polarisation ellipse of one beam at the far face.

    From the Stokes parameters of the exit field, summed over its incoherent parts:

    .. math:: \\psi = \\tfrac12 \\operatorname{atan2}(S_2, S_1), \\qquad
       \\sin 2\\chi = S_3 / \\sqrt{S_1^2 + S_2^2 + S_3^2}, \\qquad S_3 = 2\\,\\mathrm{Im}(E_x E_y^*)

    with fields :math:`\\propto e^{i(k n z - \\omega t)}` as in :func:`polarised_light_field`.

    Parameters
    ----------
    conversion : numpy.ndarray, shape (n_cell,)
        x [1].
    order : numpy.ndarray, shape (n_cell,)
        Nematic order Q of each cell [1].
    dz : numpy.ndarray, shape (n_cell,)
        Cell widths [m].
    light : actsim.optics.LightParams
        The design's optics parameters.
    pol : actsim.polarised.PolarParams
        Director, order and polarisation data.
    beam : int
        Index of the beam.

    Returns
    -------
    PolarisationState
        All zero intensities (and angles) if nothing leaves the film.

    References
    ----------
    .. [1] Born, M. and Wolf, E. Principles of Optics, 7th ed., Cambridge 1999, sec. 1.4.2 (Stokes parameters).
    """
    n_beam = light.eps_a.shape[1]
    if not 0 <= beam < n_beam:
        raise ActsimInputError(f"beam: {beam} is outside the allowed range (0 to {n_beam - 1})")
    flux = np.zeros(n_beam)
    flux[beam] = 1.0 / light.entry[beam]  # unit flux entering the film
    field = polarised_light_field(conversion=conversion, order=order, dz=dz, light=light, pol=pol, surface_flux=flux)
    E = field.exit_field[beam]
    ix, iy = float(np.sum(abs(E[:, 0]) ** 2)), float(np.sum(abs(E[:, 1]) ** 2))
    s1 = ix - iy
    s2 = float(np.sum(2.0 * (E[:, 0] * np.conj(E[:, 1])).real))
    s3 = float(np.sum(2.0 * (E[:, 0] * np.conj(E[:, 1])).imag))
    s_pol = math.sqrt(s1 * s1 + s2 * s2 + s3 * s3)
    azimuth = _wrap_half_turn(0.5 * math.atan2(s2, s1))
    start = pol.polarisation_angle[beam] if pol.polarised[beam] else 0.0
    return PolarisationState(
        transmittance_x=ix, transmittance_y=iy, azimuth=azimuth, rotation=_wrap_half_turn(azimuth - start),
        ellipticity=0.5 * math.asin(max(-1.0, min(1.0, s3 / s_pol))) if s_pol > 0 else 0.0,
        degree_of_polarisation=s_pol / (ix + iy) if ix + iy > 0 else 0.0,
    )
