"""The report: one self-contained HTML file for any result folder.

:func:`build_report` reads a result folder written by ``actsim run`` (with or
without its ``uncertainty`` and ``mask`` parts), ``actsim check``, ``actsim
sweep`` or ``actsim fit`` -- the kind and parts are read from the folder's
``manifest.json`` after :func:`actsim.folders.verify_folder` -- and returns one
HTML page that needs nothing else to be read or printed: the figures are
embedded as base64 PNG data URIs, the style sheet is inline, and a
Content-Security-Policy forbids loading anything from outside the file.

Every page opens with the answer (the first screen): for a check the verdict,
the tightest margin and its check and the actuation numbers ``actsim check``
prints; for a run the peak bend, time to target, force and peak temperature;
for a sweep the recommended or best design and the Pareto set; for a fit the
fitted parameters with their uncertainty and the residual with its unit. The
caution follows once; then figures, tables, the scenario, software versions and
the input texts.

The page is built from the jinja2 templates in ``actsim/templates/`` with
autoescaping on (:data:`TEMPLATES`): every text taken from a file reaches the
page escaped; the Python code here only gathers and formats values. The report
is written atomically (:func:`actsim.io.write_text`).

The package: :mod:`~actsim.report.context` reads a folder into the templates' values (:func:`report_context`)
with one reader per kind (:mod:`~actsim.report.run`, :mod:`~actsim.report.check`, :mod:`~actsim.report.sweep`,
:mod:`~actsim.report.fit`); :mod:`~actsim.report.folder` reads the records, figures and versions;
:mod:`~actsim.report.scenario_text` puts the scenario in words; :mod:`~actsim.report.formatting` formats
values as text; :mod:`~actsim.report.render` holds the jinja2 environment, :func:`build_report` and
:func:`write_report`.
"""

from __future__ import annotations

from .context import report_context
from .folder import CHECKS_FILE, DEPENDENCIES, figure_title, package_versions
from .render import REPORT_FILE, TEMPLATES, build_report, write_report
from .sweep import SWEEP_ROWS_SHOWN

__all__ = ["REPORT_FILE", "CHECKS_FILE", "DEPENDENCIES", "TEMPLATES", "build_report", "write_report",
           "package_versions", "report_context", "figure_title", "SWEEP_ROWS_SHOWN"]
