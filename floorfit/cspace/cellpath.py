"""Paths inside one free-space polygon (a cell of the roadmap, fixed heading).

A constrained Delaunay triangulation of the polygon gives a dual graph of triangles; the
path runs through the midpoints of the shared edges along the shortest triangle chain
and is then shortened by skipping waypoints wherever the straight segment stays in the
polygon. Every segment of the result lies in the polygon (closed set; checked with
``covers``).
"""

from __future__ import annotations

import networkx as nx
import numpy as np
import shapely
import shapely.ops
from shapely.geometry import LineString, Point, Polygon

__all__ = ["is_direct", "path_in_polygon", "point_inside", "shortcut_in_polygon"]

_EPS = 1e-6


def point_inside(region, near, inset: float = 1e-4) -> np.ndarray:
    """A point of ``region`` nearest to ``near`` (x, y), moved ``inset`` metres inside when the region allows."""
    inner = region.buffer(-inset) if region.area > 0 else region
    target = inner if not inner.is_empty else region
    p = Point(near)
    if target.covers(p):
        return np.array(near, dtype=float)
    q = shapely.ops.nearest_points(target, p)[0]
    if not region.covers(q):               # numerical edge case: fall back to an interior point
        q = region.representative_point()
    return np.array([q.x, q.y])


def shortcut_in_polygon(poly: Polygon, pts: np.ndarray) -> np.ndarray:
    """Waypoints ``pts`` (M, 2) shortened greedily: from each kept point, the farthest later point
    joined by a segment inside ``poly`` (local frame, metres). ``poly`` is prepared in place."""
    prepared = poly
    shapely.prepare(prepared)
    out = [pts[0]]
    i = 0
    n = len(pts)
    while i < n - 1:
        cand = shapely.linestrings(np.stack([np.repeat(pts[i:i + 1], n - i - 1, axis=0), pts[i + 1:]], axis=1))
        ok = shapely.covers(prepared, cand)
        j = i + 1 + (int(np.flatnonzero(ok)[-1]) if ok.any() else 0)
        out.append(pts[j])
        i = j
    return np.asarray(out)


def is_direct(poly: Polygon, a: np.ndarray, b: np.ndarray) -> bool:
    """True when the straight segment from ``a`` to ``b`` (both inside ``poly``) needs no detour."""
    return bool(np.allclose(a, b, atol=1e-12) or poly.covers(LineString([a, b])))


def path_in_polygon(poly: Polygon, a, b) -> np.ndarray | None:
    """Waypoints (M, 2) from ``a`` to ``b`` inside ``poly`` (local frame, metres), or None if either is outside."""
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    if not poly.covers(Point(a)) or not poly.covers(Point(b)):
        return None
    if is_direct(poly, a, b):
        return np.array([a, b])
    tris = shapely.get_parts(shapely.constrained_delaunay_triangles(poly))
    tris = tris[shapely.area(tris) > 0]
    tree = shapely.STRtree(tris)
    ta = tree.query(Point(a), predicate="intersects")
    tb = tree.query(Point(b), predicate="intersects")
    if not len(ta) or not len(tb):
        return None
    coords = shapely.get_coordinates(tris).reshape(len(tris), 4, 2)[:, :3]
    G = nx.Graph()
    edge_owner: dict = {}
    cent = coords.mean(axis=1)
    for t in range(len(tris)):
        for u in range(3):
            p, q = coords[t, u], coords[t, (u + 1) % 3]
            key = (min(tuple(p), tuple(q)), max(tuple(p), tuple(q)))
            if key in edge_owner:
                o = edge_owner[key]
                G.add_edge(o, t, weight=float(np.hypot(*(cent[o] - cent[t]))), mid=(p + q) / 2.0)
            else:
                edge_owner[key] = t
    G.add_nodes_from(range(len(tris)))
    src, dst = int(ta[0]), int(tb[0])
    try:
        chain = nx.astar_path(G, src, dst, heuristic=lambda u, v: float(np.hypot(*(cent[u] - cent[v]))),
                              weight="weight")
    except nx.NetworkXNoPath:
        # a and b may sit on triangles of different pieces touching only at a vertex: try others
        for s in ta:
            for d in tb:
                if nx.has_path(G, int(s), int(d)):
                    chain = nx.shortest_path(G, int(s), int(d), weight="weight")
                    break
            else:
                continue
            break
        else:
            return None
    pts = [a] + [G.edges[u, v]["mid"] for u, v in zip(chain[:-1], chain[1:])] + [b]
    return shortcut_in_polygon(poly, np.asarray(pts))
