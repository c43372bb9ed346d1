"""The cell grid through the thickness, shared by every stage.

Cells run from the bottom face (z = 0) to the top face (z = h); each layer is
cut into ``layer.cells`` equal cells, so cell widths may differ between
layers.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np


class Grid(NamedTuple):
    """Cells bottom to top, SI.

    Attributes
    ----------
    z_edges : numpy.ndarray, shape (n_cell + 1,)
        Cell faces from the bottom face [m].
    dz : numpy.ndarray, shape (n_cell,)
        Cell widths [m].
    layer_index : numpy.ndarray of int64, shape (n_cell,)
        Index of the layer each cell belongs to (0 = bottom layer).
    """

    z_edges: np.ndarray
    dz: np.ndarray
    layer_index: np.ndarray


def build_grid(scenario) -> Grid:
    """The cell grid of a scenario's layer stack.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario
        The validated scenario (SI).
    """
    dz = np.concatenate([np.full(layer.cells, layer.thickness / layer.cells) for layer in scenario.layers])
    layer_index = np.concatenate([np.full(layer.cells, li, np.int64) for li, layer in enumerate(scenario.layers)])
    return Grid(z_edges=np.concatenate([[0.0], np.cumsum(dz)]), dz=dz, layer_index=layer_index)


def cell_centres(z_edges: np.ndarray) -> np.ndarray:
    """Heights of the cell centres above the bottom face [m].

    Parameters
    ----------
    z_edges : numpy.ndarray, shape (..., n_cell + 1)
        Cell faces [m].
    """
    return 0.5 * (z_edges[:-1] + z_edges[1:])
