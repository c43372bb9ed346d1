"""Data files sent with a task: while :func:`preread_files` is active, the readers take a file's bytes from it.

A sweep's chunk on a dask worker parses its scenario with the data files the client read and sent
with the task (:mod:`actsim.study.execute`): the file readers (:func:`actsim.tables.read_csv_table`,
:func:`actsim.spectra.read_table_csv`) ask :func:`sent_file` first, so the worker's own disk is never
read and relative paths work whatever folder the worker was started in. The mapping is held in a
context variable: it applies to the thread (task) that set it only.
"""

from __future__ import annotations

import contextlib
import contextvars
import os
from pathlib import Path

from .errors import ActsimInputError

__all__ = ["preread_files", "sent_file"]

#: Data files sent with a task (normalised path -> bytes) while :func:`preread_files` is active, else None.
_SENT_FILES: contextvars.ContextVar = contextvars.ContextVar("actsim_sent_files", default=None)


@contextlib.contextmanager
def preread_files(files):
    """Read data files from ``files`` instead of the disk while the block runs (this thread only).

    A sweep's chunk on a dask worker parses its scenario with the data files the client read and
    sent with the task (:mod:`actsim.study.execute`); the worker's own disk is never read.

    Parameters
    ----------
    files : dict of str to bytes
        Path as the scenario parser resolves it (scenario folder / name as written) -> file contents.
    """
    token = _SENT_FILES.set({os.path.normpath(str(k)): bytes(v) for k, v in files.items()})
    try:
        yield
    finally:
        _SENT_FILES.reset(token)


def sent_file(path):
    """The bytes sent for ``path`` while :func:`preread_files` is active, else None (read the disk)."""
    files = _SENT_FILES.get()
    if files is None:
        return None
    key = os.path.normpath(str(path))
    if key not in files:
        raise ActsimInputError(f"data file: '{Path(key).name}' was not sent with the task (the client did not read it)")
    return files[key]
