"""Limits on the work of the large-deflection solves: a shared time and solve-count budget, the range of
bends the elastica describes, and the progress line of a long group of solves.

A job (``actsim check``, the load-line history) hands one :class:`SolveBudget` to all its solves
(:func:`budget_scope`); the solver in :mod:`actsim.elastica` consults :func:`current_budget` inside its
iteration and stops with :class:`ElasticaLimitError` when a limit is reached.
"""

from __future__ import annotations

import contextvars
import math
import time
from contextlib import contextmanager
from dataclasses import dataclass, field

import numpy as np

from .errors import ActsimInputError, ActsimSimulationError

def whole_number(n, field_name="n_points", lo=2) -> int:
    """``n`` as an int, refused in one line unless a whole number >= ``lo``.

    Parameters
    ----------
    n : int
        The count (unitless).
    field_name : str
        Its name in the message.
    lo : int
        The smallest allowed count.

    Returns
    -------
    int
    """
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or n < lo:
        raise ActsimInputError(f"{field_name}: {n!r} is outside the allowed range (integer >= {lo})")
    return int(n)


#: Default wall-time limit of one group of large-deflection solves [s] (:class:`SolveBudget`).
DEFAULT_TIME_LIMIT = 20.0
#: Default limit on the number of BVP solves of one group (:class:`SolveBudget`); a converging
#: check of a bundled scenario uses a few hundred.
DEFAULT_MAX_SOLVES = 20000
#: Bend angle of a full turn [rad]. Past it a free strip of uniform curvature overlaps itself; the
#: elastica here has no contact, so the checks do not solve it there (:func:`bend_beyond_range`).
FULL_TURN = 2.0 * math.pi


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
        self.max_solves = whole_number(self.max_solves, "max_solves", lo=1)

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


def current_budget():
    """The :class:`SolveBudget` of the solves running now (set by :func:`budget_scope`), or None."""
    return _BUDGET.get()


@contextmanager
def budget_scope(budget):
    """Make ``budget`` (or a fresh default one) the budget of the solves inside; nested scopes keep the outer one.

    Parameters
    ----------
    budget : actsim.solve_budget.SolveBudget
        The budget to share, or None: a default one, or the outer scope's.

    Yields
    ------
    SolveBudget
    """
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


def user_reason(exc) -> str:
    """A failed solve's reason in a user's words (no parameter names of the solver functions).

    Parameters
    ----------
    exc : Exception
        What the solve raised (unitless).

    Returns
    -------
    str
    """
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
