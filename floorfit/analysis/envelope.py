"""The building envelope: the floor the site check analyses.

Floor outside a building (the strip between an exterior wall and the edge of the drawing,
a forecourt around an open pavilion) is not part of the question a site check answers:
findings there are noise. The envelope is, in order of preference:

* the polygon given in the site file (``[analysis] envelope = [[x, y], ...]``, drawing
  frame, metres);
* ``envelope = "none"``: the whole drawing is analysed;
* by default (``"auto"``) the convex hull of the obstacles the vehicle meets and of the
  stations. An open plan whose walls do not close (a pavilion) still has its exterior
  outside that hull; a closed building's exterior is also cut off by its walls, which the
  turnability map already uses (floor connected to the drawing's edge).

Local plan frame, metres.
"""

from __future__ import annotations

import numpy as np
import shapely
from shapely.geometry import MultiPoint, Polygon

from floorfit.cspace.raster import fill_polygons

__all__ = ["building_envelope", "envelope_mask", "outside_envelope"]


def building_envelope(plan, site, obstacles, station_points) -> Polygon | None:
    """The envelope (local frame) for ``site``'s ``envelope`` setting, or None for the whole drawing.

    ``obstacles``: geometries the vehicle meets (local frame); ``station_points``: local (x, y).
    """
    given = getattr(site, "envelope", None)
    if isinstance(given, str) and given == "none":
        return None
    if given is not None and not isinstance(given, str):
        pts = [plan.to_local(float(x), float(y)) for x, y in given]
        poly = shapely.make_valid(Polygon(pts))
        return poly if not poly.is_empty and poly.area > 0 else None
    geoms = [g for g in obstacles if g is not None and not g.is_empty]
    if not geoms:
        return None
    coords = [shapely.get_coordinates(np.asarray(geoms, dtype=object))]
    if station_points:
        coords.append(np.asarray(station_points, dtype=float).reshape(-1, 2))
    hull = MultiPoint(np.vstack(coords)).convex_hull
    return hull if isinstance(hull, Polygon) and hull.area > 0 else None


def envelope_mask(envelope, x0: float, y0: float, cell: float, nx: int, ny: int) -> np.ndarray:
    """Boolean (ny, nx) raster of cell centres inside ``envelope`` (all True when it is None)."""
    if envelope is None:
        return np.ones((ny, nx), dtype=bool)
    return fill_polygons(shapely.get_parts(envelope), x0, y0, cell, nx, ny)


def outside_envelope(envelope, x: float, y: float, slack: float) -> bool:
    """True when local (x, y) lies farther than ``slack`` (m) outside ``envelope``."""
    if envelope is None:
        return False
    return float(envelope.distance(shapely.Point(x, y))) > slack
