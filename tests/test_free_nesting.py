"""Free space assembled from the clusters' unions (no final sweep) against GEOS's difference.

The oracle is shapely (GEOS): ``region.difference(union of the rings)``, an overlay
independent of the integer clipping. Areas agree to 1e-9 m² (the clipping grid is 2**-40 m).
"""

import numpy as np
import pytest
import shapely
from shapely.geometry import Polygon, box

from floorfit.cspace import freespace


def _rings(polys):
    coords = np.concatenate([np.asarray(p.exterior.coords)[:-1] for p in polys])
    counts = np.array([len(p.exterior.coords) - 1 for p in polys])
    return coords, counts


def _frame(x0, y0, x1, y1, t):
    """Four overlapping wall rectangles of thickness ``t`` round the rectangle (x0, y0)-(x1, y1)."""
    return [box(x0, y0, x1, y0 + t), box(x0, y1 - t, x1, y1), box(x0, y0, x0 + t, y1), box(x1 - t, y0, x1, y1)]


# a room (one cluster: four walls, a union with a hole) holding a column and a closet (another
# cluster with a hole) that holds a column of its own; a column outside; a lone L-shaped solid
ROOM = _frame(10, 10, 20, 20, 0.3)
CLOSET = _frame(16, 16, 19, 19, 0.2)
PIECES = ROOM + [box(12, 12, 13, 13)] + CLOSET + [box(17.2, 17.2, 17.8, 17.8), box(2, 2, 3, 3),
                                                  Polygon([(25, 2), (28, 2), (28, 3), (26, 3), (26, 6), (25, 6)])]
GROUPS = np.array([0, 0, 0, 0, 1, 2, 2, 2, 2, 3, 4, 5])


def _oracle(region):
    free = shapely.difference(region, shapely.union_all(PIECES))
    return shapely.get_parts(free)


@pytest.mark.parametrize("region", [box(0, 0, 30, 30),
                                    # not a rectangle: the clusters' unions are subtracted in one sweep
                                    Polygon([(0, 0), (30, 0), (30, 30), (15, 31), (0, 30)])])
def test_free_space_equals_geos_difference(region):
    coords, counts = _rings(PIECES)
    comps = freespace._clip_free(coords, counts, GROUPS, region)
    want = _oracle(region)
    # outside the room; the room less its column and the closet; inside the closet less its column
    assert len(comps) == len(want) == 3
    assert np.allclose(sorted(shapely.area(comps)), sorted(shapely.area(want)), atol=1e-9)
    assert shapely.symmetric_difference(shapely.union_all(comps), shapely.union_all(want)).area < 1e-9
    assert all(shapely.is_valid(comps))


def test_rectangle_domain_takes_the_assembly_and_agrees_with_the_sweep():
    coords, counts = _rings(PIECES)
    ints = np.round(coords * freespace.CLIP_SCALE).astype(np.int64)
    square = freespace._region_paths(box(0, 0, 30, 30))
    assert freespace._inside_box(ints, square)
    # a region edge through a piece, or a region that is not one rectangle, goes to the sweep
    assert not freespace._inside_box(ints, freespace._region_paths(box(0, 0, 27, 30)))
    assert not freespace._inside_box(ints, freespace._region_paths(box(0, 0, 30, 30).buffer(1, join_style=2)
                                                                   .difference(box(-2, -2, -0.5, -0.5))))
    built = freespace.free_components(freespace._nested_free(ints, coords, counts, GROUPS, square[0]))
    holes = sorted(len(p.interiors) for p in built)
    # outside: the room and two solids; the room: its column and the closet; the closet: its column
    assert holes == [1, 2, 3]


def test_a_piece_crossing_the_domain_edge_is_clipped():
    region = box(0, 0, 27, 30)          # cuts through the L-shaped solid
    coords, counts = _rings(PIECES)
    comps = freespace._clip_free(coords, counts, GROUPS, region)
    want = _oracle(region)
    assert len(comps) == len(want) == 3
    assert shapely.symmetric_difference(shapely.union_all(comps), shapely.union_all(want)).area < 1e-9
