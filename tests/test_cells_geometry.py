"""Raster cells to geometry: the union of the True cells' boxes, checked against a cell-by-cell union.

The oracle is GEOS (shapely.union_all of one box per True cell): an independent overlay of
the same squares. Equality is of point sets, to 1e-9 m².
"""

import numpy as np
import pytest
import shapely

from floorfit.analysis.noturn import cells_to_geometry


def _cell_by_cell(mask, x0, y0, cell):
    iy, ix = np.nonzero(mask)
    return shapely.union_all(shapely.box(x0 + ix * cell, y0 + iy * cell, x0 + (ix + 1) * cell, y0 + (iy + 1) * cell))


@pytest.mark.parametrize("seed", range(6))
def test_cells_to_geometry_equals_the_union_of_every_cell(seed):
    rng = np.random.default_rng(seed)
    mask = rng.random((40, 55)) < (0.3 + 0.1 * seed)
    mask[5:25, 10:30] = True                 # a block many rows tall: runs merged upwards
    mask[12:18, 15:20] = False               # with a hole in it
    got = cells_to_geometry(mask, 3.0, -2.0, 0.25)
    want = _cell_by_cell(mask, 3.0, -2.0, 0.25)
    assert got.area == pytest.approx(mask.sum() * 0.25 ** 2, abs=1e-9)
    assert shapely.symmetric_difference(got, want).area < 1e-9
    assert got.is_valid


def test_no_true_cell_gives_an_empty_geometry():
    assert cells_to_geometry(np.zeros((3, 4), dtype=bool), 0.0, 0.0, 1.0).is_empty
