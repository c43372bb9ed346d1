"""Result files, written atomically: a temporary file in the same folder, then a rename.

An interrupted run never leaves a half-written file: either the old file (or
none) or the complete new one is there.
"""

from __future__ import annotations

import errno
import json
import os
import tempfile
from contextlib import contextmanager
from pathlib import Path

import numpy as np


def _current_umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


_UMASK = _current_umask()


@contextmanager
def atomic_path(path):
    """Yield a temporary path beside ``path``; rename it onto ``path`` when the block succeeds."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    os.close(fd)
    os.chmod(tmp, 0o666 & ~_UMASK)  # mkstemp makes 0600; give the file the permissions a plain open() would
    try:
        yield Path(tmp)
        os.replace(tmp, path)
    except BaseException as exc:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        if isinstance(exc, RuntimeError) or (isinstance(exc, OSError) and exc.errno in _DISK_FULL):
            # the NetCDF/HDF5 library reports a full disk as RuntimeError("NetCDF: HDF error"), naming no file
            from .errors import ActsimError, ActsimOutputError

            if not isinstance(exc, ActsimError):
                reason = (exc.strerror if isinstance(exc, OSError) else str(exc).splitlines()[0] if str(exc) else
                          exc.__class__.__name__)
                raise ActsimOutputError(f"{path}: could not be written ({reason}); is the disk full? "
                                        "Nothing partial was kept") from None
        raise


#: errno values of a full disk or an exhausted quota.
_DISK_FULL = {errno.ENOSPC, getattr(errno, "EDQUOT", errno.ENOSPC)}


def write_text(path, text: str):
    """Write text atomically."""
    with atomic_path(path) as tmp:
        tmp.write_text(text)


def write_json(path, data):
    """Write JSON atomically (NaN refused: every number must be finite)."""
    write_text(path, json.dumps(data, indent=2, allow_nan=False, default=_json_default) + "\n")


def _json_default(o):
    if isinstance(o, (np.floating, np.integer)):
        return o.item()
    if isinstance(o, np.ndarray):
        return o.tolist()
    raise TypeError(f"not JSON serialisable: {type(o).__name__}")


#: Fill value written for entries that do not exist by definition (CF conventions, sec. 2.5.1).
MISSING_FILL = -9.0e30

#: Attribute a variable must carry to be allowed missing entries; its text says what they mean.
MISSING_ATTR = "missing_means"


def write_netcdf(ds, path):
    """Write an xarray Dataset to NetCDF atomically; no NaN or inf reaches the file.

    A variable may have entries that do not exist by definition (a target angle never reached, a
    temperature where heat is not modelled) only if it says so in a ``missing_means`` attribute; those
    entries are written as the CF ``_FillValue`` :data:`MISSING_FILL`. Any other non-finite value is an
    error: nothing is written.

    Parameters
    ----------
    ds : xarray.Dataset
        The data [SI units in each variable's ``units``].
    path : str or pathlib.Path
        Target file.
    """
    from .errors import ActsimSimulationError

    encoding = {}
    for name, var in ds.variables.items():
        if var.dtype.kind != "f":
            continue
        values = np.asarray(var.values)
        if np.isinf(values).any():
            raise ActsimSimulationError(f"{path}: variable '{name}' has infinite values; nothing was written")
        if np.isnan(values).any():
            if MISSING_ATTR not in var.attrs:
                raise ActsimSimulationError(f"{path}: variable '{name}' has NaN values; nothing was written")
            encoding[name] = {"_FillValue": MISSING_FILL}
    with atomic_path(path) as tmp:
        _to_netcdf(ds, tmp, encoding)


def _to_netcdf(ds, path, encoding):
    """``ds.to_netcdf(path, encoding=encoding)`` (netCDF4 engine, NETCDF4 format), without dask.

    ``Dataset.to_netcdf`` asks dask which scheduler is active before every write, and that
    question imports ``dask.distributed`` (about 0.3 s) even when no array is chunked. For arrays
    in memory this goes through the same xarray encoder and netCDF4 store with xarray's own
    netCDF4/HDF5 lock, so the file is the one ``to_netcdf`` writes. Chunked (dask) arrays, or an
    xarray without these pieces, take ``to_netcdf`` itself.
    """
    try:
        import netCDF4  # noqa: F401  (the engine to_netcdf picks first when it is installed)
        from xarray.backends import NetCDF4DataStore
        from xarray.backends.netCDF4_ import NETCDF4_PYTHON_LOCK
    except ImportError:  # no netCDF4, or another xarray layout: the documented way
        NetCDF4DataStore = None
    if NetCDF4DataStore is None or any(v.chunks is not None for v in ds.variables.values()):
        ds.to_netcdf(path, encoding=encoding)
        return
    _validate_for_netcdf(ds)
    unlimited = ds.encoding.get("unlimited_dims")
    if isinstance(unlimited, str):
        unlimited = [unlimited]
    store = NetCDF4DataStore.open(os.fspath(path), mode="w", format="NETCDF4", lock=NETCDF4_PYTHON_LOCK)
    try:
        ds.dump_to_store(store, encoding=encoding, unlimited_dims=set(unlimited) if unlimited else None)
    finally:
        store.close()


def _validate_for_netcdf(ds):
    """xarray's checks of variable names and attribute values before a netCDF4 write, where it has them."""
    try:
        from xarray.backends.writers import _validate_attrs, _validate_dataset_names
    except ImportError:
        try:
            from xarray.backends.api import _validate_attrs, _validate_dataset_names
        except ImportError:
            return
    _validate_dataset_names(ds)
    _validate_attrs(ds, "netcdf4", False)


def write_timeseries_csv(ds, path):
    """Write every (time,)-only variable of ``ds`` to CSV, units in the header (``name [unit]``)."""
    names = [n for n, v in ds.data_vars.items() if v.dims == ("time",) and v.dtype.kind in "fiub"]
    cols = [ds["time"].values] + [ds[n].values for n in names]
    header = ",".join([f"time [{ds['time'].attrs.get('units', '')}]"] + [f"{n} [{ds[n].attrs.get('units', '')}]" for n in names])
    with atomic_path(path) as tmp:
        with open(tmp, "w") as fh:
            fh.write(header + "\n")
            for row in zip(*cols):
                fh.write(",".join(f"{float(v):.10g}" for v in row) + "\n")


def save_figure(fig, path, dpi=120):
    """Save a matplotlib figure atomically as PNG (its titles, labels and legends drawn as plain text)."""
    from .figures import plain_texts

    plain_texts(fig)  # user strings (titles, names) are never parsed as mathtext or TeX
    with atomic_path(path) as tmp:
        fig.savefig(tmp, format="png", dpi=dpi, bbox_inches="tight")
