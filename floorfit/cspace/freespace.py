"""Free space of one heading slice: C-obstacle assembly, union and subtraction from the domain.

Owns everything that turns one slice's footprint parts (heading, growth) into free-space
components: the obstacle clusters (:func:`obstacle_clusters`, pieces of far-apart obstacles
never overlap so each cluster is unioned on its own), the GEOS C-obstacle
(:func:`slice_cobstacle`), the integer-grid clipping with pyclipper (grid scale
:data:`CLIP_SCALE`, the guard growths :data:`CLIP_GUARD_M` and :data:`CASCADE_GUARD_M`, one
Vatti sweep per cluster or the divide-and-conquer cascade for big clusters, the free space
assembled from the clusters' union trees), the switch
between the two (:data:`UNION_BACKEND`), and the free components in canonical order with
those under :data:`MIN_COMPONENT_AREA_M2` square metres dropped. Local frame, metres;
headings in degrees. Slice sets, recipes and the process pool live in
:mod:`floorfit.cspace.slices` and :mod:`floorfit.cspace.slicepool`.
"""

from __future__ import annotations

import gc
import math

import numpy as np
import shapely
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components
from shapely.geometry import Polygon

from floorfit.cspace.minkowski import (
    ObstacleSet,
    cobstacle_owners,
    cobstacle_pieces,
    cobstacle_rings,
    footprint_parts_at,
)

try:                                   # integer polygon clipping (Vatti); the GEOS path is the fallback
    import pyclipper
except ImportError:                    # pragma: no cover - depends on the installation
    pyclipper = None

__all__ = ["obstacle_clusters", "slice_cobstacle", "slice_free", "free_components", "canonical_order",
           "union_polygons", "UNION_BACKEND", "CLIP_SCALE", "CLIP_GUARD_M", "MIN_COMPONENT_AREA_M2",
           "CASCADE_MIN_RINGS", "CASCADE_GUARD_M", "CASCADE_LEAF", "CASCADE_FANOUT"]

#: Free-space components smaller than this are dropped, square metres.
MIN_COMPONENT_AREA_M2 = 1e-6


def obstacle_clusters(obstacles: ObstacleSet, reach_m: float) -> np.ndarray:
    """Cluster label of every C-obstacle piece :func:`cobstacle_pieces` returns for ONE footprint part.

    Pieces of obstacles farther apart than ``reach_m`` (at least the footprint's diameter)
    can never have overlapping C-obstacles: if o1 − f1 = o2 − f2 then |o1 − o2| = |f1 − f2|.
    So each cluster of obstacles closer than ``reach_m`` to one another is unioned on its
    own and the results are disjoint. Labels run over the convex groups in order, then
    the non-convex solids.
    """
    geoms = []
    for G in obstacles.convex_groups:
        V = G.vertices
        geoms.append(shapely.linestrings(V) if V.shape[1] == 2 else shapely.polygons(V))
    if len(obstacles.nonconvex):
        geoms.append(np.asarray(obstacles.nonconvex, dtype=object))
    if not geoms:
        return np.zeros(0, dtype=np.int64)
    geoms = np.concatenate(geoms)
    # pairs whose bounding boxes come within reach, then the exact distance of those pairs
    # (five times faster than the tree's dwithin predicate on a real floor of 16,500 pieces)
    b = shapely.bounds(geoms)
    near = shapely.box(b[:, 0] - reach_m, b[:, 1] - reach_m, b[:, 2] + reach_m, b[:, 3] + reach_m)
    i, j = shapely.STRtree(geoms).query(near)
    upper = i < j
    i, j = i[upper], j[upper]
    close = shapely.distance(geoms[i], geoms[j]) <= reach_m
    i, j = i[close], j[close]
    n = len(geoms)
    graph = coo_matrix((np.ones(len(i), dtype=np.int8), (i, j)), shape=(n, n))
    return connected_components(graph, directed=False)[1]


def _piece_labels(obstacles: ObstacleSet, labels: np.ndarray, n_parts: int) -> np.ndarray:
    n_convex = sum(len(G) for G in obstacles.convex_groups)
    return np.concatenate([np.tile(labels[:n_convex], n_parts), labels[n_convex:]])


def _union_by_cluster(pieces: np.ndarray, labels: np.ndarray | None):
    """Union of ``pieces``; with cluster ``labels`` (disjoint clusters) one union per cluster."""
    if labels is None or len(pieces) != len(labels) or len(pieces) < 2:
        return shapely.union_all(pieces) if len(pieces) else Polygon()
    order = np.argsort(labels, kind="stable")
    cut = np.flatnonzero(np.diff(labels[order])) + 1
    if not len(cut):
        return shapely.union_all(pieces)
    polys = []
    for grp in np.split(pieces[order], cut):
        u = grp[0] if len(grp) == 1 else shapely.union_all(grp)
        polys.extend(g for g in shapely.get_parts(u) if shapely.get_type_id(g) == 3)
    return shapely.multipolygons(polys)


def slice_cobstacle(obstacles: ObstacleSet, parts: list[Polygon], heading: float, grow: float,
                    anchor_local: np.ndarray, labels: np.ndarray | None = None):
    """The C-obstacle of one slice: the union of ``O ⊕ (−P)`` over obstacles O and footprint parts P.

    ``parts`` (vehicle frame) are rotated to ``heading`` (degrees) and offset by ``grow``
    metres (mitre; negative values are taken as 0); ``anchor_local`` is the footprint point
    that translates non-convex solids; ``labels`` the clusters of
    :func:`obstacle_clusters` (optional, for speed only). Local frame, metres.
    """
    verts = footprint_parts_at(parts, heading, grow if grow >= 0 else 0.0)
    t = math.radians(heading)
    c, s = math.cos(t), math.sin(t)
    anchor = np.array([c * anchor_local[0] - s * anchor_local[1], s * anchor_local[0] + c * anchor_local[1]])
    pieces = cobstacle_pieces(obstacles, verts, anchor)
    piece_labels = _piece_labels(obstacles, labels, len(verts)) if labels is not None else None
    return _union_by_cluster(pieces, piece_labels)


def canonical_order(comps: np.ndarray) -> np.ndarray:
    """Components sorted by the lower-left corner of their bounds (then area), to 1e-9 m.

    The order does not depend on how the free space was computed (either overlay path, a
    full build or :func:`floorfit.cspace.incremental.update_slices`), so node numbers ``(k, i)``
    and anything that samples components in order agree between them.
    """
    if len(comps) < 2:
        return comps
    b = np.round(shapely.bounds(comps) * 1e9)
    order = np.lexsort((np.round(shapely.area(comps) * 1e9), b[:, 3], b[:, 2], b[:, 1], b[:, 0]))
    return comps[order]


def free_components(free) -> np.ndarray:
    """Polygon components of a free geometry (canonical order), without those under ``MIN_COMPONENT_AREA_M2``."""
    comps = shapely.get_parts(free)
    comps = comps[shapely.get_type_id(comps) == 3] if len(comps) else comps
    if len(comps):
        comps = comps[shapely.area(comps) > MIN_COMPONENT_AREA_M2]
    return canonical_order(comps)


#: How the slices' free space is computed: ``"clipper"`` (Vatti sweeps by cluster on an
#: integer grid, pyclipper) when available, else ``"geos"`` (shapely unions by cluster).
UNION_BACKEND = "clipper" if pyclipper is not None else "geos"
#: Grid of the integer clipping: coordinates are multiples of 2**-40 m (about 0.9e-12 m).
CLIP_SCALE = float(2 ** 40)
#: The sound footprint is grown by this much more (metres): 4 grid steps, more than the
#: snapping can move a boundary (input vertices ½ step per coordinate, intersection points
#: ½ step in each of at most two sweeps: at most 1.5·√2 steps), so a C-obstacle never shrinks
#: and poses that touch an obstacle are never inside the free space.
CLIP_GUARD_M = 4.0 / CLIP_SCALE


def _region_paths(region) -> list[np.ndarray]:
    rings = shapely.get_rings(shapely.get_parts(region))
    out = []
    for r in rings:
        c = np.asarray(r.coords)[:-1]
        if len(c) >= 3:
            out.append(np.round(c * CLIP_SCALE).astype(np.int64))
    return out


def _tree_polygons(tree) -> list:
    """Polygons of a pyclipper PolyTree (outer contours with their holes; islands in holes as new polygons)."""
    out = []
    stack = list(tree.Childs)
    while stack:
        node = stack.pop()
        shell = np.asarray(node.Contour, dtype=float) / CLIP_SCALE
        holes = [np.asarray(h.Contour, dtype=float) / CLIP_SCALE for h in node.Childs]
        out.append(shapely.Polygon(shell, holes))
        for h in node.Childs:
            stack.extend(h.Childs)
    return out


#: A cluster with at least this many rings is unioned divide-and-conquer (:func:`_cascade_union`);
#: smaller ones in one sweep. On a real drawing the walls form one cluster of thousands of
#: overlapping pieces, and one sweep over them all grows far worse than linearly.
CASCADE_MIN_RINGS = 512
#: Rings per leaf of the cascade (unioned in one sweep before the merges).
CASCADE_LEAF = 16
#: Neighbouring results merged in one sweep at each level of the cascade. On a real office
#: floor (16,500 rings in one cluster) leaves of 16 merged 8 at a time took 30 % less time
#: than leaves of 32 merged pairwise.
CASCADE_FANOUT = 8
#: Extra growth of the sound footprint (metres) when a cascade runs: every level of merges
#: may round an intersection point by half a grid step (at most √2/2 steps off the true
#: boundary), so 64 steps cover more than 80 levels, far beyond the ~log8(rings / leaf)
#: levels a cascade has.
CASCADE_GUARD_M = 64.0 / CLIP_SCALE


def _union_sweep(paths) -> list:
    pc = pyclipper.Pyclipper()
    pc.AddPaths(paths, pyclipper.PT_SUBJECT, True)
    return pc.Execute(pyclipper.CT_UNION, pyclipper.PFT_NONZERO, pyclipper.PFT_NONZERO)


def _morton_order(centres: np.ndarray) -> np.ndarray:
    """Indices of ``centres`` (N, 2) along a Z-order (Morton) curve over their bounds (stable on ties)."""
    lo = centres.min(axis=0)
    span = np.maximum(centres.max(axis=0) - lo, 1e-300)
    q = np.minimum((centres - lo) / span * 65535.0, 65535.0).astype(np.uint64)

    def spread(v):
        v = (v | (v << np.uint64(8))) & np.uint64(0x00FF00FF)
        v = (v | (v << np.uint64(4))) & np.uint64(0x0F0F0F0F)
        v = (v | (v << np.uint64(2))) & np.uint64(0x33333333)
        return (v | (v << np.uint64(1))) & np.uint64(0x55555555)

    return np.argsort(spread(q[:, 0]) | (spread(q[:, 1]) << np.uint64(1)), kind="stable")


def _cascade_union(paths: list, centres: np.ndarray) -> list:
    """Union of integer ``paths`` (non-zero winding) by divide and conquer, as GEOS's cascaded union does.

    The rings are ordered along a Z-order curve of their centres, unioned in leaves of
    :data:`CASCADE_LEAF` neighbours, then :data:`CASCADE_FANOUT` neighbouring results at a
    time are merged up a tree. Each sweep then sees only the edges of one neighbourhood, so
    the cost grows about as n·log n instead of with n times the edges crossing a scanline
    of the whole cluster. Deterministic: the same rings give the same result.
    """
    order = _morton_order(centres)
    level = [_union_sweep([paths[i] for i in order[a:a + CASCADE_LEAF]]) for a in range(0, len(order), CASCADE_LEAF)]
    while len(level) > 1:
        level = [_union_sweep([p for part in level[a:a + CASCADE_FANOUT] for p in part]) if a + 1 < len(level)
                 else level[a] for a in range(0, len(level), CASCADE_FANOUT)]
    return level[0] if level else []


def _cascades(n_rings: int, groups: np.ndarray | None) -> bool:
    """True when some cluster of the ``n_rings`` rings is big enough for :func:`_cascade_union`."""
    if groups is None:
        return n_rings >= CASCADE_MIN_RINGS
    return bool(len(groups)) and int(np.bincount(groups).max()) >= CASCADE_MIN_RINGS


def _cluster_rings(ints: np.ndarray, coords: np.ndarray, counts: np.ndarray, groups: np.ndarray):
    """Each cluster's rings: yields ``(cluster, unioned, rings)``, where a cluster of
    :data:`CASCADE_MIN_RINGS` rings or more comes as the paths of its :func:`_cascade_union`
    (``unioned`` True) and any other as its own rings: a lone ring as an (n, 2) array, rings
    to be unioned as lists of [x, y] (pyclipper reads a list four times faster than an array)."""
    ends = np.cumsum(counts)
    starts = ends - counts
    order = np.argsort(groups, kind="stable")
    centres = None
    listed = ints.tolist()
    for cl, grp in enumerate(np.split(order, np.flatnonzero(np.diff(groups[order])) + 1)):
        rings = [ints[starts[grp[0]]:ends[grp[0]]]] if len(grp) == 1 else [listed[starts[i]:ends[i]] for i in grp]
        if len(grp) >= CASCADE_MIN_RINGS:
            if centres is None:
                centres = np.add.reduceat(coords, starts, axis=0) / counts[:, None]
            rings = _cascade_union(rings, centres[grp])
        yield cl, len(grp) >= CASCADE_MIN_RINGS, rings


def _inside_box(ints: np.ndarray, region_paths: list[np.ndarray]) -> bool:
    """True when ``region_paths`` is one axis-parallel rectangle holding every point of ``ints``
    more than two grid steps inside its edges (a union's vertices stay within one step of its input's)."""
    if len(region_paths) != 1 or len(region_paths[0]) != 4:
        return False
    box = region_paths[0]
    xs, ys = np.unique(box[:, 0]), np.unique(box[:, 1])
    if len(xs) != 2 or len(ys) != 2 or len({(int(x), int(y)) for x, y in box}) != 4:
        return False
    if not len(ints):
        return True
    lo, hi = ints.min(axis=0), ints.max(axis=0)
    return bool(lo[0] > xs[0] + 2 and lo[1] > ys[0] + 2 and hi[0] < xs[1] - 2 and hi[1] < ys[1] - 2)


def _nested_free(ints: np.ndarray, coords: np.ndarray, counts: np.ndarray, groups: np.ndarray,
                 box: np.ndarray) -> np.ndarray:
    """Free polygons of a rectangle ``box`` (integer ring) minus the rings' union, without a final sweep.

    Each cluster's union is taken as a tree of outer contours and holes (one sweep per
    cluster; a lone ring is its own contour). Clusters are disjoint, so the free space is the rectangle with every
    outermost contour as a hole, plus every hole of a union with the contours directly inside
    it as its holes. Which hole directly holds a contour of another cluster is found by testing
    one of its vertices (exact: contours of different clusters never touch); the innermost of
    the holes holding it is the one of least area.
    """
    shells: list[np.ndarray] = []
    parent: list[int] = []               # index into holes, or -1: directly in the rectangle
    shell_cluster: list[int] = []
    holes: list[np.ndarray] = []
    hole_cluster: list[int] = []
    for cl, unioned, rings in _cluster_rings(ints, coords, counts, groups):
        if len(rings) == 1 and not unioned:
            shells.append(rings[0])
            parent.append(-1)
            shell_cluster.append(cl)
            continue
        pc = pyclipper.Pyclipper()
        pc.AddPaths(rings, pyclipper.PT_SUBJECT, True)
        tree = pc.Execute2(pyclipper.CT_UNION, pyclipper.PFT_NONZERO, pyclipper.PFT_NONZERO)
        stack = [(node, -1) for node in tree.Childs]
        while stack:
            node, up = stack.pop()
            shells.append(np.asarray(node.Contour, dtype=np.int64))
            parent.append(up)
            shell_cluster.append(cl)
            for h in node.Childs:
                holes.append(np.asarray(h.Contour, dtype=np.int64))
                hole_cluster.append(cl)
                stack.extend((g, len(holes) - 1) for g in h.Childs)
    up = np.asarray(parent, dtype=np.int64)
    if holes and shells:
        hole_polys = _polygons_of([[h] for h in holes])
        firsts = shapely.points(np.array([s[0] for s in shells], dtype=float) / CLIP_SCALE)
        h_idx, s_idx = shapely.STRtree(firsts).query(hole_polys, predicate="contains")
        other = np.asarray(hole_cluster)[h_idx] != np.asarray(shell_cluster)[s_idx]
        h_idx, s_idx = h_idx[other], s_idx[other]
        if len(s_idx):
            # candidates: the hole a contour has in its own cluster's tree, and every hole of
            # another cluster around it (they nest); the innermost has the least area
            own = np.flatnonzero(up >= 0)
            cand_s = np.r_[s_idx, own]
            cand_h = np.r_[h_idx, up[own]]
            order = np.lexsort((shapely.area(hole_polys)[cand_h], cand_s))
            first = np.r_[True, np.diff(cand_s[order]) != 0]
            up[cand_s[order][first]] = cand_h[order][first]
    rings: list[list[np.ndarray]] = [[box]] + [[h] for h in holes]
    for s, p in zip(shells, up.tolist()):
        rings[p + 1].append(s)
    return _polygons_of(rings)


def _polygons_of(rings: list[list[np.ndarray]]) -> np.ndarray:
    """Polygons (metres) from integer rings (open, grid units): ``rings[i]`` is polygon i's shell, then its holes."""
    flat = [r for poly in rings for r in poly]
    coords = np.concatenate([part for r in flat for part in (r, r[:1])]) / CLIP_SCALE
    ring_ends = np.cumsum([len(r) + 1 for r in flat])
    poly_ends = np.cumsum([len(poly) for poly in rings])
    return shapely.from_ragged_array(shapely.GeometryType.POLYGON, coords,
                                     (np.r_[0, ring_ends], np.r_[0, poly_ends]))


def _clip_free(coords: np.ndarray, counts: np.ndarray, groups: np.ndarray | None, region) -> np.ndarray | None:
    """``region`` minus the union of the rings (non-zero winding) on the integer grid; None if clipping fails.

    Rings of one obstacle cluster (``groups``: a cluster label per ring) are unioned on
    their own: in one sweep (few active edges per scanline), or divide-and-conquer
    (:func:`_cascade_union`) for a cluster of :data:`CASCADE_MIN_RINGS` rings or more. The
    cluster unions are disjoint. When the region is a rectangle around all of them (a slice
    domain), the free space is assembled from the unions' contours (:func:`_nested_free`);
    otherwise (or if that gives an invalid polygon) all unions are subtracted from the region
    in one last sweep. Both give the same point set on the grid.
    """
    # some 10^4 short lists for pyclipper and its result trees: no collections while they are made
    # (a collection would walk every object of the process; the trees' cycles are freed later)
    was = gc.isenabled()
    gc.disable()
    try:
        return _clip_free_uncollected(coords, counts, groups, region)
    finally:
        if was:
            gc.enable()


def _clip_free_uncollected(coords: np.ndarray, counts: np.ndarray, groups: np.ndarray | None,
                           region) -> np.ndarray | None:
    """:func:`_clip_free` without the collector switched off."""
    ints = np.round(coords * CLIP_SCALE).astype(np.int64)
    if groups is None:
        groups = np.zeros(len(counts), dtype=np.int64)
    region_paths = _region_paths(region)
    try:
        if len(counts) and _inside_box(ints, region_paths):
            comps = free_components(_nested_free(ints, coords, counts, groups, region_paths[0]))
            if not len(comps) or np.all(shapely.is_valid(comps)):
                return comps
        paths = []
        for _, unioned, rings in _cluster_rings(ints, coords, counts, groups):
            paths.extend(rings if unioned or len(rings) == 1 else _union_sweep(rings))
        pc = pyclipper.Pyclipper()
        pc.StrictlySimple = True
        if paths:
            pc.AddPaths(paths, pyclipper.PT_CLIP, True)
        pc.AddPaths(region_paths, pyclipper.PT_SUBJECT, True)
        tree = pc.Execute2(pyclipper.CT_DIFFERENCE, pyclipper.PFT_EVENODD, pyclipper.PFT_NONZERO)
    except pyclipper.ClipperException:
        return None
    comps = free_components(np.asarray(_tree_polygons(tree), dtype=object))
    if len(comps) and not np.all(shapely.is_valid(comps)):
        return None
    return comps


def _polygon_paths(geoms) -> list[np.ndarray]:
    """Integer rings of polygons: shells counter-clockwise, holes clockwise (non-zero winding = inside)."""
    parts = shapely.get_parts(np.asarray(geoms, dtype=object))
    parts = parts[shapely.get_type_id(parts) == 3] if len(parts) else parts
    if not len(parts):
        return []
    rings = shapely.get_rings(shapely.orient_polygons(parts, exterior_cw=False))
    xy, idx = shapely.get_coordinates(rings, return_index=True)
    ints = np.round(xy * CLIP_SCALE).astype(np.int64)
    ends = np.cumsum(np.bincount(idx, minlength=len(rings)))
    starts = np.r_[0, ends[:-1]]
    return [ints[a:b - 1] for a, b in zip(starts, ends) if b - a >= 4]


def union_polygons(geoms) -> np.ndarray:
    """The union of polygons (local frame, metres) as its disjoint polygon components.

    With :data:`UNION_BACKEND` ``"clipper"``: one integer sweep, results on the
    2**-40 m grid; otherwise (or if that fails) ``shapely.union_all``.
    """
    if UNION_BACKEND == "clipper":
        try:
            pc = pyclipper.Pyclipper()
            pc.StrictlySimple = True
            paths = _polygon_paths(geoms)
            if not paths:
                return np.zeros(0, dtype=object)
            pc.AddPaths(paths, pyclipper.PT_SUBJECT, True)
            tree = pc.Execute2(pyclipper.CT_UNION, pyclipper.PFT_NONZERO, pyclipper.PFT_NONZERO)
            polys = np.asarray(_tree_polygons(tree), dtype=object)
            if not len(polys) or np.all(shapely.is_valid(polys)):
                return polys
        except pyclipper.ClipperException:
            pass
    parts = shapely.get_parts(shapely.union_all(np.asarray(geoms, dtype=object)))
    return parts[shapely.get_type_id(parts) == 3] if len(parts) else parts


def slice_free(obstacles: ObstacleSet, parts: list[Polygon], heading: float, grow: float, anchor_local: np.ndarray,
               region, labels: np.ndarray | None = None) -> np.ndarray:
    """Free-space components of one slice inside ``region`` (a polygon, local frame, metres).

    Same arguments as :func:`slice_cobstacle`. With :data:`UNION_BACKEND` ``"clipper"`` the
    C-obstacle pieces are unioned and subtracted from ``region`` on the integer grid
    (:func:`_clip_free`; results within about 1e-12 m of the GEOS path, which is used when
    pyclipper is missing or fails).
    """
    if UNION_BACKEND == "clipper":
        t = math.radians(heading)
        c, s = math.cos(t), math.sin(t)
        anchor = np.array([c * anchor_local[0] - s * anchor_local[1], s * anchor_local[0] + c * anchor_local[1]])
        verts = footprint_parts_at(parts, heading, grow if grow >= 0 else 0.0)
        owner = cobstacle_owners(obstacles, len(verts), True)
        groups = labels[owner] if labels is not None and len(labels) else None
        if grow > 0 and _cascades(len(owner), groups):
            # a sound slice whose union runs in levels: grow by the rounding those levels may add
            verts = footprint_parts_at(parts, heading, grow + CASCADE_GUARD_M)
        coords, counts, owner = cobstacle_rings(obstacles, verts, anchor)
        comps = _clip_free(coords, counts, groups, region)
        if comps is not None:
            return comps
    cobs = slice_cobstacle(obstacles, parts, heading, grow, anchor_local, labels)
    return free_components(shapely.difference(region, cobs))
