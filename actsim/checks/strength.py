"""Static strength check of a layered strip: von Mises equivalent stress against yield.

The mechanics stage gives the bending-direction stress sigma_x(t, z) through the
thickness. This module turns it into an equivalent (von Mises) stress, takes the
largest magnitude per layer over the whole history, and compares it with each
layer's yield strength. It is a linear-elastic, small-strain check at the
stress-profile level: no stress concentration (clamp edges, notches, layer
ends), no interface (delamination) stress, no creep, no temperature dependence of
the yield strength beyond what the caller passes in. Apply the factors that the
governing code or standard for the device asks for; this module does not choose
them.
"""

from __future__ import annotations

from typing import Sequence

import numpy as np

from ..errors import ActsimInputError
from ..units import check_range
from .verdict import CheckResult, Limit

__all__ = ["von_mises", "plate_biaxial_stress", "plate_thermal_transverse_stress", "stress_check"]


def _as_finite_array(x, *, field: str, unit: str = "Pa") -> np.ndarray:
    try:
        a = np.asarray(x, dtype=float)
    except (TypeError, ValueError):
        raise ActsimInputError(f"{field}: {x!r} is not a number or array of numbers [{unit}]") from None
    if not np.all(np.isfinite(a)):
        raise ActsimInputError(f"{field}: contains NaN or inf; finite values are required [{unit}]")
    return a


def von_mises(*, sigma_x, sigma_y=0.0, sigma_z=0.0, tau_xy=0.0, tau_yz=0.0, tau_zx=0.0):
    r"""Von Mises equivalent stress of a general stress state (vectorised).

    Parameters
    ----------
    sigma_x, sigma_y, sigma_z : float or array_like
        Normal stresses [Pa]. Arrays broadcast against each other.
    tau_xy, tau_yz, tau_zx : float or array_like
        Shear stresses [Pa].

    Returns
    -------
    float or numpy.ndarray
        Equivalent stress, >= 0 [Pa].

    Notes
    -----
    .. math::

        \sigma_\mathrm{vM} = \sqrt{\tfrac12\left[(\sigma_x-\sigma_y)^2 + (\sigma_y-\sigma_z)^2
        + (\sigma_z-\sigma_x)^2\right] + 3\left(\tau_{xy}^2+\tau_{yz}^2+\tau_{zx}^2\right)}

    Identities: uniaxial :math:`\sigma` gives :math:`|\sigma|`; pure shear
    :math:`\tau` gives :math:`\sqrt3|\tau|`; equibiaxial :math:`\sigma_x=\sigma_y=\sigma`
    gives :math:`|\sigma|`.

    References
    ----------
    .. [1] N. E. Dowling, "Mechanical Behavior of Materials", 4th ed., Pearson,
       2013, ch. 7 (yielding and fracture under combined stresses).
    .. [2] R. von Mises, "Mechanik der festen Körper im plastisch-deformablen
       Zustand", Nachr. Ges. Wiss. Göttingen, Math.-Phys. Kl., 1913, 582–592.
    """
    sx = _as_finite_array(sigma_x, field="sigma_x")
    sy = _as_finite_array(sigma_y, field="sigma_y")
    sz = _as_finite_array(sigma_z, field="sigma_z")
    txy = _as_finite_array(tau_xy, field="tau_xy")
    tyz = _as_finite_array(tau_yz, field="tau_yz")
    tzx = _as_finite_array(tau_zx, field="tau_zx")
    try:
        j = 0.5 * ((sx - sy) ** 2 + (sy - sz) ** 2 + (sz - sx) ** 2) + 3.0 * (txy**2 + tyz**2 + tzx**2)
    except ValueError:
        raise ActsimInputError("von_mises: stress arrays have shapes that do not broadcast together") from None
    out = np.sqrt(j)
    return float(out) if out.ndim == 0 else out


def plate_biaxial_stress(*, sigma_x, poisson_ratio, transverse_eigen_stress=0.0):
    r"""In-plane stresses of a wide plate in cylindrical bending (plane strain across the width).

    Parameters
    ----------
    sigma_x : float or array_like
        Stress along the bending direction from the beam model [Pa].
    poisson_ratio : float or array_like
        Poisson's ratio, broadcast against ``sigma_x`` (for example one value per
        cell) [-], in [0, 0.5].
    transverse_eigen_stress : float or array_like, optional
        Stress that an in-plane isotropic eigenstrain adds across the width,
        :math:`-E\,\varepsilon^*_\mathrm{iso}`, broadcast against ``sigma_x``;
        for thermal strain see :func:`plate_thermal_transverse_stress`.
        Default 0 (eigenstrain along x only, or none) [Pa].

    Returns
    -------
    tuple of (numpy.ndarray or float, numpy.ndarray or float)
        ``(sigma_x, sigma_y)`` [Pa]: the input stress and the transverse stress.

    Notes
    -----
    A strip much wider than its thickness cannot contract freely across its
    width away from its free edges, so :math:`\varepsilon_y = 0`. With
    :math:`\sigma_z = 0`, an eigenstrain :math:`\varepsilon^*_x` along x only
    (an aligned contracting film, or none for an external load) and an
    isotropic in-plane eigenstrain :math:`\varepsilon^*_\mathrm{iso}` (thermal
    expansion :math:`\alpha (T - T_\mathrm{ref})`, isotropic swelling),
    Hooke's law :math:`\varepsilon_y = (\sigma_y - \nu\sigma_x)/E + \varepsilon^*_\mathrm{iso} = 0`
    gives

    .. math::

        \sigma_y = \nu\,\sigma_x - E\,\varepsilon^*_\mathrm{iso}
                 = \nu\,\sigma_x + \sigma^*_y ,

    with :math:`E` the Young's modulus (not the plane-strain modulus
    :math:`E/(1-\nu^2)`). Without the isotropic eigenstrain
    (:math:`\sigma^*_y = 0`) :math:`\sigma_\mathrm{vM} = |\sigma_x|\sqrt{1 - \nu + \nu^2}`,
    which is never larger than :math:`|\sigma_x|` for :math:`0 \le \nu \le 1/2`.
    With it the plate state can be far larger than :math:`|\sigma_x|`: a
    uniformly heated free homogeneous plate has :math:`\sigma_x = 0` but
    :math:`\sigma_y = -E\alpha\,\Delta T`, so :math:`\sigma_\mathrm{vM} = E\alpha|\Delta T|`;
    neither the uniaxial check nor :math:`\sigma_y = \nu\sigma_x` is
    conservative then. Near the free side edges the transverse stress falls to
    zero and the state tends to uniaxial (narrow-beam) stress; the larger of
    the two states governs.

    References
    ----------
    .. [1] S. Timoshenko and S. Woinowsky-Krieger, "Theory of Plates and Shells",
       2nd ed., McGraw-Hill, 1959, ch. 1 (bending of long rectangular plates to
       a cylindrical surface) and sec. 14 (thermal stresses in plates).
    .. [2] S. P. Timoshenko and J. N. Goodier, "Theory of Elasticity", 3rd ed.,
       McGraw-Hill, 1970, ch. 13 (thermal stress, plane strain).
    """
    sx = _as_finite_array(sigma_x, field="sigma_x")
    nu = _as_finite_array(poisson_ratio, field="poisson_ratio", unit="1")
    eig = _as_finite_array(transverse_eigen_stress, field="transverse_eigen_stress")
    if np.any(nu < 0) or np.any(nu > 0.5):
        bad = nu[(nu < 0) | (nu > 0.5)].ravel()[0] if nu.ndim else float(nu)
        raise ActsimInputError(f"poisson_ratio: {bad:g} is outside the allowed range (>= 0 and <= 0.5)")
    try:
        sy = nu * sx + eig
    except ValueError:
        raise ActsimInputError(
            "plate_biaxial_stress: poisson_ratio or transverse_eigen_stress does not broadcast against sigma_x") from None
    if sy.ndim == 0:
        return float(sx), float(sy)
    return np.broadcast_to(sx, sy.shape).copy(), sy


def plate_thermal_transverse_stress(*, young_modulus, thermal_expansion, temperature, reference_temperature):
    r"""Transverse stress that isotropic thermal strain adds in a wide plate (plane strain across the width).

    Parameters
    ----------
    young_modulus : float or array_like
        Young's modulus :math:`E` of the cell (the plane-strain section modulus
        times :math:`1-\nu^2`) [Pa], >= 0.
    thermal_expansion : float or array_like
        Linear thermal expansion coefficient :math:`\alpha` [1/K].
    temperature : float or array_like
        Temperature of the cell [K].
    reference_temperature : float or array_like
        Temperature of zero thermal strain [K].

    Returns
    -------
    float or numpy.ndarray
        :math:`\sigma^*_y` to pass as ``transverse_eigen_stress`` to
        :func:`plate_biaxial_stress` [Pa].

    Notes
    -----
    .. math::

        \sigma^*_y = -E\,\alpha\,(T - T_\mathrm{ref})

    the term an isotropic eigenstrain adds to :math:`\sigma_y = \nu\sigma_x`
    when :math:`\varepsilon_y = 0` (see :func:`plate_biaxial_stress`).

    References
    ----------
    .. [1] S. P. Timoshenko and J. N. Goodier, "Theory of Elasticity", 3rd ed.,
       McGraw-Hill, 1970, ch. 13 (thermal stress, plane strain).
    """
    e = _as_finite_array(young_modulus, field="young_modulus")
    if np.any(e < 0):
        raise ActsimInputError(f"young_modulus: {float(e.min()):g} is outside the allowed range (>= 0 Pa)")
    a = _as_finite_array(thermal_expansion, field="thermal_expansion", unit="1/K")
    t = _as_finite_array(temperature, field="temperature", unit="K")
    t0 = _as_finite_array(reference_temperature, field="reference_temperature", unit="K")
    try:
        out = -e * a * (t - t0)
    except ValueError:
        raise ActsimInputError("plate_thermal_transverse_stress: the arrays do not broadcast together") from None
    return float(out) if out.ndim == 0 else out


def _limit_value(x, *, field: str):
    """A float or a :class:`Limit`; returns (value, source, validity)."""
    if isinstance(x, Limit):
        if x.unit != "Pa":
            raise ActsimInputError(f"{field}: limit {x.name} has unit {x.unit}, a stress in Pa is required")
        return float(x.value), x.source, x.validity
    try:
        v = float(x)
    except (TypeError, ValueError):
        raise ActsimInputError(f"{field}: {x!r} is not a stress [Pa]") from None
    return v, None, None


def stress_check(
    *,
    stress_profile,
    layer_index,
    yield_strength_per_layer: Sequence,
    poisson_ratio=None,
    layer_names: Sequence[str] | None = None,
    required_safety_factor: float = 1.0,
    source: str = "yield strength given by the caller",
    validity: str = "",
    transverse_eigen_stress=None,
) -> list[CheckResult]:
    r"""Per-layer safety factor against yield over a stress history.

    Parameters
    ----------
    stress_profile : array_like, shape (n_z,) or (n_time, n_z)
        Bending-direction stress :math:`\sigma_x` per cell through the thickness,
        at one time or over a history [Pa].
    layer_index : array_like of int, shape (n_z,)
        Layer number (0 .. n_layers-1) of each cell [-].
    yield_strength_per_layer : sequence of float or Limit, length n_layers
        Yield strength of each layer [Pa]. A :class:`~actsim.checks.verdict.Limit`
        brings its own source and validity into the result.
    poisson_ratio : None, float or sequence of float (one per layer), optional
        ``None``: narrow strip, uniaxial stress (:math:`\sigma_\mathrm{vM}=|\sigma_x|`).
        Given: wide plate in plane strain, :math:`\sigma_y=\nu\sigma_x` (plus ``transverse_eigen_stress``), see
        :func:`plate_biaxial_stress` [-].
    layer_names : sequence of str, optional
        Names shown in the check labels.
    required_safety_factor : float, optional
        A layer passes when its safety factor is at least this (>= 1). The
        caller chooses it from the governing code or standard [-].
    source, validity : str, optional
        Source and validity text for yield strengths given as plain floats.
    transverse_eigen_stress : None or array_like, optional
        Plate only: the transverse stress of an isotropic eigenstrain per cell
        (and time), broadcast against ``stress_profile``, see
        :func:`plate_biaxial_stress` and :func:`plate_thermal_transverse_stress` [Pa].

    Returns
    -------
    list of CheckResult
        One per layer: value = largest von Mises stress in the layer over the
        history [Pa], limit = yield strength [Pa], margin = safety factor.

    Notes
    -----
    .. math::

        S_k = \frac{\sigma_{y,k}}{\max_{t,\ z \in k} \sigma_\mathrm{vM}(t, z)}

    The von Mises stress is an even function of the stress, so tension and
    compression count alike (the same yield strength is used for both, which is
    common practice, no source, for polymers whose compressive yield is usually
    higher). Stresses are taken at cell values; with cell-centred values the
    surface stress of a layer is under-estimated by up to half a cell's
    gradient: refine the grid or pass face values.

    References
    ----------
    .. [1] N. E. Dowling, "Mechanical Behavior of Materials", 4th ed., Pearson,
       2013, ch. 7 (safety factors against yielding, von Mises criterion).
    """
    s = _as_finite_array(stress_profile, field="stress_profile")
    if s.ndim == 1:
        s = s[None, :]
    if s.ndim != 2 or s.shape[1] == 0 or s.shape[0] == 0:
        raise ActsimInputError(f"stress_profile: shape {np.shape(stress_profile)} given; (n_z,) or (n_time, n_z) required [Pa]")
    n_z = s.shape[1]
    li = np.asarray(layer_index)
    if li.shape != (n_z,) or not np.issubdtype(li.dtype, np.integer):
        raise ActsimInputError(f"layer_index: shape {li.shape} of dtype {li.dtype}; {n_z} integers (one per cell) required")
    n_layers = len(yield_strength_per_layer)
    if n_layers == 0:
        raise ActsimInputError("yield_strength_per_layer: empty; one yield strength per layer required [Pa]")
    if li.min() < 0 or li.max() >= n_layers:
        raise ActsimInputError(f"layer_index: values {li.min()}..{li.max()} outside 0..{n_layers - 1} (one per yield strength given)")
    if layer_names is not None and len(layer_names) != n_layers:
        raise ActsimInputError(f"layer_names: {len(layer_names)} names for {n_layers} layers")
    check_range(required_safety_factor, field="required_safety_factor", unit="1", lo=1.0)

    if poisson_ratio is None:
        if transverse_eigen_stress is not None:
            raise ActsimInputError("transverse_eigen_stress: given without poisson_ratio; it applies to the wide plate only")
        vm = np.abs(s)
        state = "uniaxial stress (narrow strip)"
    else:
        nu = np.atleast_1d(_as_finite_array(poisson_ratio, field="poisson_ratio", unit="1"))
        if nu.size == 1:
            nu_cell = np.full(n_z, float(nu[0]))
        elif nu.size == n_layers:
            nu_cell = nu[li]
        else:
            raise ActsimInputError(f"poisson_ratio: {nu.size} values for {n_layers} layers; give one, or one per layer")
        eig = 0.0
        state = "wide plate, plane strain across the width (sigma_y = nu*sigma_x)"
        if transverse_eigen_stress is not None:
            eig = _as_finite_array(transverse_eigen_stress, field="transverse_eigen_stress")
            if eig.ndim == 1:
                eig = eig[None, :]
            state = "wide plate, plane strain across the width (sigma_y = nu*sigma_x - E*eigenstrain_iso)"
        sx, sy = plate_biaxial_stress(sigma_x=s, poisson_ratio=nu_cell[None, :], transverse_eigen_stress=eig)
        vm = von_mises(sigma_x=sx, sigma_y=sy)

    results = []
    for k in range(n_layers):
        ys, src, val = _limit_value(yield_strength_per_layer[k], field=f"yield_strength_per_layer[{k}]")
        check_range(ys, field=f"yield_strength_per_layer[{k}]", unit="Pa", lo=0.0, lo_open=True)
        cells = np.flatnonzero(li == k)
        name = f"layer {k}" + (f" ({layer_names[k]})" if layer_names is not None else "")
        if cells.size == 0:
            raise ActsimInputError(f"layer_index: no cell belongs to {name}")
        sub = vm[:, cells]
        flat = int(np.argmax(sub))
        t_i, c_i = np.unravel_index(flat, sub.shape)
        peak = float(sub[t_i, c_i])
        note = (
            f"{state}; largest equivalent stress at time index {t_i}, cell {int(cells[c_i])}; "
            f"required safety factor {required_safety_factor:g} (caller's choice); "
            "no stress concentration, interface stress, creep or temperature effect modelled"
        )
        results.append(
            CheckResult.upper_bound(
                check=f"yield strength, {name}",
                value=peak,
                limit=ys,
                unit="Pa",
                source=src if src is not None else source,
                validity=val if val is not None else validity,
                note=note,
                margin_kind="ratio",
                required_margin=required_safety_factor,
            )
        )
    return results
