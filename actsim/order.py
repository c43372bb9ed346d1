"""Liquid-crystal order: nematic order parameter, spontaneous strain, director profiles.

The bent (cis) product isomer dilutes the nematic interaction: the clearing temperature falls with
conversion, the order parameter Q with it, and the network changes length along and across the
director. Pure functions of that chain, from conversion and temperature to the in-plane eigenstrain
of a cell: :func:`transition_temperature`; the order laws (:func:`maier_saupe_order` with its cached
table :func:`maier_saupe_table`, Haller's law) in :func:`nematic_order` and the kernel step
:func:`order_nb`; the spontaneous strains (:func:`glassy_strains`, :func:`elastomer_strains`, kernel
step :func:`lc_strains_nb`); director profiles (:func:`director_profile`) and the in-plane eigenstrain
(:func:`director_weights`, :func:`inplane_eigenstrain`, kernel step :func:`inplane_eigenstrain_nb`).
SI inside, angles in rad; the director is n = (cos(tilt) cos(phi), cos(tilt) sin(phi), sin(tilt)), phi
the in-plane angle from the strip axis x, tilt out of the plane (0 planar, pi/2 homeotropic).

References
----------
.. [1] Maier, W. and Saupe, A. "Eine einfache molekular-statistische Theorie der nematischen
   kristallinflüssigen Phase. Teil I." Z. Naturforsch. 14a (1959) 882–889.
.. [2] de Gennes, P. G. and Prost, J. The Physics of Liquid Crystals, 2nd ed., Clarendon Press 1993, sec. 2.3.
.. [3] Haller, I. "Thermodynamic and static properties of liquid crystals." Prog. Solid State Chem.
   10 (1975) 103–118.
.. [4] Warner, M. and Terentjev, E. M. Liquid Crystal Elastomers, Oxford University Press 2003, ch. 6.
.. [5] Finkelmann, H., Nishikawa, E., Pereira, G. G. and Warner, M. "A new opto-mechanical effect in
   solids." Phys. Rev. Lett. 87 (2001) 015501.
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np
from numba import njit

from .errors import ActsimInputError
from .units import check_range, scalar_or_array

#: Order law of a material: none, Maier–Saupe mean field, Haller's power law.
ORDER_NONE = 0
ORDER_MAIER_SAUPE = 1
ORDER_HALLER = 2
#: Scenario names of the order laws (index = code).
ORDER_LAW_NAMES = ("none", "maier-saupe", "haller")

#: Kind of spontaneous strain: none, glassy network (linear in Q), elastomer (step-length tensor).
LC_NONE = 0
LC_GLASSY = 1
LC_ELASTOMER = 2
#: Scenario names of the strain kinds (index = code).
LC_KIND_NAMES = ("none", "glassy", "elastomer")

#: Director profile kinds of a layer.
DIRECTOR_KINDS = ("planar", "homeotropic", "splay", "twisted", "hybrid", "table")

#: Smallest clearing temperature T_NI(x) is clamped to [K].
CLEARING_FLOOR = 1.0e-3
#: Points of the Maier–Saupe table in t on [0, 1].
MS_TABLE_POINTS = 2049


def transition_temperature(conversion, *, clearing_temperature, clearing_shift):
    r"""Nematic–isotropic transition (clearing) temperature lowered by the product fraction.

    .. math:: T_{NI}(x) = \max\left(T_{NI,0} - \Delta T\, x,\; T_\mathrm{floor}\right)

    A linear dilution of the nematic interaction by the bent isomers, clamped to the floor
    ``CLEARING_FLOOR`` (1e-3 K) so that T / T_NI stays finite (a material at the floor is isotropic at
    any temperature). The scenario layer bounds the shift below T_NI0: the floor is a guard, not a model.

    Parameters
    ----------
    conversion : float or array_like
        Product (cis) fraction x in [0, 1] [1].
    clearing_temperature : float
        T_NI0, the clearing temperature at x = 0, > 0 [K].
    clearing_shift : float
        Delta T, the drop of T_NI from x = 0 to x = 1 [K].

    Returns
    -------
    float or numpy.ndarray
        T_NI(x) [K].

    References
    ----------
    .. [1] Finkelmann, H., Nishikawa, E., Pereira, G. G. and Warner, M. Phys. Rev. Lett. 87 (2001) 015501.
    .. [2] Corbett, D. and Warner, M. "Linear and nonlinear photoinduced deformations of cantilevers."
       Phys. Rev. Lett. 99 (2007) 174302 (photo-induced T_NI shift; from memory).
    """
    check_range(clearing_temperature, field="liquid_crystal.clearing_temperature", unit="K", lo=0.0, lo_open=True)
    if not math.isfinite(clearing_shift):
        raise ActsimInputError(f"liquid_crystal.clearing_shift: {clearing_shift} is not a finite temperature (K)")
    x = _checked_array(conversion, "conversion", "1", 0.0, 1.0)
    return scalar_or_array(np.maximum(clearing_temperature - clearing_shift * x, CLEARING_FLOOR))


def _checked_array(value, field, unit, lo, hi, lo_open=False, hi_open=False):
    """``value`` as a float array, refused (one line) if not finite or outside [lo, hi] (open ends as told)."""
    arr = np.asarray(value, dtype=float)
    bad = ~np.isfinite(arr) | (arr < lo) | (arr > hi) | ((arr == lo) & lo_open) | ((arr == hi) & hi_open)
    if np.any(bad):
        check_range(float(arr[bad].flat[0]), field=field, unit=unit, lo=lo, hi=hi, lo_open=lo_open, hi_open=hi_open)
        raise ActsimInputError(f"{field}: {arr[bad].flat[0]} is not a finite number in [{lo:g}, {hi:g}] {unit}")
    return arr


def _ms_mean_p2(a):
    """<P2> in the Maier–Saupe field of strength a = m Q > 0, through Dawson's integral F(s), s = sqrt(3a/2).

    Z(a) = int_0^1 exp(a P2(u)) du = exp(a) F(s) / s, and <P2> = d ln Z / da = -1/2 + 3 / (4 s F(s)) - 3 / (4 s^2).
    """
    from scipy.special import dawsn

    s = np.sqrt(1.5 * a)
    return -0.5 + 0.75 / (s * dawsn(s)) - 0.75 / (s * s)


def _ms_log_partition(a):
    """ln Z(a) of the Maier–Saupe single-molecule partition function (see :func:`_ms_mean_p2`)."""
    from scipy.special import dawsn

    s = np.sqrt(1.5 * a)
    return a + np.log(dawsn(s) / s)


def _bisect(f, lo, hi, n=80):
    """A root of f on [lo, hi] (f(lo) < 0 < f(hi)) by n halvings (scalar; 80 reach round-off on a bracket of 20)."""
    for _ in range(n):
        mid = 0.5 * (lo + hi)
        if f(mid) < 0.0:
            lo = mid
        else:
            hi = mid
    return 0.5 * (lo + hi)


@lru_cache(maxsize=1)
def _ms_constants():
    """(a_spinodal, tau_spinodal, a_NI, Q_NI, tau_NI) of the Maier–Saupe model, tau = k T / U, a = Q / tau.

    Bisections in numpy (scipy.optimize is not imported: it would triple the build cost of the table).
    """
    def tau_of(a):
        return float(_ms_mean_p2(a)) / a

    # the nematic branch is tau(a) = <P2>(a) / a; its maximum (dtau/da = 0) is the superheating limit
    a_sp = _bisect(lambda a: tau_of(a * (1 + 1e-7)) - tau_of(a * (1 - 1e-7)), 5.0, 0.5, n=60)
    tau_sp = tau_of(a_sp)
    # transition: F = U Q^2 / 2 - k T ln Z equals the isotropic F = 0, i.e. ln Z(a) = a Q / 2
    a_ni = _bisect(lambda a: float(_ms_log_partition(a) - 0.5 * a * _ms_mean_p2(a)), a_sp, 20.0)
    q_ni = float(_ms_mean_p2(a_ni))
    return a_sp, tau_sp, a_ni, q_ni, q_ni / a_ni


def maier_saupe_transition():
    r"""Order parameter jump and reduced clearing temperature of the Maier–Saupe model.

    Solves the coexistence of the nematic root and the isotropic state,
    :math:`\tfrac12 U Q^2 - k T \ln Z(Q) = 0` together with the self-consistency (see
    :func:`maier_saupe_order`), by bisection on the closed forms in Dawson's integral (scipy.special).

    Returns
    -------
    (float, float)
        Q_NI (about 0.4290) [1] and k T_NI / U (about 0.22019) [1].

    References
    ----------
    .. [1] Maier, W. and Saupe, A. Z. Naturforsch. 14a (1959) 882.
    .. [2] de Gennes, P. G. and Prost, J. The Physics of Liquid Crystals, 2nd ed., 1993, sec. 2.3.
    """
    c = _ms_constants()
    return c[3], c[4]


def maier_saupe_order(reduced_temperature):
    r"""Maier–Saupe order parameter Q at the reduced temperature t = T / T_NI.

    Mean field of a rod in the potential :math:`-U Q P_2(\cos\beta)`: Q is the stable root of

    .. math:: Q = \langle P_2 \rangle = \frac{\int_0^1 P_2(u)\, e^{m Q P_2(u)}\, du}{\int_0^1 e^{m Q P_2(u)}\, du},
       \qquad m = \frac{U}{k T} = \frac{1}{\tau_{NI}\, t}

    with :math:`\tau_{NI} = k T_{NI}/U \approx 0.22019`. Below t = 1 the nematic root has the lowest
    free energy :math:`\tfrac12 U Q^2 - kT \ln Z`; at t = 1 Q jumps from Q_NI ≈ 0.4290 to 0 (first
    order); above it Q = 0. The integrals are closed forms in Dawson's integral (scipy.special.dawsn);
    the nematic branch is parametrised by a = m Q, t(a) = <P2>(a) / (a tau_NI), and solved for each t by
    bisection on ln a between the spinodal and a = 1/tau (vectorised, 64 halvings). Below t = 1e-8
    Q = 1 - tau_NI t (the large-m expansion, exact to round-off there).

    Parameters
    ----------
    reduced_temperature : float or array_like
        t = T / T_NI >= 0 [1].

    Returns
    -------
    float or numpy.ndarray
        Q in [0, 1] [1].

    References
    ----------
    .. [1] Maier, W. and Saupe, A. Z. Naturforsch. 14a (1959) 882.
    .. [2] de Gennes, P. G. and Prost, J. The Physics of Liquid Crystals, 2nd ed., 1993, sec. 2.3.
    """
    t = _checked_array(reduced_temperature, "reduced_temperature", "1", 0.0, np.inf)
    a_sp, _, _, _, tau_ni = _ms_constants()
    tau = tau_ni * t
    nem = t < 1.0
    low = t < 1e-8
    solve = nem & ~low
    q = np.zeros(t.shape)
    q[low] = 1.0 - tau[low]
    if np.any(solve):
        ts = tau[solve]
        lo = np.full(ts.shape, math.log(a_sp))
        hi = np.log(1.0 / ts)
        for _ in range(64):
            mid = 0.5 * (lo + hi)
            above = _ms_mean_p2(np.exp(mid)) / np.exp(mid) > ts  # tau(a) decreases along the branch
            lo = np.where(above, mid, lo)
            hi = np.where(above, hi, mid)
        q[solve] = _ms_mean_p2(np.exp(0.5 * (lo + hi)))
    return scalar_or_array(q)


@lru_cache(maxsize=1)
def maier_saupe_table():
    r"""The cached Maier–Saupe table (t, Q) on [0, 1] for linear interpolation in the kernel.

    ``MS_TABLE_POINTS`` (2049) nodes, uniform in :math:`s = \sqrt{t_s - t}` with t_s ≈ 1.01199 the
    superheating limit of the nematic branch, so the spacing shrinks toward t = 1 where Q bends
    fastest (Q - Q_s goes as s near t_s). Linear interpolation is within 2.2e-7 of
    :func:`maier_saupe_order` on [0.3, 1) and 2e-8 below. The first node is t = 0, Q = 1; the last
    t = 1, Q = Q_NI (the limit from below; the kernel returns 0 at t >= 1). Built on first call (a
    few ms), never at import; the arrays are read-only.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        Reduced temperatures t, increasing [1]; order parameters Q [1].
    """
    _, tau_sp, _, _, tau_ni = _ms_constants()
    t_s = tau_sp / tau_ni
    s = np.linspace(math.sqrt(t_s), math.sqrt(t_s - 1.0), MS_TABLE_POINTS)
    t = t_s - s * s
    t[0], t[-1] = 0.0, 1.0
    q = np.empty_like(t)
    q[:-1] = maier_saupe_order(t[:-1])
    q[-1] = _ms_constants()[3]
    t.setflags(write=False)
    q.setflags(write=False)
    return t, q


def nematic_order(conversion, temperature, *, law, clearing_temperature, clearing_shift, exponent=0.2):
    r"""Nematic order parameter Q(x, T) by the chosen law.

    With :math:`T_{NI}(x)` from :func:`transition_temperature` and t = T / T_NI(x):

    * ``"none"``: Q = 0;
    * ``"maier-saupe"``: Q = Q_MS(t), linear interpolation in :func:`maier_saupe_table` (as the
      kernel does; within 2.2e-7 of the solved root), 0 at t >= 1 (first-order jump);
    * ``"haller"``: :math:`Q = (1 - t)^{\beta}` for t < 1, 0 above: continuous, for elastomers whose
      transition is smeared.

    Parameters
    ----------
    conversion : float or array_like
        Product fraction x in [0, 1] [1].
    temperature : float or array_like
        Temperature T > 0 [K] (broadcast with ``conversion``).
    law : str
        One of ``ORDER_LAW_NAMES``.
    clearing_temperature : float
        T_NI0 at x = 0 [K].
    clearing_shift : float
        Drop of T_NI from x = 0 to x = 1 [K].
    exponent : float
        Haller's beta in (0, 1] [1] (typically 0.15–0.25).

    Returns
    -------
    float or numpy.ndarray
        Q [1].

    References
    ----------
    .. [1] Maier, W. and Saupe, A. Z. Naturforsch. 14a (1959) 882.
    .. [2] Haller, I. Prog. Solid State Chem. 10 (1975) 103.
    """
    if law not in ORDER_LAW_NAMES:
        raise ActsimInputError(f"liquid_crystal.law: {law!r} is not one of {', '.join(ORDER_LAW_NAMES)}")
    check_range(exponent, field="liquid_crystal.exponent", unit="1", lo=0.0, hi=1.0, lo_open=True)
    T = _checked_array(temperature, "temperature", "K", 0.0, np.inf, lo_open=True)
    tni = np.asarray(transition_temperature(conversion, clearing_temperature=clearing_temperature,
                                            clearing_shift=clearing_shift))
    t, _ = np.broadcast_arrays(T / tni, tni)
    if law == "none":
        return scalar_or_array(np.zeros(t.shape))
    if law == "haller":
        q = np.where(t < 1.0, np.clip(1.0 - t, 0.0, None) ** exponent, 0.0)
    else:
        table_t, table_q = maier_saupe_table()
        q = np.where(t < 1.0, np.interp(t, table_t, table_q), 0.0)
    return scalar_or_array(q)


@njit(cache=True)
def order_nb(x, T, law_code, T_ni0, shift, exponent, table_t, table_q):
    """Kernel step: Q of one cell, as :func:`nematic_order` (no checks).

    Parameters
    ----------
    x, T : float
        Conversion [1], temperature [K].
    law_code : int
        ORDER_NONE, ORDER_MAIER_SAUPE or ORDER_HALLER.
    T_ni0, shift : float
        Clearing temperature at x = 0 and its drop from x = 0 to 1 [K].
    exponent : float
        Haller's beta [1].
    table_t, table_q : numpy.ndarray
        :func:`maier_saupe_table` [1], [1].

    Returns
    -------
    float
        Q [1].
    """
    if law_code == ORDER_NONE:
        return 0.0
    tni = max(T_ni0 - shift * x, CLEARING_FLOOR)
    t = T / tni
    if t >= 1.0:
        return 0.0
    if law_code == ORDER_HALLER:
        return (1.0 - t) ** exponent
    if t <= table_t[0]:
        return table_q[0]
    j = np.searchsorted(table_t, t, side="right") - 1
    slope = (table_q[j + 1] - table_q[j]) / (table_t[j + 1] - table_t[j])
    return slope * (t - table_t[j]) + table_q[j]


def glassy_strains(order, *, reference_order, c_par, c_perp=None):
    r"""Spontaneous strains of a glassy liquid-crystal network, linear in the change of order.

    .. math:: e_\parallel = c_\parallel (Q - Q_\mathrm{ref}), \qquad e_\perp = c_\perp (Q - Q_\mathrm{ref})

    relative to the state the network was made in (Q_ref at the preparation temperature, x = 0).
    ``c_perp`` defaults to -c_par / 2, volume-conserving to first order (common practice, no source).

    Parameters
    ----------
    order : float or array_like
        Q [1].
    reference_order : float
        Q_ref [1].
    c_par : float
        Strain along the director per unit Q [1] (positive: the network lengthens along n as Q rises).
    c_perp : float, optional
        Strain across the director per unit Q [1]; None: -c_par / 2.

    Returns
    -------
    (float or numpy.ndarray, float or numpy.ndarray)
        e_par [1], e_perp [1].
    """
    if c_perp is None:
        c_perp = -0.5 * c_par
    dq = np.asarray(order, float) - reference_order
    return scalar_or_array(c_par * dq), scalar_or_array(c_perp * dq)


def elastomer_strains(order, *, reference_order):
    r"""Spontaneous strains of a nematic elastomer from the step-length tensor.

    The chain step lengths along and across the director are :math:`\ell_\parallel = a(1 + 2Q)`,
    :math:`\ell_\perp = a(1 - Q)`, anisotropy :math:`r = \ell_\parallel/\ell_\perp`. The incompressible
    spontaneous stretches relative to the preparation state (r_ref from Q_ref) are

    .. math:: \lambda_\parallel = (r / r_\mathrm{ref})^{1/3}, \qquad
       \lambda_\perp = (r_\mathrm{ref} / r)^{1/6}, \qquad
       \frac{r}{r_\mathrm{ref}} - 1 = \frac{3 (Q - Q_\mathrm{ref})}{(1 - Q)(1 + 2 Q_\mathrm{ref})}

    returned as engineering strains :math:`\lambda - 1`, computed with log1p/expm1 from the exact
    difference above (no cancellation at small Q - Q_ref). Full loss of order from Q_ref contracts
    the director axis by :math:`r_\mathrm{ref}^{-1/3}`.

    Parameters
    ----------
    order : float or array_like
        Q in (-1/2, 1) [1].
    reference_order : float
        Q_ref in (-1/2, 1) [1].

    Returns
    -------
    (float or numpy.ndarray, float or numpy.ndarray)
        e_par = lambda_par - 1 [1], e_perp = lambda_perp - 1 [1].

    References
    ----------
    .. [1] Warner, M. and Terentjev, E. M. Liquid Crystal Elastomers, Oxford University Press 2003, ch. 6.
    """
    q = _checked_array(order, "order", "1", -0.5, 1.0, lo_open=True, hi_open=True)
    check_range(reference_order, field="liquid_crystal.reference_order", unit="1", lo=-0.5, hi=1.0,
                lo_open=True, hi_open=True)
    lr = np.log1p(3.0 * (q - reference_order) / ((1.0 - q) * (1.0 + 2.0 * reference_order)))
    return scalar_or_array(np.expm1(lr / 3.0)), scalar_or_array(np.expm1(-lr / 6.0))


@njit(cache=True)
def lc_strains_nb(Q, Q_ref, kind, c_par, c_perp):
    """Kernel step: (e_par, e_perp) of one cell, as :func:`glassy_strains` / :func:`elastomer_strains`.

    Parameters
    ----------
    Q, Q_ref : float
        Order parameter and its reference [1].
    kind : int
        LC_NONE, LC_GLASSY or LC_ELASTOMER.
    c_par, c_perp : float
        Glassy coefficients [1] (c_perp given explicitly; unused for elastomers).

    Returns
    -------
    (float, float)
        e_par [1], e_perp [1].
    """
    if kind == LC_GLASSY:
        dq = Q - Q_ref
        return c_par * dq, c_perp * dq
    if kind == LC_ELASTOMER:
        lr = math.log1p(3.0 * (Q - Q_ref) / ((1.0 - Q) * (1.0 + 2.0 * Q_ref)))
        return math.expm1(lr / 3.0), math.expm1(-lr / 6.0)
    return 0.0, 0.0


def _angle(value, field, lo, hi):
    """A finite angle in [lo, hi] rad, or the one-line error."""
    if not isinstance(value, (int, float, np.floating, np.integer)) or not math.isfinite(value):
        raise ActsimInputError(f"{field}: {value!r} is not a finite angle (rad)")
    return float(check_range(float(value), field=field, unit="rad", lo=lo, hi=hi))


def director_profile(kind, zeta, *, angle=0.0, angle_top=None, tilt_bottom=None, tilt_top=None, table=None):
    r"""In-plane angle phi and tilt of the director at heights zeta through a layer.

    zeta in [0, 1] is the normalised height of each cell centre in the layer (0 bottom face, 1 top).

    * ``"planar"``: phi = angle, tilt = 0;
    * ``"homeotropic"``: phi = angle, tilt = pi/2;
    * ``"splay"``: phi = angle, tilt linear from tilt_bottom to tilt_top (defaults 0 -> pi/2);
    * ``"twisted"``: tilt = 0, phi linear from angle to angle_top (``angle_top`` required);
    * ``"hybrid"``: both linear: phi from angle to angle_top (default angle), tilt from tilt_bottom to
      tilt_top (defaults 0 -> pi/2);
    * ``"table"``: phi and tilt interpolated linearly in ``table = (zeta, phi, tilt)`` (zeta increasing
      within [0, 1]; held constant past its ends).

    .. math:: \phi(\zeta) = \phi_b + (\phi_t - \phi_b)\,\zeta, \qquad
       \theta(\zeta) = \theta_b + (\theta_t - \theta_b)\,\zeta

    Fields a kind does not use are ignored.
    Parameters
    ----------
    kind : str
        One of ``DIRECTOR_KINDS``.
    zeta : array_like
        Normalised heights in [0, 1] [1].
    angle : float
        In-plane angle from the strip axis at the bottom face, in [-2 pi, 2 pi] [rad].
    angle_top : float, optional
        In-plane angle at the top face (twisted, hybrid) [rad].
    tilt_bottom, tilt_top : float, optional
        Tilt at the bottom and top faces, in [-pi/2, pi/2] [rad] (splay, hybrid).
    table : tuple of array_like, optional
        (zeta [1], phi [rad], tilt [rad]) for kind ``"table"``.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        phi [rad], tilt [rad], shaped like ``zeta``.
    """
    if kind not in DIRECTOR_KINDS:
        raise ActsimInputError(f"director.kind: {kind!r} is not one of {', '.join(DIRECTOR_KINDS)}")
    z = _checked_array(zeta, "director.zeta", "1", 0.0, 1.0)
    two_pi, half_pi = 2.0 * math.pi, 0.5 * math.pi
    phi_b = _angle(angle, "director.angle", -two_pi, two_pi)
    if kind == "table":
        if table is None or len(table) != 3:
            raise ActsimInputError("director.table: needs three columns (zeta, phi, tilt) for kind 'table'")
        tz, tp, tt = (np.asarray(c, dtype=float) for c in table)
        if tz.ndim != 1 or tz.size < 2 or tp.shape != tz.shape or tt.shape != tz.shape:
            raise ActsimInputError(f"director.table: needs three columns of equal length >= 2, got shapes "
                                   f"{tz.shape}, {tp.shape}, {tt.shape}")
        _checked_array(tz, "director.table.zeta", "1", 0.0, 1.0)
        _checked_array(tp, "director.table.phi", "rad", -two_pi, two_pi)
        _checked_array(tt, "director.table.tilt", "rad", -half_pi, half_pi)
        if np.any(np.diff(tz) <= 0.0):
            raise ActsimInputError("director.table.zeta: must increase strictly (normalised height 0..1)")
        return np.interp(z, tz, tp), np.interp(z, tz, tt)
    phi_t = phi_b
    if kind in ("twisted", "hybrid"):
        if angle_top is None and kind == "twisted":
            raise ActsimInputError("director.angle_top: required for kind 'twisted' (rad, in [-2 pi, 2 pi])")
        if angle_top is not None:
            phi_t = _angle(angle_top, "director.angle_top", -two_pi, two_pi)
    tilt_b = tilt_t = 0.0
    if kind == "homeotropic":
        tilt_b = tilt_t = half_pi
    elif kind in ("splay", "hybrid"):
        tilt_b = 0.0 if tilt_bottom is None else _angle(tilt_bottom, "director.tilt_bottom", -half_pi, half_pi)
        tilt_t = half_pi if tilt_top is None else _angle(tilt_top, "director.tilt_top", -half_pi, half_pi)
    return phi_b + (phi_t - phi_b) * z, tilt_b + (tilt_t - tilt_b) * z


def director_weights(phi, tilt):
    r"""In-plane projection weights of n n, so that exx = e_perp + (e_par - e_perp) wxx etc.

    .. math:: w_{xx} = \cos^2\theta \cos^2\phi, \quad w_{yy} = \cos^2\theta \sin^2\phi, \quad
       w_{xy} = 2 \cos^2\theta \cos\phi \sin\phi

    (w_xy is the weight of the engineering shear gxy = 2 exy).

    Parameters
    ----------
    phi, tilt : float or array_like
        In-plane angle of the director from the strip axis, tilt out of the plane [rad].

    Returns
    -------
    (numpy.ndarray, numpy.ndarray, numpy.ndarray)
        wxx [1], wyy [1], wxy [1].
    """
    p = np.asarray(phi, float)
    c2 = np.cos(np.asarray(tilt, float)) ** 2
    cp, sp = np.cos(p), np.sin(p)
    return (scalar_or_array(c2 * cp * cp), scalar_or_array(c2 * sp * sp), scalar_or_array(2.0 * c2 * cp * sp))


def inplane_eigenstrain(*, e_par, e_perp, phi, tilt):
    r"""In-plane components of the eigenstrain tensor e_perp I + (e_par - e_perp) n n.

    .. math:: e_{xx} = e_\perp + D \cos^2\theta \cos^2\phi, \quad
       e_{yy} = e_\perp + D \cos^2\theta \sin^2\phi, \quad
       \gamma_{xy} = 2 D \cos^2\theta \cos\phi \sin\phi, \qquad D = e_\parallel - e_\perp

    Parameters
    ----------
    e_par, e_perp : float or array_like
        Strains along and across the director [1].
    phi, tilt : float or array_like
        In-plane angle and tilt of the director [rad].

    Returns
    -------
    (numpy.ndarray, numpy.ndarray, numpy.ndarray)
        exx [1], eyy [1], engineering shear gxy = 2 exy [1] (all broadcast).
    """
    wxx, wyy, wxy = director_weights(phi, tilt)
    ep = np.asarray(e_perp, float)
    d = np.asarray(e_par, float) - ep
    return scalar_or_array(ep + d * wxx), scalar_or_array(ep + d * wyy), scalar_or_array(d * wxy + 0.0 * ep)


@njit(cache=True)
def inplane_eigenstrain_nb(e_par, e_perp, wxx, wyy, wxy):
    """Kernel step: (exx, eyy, gxy) of one cell from the strains and the precomputed :func:`director_weights`.

    Parameters
    ----------
    e_par, e_perp : float
        Strains along and across the director [1].
    wxx, wyy, wxy : float
        Director weights of the cell [1].

    Returns
    -------
    (float, float, float)
        exx [1], eyy [1], gxy [1].
    """
    d = e_par - e_perp
    return e_perp + d * wxx, e_perp + d * wyy, d * wxy
