"""The report's context: everything the page shows, read from a result folder as plain text and numbers.

:func:`report_context` opens the folder, reads its kind and parts from the manifest and hands it to the reader
of that kind (:mod:`~actsim.report.run`, :mod:`~actsim.report.check`, :mod:`~actsim.report.sweep`,
:mod:`~actsim.report.fit`), then adds what every page carries: the caution, the figures and the versions.
"""

from __future__ import annotations

import datetime as _dt

from ..cautions import CAUTION
from ..errors import ActsimInputError
from .check import _check_context
from .fit import _fit_context
from .folder import _HINT, CHECKS_FILE, _figures, _open_folder, package_versions
from .run import _run_context
from .sweep import _sweep_context

_CSP = "default-src 'none'; img-src data:; style-src 'unsafe-inline'; script-src 'unsafe-inline'"

_KIND_LABELS = {"run": "run", "check": "design check", "sweep": "design sweep", "fit": "fit of measured data"}


def report_context(result_dir) -> dict:
    """Everything the report shows, read from a result folder: the templates' context (plain text and numbers).

    Parameters
    ----------
    result_dir : str or os.PathLike
        A result folder of any kind (run, check, sweep, fit; runs with the uncertainty or mask part).

    Returns
    -------
    dict
        ``kind``, ``parts``, ``title``, ``figures``, ``caution`` and the kind's own entries
        (``cards`` and ``results`` of a run, ``checks`` and ``verdict`` of a check, ``sweep`` or ``inverse``
        of a sweep, ``fits`` of a fit).

    Raises
    ------
    ActsimInputError
        The folder is missing, is not a complete result folder, or a record in it is unreadable.
    """
    out, manifest = _open_folder(result_dir)
    kind = manifest.get("kind")
    parts = list(manifest.get("parts") or [])
    if kind == "run":
        ctx = _run_context(out, manifest)
        if (out / CHECKS_FILE).is_file():
            ctx = _check_context(out, manifest)
            kind = "check"
    elif kind == "check":
        ctx = _check_context(out, manifest)
    elif kind == "sweep":
        ctx = _sweep_context(out, manifest)
    elif kind == "fit":
        ctx = _fit_context(out, manifest)
    else:  # pragma: no cover - verify_folder accepts only known kinds
        raise ActsimInputError(f"RESULT_DIR: '{out}' is a folder of unknown kind {kind!r}; {_HINT}")
    from .. import __version__

    label = _KIND_LABELS.get(kind, kind)
    if "uncertainty" in parts:
        label += " with uncertainty bands"
    if "mask" in parts:
        label += " through a mask"
    if "along_strip" in parts:
        label += ", resolved along its length"
    if "inverse" in parts:
        label = "inverse design"
    head, sep, rest = CAUTION.partition(":")
    ctx.update(kind=kind, parts=parts, kind_label=label, folder=out.name, version=__version__,
               made=_dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC"), csp=_CSP,
               caution={"head": head if sep and head.isupper() else "Caution", "text": rest.strip() if sep else CAUTION},
               figures=_figures(out), versions=package_versions())
    return ctx
