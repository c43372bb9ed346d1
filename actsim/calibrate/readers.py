"""Measurement files with units in the header: see :mod:`actsim.tables` (re-exported here)."""

from ..tables import KINDS, XYData, as_xy, read_xy_csv  # noqa: F401

__all__ = ["XYData", "KINDS", "read_xy_csv", "as_xy"]
