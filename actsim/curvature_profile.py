"""Spontaneous curvature along a strip as the large-deflection solver takes it: a piecewise-constant profile
(a lit hinge, a mask) or any callable or array of arc length, in the dimensionless arc length s / L.
"""

from __future__ import annotations

import math

import numpy as np

from .errors import ActsimInputError

#: Samples of a curvature given as a callable (piecewise-linear between them).
_CALLABLE_SAMPLES = 801


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


class Profile:
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
        p = object.__new__(Profile)
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


def profile_of(spontaneous_curvature, length, n_points) -> Profile:
    """The dimensionless profile k(t) L, t = s / L, of a spontaneous curvature given as the solver accepts it.

    Parameters
    ----------
    spontaneous_curvature : float, callable, array_like or PiecewiseCurvature
        A constant [1/m], a function of arc length s [m] returning [1/m] (sampled at 801 points), values at
        ``n_points`` equally spaced s [1/m], or a piecewise-constant profile.
    length : float
        Free length L [m].
    n_points : int
        Points of an array profile (unitless).

    Returns
    -------
    Profile
    """
    L = length
    kc = spontaneous_curvature
    if isinstance(kc, PiecewiseCurvature):
        inner = kc.edges[(kc.edges > 1e-9 * L) & (kc.edges < (1 - 1e-9) * L)] / L
        # an interval shorter than 1e-9 L is merged into its neighbour (mesh nodes must not coincide)
        keep = np.concatenate([[True], np.diff(inner) > 1e-9]) if inner.size else inner.astype(bool)
        cuts = np.concatenate([[0.0], inner[keep], [1.0]])
        mids = 0.5 * (cuts[:-1] + cuts[1:])
        vals = np.asarray(kc(mids * L), float) * L
        return Profile(cuts[:-1], cuts[1:], vals, vals, cuts[1:-1])
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
        return Profile(t[:-1], t[1:], v[:-1], v[1:], [])
    arr = np.asarray(kc, dtype=float)
    if arr.ndim == 0:
        v = float(arr)
        if not math.isfinite(v):
            raise ActsimInputError(f"spontaneous_curvature: {v!r} 1/m is not finite")
        return Profile([0.0], [1.0], [v * L], [v * L], [])
    if arr.ndim != 1 or arr.size != n_points:
        raise ActsimInputError(
            f"spontaneous_curvature: an array must hold n_points={n_points} values at s = linspace(0, L, n_points), "
            f"got shape {arr.shape} [1/m]"
        )
    if not np.all(np.isfinite(arr)):
        raise ActsimInputError("spontaneous_curvature: array values must be finite [1/m]")
    t = np.linspace(0.0, 1.0, n_points)
    v = arr * L
    return Profile(t[:-1], t[1:], v[:-1], v[1:], [])
