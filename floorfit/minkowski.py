"""Minkowski sums and configuration-space obstacles, vectorised over shapely 2 arrays.

For a vehicle footprint F (vehicle frame) at heading θ, the configuration-space obstacle
of an obstacle O is ``O ⊕ (−R(θ)·F)`` (Lozano-Pérez, "Spatial planning: a configuration
space approach", IEEE Trans. Computers C-32(2), 1983): the set of reference-point
positions at which the footprint meets O.

Method
------
* The footprint is split into convex parts (Hertel–Mehlhorn merge of a constrained
  Delaunay triangulation); the sum distributes over the union of parts.
* Obstacles are prepared once, independently of heading: wall linework becomes
  segments, convex solids are kept whole, a non-convex solid O becomes its boundary
  segments plus one translated copy ``O − f0`` (f0 any footprint point). For a connected
  footprint this is exact: ``O ⊕ (−F) = (∂O ⊕ −F) ∪ (O − f0)``.
* Convex ⊕ convex is the convex hull of all pairwise vertex sums (de Berg et al.,
  *Computational Geometry*, 3rd ed., ch. 13: at most m + n edges), computed for whole
  batches with one vectorised ``shapely.convex_hull``.

All coordinates are metres in the plan's local frame. Exact up to floating-point
arithmetic (relative 1e-12 of the local coordinates).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import Polygon

__all__ = ["convex_parts", "is_convex", "minkowski_sum", "ObstacleSet", "prepare_obstacles",
           "cobstacle_pieces", "footprint_parts_at"]

_CONVEX_REL_TOL = 1e-9
_BUCKETS = (2, 3, 4, 6, 8, 12, 16, 24, 32, 48, 64, 96, 128, 256, 512, 1024)


def is_convex(poly: Polygon) -> bool:
    """True when ``poly`` has no holes and equals its convex hull (relative area tolerance 1e-9)."""
    if poly.is_empty or len(poly.interiors):
        return False
    hull = poly.convex_hull
    return hull.area - poly.area <= _CONVEX_REL_TOL * max(hull.area, 1e-300)


def _ccw_ring(coords: np.ndarray) -> np.ndarray:
    x, y = coords[:, 0], coords[:, 1]
    area2 = np.sum(x * np.roll(y, -1) - np.roll(x, -1) * y)
    return coords if area2 > 0 else coords[::-1]


def _poly_convex(coords: np.ndarray) -> bool:
    d1 = np.roll(coords, -1, axis=0) - coords
    d2 = np.roll(d1, -1, axis=0)
    cross = d1[:, 0] * d2[:, 1] - d1[:, 1] * d2[:, 0]
    scale = np.max(np.abs(coords)) + 1.0
    return bool(np.all(cross >= -1e-12 * scale * scale))


def convex_parts(poly: Polygon) -> list[Polygon]:
    """Split a simple polygon into convex parts whose union is ``poly``.

    Constrained Delaunay triangles are merged across their shared diagonals while the
    result stays convex (Hertel & Mehlhorn, 1983: at most four times the optimal number
    of parts). Convex input is returned whole. Polygons with holes are supported.
    """
    if poly.is_empty:
        return []
    if is_convex(poly):
        return [poly]
    tris = shapely.get_parts(shapely.constrained_delaunay_triangles(poly))
    tris = [t for t in tris if t.area > 0]
    # vertex ids by exact coordinate
    vid: dict[tuple[float, float], int] = {}
    pts: list[tuple[float, float]] = []
    polys: list[list[int]] = []
    for t in tris:
        ring = _ccw_ring(np.asarray(t.exterior.coords)[:-1])
        ids = []
        for x, y in ring:
            key = (float(x), float(y))
            if key not in vid:
                vid[key] = len(pts)
                pts.append(key)
            ids.append(vid[key])
        polys.append(ids)
    P = np.asarray(pts)
    owner = list(range(len(polys)))          # triangle → current polygon id
    alive = [True] * len(polys)

    def find(i):
        while owner[i] != i:
            owner[i] = owner[owner[i]]
            i = owner[i]
        return i

    edges: dict[tuple[int, int], int] = {}
    diagonals = []
    for ti, ids in enumerate(polys):
        for a, b in zip(ids, ids[1:] + ids[:1]):
            if (b, a) in edges:
                diagonals.append((a, b, edges[(b, a)], ti))
            edges[(a, b)] = ti
    for a, b, t1, t2 in diagonals:
        p1, p2 = find(t1), find(t2)
        if p1 == p2:
            continue
        A, B = polys[p1], polys[p2]
        try:
            ia, ib = B.index(a), A.index(a)
        except ValueError:
            continue
        # A runs ... b, a ... ; B runs ... a, b ...
        if A[(ib - 1) % len(A)] != b or B[(ia + 1) % len(B)] != b:
            continue
        # merged: A from a around to b, then B from (after b) around to (before a)
        seq_a = [A[(ib + k) % len(A)] for k in range(len(A))]          # starts at a, ends at b
        seq_b = [B[(ia + 1 + k) % len(B)] for k in range(len(B))]      # starts at b, ends at a
        merged = seq_a + seq_b[1:-1]
        if _poly_convex(P[merged]):
            polys[p1] = merged
            alive[p2] = False
            owner[p2] = p1
    out = [Polygon(P[ids]) for i, ids in enumerate(polys) if alive[i] and find(i) == i]
    return [shapely.normalize(p) for p in out]


def _bucket(n: int) -> int:
    for b in _BUCKETS:
        if n <= b:
            return b
    return int(2 ** np.ceil(np.log2(n)))


def _padded_groups(rings: list[np.ndarray]) -> list[np.ndarray]:
    """Group vertex arrays into (N, K, 2) arrays, padding by repeating the last vertex (hull unchanged)."""
    groups: dict[int, list[np.ndarray]] = {}
    for r in rings:
        k = _bucket(len(r))
        if len(r) < k:
            r = np.vstack([r, np.repeat(r[-1:], k - len(r), axis=0)])
        groups.setdefault(k, []).append(r)
    return [np.stack(v) for _, v in sorted(groups.items())]


@dataclass
class ObstacleSet:
    """Heading-independent preparation of a plan's obstacles (local frame, metres).

    ``convex_groups``: list of (N, K, 2) arrays of convex pieces (segments have K = 2).
    ``nonconvex``: array of non-convex solid polygons (their boundaries are among the segments).
    """

    convex_groups: list[np.ndarray]
    nonconvex: np.ndarray
    bounds: tuple[float, float, float, float]
    edge_count: int

    @property
    def empty(self) -> bool:
        return not self.convex_groups and len(self.nonconvex) == 0


def _segments_of(geoms) -> np.ndarray:
    geoms = np.asarray(geoms, dtype=object)
    if len(geoms) == 0:
        return np.zeros((0, 2, 2))
    lines = shapely.get_parts(shapely.boundary(geoms[shapely.get_type_id(geoms) >= 3])) \
        if np.any(shapely.get_type_id(geoms) >= 3) else np.zeros(0, dtype=object)
    linear = geoms[np.isin(shapely.get_type_id(geoms), (1, 2))]
    allg = np.concatenate([shapely.get_parts(linear), lines]) if len(lines) else shapely.get_parts(linear)
    if len(allg) == 0:
        return np.zeros((0, 2, 2))
    coords, idx = shapely.get_coordinates(allg, return_index=True)
    same = idx[1:] == idx[:-1]
    seg = np.stack([coords[:-1][same], coords[1:][same]], axis=1)
    seg = seg[np.any(seg[:, 0] != seg[:, 1], axis=1)]
    # de-duplicate identical segments (either direction)
    a = np.where((seg[:, 0, 0] < seg[:, 1, 0]) | ((seg[:, 0, 0] == seg[:, 1, 0]) & (seg[:, 0, 1] <= seg[:, 1, 1])),
                 0, 1)
    canon = np.stack([seg[np.arange(len(seg)), a], seg[np.arange(len(seg)), 1 - a]], axis=1)
    _, first = np.unique(canon.reshape(len(canon), 4), axis=0, return_index=True)
    return canon[np.sort(first)]


def prepare_obstacles(walls, solids) -> ObstacleSet:
    """Turn linework and filled polygons into convex pieces and non-convex solids (done once)."""
    walls = np.asarray(walls, dtype=object)
    solids = shapely.get_parts(np.asarray(solids, dtype=object)) if len(solids) else np.zeros(0, dtype=object)
    solids = solids[~shapely.is_empty(solids)] if len(solids) else solids
    convex_rings: list[np.ndarray] = []
    nonconvex = []
    for s in solids:
        if s.area <= 0:
            continue
        if is_convex(s):
            convex_rings.append(np.asarray(s.exterior.coords)[:-1])
        else:
            nonconvex.append(s)
    segs = _segments_of(np.concatenate([walls, np.asarray(nonconvex, dtype=object)])
                        if nonconvex else walls)
    groups = _padded_groups(convex_rings) if convex_rings else []
    if len(segs):
        groups = [segs] + groups
    allg = np.concatenate([walls, solids]) if len(solids) else walls
    if len(allg):
        b = shapely.bounds(allg)
        bounds = (float(b[:, 0].min()), float(b[:, 1].min()), float(b[:, 2].max()), float(b[:, 3].max()))
    else:
        bounds = (0.0, 0.0, 0.0, 0.0)
    n_edges = len(segs) + sum(len(r) for r in convex_rings)
    return ObstacleSet(groups, np.asarray(nonconvex, dtype=object), bounds, n_edges)


def footprint_parts_at(parts: list[Polygon], heading_deg: float, grow_m: float = 0.0) -> list[np.ndarray]:
    """Convex footprint parts rotated to ``heading_deg`` and grown by ``grow_m`` (mitre offset), as vertex arrays.

    A mitred outward offset of a convex polygon contains its Minkowski sum with a disc of
    radius ``grow_m``, so growing is conservative.
    """
    out = []
    for p in parts:
        q = shapely.affinity.rotate(p, heading_deg, origin=(0, 0))
        if grow_m > 0:
            q = q.buffer(grow_m, join_style="mitre", mitre_limit=10.0)
        out.append(np.asarray(q.exterior.coords)[:-1])
    return out


def cobstacle_pieces(obstacles: ObstacleSet, part_vertices: list[np.ndarray],
                     anchor: np.ndarray | None = None) -> np.ndarray:
    """All pieces of the C-obstacle ``∪ O ⊕ (−P)`` for the given (rotated) footprint parts.

    Returns an array of polygons whose union is the C-obstacle. ``anchor`` is a point of
    the rotated footprint used to translate non-convex solids (default: first vertex of
    the first part).
    """
    pieces = []
    for P in part_vertices:
        neg = -P
        for G in obstacles.convex_groups:
            n, k, _ = G.shape
            sums = (G[:, :, None, :] + neg[None, None, :, :]).reshape(n, k * len(neg), 2)
            pieces.append(shapely.convex_hull(shapely.multipoints(sums)))
    if len(obstacles.nonconvex):
        f0 = part_vertices[0][0] if anchor is None else anchor
        pieces.append(shapely.transform(obstacles.nonconvex, lambda c: c - f0))
    if not pieces:
        return np.zeros(0, dtype=object)
    return np.concatenate(pieces)


def minkowski_sum(a, b):
    """Minkowski sum ``a ⊕ b`` of two shapely geometries (polygons, lines or points), metres.

    ``b`` is decomposed into convex parts; ``a`` is handled as in :func:`prepare_obstacles`.
    """
    b_parts = []
    for g in shapely.get_parts(b):
        if isinstance(g, Polygon):
            b_parts.extend(np.asarray(p.exterior.coords)[:-1] for p in convex_parts(g))
        else:
            b_parts.append(np.asarray(g.coords))
    a_parts = shapely.get_parts(a)
    obs = prepare_obstacles([g for g in a_parts if not isinstance(g, Polygon)],
                            [g for g in a_parts if isinstance(g, Polygon)])
    # cobstacle_pieces computes O ⊕ (−P): pass −b to get a ⊕ b
    pieces = cobstacle_pieces(obs, [-p for p in b_parts])
    return shapely.union_all(pieces)
