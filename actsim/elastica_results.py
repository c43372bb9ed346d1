"""What the large-deflection solver (:mod:`actsim.elastica`) returns: the shape of a cantilever, the blocked
tip and the load line, SI.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np


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
