"""Small geometry helpers shared by the report writers.

Besides :func:`parts`, the vectorised builders of matplotlib paths from shapely geometry
(:func:`polygon_path`, :func:`line_segments`) and :func:`add_polygon_patch`, which adds a patch
of straight segments to an axes as ``Axes.add_patch`` does but without matplotlib's per-segment
Bézier loop over the path (the cost of drawing a whole floor plan as one patch). Coordinates are
in whatever frame the geometry is in (metres in the report), shifted by ``shift`` (metres).
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

import numpy as np
import shapely

__all__ = ["parts", "polygon_path", "line_segments", "add_polygon_patch"]

_POLYGON = 3          # shapely type id of a Polygon


def parts(geom: Any) -> Iterable[Any]:
    """The simple parts of a shapely geometry, nested collections flattened; nothing for None or empty."""
    if geom is None or geom.is_empty:
        return
    if hasattr(geom, "geoms"):
        for g in geom.geoms:
            yield from parts(g)
    else:
        yield geom


def _simple_parts(geoms: Iterable[Any]) -> np.ndarray:
    """All simple parts of ``geoms`` in order (as :func:`parts` gives them), as an object array.

    A sequence of plain non-empty polygons (a plan's solids) is taken as it is, without a Python
    loop over its members."""
    arr = np.asarray(geoms if isinstance(geoms, np.ndarray) else list(geoms), dtype=object)
    if arr.ndim == 1 and len(arr):
        try:
            types = shapely.get_type_id(arr)
        except TypeError:               # something other than shapely geometries: the slow way
            types = None
        if types is not None and bool(np.all(types == _POLYGON)) and not bool(np.any(shapely.is_empty(arr))):
            return arr
    return np.asarray([p for g in arr.ravel() for p in parts(g)], dtype=object)


def _rings(polys: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Coordinates (x, y) of all rings of ``polys`` (exterior, then holes, polygon by polygon) and
    the number of coordinates of each ring (closed rings: last point = first point)."""
    rings = shapely.get_rings(polys)
    if not len(rings):
        return np.zeros((0, 2)), np.zeros(0, dtype=np.int64)
    xy, index = shapely.get_coordinates(rings, return_index=True)
    return xy, np.bincount(index, minlength=len(rings))


def polygon_path(geoms: Iterable[Any], shift: np.ndarray) -> Any:
    """One compound matplotlib ``Path`` of all polygons in ``geoms`` (holes kept: rings oriented for
    nonzero fill), shifted by ``shift``; None when there is none. Rings with fewer than three
    coordinates are left out. The same vertices and codes as building it ring by ring."""
    from matplotlib.path import Path

    allparts = _simple_parts(geoms)
    if not len(allparts):
        return None
    polys = allparts[shapely.get_type_id(allparts) == _POLYGON]
    if not len(polys):
        return None
    xy, counts = _rings(shapely.orient_polygons(polys))
    keep_ring = counts >= 3
    if not keep_ring.any():
        return None
    keep = np.repeat(keep_ring, counts)
    xy = xy[keep] + np.asarray(shift, dtype=float)
    counts = counts[keep_ring]
    ends = np.cumsum(counts)
    codes = np.full(len(xy), Path.LINETO, dtype=np.uint8)
    codes[ends - counts] = Path.MOVETO
    codes[ends - 1] = Path.CLOSEPOLY
    return Path(xy, codes)


def line_segments(geoms: Iterable[Any], shift: np.ndarray) -> list[np.ndarray]:
    """Coordinate arrays (x, y) of all linework in ``geoms`` (LineStrings, LinearRings and the rings
    of polygons, in order), shifted by ``shift``; lines with fewer than two coordinates left out."""
    allparts = _simple_parts(geoms)
    if not len(allparts):
        return []
    types = shapely.get_type_id(allparts)
    # per part, in order: its rings (polygons) or itself (lines); points and others drop out
    lines = np.asarray([r for p, t in zip(allparts, types) if t in (1, 2, 3)
                        for r in (shapely.get_rings(p) if t == _POLYGON else (p,))], dtype=object) \
        if not bool(np.all(types == _POLYGON)) else shapely.get_rings(allparts)
    if not len(lines):
        return []
    xy, index = shapely.get_coordinates(lines, return_index=True)
    counts = np.bincount(index, minlength=len(lines))
    xy = xy + np.asarray(shift, dtype=float)
    pieces = np.split(xy, np.cumsum(counts)[:-1])
    return [p for p, n in zip(pieces, counts) if n >= 2]


def add_polygon_patch(ax: Any, patch: Any) -> Any:
    """Add ``patch`` (a patch of straight segments: a ``PathPatch`` of polygons, a ``Rectangle``) to
    ``ax`` as ``ax.add_patch`` does, with the same data limits, computed from the path's vertices in
    one step instead of segment by segment. Paths with curves, or patches already given a transform,
    go to ``ax.add_patch``."""
    from matplotlib.patches import Rectangle
    from matplotlib.path import Path

    path = patch.get_path()
    codes = path.codes
    curved = codes is not None and bool(np.any((codes == Path.CURVE3) | (codes == Path.CURVE4)))
    if curved or patch.is_transform_set():
        return ax.add_patch(patch)
    ax.add_artist(patch)                 # the artist props and clip path add_patch gives it
    patch._set_in_autoscale(True)
    if isinstance(patch, Rectangle) and not patch.get_width() and not patch.get_height():
        return patch                     # add_patch leaves such rectangles out of the data limits too
    verts = path.vertices if codes is None else path.vertices[(codes != Path.CLOSEPOLY) & (codes != Path.STOP)]
    if len(verts):
        ax.update_datalim((patch.get_transform() - ax.transData).transform(verts))
    return patch
