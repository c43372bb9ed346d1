"""Large deflection of a cantilever strip: the elastica with spontaneous curvature.

A strip of free length ``L`` is clamped at ``s = 0`` with its tangent along
+x. It lies in the (x, y) plane, where y is the strip's thickness direction
(+z of the layered-beam model), so a positive spontaneous curvature turns the
tip toward +y. The arc length ``s`` runs from the clamp to the tip; ``theta(s)``
is the tangent angle from +x, counter-clockwise positive.

The strip is inextensible and unshearable (Euler-Bernoulli elastica). The
bending moment carried across the section at ``s`` is

.. math::

    EI\\,\\bigl(\\theta'(s) - \\kappa_0(s)\\bigr) = M(s)
    = \\mathbf{k}\\cdot\\Bigl[(\\mathbf r(L) - \\mathbf r(s))\\times \\mathbf F\\Bigr] + M_L
      + \\mathbf{k}\\cdot\\int_s^L (\\mathbf r(t) - \\mathbf r(s))\\times w\\,\\hat{\\mathbf g}\\,dt

with ``F`` a tip force fixed in space (a dead load), ``M_L`` a tip moment,
``w`` the weight per length and ``g_hat`` the unit gravity direction.
Differentiating once gives the first-order system solved here (in units of
``L`` and ``EI``):

.. math::

    \\theta' = \\kappa_0 + m, \\quad
    m' = -\\bigl(\\cos\\theta\\,N_y - \\sin\\theta\\,N_x\\bigr), \\quad
    x' = \\cos\\theta, \\quad y' = \\sin\\theta,

where ``N(s) = F + (L - s) w g_hat`` is the force carried by the part of the
strip beyond ``s``. It is solved as a boundary-value problem with
:func:`scipy.integrate.solve_bvp`, written for ``phi = theta - K0(s)`` with
``K0(s) = int_0^s kappa0``, so that a curvature that jumps (a lit hinge) leaves
the right-hand side continuous. Loads are applied by continuation from the
unloaded shape, which carries the solution past tip rotations of 180 degrees.

All functions take and return SI values (m, N, N m, N m^2, rad).

References
----------
.. [1] Bisshopp, K. E. and Drucker, D. C., "Large deflection of cantilever
   beams", Quarterly of Applied Mathematics 3(3), 272-275, 1945.
.. [2] Timoshenko, S. P. and Gere, J. M., *Theory of Elastic Stability*,
   2nd ed., McGraw-Hill, 1961 (section 2.7, the elastica).
.. [3] Kierzenka, J. and Shampine, L. F., "A BVP solver based on residual
   control and the MATLAB PSE", ACM Transactions on Mathematical Software
   27(3), 299-316, 2001 (the method of scipy.integrate.solve_bvp).
"""

from __future__ import annotations

import math

import numpy as np

from .errors import ActsimInputError, ActsimSimulationError

__all__ = [
    "SolveBudget",
    "ElasticaLimitError",
    "FULL_TURN",
    "bend_beyond_range",
    "progress_bar",
    "ElasticaShape",
    "BlockedTip",
    "LoadLine",
    "PiecewiseCurvature",
    "cantilever_shape",
    "blocked_tip_force",
    "load_line",
    "circular_arc_tip",
    "piecewise_curvature",
]

#: Collocation tolerance handed to solve_bvp (relative residual of the
#: dimensionless system); with it tip positions agree with closed forms to
#: about 1e-8 L.
_BVP_TOL = 1e-6
_MAX_NODES = 5000
#: Smallest continuation step before giving up (fraction of the load).
_MIN_STEP = 1.0 / 512
#: Largest dimensionless load accepted (|F| L^2/EI, |M| L/EI, w L^3/EI). Beyond
#: it the bending boundary layer at the clamp, of length sqrt(EI/|F|), is
#: shorter than L/1000 and, for any strip thinner than L/1000, shorter than
#: the thickness, where the slender-beam model itself no longer holds.
_MAX_LOAD = 1e6
_MAX_CONTINUATION_STEPS = 300
from .solve_budget import (  # noqa: E402,F401 (re-exported: the work limits of the solves live there)
    DEFAULT_MAX_SOLVES, DEFAULT_TIME_LIMIT, FULL_TURN, ElasticaLimitError, SolveBudget, bend_beyond_range,
    current_budget, progress_bar)
from .solve_budget import budget_scope as _budget_scope  # noqa: E402
from .solve_budget import whole_number as _n_points  # noqa: E402
from .elastica_results import BlockedTip, ElasticaShape, LoadLine  # noqa: E402,F401 (re-exported)
from .curvature_profile import PiecewiseCurvature, piecewise_curvature  # noqa: E402,F401 (re-exported)
from .curvature_profile import profile_of as _profile  # noqa: E402


# --------------------------------------------------------------------------- input checks


def _positive(value, field_name, unit):
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ActsimInputError(f"{field_name}: {value!r} is not a number [{unit}]") from None
    if not math.isfinite(v) or v <= 0.0:
        raise ActsimInputError(f"{field_name}: {v:g} is outside the allowed range (> 0 {unit})")
    return v


def _finite(value, field_name, unit):
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ActsimInputError(f"{field_name}: {value!r} is not a number [{unit}]") from None
    if not math.isfinite(v):
        raise ActsimInputError(f"{field_name}: {v!r} is not finite [{unit}]")
    return v


def _vector2(value, field_name, unit):
    try:
        arr = np.asarray(value, dtype=float).reshape(-1)
    except (TypeError, ValueError):
        raise ActsimInputError(f"{field_name}: {value!r} is not a pair of numbers [{unit}]") from None
    if arr.size != 2 or not np.all(np.isfinite(arr)):
        raise ActsimInputError(f"{field_name}: {value!r} must be two finite numbers (x, y) [{unit}]")
    return arr


# --------------------------------------------------------------------------- the BVP


class _System:
    """Dimensionless elastica ODE in y = [phi, m, x, y] with phi = theta - K(t).

    Tip force components may be unknown parameters: ``free_force`` lists the
    indices (0 for x, 1 for y) taken from ``p``.
    """

    def __init__(self, profile, force, weight, gdir, free_force=()):
        self.prof = profile
        self.force = np.asarray(force, float)
        self.weight = float(weight)
        self.gdir = np.asarray(gdir, float)
        self.free = tuple(free_force)
        self.budget = current_budget()

    def _n(self, t, p):
        fx, fy = self.force
        if 0 in self.free:
            fx = p[self.free.index(0)]
        if 1 in self.free:
            fy = p[self.free.index(1)]
        nx = fx + (1.0 - t) * self.weight * self.gdir[0]
        ny = fy + (1.0 - t) * self.weight * self.gdir[1]
        return nx, ny

    def fun(self, t, y, p=None):
        if self.budget is not None:
            self.budget.check_time()
        th = y[0] + self.prof.K(t)
        c, s = np.cos(th), np.sin(th)
        nx, ny = self._n(t, p)
        return np.vstack([y[1], -(c * ny - s * nx), c, s])

    def jac(self, t, y, p=None):
        th = y[0] + self.prof.K(t)
        c, s = np.cos(th), np.sin(th)
        nx, ny = self._n(t, p)
        n = t.size
        dfdy = np.zeros((4, 4, n))
        dfdy[0, 1] = 1.0
        dfdy[1, 0] = s * ny + c * nx
        dfdy[2, 0] = -s
        dfdy[3, 0] = c
        if not self.free:
            return dfdy
        dfdp = np.zeros((4, len(self.free), n))
        for j, comp in enumerate(self.free):
            dfdp[1, j] = s if comp == 0 else -c
        return dfdy, dfdp


def _solve(system, bc, guess, p0=None):
    """One solve_bvp call; returns the solution object or None."""
    from scipy.integrate import solve_bvp  # here, not at the top: mechanics imports this module for a closed form

    budget = current_budget()
    if budget is not None:
        budget.start_solve()
    t, y = guess
    kw = dict(tol=_BVP_TOL, max_nodes=_MAX_NODES, verbose=0)
    try:
        with np.errstate(all="ignore"):
            if p0 is None:
                sol = solve_bvp(system.fun, bc, t, y, fun_jac=system.jac, **kw)
            else:
                sol = solve_bvp(system.fun, bc, t, y, p=np.atleast_1d(p0), fun_jac=system.jac, **kw)
    except (ValueError, np.linalg.LinAlgError, FloatingPointError):
        return None
    if sol.status != 0 or not np.all(np.isfinite(sol.y)):
        return None
    if p0 is not None and not np.all(np.isfinite(sol.p)):
        return None
    return sol


def _initial_mesh(profile, n=41):
    t = np.linspace(0.0, 1.0, n)
    if profile.jumps.size:
        # drop grid points that nearly coincide with a jump, then add the jumps
        gap = np.min(np.abs(t[:, None] - profile.jumps[None, :]), axis=1)
        t = np.union1d(t[gap > 0.25 / (n - 1)], profile.jumps)
    return t


def _unloaded_guess(profile, t):
    """Exact unloaded state phi = 0, m = 0; x, y by quadrature of cos/sin K."""
    from scipy.integrate import cumulative_trapezoid

    fine = np.union1d(np.linspace(0.0, 1.0, 4001), t)
    th = profile.K(fine)
    x = cumulative_trapezoid(np.cos(th), fine, initial=0.0)
    y = cumulative_trapezoid(np.sin(th), fine, initial=0.0)
    y4 = np.vstack([np.zeros_like(t), np.zeros_like(t), np.interp(t, fine, x), np.interp(t, fine, y)])
    return t, y4


def _continuation(solve_at, state0, stops=(1.0,), first_step=0.25):
    """Walk lam from 0 to each of ``stops`` in adaptive steps.

    ``solve_at(lam, state)`` returns a new state or None. A step grows by 1.6
    after a success but never beyond ``max(first_step, lam)`` (so a large load
    is reached geometrically) and halves after a failure. Returns
    (list of states at the stops, last lam solved, last state, ok).
    """
    first_step = min(0.25, first_step)
    lam, state, step = 0.0, state0, first_step
    reached = []
    n_steps = 0
    min_step = min(_MIN_STEP, first_step / 8)
    for stop in stops:
        while lam < stop - 1e-15:
            trial = min(stop, lam + step)
            new = solve_at(trial, state)
            n_steps += 1
            if new is not None:
                lam, state = trial, new
                step = min(step * 1.6, max(first_step, lam), 0.5)
            else:
                step *= 0.5
                if step < min_step or n_steps > _MAX_CONTINUATION_STEPS:
                    return reached, lam, state, False
        reached.append(state)
    return reached, lam, state, True


def _shape_from(sol, profile, length, stiffness, n_points, **extra):
    t = np.linspace(0.0, 1.0, n_points)
    # sol.sol is the collocation solution's C1 cubic interpolant (nodes sit on curvature jumps)
    yy = sol.sol(t)
    theta = yy[0] + profile.K(t)
    s = t * length
    return ElasticaShape(
        s=s,
        x=yy[2] * length,
        y=yy[3] * length,
        theta=theta,
        bending_moment=yy[1] * stiffness / length,
        tip_x=float(sol.y[2, -1] * length),
        tip_y=float(sol.y[3, -1] * length),
        tip_angle=float(sol.y[0, -1] + profile.K(np.array([1.0]))[0]),
        **extra,
    )


# --------------------------------------------------------------------------- public API


def cantilever_shape(
    *,
    length,
    bending_stiffness,
    spontaneous_curvature,
    tip_force=(0.0, 0.0),
    tip_moment=0.0,
    weight_per_length=0.0,
    gravity_direction=(0.0, -1.0),
    n_points=201,
    raise_on_failure=True,
    budget=None,
) -> ElasticaShape:
    """Large-deflection shape of a clamped strip under spontaneous curvature and loads.

    Parameters
    ----------
    length : float
        Free length of the strip [m], > 0.
    bending_stiffness : float
        Bending stiffness EI of the whole strip (width included) [N m^2], > 0.
    spontaneous_curvature : float, callable or array_like
        Curvature the strip takes without load [1/m]: a number (uniform), a
        callable ``kappa0(s)`` of arc length [m] (sampled at 801 points and
        taken piecewise linear; use :func:`piecewise_curvature` for steps,
        which are then exact), or an array of ``n_points`` values at
        ``s = linspace(0, length, n_points)`` (piecewise linear between them).
    tip_force : tuple of float, optional
        Tip force (Fx, Fy), fixed in direction as the strip deflects [N].
    tip_moment : float, optional
        Tip moment, counter-clockwise positive (it bends toward +y) [N m].
    weight_per_length : float, optional
        Self-weight per unit length, >= 0 [N/m].
    gravity_direction : tuple of float, optional
        Direction of gravity in the (x, y) plane [-]; normalised here.
        Default (0, -1).
    n_points : int, optional
        Number of output points along the strip [-], >= 2.
    raise_on_failure : bool, optional
        If True (default) a load the solver cannot reach raises
        :class:`~actsim.errors.ActsimInputError`; if False the shape at the
        largest load reached is returned with ``success=False``.
    budget : SolveBudget, optional
        Time and solve-count limit shared with other solves (a limit object, unitless); None: a
        fresh one with the defaults (20 s), or the budget of an enclosing solve.

    Returns
    -------
    ElasticaShape
        Shape, tangent angle, bending moment and tip values.

    Raises
    ------
    ActsimInputError
        Bad input, or (with ``raise_on_failure``) no converged solution; the
        one-line message gives the largest load fraction solved.
    ElasticaLimitError
        The budget's time or solve-count limit was reached.

    Notes
    -----
    Moment balance of the part of the strip beyond ``s``:

    .. math::

        EI\\,(\\theta' - \\kappa_0) = (x_L - x) F_y - (y_L - y) F_x + M_L
            + w \\int_s^L \\bigl[(x(t) - x) g_y - (y(t) - y) g_x\\bigr] dt

    solved with scipy's collocation BVP solver (tolerance 1e-8 on the
    dimensionless system) by continuation: the loads are ramped from zero in
    adaptive steps (at least four), each solve starting from the previous
    shape. Dead loads only: the force keeps its direction as the strip turns.
    A perfectly straight strip under an axial compressive force stays on the
    straight branch (the Euler bifurcation at ``F L^2/EI = pi^2/4`` is not
    followed); give it a small curvature or transverse load to buckle it.
    Dimensionless loads above 1e6 are refused: the bending boundary layer at
    the clamp, ``sqrt(EI/|F|)``, would be shorter than ``L/1000``.

    References
    ----------
    .. [1] Bisshopp, K. E. and Drucker, D. C., "Large deflection of cantilever
       beams", Quarterly of Applied Mathematics 3(3), 272-275, 1945.
    .. [2] Timoshenko, S. P. and Gere, J. M., *Theory of Elastic Stability*,
       2nd ed., McGraw-Hill, 1961.
    .. [3] Kierzenka, J. and Shampine, L. F., "A BVP solver based on residual
       control and the MATLAB PSE", ACM Transactions on Mathematical Software
       27(3), 299-316, 2001.
    """
    L = _positive(length, "length", "m")
    EI = _positive(bending_stiffness, "bending_stiffness", "N m^2")
    n_points = _n_points(n_points)
    F = _vector2(tip_force, "tip_force", "N")
    M = _finite(tip_moment, "tip_moment", "N m")
    w = _finite(weight_per_length, "weight_per_length", "N/m")
    if w < 0.0:
        raise ActsimInputError(f"weight_per_length: {w:g} is outside the allowed range (>= 0 N/m)")
    g = _vector2(gravity_direction, "gravity_direction", "-")
    gn = float(np.hypot(*g))
    if gn == 0.0:
        raise ActsimInputError("gravity_direction: (0, 0) has no direction; give e.g. (0, -1)")
    g = g / gn
    prof = _profile(spontaneous_curvature, L, n_points)

    Fd = F * L * L / EI
    Md = M * L / EI
    wd = w * L**3 / EI
    for name, value, unit, dimless, group in (
        ("tip_force", float(np.hypot(*F)), "N", float(np.hypot(*Fd)), "|F| L^2/EI"),
        ("tip_moment", abs(M), "N m", abs(Md), "|M| L/EI"),
        ("weight_per_length", w, "N/m", wd, "w L^3/EI"),
    ):
        if dimless > _MAX_LOAD:
            raise ActsimInputError(
                f"{name}: {value:g} {unit} gives {group} = {dimless:.3g}, outside the range the elastica "
                f"solver handles (<= {_MAX_LOAD:g}); the slender-beam model does not hold there"
            )

    with _budget_scope(budget):
        t0 = _initial_mesh(prof)
        guess = _unloaded_guess(prof, t0)

        def solve_at(lam, state):
            system = _System(prof, lam * Fd, lam * wd, g)

            def bc(ya, yb):
                return np.array([ya[0], ya[2], ya[3], yb[1] - lam * Md])

            return _solve(system, bc, state)

        first = solve_at(0.0, guess)
        if first is None:  # pragma: no cover - the unloaded problem is linear in x, y
            raise ActsimSimulationError("spontaneous_curvature: the unloaded shape could not be solved; check the profile")
        if Fd.any() or Md or wd:
            # first step: a dimensionless load of about 2 (|F| L^2/EI, |M| L/EI, w L^3/(8 EI))
            size = max(float(np.hypot(*Fd)), abs(Md), wd / 8.0)
            _, lam, sol, ok = _continuation(
                lambda lam, st: solve_at(lam, (st.x, st.y)), first, first_step=2.0 / max(size, 1e-300)
            )
        else:
            lam, sol, ok = 1.0, first, True
    if not ok:
        msg = (
            f"tip_force/tip_moment/weight_per_length: the elastica did not converge beyond {100 * lam:.3g} % of the load "
            f"(solved up to tip_force ({lam * F[0]:.4g}, {lam * F[1]:.4g}) N, tip_moment {lam * M:.4g} N m, "
            f"weight_per_length {lam * w:.4g} N/m; |F| L^2/EI = {lam * float(np.hypot(*Fd)):.4g}); "
            "the strip may snap through there, or the load is beyond the solver's reach"
        )
        if raise_on_failure:
            raise ActsimInputError(msg)
        return _shape_from(sol, prof, L, EI, n_points, success=False, load_fraction=lam, message=msg)
    return _shape_from(sol, prof, L, EI, n_points)


def _blocked_solution(prof, rotation):
    """Tip held at y = 0 (force along y), by continuation in the curvature amplitude."""
    t0 = _initial_mesh(prof)
    straight = (t0, np.vstack([np.zeros_like(t0), np.zeros_like(t0), t0, np.zeros_like(t0)]))

    def solve_at(lam, state):
        p = prof.scaled(lam)
        system = _System(p, (0.0, 0.0), 0.0, (0.0, -1.0), free_force=(1,))
        Ktip = p.total

        if rotation == "free":

            def bc(ya, yb, pp):
                return np.array([ya[0], ya[2], ya[3], yb[1], yb[3]])

        else:

            def bc(ya, yb, pp):
                return np.array([ya[0], ya[2], ya[3], yb[0] + Ktip, yb[3]])

        guess, p0 = state
        sol = _solve(system, bc, guess, p0)
        return None if sol is None else ((sol.x, sol.y), sol.p.copy(), sol)

    state0 = (straight, np.array([0.0]))
    first = solve_at(1e-12, state0)
    _, lam, st, ok = _continuation(lambda lam, s_: solve_at(lam, s_[:2]), first)
    if not ok:
        raise ActsimInputError(
            f"spontaneous_curvature: the blocked state did not converge beyond {100 * lam:.3g} % of the curvature "
            f"(bend angle {lam * prof.total:.4g} rad solved of {prof.total:.4g} rad)"
        )
    return st[2]


def blocked_tip_force(*, length, bending_stiffness, spontaneous_curvature, rotation="free", n_points=201,
                      budget=None) -> BlockedTip:
    """Force needed to hold the tip of a curling strip on its original axis.

    Parameters
    ----------
    length : float
        Free length of the strip [m], > 0.
    bending_stiffness : float
        Bending stiffness EI of the whole strip [N m^2], > 0.
    spontaneous_curvature : float, callable or array_like
        As in :func:`cantilever_shape` [1/m].
    rotation : {"free", "fixed"}
        ``"free"``: the tip may turn (a knife edge or pin); ``"fixed"``: the
        tip is also held at zero rotation (a guided clamp) [-].
    n_points : int, optional
        Points of the returned shape [-].
    budget : SolveBudget, optional
        Time and solve-count limit shared with other solves (a limit object, unitless); None: a
        fresh one with the defaults (20 s), or the budget of an enclosing solve.

    Returns
    -------
    BlockedTip
        Force along +y exerted by the strip on the support [N], tip moment
        [N m] and the held shape.

    Raises
    ------
    ActsimInputError
        Bad input, or the continuation from the straight strip did not converge (one line with the
        fraction of the curvature reached).
    ElasticaLimitError
        The budget's time or solve-count limit was reached.

    Notes
    -----
    The support holds the tip at ``y = 0`` and acts normal to the original
    axis (along y); the tip slides freely along x. An inextensible strip whose
    tip is held at the full point (L, 0) would have to be straight, which
    moment balance forbids unless ``kappa0`` falls linearly to zero at the
    tip, so the x-component is left free (zero). At large curvature the held
    strip is an S-shape whose tip sits short of ``x = L``. The state is
    reached by continuation in the curvature amplitude from the straight
    strip, as when the light comes on with the tip already held; for bends
    above about 2.4 rad other equilibria with the same tip position exist (a
    dead load of this size, applied to the free curled strip, may find one).

    Small-deflection limits (uniform curvature, from superposing the
    cantilever formulas ``y = kappa L^2/2`` and ``y = F L^3/(3 EI)``):

    .. math::

        F_\\text{free} = \\frac{3\\,EI\\,\\kappa_0}{2L}, \\qquad
        F_\\text{fixed} = 0,\\; M_\\text{fixed} = EI\\,\\kappa_0 .

    With ``rotation="fixed"`` and uniform curvature the result is exact at any
    size: the strip stays straight under the pure moment ``EI kappa0``.

    References
    ----------
    .. [1] Timoshenko, S. P. and Gere, J. M., *Mechanics of Materials*,
       Van Nostrand Reinhold, 1972 (cantilever deflection formulas).
    .. [2] Timoshenko, S. P. and Gere, J. M., *Theory of Elastic Stability*,
       2nd ed., McGraw-Hill, 1961.
    """
    L = _positive(length, "length", "m")
    EI = _positive(bending_stiffness, "bending_stiffness", "N m^2")
    n_points = _n_points(n_points)
    if rotation not in ("free", "fixed"):
        raise ActsimInputError(f"rotation: {rotation!r} is not one of 'free', 'fixed'")
    prof = _profile(spontaneous_curvature, L, n_points)
    with _budget_scope(budget):
        sol = _blocked_solution(prof, rotation)
    fy = float(sol.p[0]) * EI / L**2  # applied (reaction) force on the strip, along y
    mtip = float(sol.y[1, -1]) * EI / L  # applied tip moment on the strip
    shape = _shape_from(sol, prof, L, EI, n_points)
    return BlockedTip(force=-fy, tip_moment=-mtip if rotation == "fixed" else 0.0, shape=shape)


def load_line(*, length, bending_stiffness, spontaneous_curvature, n=21, n_points=201, budget=None) -> LoadLine:
    """Tip force against tip displacement, from blocked to free, and the work.

    Parameters
    ----------
    length : float
        Free length of the strip [m], > 0.
    bending_stiffness : float
        Bending stiffness EI of the whole strip [N m^2], > 0.
    spontaneous_curvature : float, callable or array_like
        As in :func:`cantilever_shape` [1/m].
    n : int, optional
        Number of points on the line [-], >= 2.
    n_points : int, optional
        Length of an array ``spontaneous_curvature`` (values at
        ``linspace(0, length, n_points)``) [-].
    budget : SolveBudget, optional
        Time and solve-count limit shared with other solves (a limit object, unitless); None: a
        fresh one with the defaults (20 s), or the budget of an enclosing solve.

    Returns
    -------
    LoadLine
        Displacement along y [m] (0 = blocked ... free tip y), force along +y
        on a frictionless support normal to the original axis [N], tip x [m]
        and the work [J].

    Raises
    ------
    ActsimInputError
        Bad input, or no quasi-static path from blocked to free was traced.
    ElasticaLimitError
        The budget's time or solve-count limit was reached.

    Notes
    -----
    Each point holds the tip at ``y = u`` with a force along y only (the tip
    turns and slides along x freely), as in :func:`blocked_tip_force` with
    ``rotation="free"``. The points are equally spaced in ``u`` and traced by
    continuation from the blocked state, as when a support that blocks the lit
    strip is withdrawn step by step. For large bends (uniform curvature with
    ``kappa L`` above about 2.4 rad) that path folds before it reaches the free
    tip position: the strip then snaps to the branch that joins the free shape,
    which is traced from the free end; ``snap_displacement`` records where.
    Near the free end of a strip curled past about 270 degrees the support
    pushes almost along the tip tangent, so the force falls steeply there.
    The work is

    .. math::

        W = \\int_0^{u_\\text{free}} P(u)\\,du ,

    which in the small-deflection limit (``P = 3 EI (u_free - u)/L^3``,
    ``u_free = kappa L^2/2``) is ``W = 3 EI kappa^2 L / 8``.

    References
    ----------
    .. [1] Timoshenko, S. P. and Gere, J. M., *Mechanics of Materials*,
       Van Nostrand Reinhold, 1972 (cantilever deflection formulas).
    """
    from scipy.integrate import quad, trapezoid

    L = _positive(length, "length", "m")
    EI = _positive(bending_stiffness, "bending_stiffness", "N m^2")
    n = _n_points(n, "n")
    n_points = _n_points(n_points)
    with _budget_scope(budget):
        prof = _profile(spontaneous_curvature, L, n_points)
        free_guess = _unloaded_guess(prof, _initial_mesh(prof))
        # tip rise of the unloaded strip, int_0^1 sin K(t) dt (adaptive quadrature, breaks at the jumps)
        u_free = quad(lambda t: math.sin(float(prof.K(np.array([t]))[0])), 0.0, 1.0,
                      points=prof.jumps if prof.jumps.size else None, limit=400, epsabs=1e-14, epsrel=1e-12)[0]
        system = _System(prof, (0.0, 0.0), 0.0, (0.0, -1.0), free_force=(1,))
        blocked = _blocked_solution(prof, "free")
        f_scale = max(abs(float(blocked.p[0])), 1e-300)

        def solve_at(lam, state):
            delta = lam * u_free

            def bc(ya, yb, pp):
                return np.array([ya[0], ya[2], ya[3], yb[1], yb[3] - delta])

            sol = _solve(system, bc, state[0], state[1])
            return None if sol is None else ((sol.x, sol.y), sol.p.copy(), sol)

        grid = np.linspace(0.0, 1.0, n)
        # branch A: from the blocked state, raising the support toward the free tip position
        state0 = ((blocked.x, blocked.y), blocked.p.copy(), blocked)
        reached, lam_a, _, ok_a = _continuation(solve_at, state0, grid[1:])
        sols = [blocked] + [r[2] for r in reached]
        snap = math.nan
        if not ok_a or abs(float(sols[-1].p[0])) > 1e-6 * f_scale:
            # the path from blocked folds (or ends on a loaded shape): past the fold the strip snaps
            # to the branch that joins the free shape; trace that branch from the free end downward
            if ok_a:
                lam_a = 1.0 - 1.0 / (n - 1)
                sols = sols[:-1]
            snap = lam_a * u_free * L
            sol_free = _solve(system, (lambda ya, yb, pp: np.array([ya[0], ya[2], ya[3], yb[1], yb[3] - u_free])),
                              free_guess, np.array([0.0]))
            if sol_free is None:  # pragma: no cover
                raise ActsimSimulationError("spontaneous_curvature: the free shape could not be solved; check the profile")
            k_a = len(sols)  # grid points 0 .. k_a-1 come from branch A
            down = 1.0 - grid[::-1][1 : n - k_a]  # lam along the free branch (delta = (1 - lam) u_free)

            def solve_down(lam, state):
                return solve_at(1.0 - lam, state)

            reached_b, lam_b, _, ok_b = _continuation(solve_down, ((sol_free.x, sol_free.y), np.array([0.0]), sol_free), down)
            if not ok_b:
                raise ActsimInputError(
                    f"spontaneous_curvature: the load line has a snap-through at {100 * lam_a:.3g} % of the free tip "
                    f"travel, and the branch through the free shape ends at {100 * (1 - lam_b):.3g} %; no quasi-static path"
                )
            sols = sols + [r[2] for r in reached_b][::-1] + [sol_free]
    u = np.array([s_.y[3, -1] for s_ in sols]) * L
    u[0] = 0.0
    force = -np.array([s_.p[0] for s_ in sols]) * EI / L**2
    force[-1] = 0.0
    tip_x = np.array([s_.y[2, -1] for s_ in sols]) * L
    work = float(trapezoid(force, u))
    return LoadLine(displacement=u, force=force, tip_x=tip_x, work=work, snap_displacement=snap)


def circular_arc_tip(*, curvature, length):
    """Tip position and angle of a clamped strip bent into a circular arc.

    Parameters
    ----------
    curvature : float or array_like
        Uniform curvature kappa [1/m]; any sign, zero included.
    length : float or array_like
        Arc length L [m].

    Returns
    -------
    x_tip, y_tip, tip_angle : float or ndarray
        Tip position [m] and tangent angle [rad].

    Notes
    -----
    .. math::

        \\theta = \\kappa L, \\quad
        x = \\frac{\\sin\\theta}{\\kappa} = L\\,\\mathrm{sinc}(\\theta), \\quad
        y = \\frac{1 - \\cos\\theta}{\\kappa}
          = L\\,\\frac{\\theta}{2}\\,\\mathrm{sinc}^2(\\theta/2)

    with ``sinc(u) = sin(u)/u``. The half-angle form has no 0/0 and no
    cancellation as ``kappa L -> 0``, where it tends to the series
    ``y = kappa L^2/2 - kappa^3 L^4/24 + ...``, ``x = L - kappa^2 L^3/6 + ...``.

    References
    ----------
    .. [1] Timoshenko, S. P. and Gere, J. M., *Theory of Elastic Stability*,
       2nd ed., McGraw-Hill, 1961 (pure bending gives a circular arc).
    """
    k = np.asarray(curvature, dtype=float)
    L = np.asarray(length, dtype=float)
    if not (np.all(np.isfinite(k)) and np.all(np.isfinite(L))):
        raise ActsimInputError("curvature/length: values must be finite [1/m, m]")
    if np.any(L < 0):
        raise ActsimInputError(f"length: {np.min(L):g} is outside the allowed range (>= 0 m)")
    th = k * L
    x = L * np.sinc(th / np.pi)
    y = L * 0.5 * th * np.sinc(th / (2.0 * np.pi)) ** 2
    if x.ndim == 0:
        return float(x), float(y), float(th)
    return x, y, th
