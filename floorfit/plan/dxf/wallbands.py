"""Wall bands: thin closed faces of wall linework filled, the line segments around them dropped.

Drawings draw a wall as its two faces, two parallel lines, usually closed by short caps at
openings and ends. Each line becomes configuration-space pieces of its own at every
heading, so one wall costs two overlapping obstacles plus its caps. Where wall lines close
around a thin face, that face is the wall's section: it is filled (solid polygons, a *wall
band*) and the line segments on its boundary are dropped.

What is filled
--------------
The lines of one wall-role layer and height range are noded and polygonized together
(``shapely.node``, ``shapely.polygonize``): every face found is bounded entirely by those
lines. A face is filled when its maximum inscribed circle
(``shapely.maximum_inscribed_circle``) is at most :data:`WALL_BAND_MAX_WIDTH_M` across and
it is convex; touching filled faces form one band (``shapely.union_all``). A band is added
as its convex hull when it is convex, else as its faces' hulls: hulls have no collinear
vertices and none of the float jitter of nearly collinear line ends, which the convex
Minkowski sums cannot take. Non-convex faces (an L-shaped corner, a ring round a room)
stay linework. A line segment is dropped when a band covers it (``shapely.covered_by``);
the rest of its line stays, split at the dropped segments. Lines on other layers (doors,
openings, furniture) never close a face, and where the drawing leaves a gap no face, and
so no band, spans it: a band never bridges a door opening or an open wall end.

Why the answer does not change
------------------------------
A vehicle footprint is connected. At a pose that meets none of the lines it lies either
wholly inside a face or wholly outside it, and moving between the two means crossing the
face's boundary, which is obstacle linework. Filling a face therefore removes only poses
wholly inside it, which no motion from outside reaches: the free space reachable from
outside, and every clearance measured there (the nearest point of a face to an outside
point lies on its boundary), are unchanged. Dropped segments lie in a band, so the
obstacles still cover every point they covered. Band vertices are the drawing's own, except
where two lines cross (a crossing point computed in floating point); a face counts as
convex when its hull exceeds it by at most 1e-9 of its area, so a band lies within about
1e-9 m of its lines.

The width bound keeps rooms, corridors and shafts enclosed by wall lines as linework.
0.6 m is a plausible upper bound of a wall's thickness (masonry and stud walls 0.1 to
0.4 m, thick external and fire walls up to about 0.5 m; common practice). A vehicle narrower
than that could stand inside a closed wall cavity only if placed there; it never reaches
one from outside, so only a station drawn inside a wall would read differently (the
vehicle does not fit there, instead of not reaching it).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import numpy as np
import shapely
from shapely.errors import GEOSException

__all__ = ["WALL_BAND_MAX_WIDTH_M", "form_wall_bands", "thin_faces", "convex_pieces"]

#: Widest face of wall linework filled as a wall band, metres (maximum inscribed circle
#: diameter; a plausible upper bound of a wall's thickness, common practice).
WALL_BAND_MAX_WIDTH_M = 0.6
#: Accuracy of the inscribed-circle search, metres: a face counts as thin only when its
#: inscribed circle, widened by this, stays within the bound.
_CIRCLE_TOLERANCE_M = 0.001
#: Vertices of one convex footprint part in the pay-off test of a band (a rectangle, the
#: common vehicle outline; common practice).
_PART_VERTICES = 4
#: A face counts as convex when its convex hull exceeds it by at most this share of its area.
_CONVEX_REL_TOL = 1e-9


def thin_faces(lines: np.ndarray, max_width_m: float) -> np.ndarray:
    """The faces (polygons, metres) of the noded ``lines`` (LineStrings, metres) whose inscribed
    circle is at most ``max_width_m`` across."""
    if len(lines) == 0 or max_width_m <= 0:
        return np.zeros(0, dtype=object)
    noded = shapely.node(shapely.multilinestrings(lines))
    faces = shapely.get_parts(shapely.polygonize(shapely.get_parts(noded)))
    faces = faces[shapely.area(faces) > 0] if len(faces) else faces
    if not len(faces):
        return faces
    radius = shapely.length(shapely.maximum_inscribed_circle(faces, _CIRCLE_TOLERANCE_M))
    return faces[2.0 * (radius + _CIRCLE_TOLERANCE_M) <= max_width_m]


def convex_pieces(faces: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The bands the convex ``faces`` form, and convex polygons covering exactly those bands.

    Only convex faces are filled: a face's convex hull is the face itself without its
    collinear vertices and without the float jitter of nearly collinear line ends (a tiny
    edge pointing backwards, which a Minkowski sum that merges edges by angle cannot take).
    Touching faces are merged into bands (``shapely.union_all``); a convex band becomes one
    piece, its hull, any other band stays as its faces' hulls. Returns the bands, the pieces
    and, per piece, its band.
    """
    hulls = shapely.convex_hull(faces)
    convex = shapely.area(hulls) - shapely.area(faces) <= _CONVEX_REL_TOL * shapely.area(hulls)
    faces, hulls = faces[convex], hulls[convex]
    if not len(faces):
        return faces, faces, np.zeros(0, dtype=int)
    bands = shapely.get_parts(shapely.union_all(faces))
    face_idx, band_idx = shapely.STRtree(bands).query(shapely.point_on_surface(faces), predicate="within")
    band_of = np.zeros(len(faces), dtype=int)
    band_of[face_idx] = band_idx
    band_hulls = shapely.convex_hull(bands)
    whole = shapely.area(band_hulls) - shapely.area(bands) <= _CONVEX_REL_TOL * shapely.area(band_hulls)
    split = ~whole[band_of]
    pieces = np.concatenate([band_hulls[whole], hulls[split]])
    owner = np.concatenate([np.flatnonzero(whole), band_of[split]])
    return bands, pieces, owner


def _split_runs(coords: np.ndarray, dropped: np.ndarray) -> list[np.ndarray]:
    """The runs of consecutive kept segments of one line, as coordinate arrays."""
    runs, start = [], None
    for i, gone in enumerate(np.append(dropped, True)):
        if not gone and start is None:
            start = i
        elif gone and start is not None:
            runs.append(coords[start:i + 1])
            start = None
    return runs


def _group_key(attrs: tuple) -> tuple:
    """(layer, bottom, top): lines of one layer and height range form bands together. A band is
    an obstacle over the height range of the lines around it and carries one layer, whose
    heights a site file may set after the import (``[heights]``): a lintel drawn on its own
    layer across a door must not join the full-height walls beside it."""
    z0, z1 = attrs[1], attrs[2]
    return (attrs[0], z0 if math.isfinite(z0) else -math.inf, z1 if math.isfinite(z1) else math.inf)


def _segments(lines: np.ndarray):
    """Every segment of ``lines`` as a LineString, with its line's position, and the
    coordinates with their line positions."""
    coords, line_of = shapely.get_coordinates(lines, return_index=True)
    same = line_of[1:] == line_of[:-1]
    return shapely.linestrings(np.stack([coords[:-1][same], coords[1:][same]], axis=1)), line_of[:-1][same], \
        coords, line_of


def _owners(seg_band: np.ndarray, seg_line: np.ndarray, n_bands: int) -> np.ndarray:
    """Per band, the line position that gives it most segments (-1: none)."""
    best = np.full(n_bands, -1)
    on = seg_band >= 0
    if on.any():
        pairs, counts = np.unique(np.stack([seg_band[on], seg_line[on]], axis=1), axis=0, return_counts=True)
        order = np.lexsort((-counts, pairs[:, 0]))          # per band, the line with most segments first
        first = np.r_[True, pairs[order[1:], 0] != pairs[order[:-1], 0]]
        best[pairs[order[first], 0]] = pairs[order[first], 1]
    return best


def _group_bands(lines: np.ndarray, width: float):
    """Bands of one group of lines: (runs left per line position, pieces, the line position
    naming each piece, counts), or None when the group forms no band.

    A band is kept only where its pieces' Minkowski sums with a footprint part of
    :data:`_PART_VERTICES` vertices have no more vertices than the sums of the segments it
    covers (a piece of k edges sums to k + 4 vertices, a segment to 6): a band whose lines
    mostly run on past it, so that few of their segments lie wholly on it, is left as lines.
    """
    try:
        faces = thin_faces(lines, width)
        bands, pieces, band_of = convex_pieces(faces)
    except GEOSException:
        return None                     # linework GEOS cannot node or fill: kept as drawn
    if not len(pieces):
        return None
    segs, seg_line, coords, line_of = _segments(lines)
    s_idx, b_idx = shapely.STRtree(bands).query(segs, predicate="covered_by")
    seg_band = np.full(len(segs), -1)
    seg_band[s_idx] = b_idx             # bands touch at points at most: one band per segment
    piece_edges = shapely.get_num_coordinates(shapely.get_rings(pieces)) - 1
    covered = np.bincount(seg_band[seg_band >= 0], minlength=len(bands))
    sum_vertices = np.bincount(band_of, weights=piece_edges + _PART_VERTICES, minlength=len(bands))
    worth = sum_vertices <= (2 + _PART_VERTICES) * covered
    if not worth.any():
        return None
    seg_band[(seg_band >= 0) & ~worth[np.maximum(seg_band, 0)]] = -1
    dropped = seg_band >= 0
    starts = np.r_[0, np.cumsum(np.bincount(seg_line, minlength=len(lines)))]
    c_starts = np.r_[0, np.cumsum(np.bincount(line_of, minlength=len(lines)))]
    kept = {int(i): _split_runs(coords[c_starts[i]:c_starts[i + 1]], dropped[starts[i]:starts[i + 1]])
            for i in np.unique(seg_line[dropped])}
    use = worth[band_of]
    counts = {"wall-bands": int(worth.sum()), "wall-band-lines": sum(1 for r in kept.values() if not r),
              "wall-band-segments": int(dropped.sum()), "wall-band-edges": int(piece_edges[use].sum())}
    return kept, pieces[use], _owners(seg_band, seg_line, len(bands))[band_of[use]], counts


def form_wall_bands(walls: np.ndarray, wall_attrs: list, solids: np.ndarray, solid_attrs: list,
                    is_wall_layer: Callable[[str], bool], max_width_m: float | None = None,
                    ) -> tuple[np.ndarray, list, np.ndarray, list, dict[str, Any]]:
    """Replace double wall lines by wall bands (see the module docstring).

    ``walls`` are LineStrings in metres with attributes ``wall_attrs`` (layer, bottom, top,
    handle, entity type), ``solids`` polygons with ``solid_attrs``; ``is_wall_layer(name)``
    says whether a layer's role is wall. ``max_width_m`` defaults to
    :data:`WALL_BAND_MAX_WIDTH_M` (read at call time). Returns the new walls, their
    attributes, the solids with the bands appended, their attributes (a band takes the
    layer and heights of its lines and the handle and entity type of the line that gives
    it most segments; a band is added as convex pieces, see :func:`convex_pieces`) and counts:
    ``wall-bands`` (bands formed: touching faces count once), ``wall-band-lines`` (lines
    wholly replaced), ``wall-band-segments`` (line segments dropped), ``wall-band-edges``
    (edges of the pieces added).
    """
    width = WALL_BAND_MAX_WIDTH_M if max_width_m is None else float(max_width_m)
    stats = dict.fromkeys(("wall-bands", "wall-band-lines", "wall-band-segments", "wall-band-edges"), 0)
    groups: dict[tuple, list[int]] = {}
    for i, a in enumerate(wall_attrs):
        if is_wall_layer(a[0]):
            groups.setdefault(_group_key(a), []).append(i)
    replaced: dict[int, list[np.ndarray]] = {}
    new_solids, new_attrs = [], []
    for idx in groups.values():
        if len(idx) < 2 and shapely.get_num_coordinates(walls[idx[0]]) < 4:
            continue                    # one open line encloses nothing
        found = _group_bands(walls[idx], width)
        if found is None:
            continue
        kept, pieces, owners, counts = found
        replaced.update({idx[pos]: runs for pos, runs in kept.items()})
        new_solids.extend(pieces)
        new_attrs.extend(wall_attrs[idx[o]] if o >= 0 else wall_attrs[idx[0]] for o in owners)
        for key, n in counts.items():
            stats[key] += n
    if not new_solids:
        return walls, wall_attrs, solids, solid_attrs, stats
    out_lines, out_attrs = [], []
    for i, (line, a) in enumerate(zip(walls, wall_attrs)):
        if i not in replaced:
            out_lines.append(line)
            out_attrs.append(a)
            continue
        for run in replaced[i]:
            out_lines.append(shapely.linestrings(run))
            out_attrs.append(a)
    out_walls = np.empty(len(out_lines), dtype=object)
    out_walls[:] = out_lines
    bands_arr = np.empty(len(new_solids), dtype=object)
    bands_arr[:] = new_solids
    solids = np.concatenate([np.asarray(solids, dtype=object).reshape(-1), bands_arr])
    return out_walls, out_attrs, solids, list(solid_attrs) + new_attrs, stats
