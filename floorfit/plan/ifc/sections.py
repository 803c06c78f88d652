"""Horizontal sections of triangle meshes, and the plan pieces of one element by height.

A building element is a closed triangle mesh (world coordinates, metres). What the fit check
needs from it is, for every point of the floor, the lowest height at which the element
occupies that point inside the storey's usable band. Most elements are prisms between a few
height levels (a wall with a door opening: the wall beside the opening from the floor, the
lintel over it from the door head), so the section is constant between consecutive vertex
heights. :func:`element_pieces` cuts the element once between each pair of consecutive
levels and keeps, level by level, only what no lower section already covered: each piece is
an area with its own bottom (where the element starts there) and top.

Sections are found by intersecting the triangles with the plane, noding the segments and
polygonising them; a face of the arrangement is inside when its winding number is not zero
(overlapping bodies of one element union) or, for meshes whose triangles are not
consistently oriented, when a ray from it crosses the segments an odd number of times.
Segments that bound no inside face (open surfaces: a single plate, a glass pane modelled as
a surface) are kept as linework.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely

__all__ = ["Piece", "section", "element_pieces", "MAX_LEVELS", "MIN_AREA_M2"]

#: Sections per element at most; an element with more distinct vertex heights in the band
#: (a stair, a curved chair) is cut at this many evenly spaced heights instead, and each
#: piece then takes the previous cut's height as its bottom (it errs low: towards blocking).
MAX_LEVELS = 8
#: Pieces smaller than this (square metres) are dropped: slivers from coplanar faces.
MIN_AREA_M2 = 1e-6
_ROUND = 1e-6          # coordinates are snapped to a micrometre so shared edges node exactly


@dataclass(frozen=True)
class Piece:
    """Part of an element's plan with one height range (metres above the storey floor)."""

    geometry: object          # shapely Polygon / MultiPolygon (filled) or LineString (linework)
    bottom: float
    top: float


def _segments(verts: np.ndarray, faces: np.ndarray, z: float) -> np.ndarray:
    """(k, 2, 2) oriented segments where the triangles cross the plane at height ``z``."""
    tri = verts[faces]                                  # (m, 3, 3)
    d = tri[:, :, 2] - z
    d = np.where(d == 0.0, 1e-9, d)                     # a vertex on the plane counts as above it
    above = d > 0
    n_above = above.sum(axis=1)
    cross = (n_above == 1) | (n_above == 2)
    if not np.any(cross):
        return np.empty((0, 2, 2))
    tri, d, above = tri[cross], d[cross], above[cross]
    # the lone vertex (the one on its own side) and the two others, in cyclic order
    lone = np.where(above.sum(axis=1) == 1, np.argmax(above, axis=1), np.argmax(~above, axis=1))
    i0 = lone
    i1 = (lone + 1) % 3
    i2 = (lone + 2) % 3
    r = np.arange(len(tri))
    p0, p1, p2 = tri[r, i0], tri[r, i1], tri[r, i2]
    d0, d1, d2 = d[r, i0], d[r, i1], d[r, i2]
    a = p0 + (p1 - p0) * (d0 / (d0 - d1))[:, None]      # on edge lone -> next
    b = p0 + (p2 - p0) * (d0 / (d0 - d2))[:, None]      # on edge lone -> previous
    # orientation: the segment runs counter-clockwise around the solid seen from above when
    # the triangle faces outwards (direction = up x normal)
    normal = np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0])
    direction = np.stack([-normal[:, 1], normal[:, 0]], axis=1)
    seg = np.stack([a[:, :2], b[:, :2]], axis=1)
    flip = np.einsum("ij,ij->i", seg[:, 1] - seg[:, 0], direction) < 0
    seg[flip] = seg[flip][:, ::-1]
    seg = np.round(seg / _ROUND) * _ROUND
    keep = np.any(seg[:, 0] != seg[:, 1], axis=1)
    return seg[keep]


def _inside(points: np.ndarray, seg: np.ndarray) -> np.ndarray:
    """Winding number != 0 or odd crossing parity of a ray towards +x, per point."""
    x1, y1 = seg[:, 0, 0], seg[:, 0, 1]
    x2, y2 = seg[:, 1, 0], seg[:, 1, 1]
    px, py = points[:, 0:1], points[:, 1:2]
    up = (y1 <= py) & (y2 > py)
    down = (y1 > py) & (y2 <= py)
    with np.errstate(divide="ignore", invalid="ignore"):
        t = (py - y1) / (y2 - y1)
        xc = x1 + t * (x2 - x1)
    right = xc > px
    wind = np.sum(up & right, axis=1) - np.sum(down & right, axis=1)
    parity = np.sum((up | down) & right, axis=1) % 2
    return (wind != 0) | (parity == 1)


def section(verts: np.ndarray, faces: np.ndarray, z: float):
    """The section of a mesh at height ``z``: (filled area or None, leftover linework or None)."""
    seg = _segments(verts, faces, z)
    if len(seg) == 0:
        return None, None
    lines = shapely.multilinestrings(shapely.linestrings(seg.reshape(-1, 2), indices=np.repeat(np.arange(len(seg)), 2)))
    noded = shapely.union_all(lines)
    faces_, _cuts, _dangles, _invalid = shapely.polygonize_full(shapely.get_parts(noded))
    parts = np.asarray(shapely.get_parts(faces_))
    area = None
    if len(parts):
        pts = shapely.get_coordinates(shapely.point_on_surface(parts))
        inside = parts[_inside(pts, seg)]
        if len(inside):
            area = shapely.union_all(inside)
            if area.is_empty or area.area < MIN_AREA_M2:
                area = None
    rest = noded if area is None else shapely.difference(noded, shapely.buffer(area, 1e-5))
    rest = None if rest.is_empty or rest.length < 1e-4 else shapely.line_merge(rest)
    return area, rest


def _levels(z: np.ndarray, lo: float, hi: float) -> tuple[np.ndarray, bool]:
    """Heights between which the section is cut: the vertex heights within [lo, hi], or evenly
    spaced ones when there are too many. Returns (levels, exact)."""
    inner = np.unique(np.round(z[(z > lo) & (z < hi)], 4))
    levels = np.unique(np.concatenate([[lo], inner, [hi]]))
    if len(levels) - 1 <= MAX_LEVELS:
        return levels, True
    return np.linspace(lo, hi, MAX_LEVELS + 1), False


def element_pieces(verts: np.ndarray, faces: np.ndarray, floor_z: float, band: tuple[float, float]) -> list[Piece]:
    """The pieces of one element that lie in the height band (metres above ``floor_z``).

    ``verts`` (n, 3) world coordinates in metres; ``faces`` (m, 3) vertex indices. ``band``
    is (bottom, top) above the floor: material below ``bottom`` (the floor build-up) and
    from ``top`` up is not looked at. Each piece's ``bottom`` is where the element starts
    over that area (never below 0), ``top`` the element's top above the floor.
    """
    if len(faces) == 0:
        return []
    z = verts[:, 2] - floor_z
    zmin, zmax = float(z.min()), float(z.max())
    lo, hi = max(zmin, band[0]), min(zmax, band[1])
    if hi - lo < 1e-4:
        return []
    rel = np.column_stack([verts[:, :2], z])
    levels, exact = _levels(z, lo, hi)
    start = 0.0 if zmin <= band[0] else zmin      # starting within the floor skin: on the floor
    pieces: list[Piece] = []
    covered = None
    covered_lines = None
    previous_cut = start
    for a, b in zip(levels[:-1], levels[1:]):
        if b - a < 1e-4:
            continue
        cut = 0.5 * (a + b)
        area, lines = section(rel, faces, cut)
        bottom = (start if a <= lo else float(a)) if exact else (start if a <= lo else previous_cut)
        previous_cut = cut
        if area is not None:
            new = area if covered is None else shapely.difference(area, covered)
            if not new.is_empty and new.area >= MIN_AREA_M2:
                pieces.append(Piece(new, bottom, zmax))
            covered = area if covered is None else shapely.union(covered, area)
        if lines is not None:
            new_lines = lines
            for seen in (covered, covered_lines):
                if seen is not None and not new_lines.is_empty:
                    new_lines = shapely.difference(new_lines, shapely.buffer(seen, 1e-5))
            if not new_lines.is_empty and new_lines.length >= 1e-4:
                pieces.append(Piece(new_lines, bottom, zmax))
            covered_lines = lines if covered_lines is None else shapely.union(covered_lines, lines)
    return pieces
