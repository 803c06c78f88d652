"""Minkowski sums and configuration-space obstacles, vectorised over shapely 2 arrays.

For a vehicle footprint F (vehicle frame) at heading θ, the configuration-space obstacle
of an obstacle O is ``O ⊕ (−R(θ)·F)`` (Lozano-Pérez, "Spatial planning: a configuration
space approach", IEEE Trans. Computers C-32(2), 1983): the set of reference-point
positions at which the footprint meets O.

Method
------
* The footprint is split into convex parts (Hertel–Mehlhorn merge of a constrained
  Delaunay triangulation); the sum distributes over the union of parts.
* Obstacles are prepared once, independently of heading (:func:`prepare_obstacles`):
  wall linework becomes segments, convex solids are kept whole, non-convex solids are
  split into convex parts; convex pieces covered by another are dropped, touching pieces
  whose union is convex are merged (rack bays drawn one by one become one piece), and
  wall segments inside a solid are dropped. None of this changes the union of the
  obstacles. A non-convex solid the decomposition cannot take (an invalid ring) becomes
  its boundary segments plus translated copies ``O − f`` (f footprint points):
  ``O ⊕ (−F) = (∂O ⊕ −F) ∪ (O − f)`` for a connected footprint.
* Convex ⊕ convex is built by merging the two edge sequences by direction angle (de Berg
  et al., *Computational Geometry*, 3rd ed., §13.3: at most m + n edges), for whole
  batches of pieces at once in numpy; each vertex is the sum of one vertex of each
  polygon, exactly as in the convex hull of all pairwise vertex sums, and the polygons
  are created with one vectorised shapely call.

All coordinates are metres in the plan's local frame. Exact up to floating-point
arithmetic (relative 1e-12 of the local coordinates).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import Polygon

from floorfit.plan.dxf.cleanup import clean_segments, segments_of_lines

__all__ = ["convex_parts", "is_convex", "minkowski_sum", "ObstacleSet", "ConvexGroup", "prepare_obstacles",
           "cobstacle_pieces", "cobstacle_rings", "cobstacle_owners", "convex_sums", "convex_sum_polygons",
           "footprint_parts_at"]

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


def convex_parts(poly: Polygon) -> list[Polygon]:  # noqa: C901 (one merge loop over the triangulation, read top to bottom)
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


def _lowest_first(V: np.ndarray) -> np.ndarray:
    """Roll each ring of (N, K, 2) so that it starts at its lowest (then leftmost) vertex."""
    k = V.shape[1]
    y = V[:, :, 1]
    x = np.where(y == y.min(axis=1, keepdims=True), V[:, :, 0], np.inf)
    start = x.argmin(axis=1)
    idx = (start[:, None] + np.arange(k)[None, :]) % k
    return np.take_along_axis(V, idx[:, :, None], axis=1)


def _edge_angles(V: np.ndarray) -> np.ndarray:
    """Direction angles in [0, 2π) of the edges of rings ``V[..., K, 2]`` (edge i runs from vertex i to i + 1).

    For a counter-clockwise convex ring starting at its lowest vertex the angles rise
    along the ring; a running maximum makes them non-decreasing exactly (zero-length
    padding edges and rounding in nearly collinear runs keep their place).
    """
    e = np.roll(V, -1, axis=-2) - V
    a = np.mod(np.arctan2(e[..., 1], e[..., 0]), 2.0 * np.pi)
    return np.maximum.accumulate(a, axis=-1)


def _signed_areas(V: np.ndarray) -> np.ndarray:
    x, y = V[..., 0], V[..., 1]
    return 0.5 * np.sum(x * np.roll(y, -1, axis=-1) - np.roll(x, -1, axis=-1) * y, axis=-1)


def _as_ccw_rings(V: np.ndarray) -> np.ndarray:
    """(N, K, 2) rings, each reversed where it runs clockwise (segments, K = 2, are left alone)."""
    V = np.array(V, dtype=float)
    if V.shape[1] > 2:
        cw = _signed_areas(V) < 0
        V[cw] = V[cw, ::-1]
    return V


@dataclass
class ConvexGroup:
    """Convex obstacle pieces with the same padded vertex count, ready for edge merging.

    ``vertices``: (N, K, 2), counter-clockwise, each starting at its lowest (then
    leftmost) vertex, padded by repeating a vertex; segments have K = 2.
    ``angles``: (N, K) non-decreasing edge direction angles, radians.
    """

    vertices: np.ndarray
    angles: np.ndarray

    @classmethod
    def of(cls, rings: np.ndarray) -> ConvexGroup:
        V = _lowest_first(_as_ccw_rings(rings))
        return cls(V, _edge_angles(V))

    def __len__(self) -> int:
        return len(self.vertices)


def _merged_sums(group: ConvexGroup, B: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Vertices (N, K + M, 2) of the sums; direction angle and non-zero length of the edge leaving each vertex."""
    Bc = _as_ccw_rings(np.asarray(B, dtype=float)[None])
    Bc = _lowest_first(Bc)
    ab = _edge_angles(Bc)[0]
    nz_b = np.any(np.roll(Bc[0], -1, axis=0) != Bc[0], axis=1)
    Bc = Bc[0]
    V, aa = group.vertices, group.angles
    nz_a = np.any(np.roll(V, -1, axis=1) != V, axis=2)
    n, k, _ = V.shape
    m = len(Bc)
    ang = np.concatenate([aa, np.broadcast_to(ab, (n, m))], axis=1)
    order = np.argsort(ang, axis=1, kind="stable")        # ties: edges of P first, each ring in its order
    from_p = order < k
    taken_p = np.cumsum(from_p, axis=1) - from_p
    taken_b = np.arange(k + m)[None, :] - taken_p
    sums = np.take_along_axis(V, (taken_p % k)[:, :, None], axis=1) + Bc[taken_b % m]
    nonzero = np.take_along_axis(np.concatenate([nz_a, np.broadcast_to(nz_b, (n, m))], axis=1), order, axis=1)
    return sums, np.take_along_axis(ang, order, axis=1), nonzero


def convex_sums(group: ConvexGroup, B: np.ndarray) -> np.ndarray:
    """Vertices (N, K + M, 2) of ``P ⊕ B`` for every convex piece P of ``group`` and one convex polygon B.

    Edge merge by angle (de Berg et al., *Computational Geometry*, 3rd ed., §13.3): both
    rings start at their lowest vertex, their edges are merged in order of direction and
    vertex p of the sum is ``P[i] + B[j]`` with i, j the numbers of edges of each taken
    before p. Every vertex is one floating-point addition of two input vertices, as in
    the convex hull of pairwise sums. Repeated and collinear vertices may remain.
    Precondition: each ring is convex for the direction angles of its edges, which holds for
    coordinates on a nanometre grid (plans in metres); vertices a subnormal distance apart can
    break the angle order.
    """
    return _merged_sums(group, B)[0]


def _sum_vertices(group: ConvexGroup, B: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Sum vertices (N, K + M, 2) and the mask of those that start a side (see :func:`convex_sum_polygons`)."""
    V, ang, nonzero = _merged_sums(group, B)
    keep = nonzero.copy()
    keep[:, 1:] &= ang[:, 1:] != ang[:, :-1]
    keep[np.arange(len(V)), np.argmax(nonzero, axis=1)] = True      # the first real edge always starts a side
    return V, keep


def convex_sum_polygons(group: ConvexGroup, B: np.ndarray) -> np.ndarray:
    """:func:`convex_sums` as polygons, without the vertices between two edges of the same direction.

    A vertex is dropped only where it starts a zero-length edge (padding) or where the
    edges before and after it have exactly the same computed direction (parallel edges of
    P and B), so the polygon is the same point set.
    """
    V, keep = _sum_vertices(group, B)
    rings = shapely.linearrings(V[keep], indices=np.repeat(np.arange(len(V)), keep.sum(axis=1)))
    return shapely.polygons(rings)


def _padded_groups(rings: list[np.ndarray]) -> list[ConvexGroup]:
    """Group vertex arrays into :class:`ConvexGroup` s by padded size.

    Padding repeats the last vertex, which leaves the polygon unchanged.
    """
    groups: dict[int, list[np.ndarray]] = {}
    for r in rings:
        k = _bucket(len(r))
        if len(r) < k:
            r = np.vstack([r, np.repeat(r[-1:], k - len(r), axis=0)])
        groups.setdefault(k, []).append(r)
    return [ConvexGroup.of(np.stack(v)) for _, v in sorted(groups.items())]


@dataclass
class ObstacleSet:
    """Heading-independent preparation of a plan's obstacles (local frame, metres).

    ``convex_groups``: list of :class:`ConvexGroup` (convex pieces by padded vertex
    count; wall segments are pieces with K = 2).
    ``nonconvex``: array of non-convex solid polygons handled as their boundary segments
    plus translated copies (only those the convex decomposition did not take).
    ``edge_count``: number of edges of the prepared pieces.
    """

    convex_groups: list
    nonconvex: np.ndarray
    bounds: tuple[float, float, float, float]
    edge_count: int

    @property
    def empty(self) -> bool:
        return not self.convex_groups and len(self.nonconvex) == 0

    @property
    def piece_count(self) -> int:
        return sum(len(g) for g in self.convex_groups) + len(self.nonconvex)


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
    # zero-length and duplicate segments dropped, collinear overlapping ones merged (exact)
    return clean_segments(segments_of_lines(coords, idx))


#: Two convex pieces are merged when the hull of their union exceeds the union's area by
#: no more than this fraction (floating-point noise only: the merge is exact).
_MERGE_REL_TOL = 1e-12


def _pair_hulls(arr: np.ndarray, i: np.ndarray, j: np.ndarray) -> np.ndarray:
    """Convex hulls of the vertex sets of pairs (arr[i], arr[j]) (no overlay needed)."""
    ci, ii = shapely.get_coordinates(arr[i], return_index=True)
    cj, jj = shapely.get_coordinates(arr[j], return_index=True)
    order = np.argsort(np.concatenate([ii, jj]), kind="stable")
    coords = np.concatenate([ci, cj])[order]
    idx = np.concatenate([ii, jj])[order]
    return shapely.convex_hull(shapely.multipoints(coords, indices=idx))


def _merge_convex(polys: np.ndarray) -> np.ndarray:
    """Drop convex pieces covered by another and merge touching pairs whose union is convex.

    The union of the pieces is unchanged (up to rounding of areas at 1e-12 relative), and
    so is every Minkowski sum with them (⊕ distributes over ∪). Rounds of pairwise merges
    run until nothing merges: a row of n rack bays drawn one by one becomes one piece
    after about log2(n) rounds.
    """
    arr = np.asarray(polys, dtype=object)
    for _ in range(64):
        if len(arr) < 2:
            break
        n = len(arr)
        tree = shapely.STRtree(arr)
        # pieces covered by another piece (of two equal pieces the later one goes)
        i, j = tree.query(arr, predicate="covered_by")
        other = i != j
        i, j = i[other], j[other]
        mutual = np.isin(j * n + i, i * n + j)
        drop = np.zeros(n, dtype=bool)
        drop[i[~mutual]] = True
        drop[np.maximum(i, j)[mutual]] = True
        # touching pairs whose union is convex: hull area = area_i + area_j − overlap
        i, j = tree.query(arr, predicate="intersects")
        keep = (i < j) & ~drop[i] & ~drop[j]
        i, j = i[keep], j[keep]
        merged = []
        used = drop.copy()
        if len(i):
            area = shapely.area(arr)
            hull = _pair_hulls(arr, i, j)
            hull_area = shapely.area(hull)
            tol = _MERGE_REL_TOL * np.maximum(hull_area, 1e-300)
            cand = np.flatnonzero(hull_area - (area[i] + area[j]) <= tol)     # necessary: overlap ≥ 0
            if len(cand):
                inter = shapely.area(shapely.intersection(arr[i[cand]], arr[j[cand]]))
                ok = cand[hull_area[cand] - (area[i[cand]] + area[j[cand]] - inter) <= tol[cand]]
                for a, b, h in zip(i[ok], j[ok], hull[ok]):
                    if used[a] or used[b]:
                        continue
                    used[a] = used[b] = True
                    merged.append(shapely.normalize(h))
        if not merged and not drop.any():
            break
        arr = np.concatenate([arr[~used], np.asarray(merged, dtype=object)])
    return arr


def _uncovered_segments(segs: np.ndarray, solids: np.ndarray) -> np.ndarray:
    """Segments not lying wholly inside (or on) a solid: a covered segment adds nothing to any sum."""
    if not len(segs) or not len(solids):
        return segs
    lines = shapely.linestrings(segs)
    hit, _ = shapely.STRtree(solids).query(lines, predicate="covered_by")
    keep = np.ones(len(segs), dtype=bool)
    keep[hit] = False
    return segs[keep]


def prepare_obstacles(walls, solids) -> ObstacleSet:
    """Turn linework and filled polygons into convex pieces (done once, heading-independent).

    Convex solids are kept whole; non-convex ones are split into convex parts
    (:func:`convex_parts`); convex pieces covered by another are dropped and touching
    pieces whose union is convex are merged; wall segments lying inside a solid are
    dropped. None of this changes the union of the obstacles.
    """
    walls = np.asarray(walls, dtype=object)
    solids = shapely.get_parts(np.asarray(solids, dtype=object)) if len(solids) else np.zeros(0, dtype=object)
    solids = solids[~shapely.is_empty(solids)] if len(solids) else solids
    solids = solids[shapely.area(solids) > 0] if len(solids) else solids
    convex: list = []
    nonconvex = []
    if len(solids):
        holes = shapely.get_num_interior_rings(solids) > 0
        hull_area = shapely.area(shapely.convex_hull(solids))
        is_cvx = ~holes & (hull_area - shapely.area(solids) <= _CONVEX_REL_TOL * hull_area)
        convex.extend(solids[is_cvx])
        for s in solids[~is_cvx]:
            try:
                parts = convex_parts(s) if s.is_valid else []
            except shapely.errors.GEOSException:
                parts = []
            if parts and abs(sum(p.area for p in parts) - s.area) <= 1e-9 * s.area:
                convex.extend(parts)
            else:
                nonconvex.append(s)
    pieces = _merge_convex(np.asarray(convex, dtype=object)) if convex else np.zeros(0, dtype=object)
    segs = _segments_of(np.concatenate([walls, np.asarray(nonconvex, dtype=object)])
                        if nonconvex else walls)
    segs = _uncovered_segments(segs, pieces)
    # each piece as its convex hull: a piece convex only within the tolerances above (a nearly
    # collinear run of vertices may turn the wrong way by a rounding error) would break the
    # edge order of the sums; the hull holds the piece and is convex on the stored coordinates
    rings = [np.asarray(h.exterior.coords)[:-1] for h in shapely.convex_hull(pieces)] if len(pieces) else []
    groups = _padded_groups(rings) if rings else []
    if len(segs):
        groups = [ConvexGroup.of(segs)] + groups
    allg = np.concatenate([walls, solids]) if len(solids) else walls
    if len(allg):
        b = shapely.bounds(allg)
        bounds = (float(b[:, 0].min()), float(b[:, 1].min()), float(b[:, 2].max()), float(b[:, 3].max()))
    else:
        bounds = (0.0, 0.0, 0.0, 0.0)
    n_edges = len(segs) + sum(len(r) for r in rings)
    return ObstacleSet(groups, np.asarray(nonconvex, dtype=object), bounds, n_edges)


#: Largest turn (degrees) one edge of a grown corner covers: a corner of a convex part that turns
#: by more is grown by several edges tangent to the disc. Each such edge lies ``g / cos(½·this)``
#: from the corner at most (√2·g for 90°), where a single mitre on an acute corner reaches far
#: further (2.6·g at a 45° corner, 10·g at the mitre limit).
GROW_EDGE_TURN_DEG = 90.0


def grow_convex(vertices: np.ndarray, grow_m: float, max_turn_deg: float = GROW_EDGE_TURN_DEG) -> np.ndarray:
    """A convex polygon grown by ``grow_m``: its Minkowski sum with a polygon circumscribing the disc.

    Every edge moves out by exactly ``grow_m``; each corner gets a polyline of edges tangent
    to the circle of radius ``grow_m`` about it, turning at most ``max_turn_deg`` per edge (a
    right-angled corner keeps its one mitre vertex). The result contains the round offset
    (so growing is conservative) and lies within ``grow_m / cos(½·max_turn_deg)`` of the
    polygon. Rotation-equivariant: growing then rotating equals rotating then growing.
    """
    V = np.asarray(vertices, dtype=float)
    if len(V) > 1 and np.allclose(V[0], V[-1]):
        V = V[:-1]
    if grow_m <= 0 or len(V) < 3:
        return V.copy()
    V = _ccw_ring(V)
    E = np.roll(V, -1, axis=0) - V
    L = np.hypot(E[:, 0], E[:, 1])
    keep = L > 1e-12
    V, E, L = V[keep], E[keep], L[keep]
    normal = np.c_[E[:, 1], -E[:, 0]] / L[:, None]          # outward (CCW ring)
    ang_out = np.arctan2(normal[:, 1], normal[:, 0])
    n_in = np.roll(normal, 1, axis=0)                        # normal of the edge arriving at vertex i
    ang_in = np.roll(ang_out, 1)
    # turn in [0, π): a collinear vertex may come out a hair negative, which is no turn at all
    turn = np.clip(np.arctan2(n_in[:, 0] * normal[:, 1] - n_in[:, 1] * normal[:, 0],
                              np.sum(n_in * normal, axis=1)), 0.0, None)
    step = np.radians(max_turn_deg)
    out = []
    for i in range(len(V)):
        k = max(1, int(np.ceil(turn[i] / step - 1e-9)))
        a = turn[i] / k
        r = grow_m / np.cos(a / 2.0)
        psi = ang_in[i] + (np.arange(k) + 0.5) * a
        out.append(V[i] + r * np.c_[np.cos(psi), np.sin(psi)])
    return np.vstack(out)


def footprint_parts_at(parts: list[Polygon], heading_deg: float, grow_m: float = 0.0) -> list[np.ndarray]:
    """Convex footprint parts rotated to ``heading_deg``, grown by ``grow_m`` (:func:`grow_convex`), as vertex arrays.

    The grown part contains the part's Minkowski sum with a disc of radius ``grow_m``, so
    growing is conservative. Each part is handed over as the convex hull of its rotated vertices.
    """
    out = []
    for p in parts:
        # the hull of the rotated part: rotation rounding can turn a collinear vertex slightly
        # inwards, which the edge merge of the sums must not see (the hull holds the part)
        q = shapely.convex_hull(shapely.affinity.rotate(p, heading_deg, origin=(0, 0)))
        v = np.asarray(q.exterior.coords)[:-1]
        out.append(grow_convex(v, grow_m) if grow_m > 0 else v)
    return out


def cobstacle_pieces(obstacles: ObstacleSet, part_vertices: list[np.ndarray],
                     anchor: np.ndarray | None = None) -> np.ndarray:
    """All pieces of the C-obstacle ``∪ O ⊕ (−P)`` for the given (rotated) footprint parts.

    Returns an array of polygons whose union is the C-obstacle. ``anchor`` is a point of
    the rotated footprint used to translate non-convex solids (their copies are also
    translated by the first vertex of every part). Each part must be convex (any
    orientation).
    """
    pieces = []
    for P in part_vertices:
        neg = -np.asarray(P, dtype=float)
        for G in obstacles.convex_groups:
            pieces.append(convex_sum_polygons(G, neg))
    if len(obstacles.nonconvex):
        # O − f lies in O ⊕ (−F) for every footprint point f; one copy per part keeps the
        # construction exact for a footprint of several separate pieces too
        anchors = [np.asarray(anchor, dtype=float)] if anchor is not None else []
        anchors += [np.asarray(P, dtype=float)[0] for P in part_vertices]
        for f0 in anchors:
            pieces.append(shapely.transform(obstacles.nonconvex, lambda c, f0=f0: c - f0))
    if not pieces:
        return np.zeros(0, dtype=object)
    return np.concatenate(pieces)


def cobstacle_rings(obstacles: ObstacleSet, part_vertices: list[np.ndarray],
                    anchor: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The pieces of :func:`cobstacle_pieces` as rings: coordinates (M, 2), each ring's vertex count and owner.

    Rings are open (the first vertex is not repeated); shells run counter-clockwise and
    holes clockwise, so the C-obstacle is where the winding number is not zero. ``owner``
    is the index of the obstacle piece a ring comes from (the convex groups in order, then
    the non-convex solids), as used by :func:`floorfit.cspace.freespace.obstacle_clusters`.
    """
    coords, counts = [], []
    for P in part_vertices:
        neg = -np.asarray(P, dtype=float)
        for G in obstacles.convex_groups:
            V, keep = _sum_vertices(G, neg)
            coords.append(V[keep])
            counts.append(keep.sum(axis=1))
    if len(obstacles.nonconvex):
        anchors = [np.asarray(anchor, dtype=float)] if anchor is not None else []
        anchors += [np.asarray(P, dtype=float)[0] for P in part_vertices]
        oriented = shapely.orient_polygons(obstacles.nonconvex, exterior_cw=False)
        rings = shapely.get_rings(oriented)
        xy, idx = shapely.get_coordinates(rings, return_index=True)
        last = np.r_[idx[1:] != idx[:-1], True]           # the closing vertex of each ring
        xy, idx = xy[~last], idx[~last]
        n = np.bincount(idx, minlength=len(rings))
        for f0 in anchors:
            coords.append(xy - f0)
            counts.append(n)
    if not coords:
        return np.zeros((0, 2)), np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
    return (np.concatenate(coords), np.concatenate(counts).astype(np.int64),
            cobstacle_owners(obstacles, len(part_vertices), anchor is not None))


def cobstacle_owners(obstacles: ObstacleSet, n_parts: int, anchored: bool) -> np.ndarray:
    """The ``owner`` array :func:`cobstacle_rings` returns for ``n_parts`` footprint parts (``anchored``:
    an anchor was given): the obstacle piece of every ring, which depends on neither heading nor growth."""
    start = sum(len(G) for G in obstacles.convex_groups)
    owner = [np.arange(start)] * n_parts if start else []
    if len(obstacles.nonconvex):
        _, ring_of = shapely.get_rings(np.asarray(obstacles.nonconvex, dtype=object), return_index=True)
        owner += [start + ring_of] * (n_parts + (1 if anchored else 0))
    return np.concatenate(owner).astype(np.int64) if owner else np.zeros(0, dtype=np.int64)


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
