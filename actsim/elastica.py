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

import contextvars
import math
import time
from contextlib import contextmanager
from dataclasses import dataclass, field

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
#: Samples of a curvature given as a callable (piecewise-linear between them).
_CALLABLE_SAMPLES = 801
#: Smallest continuation step before giving up (fraction of the load).
_MIN_STEP = 1.0 / 512
#: Largest dimensionless load accepted (|F| L^2/EI, |M| L/EI, w L^3/EI). Beyond
#: it the bending boundary layer at the clamp, of length sqrt(EI/|F|), is
#: shorter than L/1000 and, for any strip thinner than L/1000, shorter than
#: the thickness, where the slender-beam model itself no longer holds.
_MAX_LOAD = 1e6
_MAX_CONTINUATION_STEPS = 300
#: Default wall-time limit of one group of large-deflection solves [s] (:class:`SolveBudget`).
DEFAULT_TIME_LIMIT = 20.0
#: Default limit on the number of BVP solves of one group (:class:`SolveBudget`); a converging
#: check of a bundled scenario uses a few hundred.
DEFAULT_MAX_SOLVES = 20000
#: Bend angle of a full turn [rad]. Past it a free strip of uniform curvature overlaps itself; the
#: elastica here has no contact, so the checks do not solve it there (:func:`bend_beyond_range`).
FULL_TURN = 2.0 * math.pi


# --------------------------------------------------------------------------- limits on the work


class ElasticaLimitError(ActsimSimulationError):
    """A group of large-deflection solves ran out of its :class:`SolveBudget` (time or solve count).

    The message says, in a user's words, which limit stopped the work and after how long.
    """


@dataclass(eq=False)
class SolveBudget:
    """Wall-time and solve-count limit shared by a group of large-deflection solves.

    One budget is handed to every solve of a job (for example all the blocked forces and load
    lines of ``actsim check``), so the whole job stops within ``time_limit``. The clock starts
    at the first solve. When a limit is reached the running solve raises
    :class:`ElasticaLimitError` (from inside the BVP iteration, so within a fraction of a
    second), and so does every later solve with this budget.

    Parameters
    ----------
    time_limit : float
        Wall time the group may take [s], > 0 (``math.inf``: no limit). Default 20 s.
    max_solves : int
        Largest number of BVP solves (continuation steps of all the solves together) [-], >= 1.

    Attributes
    ----------
    solves : int
        BVP solves started so far [-].
    elapsed : float
        Wall time since the first solve [s] (0 before it).
    """

    time_limit: float = DEFAULT_TIME_LIMIT
    max_solves: int = DEFAULT_MAX_SOLVES
    solves: int = field(default=0, init=False)
    _start: float | None = field(default=None, init=False, repr=False)
    _reason: str = field(default="", init=False, repr=False)

    def __post_init__(self):
        try:
            tl = float(self.time_limit)
        except (TypeError, ValueError):
            raise ActsimInputError(f"time_limit: {self.time_limit!r} is not a number [s]") from None
        if math.isnan(tl) or tl <= 0.0:
            raise ActsimInputError(f"time_limit: {tl:g} s is outside the allowed range (> 0 s; inf for no limit)")
        self.time_limit = tl
        self.max_solves = _n_points(self.max_solves, "max_solves", lo=1)

    @property
    def elapsed(self) -> float:
        return 0.0 if self._start is None else time.monotonic() - self._start

    @property
    def exhausted(self) -> str:
        """Why the budget is used up, in a user's words; empty while it is not."""
        return self._reason

    def _fail(self, reason: str):
        self._reason = self._reason or reason
        raise ElasticaLimitError(self._reason)

    def start_solve(self) -> None:
        """Count one BVP solve; raise :class:`ElasticaLimitError` when a limit is reached."""
        if self._reason:
            raise ElasticaLimitError(self._reason)
        if self._start is None:
            self._start = time.monotonic()
        self.solves += 1
        if self.solves > self.max_solves:
            self._fail(f"the large-deflection solve stopped after {self.max_solves} solver steps (the step limit)")
        self.check_time()

    def check_time(self) -> None:
        """Raise :class:`ElasticaLimitError` when the wall-time limit has passed."""
        if self._start is not None and time.monotonic() - self._start > self.time_limit:
            self._fail(f"the large-deflection solve did not finish within {self.time_limit:g} s (the time limit)")


_BUDGET: contextvars.ContextVar = contextvars.ContextVar("actsim_elastica_budget", default=None)


@contextmanager
def _budget_scope(budget):
    """Make ``budget`` (or a fresh default one) the budget of the solves inside; nested scopes keep the outer one."""
    if budget is not None and not isinstance(budget, SolveBudget):
        raise ActsimInputError(f"budget: {budget!r} is not a SolveBudget")
    if budget is None and _BUDGET.get() is not None:
        yield _BUDGET.get()
        return
    token = _BUDGET.set(budget if budget is not None else SolveBudget())
    try:
        yield _BUDGET.get()
    finally:
        _BUDGET.reset(token)


def bend_beyond_range(*, curvature, length) -> bool:
    """Whether a uniform curvature bends the strip past a full turn, outside the checks' elastica range.

    Parameters
    ----------
    curvature : float
        Spontaneous (free) curvature [1/m].
    length : float
        Free length [m].

    Returns
    -------
    bool
        True when ``|curvature| * length > 2 pi``: the free strip, a circular arc, would pass
        through itself, and the elastica without contact no longer describes it.

    Notes
    -----
    The free strip of uniform curvature is the arc :math:`\\theta(s) = \\kappa s`; it closes into
    a full circle at

    .. math::

        |\\kappa| L = 2\\pi ,

    beyond which the tip part lies on the clamped part (Timoshenko and Gere, 1961, pure bending
    gives a circular arc). The continuation of the held strip folds near the same bend.

    References
    ----------
    .. [1] Timoshenko, S. P. and Gere, J. M., *Theory of Elastic Stability*, 2nd ed.,
       McGraw-Hill, 1961 (pure bending gives a circular arc).
    """
    return abs(float(curvature) * float(length)) > FULL_TURN


def _user_reason(exc) -> str:
    """A failed solve's reason in a user's words (no parameter names of the solver functions)."""
    if isinstance(exc, ElasticaLimitError):
        return str(exc)
    return "the large-deflection solve did not converge (the strip may snap through or touch itself there)"


def progress_bar(total, desc, *, on=True):
    """A progress line on stderr that appears only after 2 s of work.

    Parameters
    ----------
    total : int
        Number of steps (unitless).
    desc : str
        What is being done.
    on : bool, optional
        False: a silent bar. The line is never shown when stderr is not a terminal or the ``CI``
        environment variable is set.

    Returns
    -------
    tqdm.tqdm
        Use as a context manager; ``update(1)`` per step.
    """
    import os
    import sys

    from tqdm import tqdm

    disable = (not on) or (not sys.stderr.isatty()) or bool(os.environ.get("CI"))
    return tqdm(total=total, desc=desc, unit="solve", disable=disable, leave=False, delay=2.0, file=sys.stderr)


# --------------------------------------------------------------------------- results


@dataclass(frozen=True)
class ElasticaShape:
    """Deformed shape of the cantilever strip.

    Attributes
    ----------
    s : ndarray
        Arc length from the clamp [m].
    x, y : ndarray
        Position of the centre line; x along the clamped tangent, y toward the
        side that positive curvature turns to [m].
    theta : ndarray
        Tangent angle from +x, counter-clockwise positive [rad].
    bending_moment : ndarray
        Bending moment ``EI (theta' - kappa0)`` carried across each section [N m].
    tip_x, tip_y : float
        Tip position [m].
    tip_angle : float
        Tangent angle at the tip [rad] (not wrapped: a curl past 180 degrees
        gives more than pi).
    success : bool
        True when the full load was solved.
    load_fraction : float
        Fraction of the requested load that was solved (1.0 on success) [-].
    message : str
        Empty on success, else the one-line reason.
    """

    s: np.ndarray
    x: np.ndarray
    y: np.ndarray
    theta: np.ndarray
    bending_moment: np.ndarray
    tip_x: float
    tip_y: float
    tip_angle: float
    success: bool = True
    load_fraction: float = 1.0
    message: str = ""


@dataclass(frozen=True)
class BlockedTip:
    """Reaction at a tip that is held on the strip's original axis.

    Attributes
    ----------
    force : float
        Force the strip exerts on the support, along +y (normal to the
        original strip axis) [N]. Positive for positive curvature.
    tip_moment : float
        Moment the strip exerts on the support, counter-clockwise positive
        [N m]; zero for ``rotation="free"``.
    shape : ElasticaShape
        The held shape (with the support reaction ``-force`` as its tip load).
    """

    force: float
    tip_moment: float
    shape: ElasticaShape


@dataclass(frozen=True)
class LoadLine:
    """Force the tip delivers against the tip displacement (free rotation).

    Attributes
    ----------
    displacement : ndarray
        Tip position along y, normal to the original strip axis, from 0
        (blocked) to the free tip position [m].
    force : ndarray
        Force along +y the strip exerts on a frictionless support that holds
        its tip at ``displacement`` [N]; from the blocked force down to 0.
    tip_x : ndarray
        Tip position along the original axis at each point [m].
    work : float
        Work the tip can do moving from blocked to free against the support,
        ``int force d(displacement)`` by the trapezoid rule [J], along the
        path the strip follows (across a snap, the trapezoid between the two
        branches' neighbouring points).
    snap_displacement : float
        Support position at which the shape traced from the blocked state
        ends in a snap-through to the branch that joins the free shape [m];
        NaN when the path is smooth (bend angles below about 2.4 rad for
        uniform curvature).
    """

    displacement: np.ndarray
    force: np.ndarray
    tip_x: np.ndarray
    work: float
    snap_displacement: float = math.nan


# --------------------------------------------------------------------------- curvature profiles


class PiecewiseCurvature:
    """Spontaneous curvature constant on each interval of arc length.

    Callable: ``profile(s)`` returns the curvature [1/m] at ``s`` [m]; zero
    outside ``[s_edges[0], s_edges[-1]]``. At an interior edge the value of the
    interval to its right is returned. :func:`cantilever_shape` uses the edges
    exactly (it places mesh nodes on them).
    """

    def __init__(self, s_edges, curvatures):
        edges = np.asarray(s_edges, dtype=float)
        values = np.asarray(curvatures, dtype=float)
        if edges.ndim != 1 or edges.size < 2:
            raise ActsimInputError(f"s_edges: need at least 2 edges [m], got {edges.size}")
        if values.shape != (edges.size - 1,):
            raise ActsimInputError(
                f"curvatures: need one value per interval ({edges.size - 1}), got {values.size} [1/m]"
            )
        if not (np.all(np.isfinite(edges)) and np.all(np.isfinite(values))):
            raise ActsimInputError("s_edges/curvatures: values must be finite [m, 1/m]")
        if np.any(np.diff(edges) <= 0.0):
            raise ActsimInputError(f"s_edges: {edges.tolist()} must increase strictly [m]")
        if edges[0] < 0.0:
            raise ActsimInputError(f"s_edges: first edge {edges[0]:g} m is outside the allowed range (>= 0 m)")
        self.edges = edges
        self.values = values

    def __call__(self, s):
        s = np.asarray(s, dtype=float)
        i = np.searchsorted(self.edges, s, side="right") - 1
        inside = (i >= 0) & (i < self.values.size)
        out = np.where(inside, self.values[np.clip(i, 0, self.values.size - 1)], 0.0)
        # the far end of the last interval belongs to it
        out = np.where(s == self.edges[-1], self.values[-1], out)
        return out if out.ndim else float(out)

    def __repr__(self):
        return f"PiecewiseCurvature(s_edges={self.edges.tolist()}, curvatures={self.values.tolist()})"


def piecewise_curvature(s_edges, curvatures) -> PiecewiseCurvature:
    """Spontaneous curvature that is constant between edges (patterned light).

    Parameters
    ----------
    s_edges : array_like
        Increasing arc-length positions of the interval edges, from the clamp
        [m]. Outside the first and last edge the curvature is zero.
    curvatures : array_like
        Spontaneous curvature on each interval, one fewer than ``s_edges`` [1/m].

    Returns
    -------
    PiecewiseCurvature
        A callable ``kappa0(s)`` to pass as ``spontaneous_curvature``.

    Notes
    -----
    Without load, a hinge lit over length ``l_h`` with curvature ``kappa_h``
    folds the strip by

    .. math::

        \\Delta\\theta = \\int_0^L \\kappa_0\\,ds = \\kappa_h\\,l_h ,

    and the unlit parts stay straight.

    Examples
    --------
    A 10 mm strip lit between 4 mm and 6 mm:

    >>> hinge = piecewise_curvature([4e-3, 6e-3], [500.0])
    >>> float(hinge(5e-3)), float(hinge(1e-3))
    (500.0, 0.0)

    References
    ----------
    .. [1] Timoshenko, S. P. and Gere, J. M., *Theory of Elastic Stability*,
       2nd ed., McGraw-Hill, 1961.
    """
    return PiecewiseCurvature(s_edges, curvatures)


class _Profile:
    """Dimensionless spontaneous curvature ``k(t) = kappa0(t L) L``, t in [0, 1].

    Stored as piecewise-linear pieces (jumps allowed) so that the integral
    ``K(t) = int_0^t k`` is exact for constant and linear pieces.
    """

    def __init__(self, a, b, va, vb, jumps):
        self.a = np.asarray(a, float)
        self.b = np.asarray(b, float)
        self.va = np.asarray(va, float)
        self.vb = np.asarray(vb, float)
        self.jumps = np.asarray(sorted(set(jumps)), float)  # interior points where k jumps
        w = self.b - self.a
        self.slope = (self.vb - self.va) / w
        piece = 0.5 * (self.va + self.vb) * w
        self.kc = np.concatenate([[0.0], np.cumsum(piece)])
        self.scale = 1.0

    def scaled(self, lam):
        p = object.__new__(_Profile)
        p.__dict__.update(self.__dict__)
        p.scale = self.scale * lam
        return p

    def _idx(self, t):
        return np.clip(np.searchsorted(self.a, t, side="right") - 1, 0, self.a.size - 1)

    def K(self, t):
        i = self._idx(t)
        d = t - self.a[i]
        return self.scale * (self.kc[i] + self.va[i] * d + 0.5 * self.slope[i] * d * d)

    @property
    def total(self):
        return self.scale * float(self.kc[-1])


def _profile(spontaneous_curvature, length, n_points) -> _Profile:
    L = length
    kc = spontaneous_curvature
    if isinstance(kc, PiecewiseCurvature):
        inner = kc.edges[(kc.edges > 1e-9 * L) & (kc.edges < (1 - 1e-9) * L)] / L
        # an interval shorter than 1e-9 L is merged into its neighbour (mesh nodes must not coincide)
        keep = np.concatenate([[True], np.diff(inner) > 1e-9]) if inner.size else inner.astype(bool)
        cuts = np.concatenate([[0.0], inner[keep], [1.0]])
        mids = 0.5 * (cuts[:-1] + cuts[1:])
        vals = np.asarray(kc(mids * L), float) * L
        return _Profile(cuts[:-1], cuts[1:], vals, vals, cuts[1:-1])
    if callable(kc):
        t = np.linspace(0.0, 1.0, _CALLABLE_SAMPLES)
        try:
            v = np.asarray([float(kc(ti * L)) for ti in t]) * L
        except Exception as exc:
            raise ActsimInputError(
                f"spontaneous_curvature: the callable failed at s in [0, {L:g}] m ({exc.__class__.__name__})"
            ) from None
        if not np.all(np.isfinite(v)):
            raise ActsimInputError("spontaneous_curvature: the callable returned non-finite values [1/m]")
        return _Profile(t[:-1], t[1:], v[:-1], v[1:], [])
    arr = np.asarray(kc, dtype=float)
    if arr.ndim == 0:
        v = float(arr)
        if not math.isfinite(v):
            raise ActsimInputError(f"spontaneous_curvature: {v!r} 1/m is not finite")
        return _Profile([0.0], [1.0], [v * L], [v * L], [])
    if arr.ndim != 1 or arr.size != n_points:
        raise ActsimInputError(
            f"spontaneous_curvature: an array must hold n_points={n_points} values at s = linspace(0, L, n_points), "
            f"got shape {arr.shape} [1/m]"
        )
    if not np.all(np.isfinite(arr)):
        raise ActsimInputError("spontaneous_curvature: array values must be finite [1/m]")
    t = np.linspace(0.0, 1.0, n_points)
    v = arr * L
    return _Profile(t[:-1], t[1:], v[:-1], v[1:], [])


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


def _n_points(n, field_name="n_points", lo=2):
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or n < lo:
        raise ActsimInputError(f"{field_name}: {n!r} is outside the allowed range (integer >= {lo})")
    return int(n)


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
        self.budget = _BUDGET.get()

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

    budget = _BUDGET.get()
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


def load_line_history(ds, *, n_times=25, n=11, times=None, budget=None, progress=False):
    """Large-deflection load lines at output times of a simulation (time-resolved force–travel curves).

    At each selected output time the strip's free curvature and bending stiffness give one
    :func:`load_line`: the force the tip delivers along +y at each tip travel between blocked and free,
    and the work it can do. Times whose curvature is zero get a zero line. Times whose free strip bends
    past a full turn (:func:`bend_beyond_range`), whose line does not converge, or that the budget
    does not reach get NaN, and the dataset's ``not_solved`` attribute says which and why.

    Parameters
    ----------
    ds : xarray.Dataset
        Result of :func:`actsim.simulate` (needs ``free_curvature`` or ``curvature``, and
        ``bending_stiffness`` [N m2]); its ``free_length`` attribute is the length [m].
    n_times : int
        Number of output times, evenly spread, when ``times`` is not given; the time of peak
        curvature is always included [dimensionless].
    n : int
        Points on each load line [dimensionless].
    times : array_like, optional
        Output times to use [s] (nearest output times are taken).
    budget : SolveBudget, optional
        Time and solve-count limit of all the lines together (a limit object, unitless); None: a
        fresh one with the defaults (20 s).
    progress : bool, optional
        Show a progress line on stderr when the lines take more than 2 s (never when stderr is not
        a terminal or the ``CI`` environment variable is set).

    Returns
    -------
    xarray.Dataset
        ``displacement`` and ``force`` (time, point) [m], [N]; ``work`` (time,) [J];
        ``snap_displacement`` (time,) [m] (NaN where the line does not snap).
    """
    import xarray as xr

    t_all = ds["time"].values
    kappa = (ds["free_curvature"] if "free_curvature" in ds else ds["curvature"]).values
    ei = ds["bending_stiffness"].values
    length = float(ds.attrs["free_length"])
    if times is None:
        idx = np.unique(np.concatenate([np.linspace(0, t_all.size - 1, max(int(n_times), 1)).round().astype(int),
                                        [int(np.argmax(np.abs(kappa)))]]))
    else:
        idx = np.unique([int(np.argmin(np.abs(t_all - t))) for t in np.atleast_1d(times)])
    disp = np.zeros((idx.size, n))
    force = np.zeros((idx.size, n))
    work = np.zeros(idx.size)
    snap = np.full(idx.size, np.nan)
    not_solved = []
    bar = progress_bar(idx.size, "large deflection: load lines", on=progress)
    with _budget_scope(budget), bar:
        for row, i in enumerate(idx):
            bar.update(1)
            k = float(kappa[i])
            if k == 0.0:
                continue
            reason = ""
            if bend_beyond_range(curvature=k, length=length):
                reason = f"the strip bends {math.degrees(abs(k) * length):.4g} degrees, past a full turn"
            else:
                try:
                    ll = load_line(length=length, bending_stiffness=float(ei[i]), spontaneous_curvature=abs(k), n=n)
                except (ActsimInputError, ElasticaLimitError) as exc:
                    reason = _user_reason(exc)
            if reason:
                disp[row] = force[row] = np.nan
                work[row] = np.nan
                not_solved.append(f"t = {t_all[i]:g} s: {reason}")
                continue
            sign = 1.0 if k > 0 else -1.0
            disp[row] = sign * np.asarray(ll.displacement)
            force[row] = sign * np.asarray(ll.force)
            work[row] = ll.work
            snap[row] = sign * ll.snap_displacement if np.isfinite(ll.snap_displacement) else np.nan
    attrs = {"model": "elastica of a uniformly curved cantilever, tip load normal to the clamped tangent"}
    missing = {}
    if not_solved:
        attrs["not_solved"] = "; ".join(not_solved)
        missing = {"missing_means": "the load line at that time was not solved (see the not_solved attribute)"}
    return xr.Dataset(
        data_vars={
            "displacement": (("time", "point"), disp, {"units": "m", "long_name": "tip travel along +y from the clamped tangent",
                                                       **missing}),
            "force": (("time", "point"), force, {"units": "N", "long_name": "force the tip delivers along +y at that travel",
                                                 **missing}),
            "work": (("time",), work, {"units": "J", "long_name": "work the tip can do from blocked to free", **missing}),
            "snap_displacement": (("time",), snap, {"units": "m", "long_name": "travel at which the line snaps to the free branch",
                                                   "missing_means": "the load line does not snap at that time"}),
        },
        coords={"time": ("time", t_all[idx], {"units": "s", "long_name": "output time"})},
        attrs=attrs,
    )
