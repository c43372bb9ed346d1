"""Rendering and writing the report: the jinja2 environment, :func:`build_report` and :func:`write_report`.

The templates are package data in ``actsim/templates/`` (:data:`TEMPLATES`), loaded with autoescaping on;
the report is written atomically (:func:`actsim.io.write_text`) as pure ASCII.
"""

from __future__ import annotations

import re
from functools import lru_cache
from pathlib import Path

from ..errors import ActsimInputError
from .context import report_context

#: Default file name of the report inside the result folder.
REPORT_FILE = "report.html"
#: The templates of the report (package data in ``actsim/templates/``): the page, its style and script, and
#: one first screen and one body per folder kind.
TEMPLATES = ("report.html", "_macros.html", "report.css", "report.js", "answer_run.html", "answer_check.html",
             "answer_sweep.html", "answer_fit.html", "body_run.html", "body_check.html", "body_sweep.html",
             "body_fit.html", "_scenario.html")


def _sup(text):
    """Escape ``text`` and turn ``^n`` exponents into superscripts (a jinja2 filter; returns safe markup)."""
    from markupsafe import Markup, escape

    out = str(escape(text))
    return Markup(re.sub(r"\^(−?-?\d+)", lambda m: f"<sup>{m.group(1)}</sup>", out))


@lru_cache(maxsize=1)
def _environment():
    import jinja2

    env = jinja2.Environment(loader=jinja2.PackageLoader("actsim", "templates"),
                             autoescape=jinja2.select_autoescape(["html"]), undefined=jinja2.StrictUndefined,
                             trim_blocks=True, lstrip_blocks=True, keep_trailing_newline=True)
    env.filters["sup"] = _sup
    return env


def build_report(result_dir) -> str:
    """The report of a result folder, as one self-contained HTML page.

    Parameters
    ----------
    result_dir : str or os.PathLike
        A folder written by ``actsim run`` (with or without ``--uncertainty`` or a ``[mask]``),
        ``actsim check``, ``actsim sweep`` or ``actsim fit``; its kind is read from its manifest.

    Returns
    -------
    str
        The HTML text (UTF-8, no external resources).

    Raises
    ------
    ActsimInputError
        The folder is missing or is not a complete result folder, or a record in it is unreadable.
    """
    ctx = report_context(result_dir)
    return _environment().get_template("report.html").render(**ctx)


def write_report(result_dir, path=None) -> Path:
    """Write the report of ``result_dir`` atomically.

    Parameters
    ----------
    result_dir : str or os.PathLike
        The result folder (see :func:`build_report`).
    path : str or os.PathLike, optional
        Output file (default ``result_dir/report.html``).

    Returns
    -------
    pathlib.Path
        Where the report was written.
    """
    from ..io import write_text

    dest = Path(path) if path is not None else Path(result_dir) / REPORT_FILE
    if dest.is_dir():
        raise ActsimInputError(f"-o: '{dest}' is a folder; give a file name such as {dest / REPORT_FILE}")
    # Character references keep the file pure ASCII, readable whatever the locale's encoding.
    text = build_report(result_dir).encode("ascii", "xmlcharrefreplace").decode("ascii")
    write_text(dest, text)
    return dest
