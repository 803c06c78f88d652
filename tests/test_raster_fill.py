"""The grid fill of the turnability map agrees with shapely's point-in-polygon test at cell centres."""

import numpy as np
import shapely

from floorfit.cspace.raster import fill_polygons


def test_fill_matches_point_in_polygon_with_holes():
    # two disjoint polygons, one with two holes, at coordinates that are not on the grid's lines
    rng = np.random.default_rng(7)
    outer = shapely.Polygon(rng.uniform(0, 1, (1, 2)) + [[0.13, 0.21], [9.71, 0.37], [8.93, 6.11], [0.59, 5.77]],
                            [[[2.03, 1.11], [3.97, 1.29], [3.11, 3.07]], [[5.13, 3.03], [7.27, 3.19], [6.61, 4.93]]])
    other = shapely.Polygon([[10.55, 1.05], [13.9, 2.2], [11.3, 6.4]])
    x0, y0, cell, nx, ny = -0.35, -0.45, 0.1, 150, 75
    mask = fill_polygons([outer, other], x0, y0, cell, nx, ny)
    xs = x0 + (np.arange(nx) + 0.5) * cell
    ys = y0 + (np.arange(ny) + 0.5) * cell
    X, Y = np.meshgrid(xs, ys)
    inside = shapely.contains_xy(shapely.MultiPolygon([outer, other]), X, Y)
    # a centre lying exactly on an edge may fall either way: compare away from the edges
    edge = shapely.MultiLineString([*shapely.get_rings(outer), *shapely.get_rings(other)])
    away = shapely.distance(shapely.points(X, Y), edge) > 1e-9
    assert away.sum() > 0.99 * nx * ny
    assert np.array_equal(mask[away], inside[away])
    assert 0.2 * nx * ny < mask.sum() < 0.8 * nx * ny
