"""Result files: the NetCDF writer gives the file xarray's own writer gives, and imports no dask."""

from __future__ import annotations

import subprocess
import sys

import netCDF4
import numpy as np
import pytest
import xarray as xr

from actsim.io import MISSING_FILL, write_netcdf


def sample_dataset():
    """Every kind of variable a result file holds: (time, z) and (time,) floats, integers, booleans, strings,
    a non-index coordinate, entries missing by definition, and global attributes of each type."""
    rng = np.random.default_rng(3)
    t = np.linspace(0.0, 2.0, 7)
    z = np.linspace(1e-6, 9e-6, 5)
    reached = np.array([0.5, np.nan, 1.5])
    return xr.Dataset(
        {
            "conversion": (("time", "z"), rng.random((7, 5)), {"units": "1", "long_name": "conversion"}),
            "bend_angle": ("time", rng.normal(size=7), {"units": "rad", "long_name": "bend angle"}),
            "protocol_step": ("time", np.arange(7, dtype=np.int32), {"units": "1", "long_name": "step"}),
            "count": ("time", np.arange(7, dtype=np.int64), {"units": "1", "long_name": "count"}),
            "lit": ("time", np.arange(7) % 2 == 0, {"units": "1", "long_name": "light on"}),
            "hold": ("time", np.array(["free", "held flat", "free", "tip load", "free", "free", "free"]),
                     {"units": "1", "long_name": "mechanical condition"}),
            "time_to_target": ("design", reached, {"units": "s", "long_name": "time to target",
                                                   "missing_means": "target never reached"}),
        },
        coords={
            "time": ("time", t, {"units": "s", "long_name": "time"}),
            "z": ("z", z, {"units": "m", "long_name": "height"}),
            "layer": ("z", np.array(["active film", "active film", "substrate", "substrate", "substrate"]),
                      {"units": "1", "long_name": "layer of the cell"}),
            "design": ("design", np.arange(3), {"units": "1", "long_name": "design"}),
        },
        attrs={"title": "sample", "scenario": "# Invented\nx = 1\n", "thickness": 7e-5, "heat_modelled": 1,
               "Conventions": "CF-1.8", "shape": np.array([1.0, 2.0])},
    )


def structure(path):
    """Dimensions, variables (type, dimensions, storage, every attribute) and global attributes as stored."""
    out = []
    with netCDF4.Dataset(path) as nc:
        nc.set_auto_mask(False)
        out.append(("format", nc.data_model))
        out += [("dim", d, len(v), v.isunlimited()) for d, v in nc.dimensions.items()]
        for name, v in nc.variables.items():
            attrs = {a: np.asarray(v.getncattr(a)).tolist() for a in v.ncattrs()}
            data = v[:]
            values = data.tolist() if v.dtype is str else np.asarray(data).tobytes()
            out.append(("var", name, str(v.dtype), v.dimensions, str(v.chunking()), repr(attrs), values))
        out += [("attr", a, repr(np.asarray(nc.getncattr(a)).tolist())) for a in nc.ncattrs()]
    return out


def test_netcdf_file_is_the_one_xarray_writes_and_reads_back(tmp_path):
    ds = sample_dataset()
    write_netcdf(ds, tmp_path / "ours.nc")
    # reference: xarray's own writer with the same missing-value encoding (CF conventions 1.8, sec. 2.5.1)
    ds.to_netcdf(tmp_path / "xarray.nc", encoding={"time_to_target": {"_FillValue": MISSING_FILL}})
    assert structure(tmp_path / "ours.nc") == structure(tmp_path / "xarray.nc")
    with xr.open_dataset(tmp_path / "ours.nc") as ours, xr.open_dataset(tmp_path / "xarray.nc") as ref:
        assert ours.identical(ref)
        assert ours.identical(ds)  # NaN comes back where the fill value was written
        assert ours["lit"].dtype == bool and ours["protocol_step"].dtype == np.int32
        assert list(ours.variables) == list(ref.variables)
    assert not list(tmp_path.glob(".*.part"))  # atomic: no temporary file left


def test_chunked_arrays_take_xarray_writer(tmp_path):
    pytest.importorskip("dask.array")
    ds = sample_dataset()
    write_netcdf(ds.chunk({"time": 3}), tmp_path / "chunked.nc")
    with xr.open_dataset(tmp_path / "chunked.nc") as back:
        assert back.identical(ds)


def test_netcdf_write_imports_no_dask(tmp_path):
    # xarray's to_netcdf asks dask for its scheduler, which imports dask.distributed (about 0.3 s).
    code = (
        "import sys\n"
        "sys.path.insert(0, {tests!r})\n"
        "from test_io import sample_dataset\n"
        "from actsim.io import write_netcdf\n"
        "ds = sample_dataset()\n"
        "before = set(sys.modules)\n"
        "write_netcdf(ds, {path!r})\n"
        "print(' '.join(sorted(m for m in set(sys.modules) - before if m.split('.')[0] in ('dask', 'distributed'))))\n"
    ).format(tests=str(__import__("pathlib").Path(__file__).parent), path=str(tmp_path / "x.nc"))
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert r.stdout.split() == []
    assert (tmp_path / "x.nc").is_file()
