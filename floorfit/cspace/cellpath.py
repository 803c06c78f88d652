"""Paths inside one free-space polygon (a cell of the roadmap, fixed heading).

A constrained Delaunay triangulation of the polygon gives a dual graph of triangles
(:class:`TriangleMesh`); the path runs through the midpoints of the shared edges along the
shortest triangle chain (A*) and is then shortened by skipping waypoints wherever the straight
segment stays in the polygon. Every segment of the result lies in the polygon (closed set;
checked with ``covers``).
"""

from __future__ import annotations

import networkx as nx
import numpy as np
import shapely
import shapely.ops
from scipy.sparse import csr_matrix
from scipy.sparse.csgraph import dijkstra
from shapely.geometry import LineString, Point, Polygon

__all__ = ["TriangleMesh", "dual_edges", "dual_graph", "is_direct", "path_in_polygon", "path_on_mesh", "point_inside",
           "point_inside_of", "segments_covered", "shortcut_in_polygon"]

_EPS = 1e-6
#: Chains of triangles whose lengths (sums of centroid distances, m) differ by no more than this
#: count as equal: far above the rounding of the sums, far below any real difference.
_TIE_M = 1e-7


def point_inside(region, near, inset: float = 1e-4) -> np.ndarray:
    """A point of ``region`` nearest to ``near`` (x, y), moved ``inset`` metres inside when the region allows."""
    return point_inside_of(region, near, inset, lambda: region.buffer(-inset) if region.area > 0 else region)


def point_inside_of(region, near, inset: float, inner) -> np.ndarray:
    """:func:`point_inside` with ``inner()`` making ``region`` shrunk by ``inset`` (m) when needed: not
    for a point with twice the inset of room around it, which the shrunk region covers."""
    p = Point(near)
    if shapely.contains_properly(region, p.buffer(2.0 * inset, quad_segs=2)):
        return np.array(near, dtype=float)
    shrunk = inner()
    target = shrunk if not shrunk.is_empty else region
    if target.covers(p):
        return np.array(near, dtype=float)
    q = shapely.ops.nearest_points(target, p)[0]
    if not region.covers(q):               # numerical edge case: fall back to an interior point
        q = region.representative_point()
    return np.array([q.x, q.y])


def shortcut_in_polygon(poly: Polygon, pts: np.ndarray) -> np.ndarray:
    """Waypoints ``pts`` (M, 2) shortened greedily: from each kept point, the farthest later point
    joined by a segment inside ``poly`` (local frame, metres). ``poly`` is prepared in place."""
    shapely.prepare(poly)
    out = [pts[0]]
    i = 0
    n = len(pts)
    while i < n - 1:
        i = _farthest_in_sight(poly, pts, i)
        out.append(pts[i])
    return np.asarray(out)


def _farthest_in_sight(poly: Polygon, pts: np.ndarray, i: int) -> int:
    """The largest j > i whose segment from ``pts[i]`` lies in ``poly``, else i + 1: the later points
    are tried from the last one back, in batches that double (a long shortcut costs one test)."""
    hi = len(pts)
    size = 1
    while hi > i + 1:
        lo = max(i + 1, hi - size)
        ok = np.flatnonzero(segments_covered(poly, np.repeat(pts[i:i + 1], hi - lo, axis=0), pts[lo:hi]))
        if len(ok):
            return lo + int(ok[-1])
        hi, size = lo, 2 * size
    return i + 1


#: Points along a segment tested by :func:`segments_covered` before the exact test.
_SAMPLES = 32
#: A sample point farther than this from the polygon (m) is outside it whatever the rounding of
#: the sample's coordinates (about 1e-14 m at a site's scale).
_OUTSIDE_M = 1e-9


def segments_covered(poly: Polygon, starts: np.ndarray, ends: np.ndarray) -> np.ndarray:
    """Whether each segment ``starts[k]`` -> ``ends[k]`` ((K, 2) each, metres) lies in ``poly``
    (prepared in place): the same answer as ``shapely.covers``, found cheaply where it can be.

    A segment inside the polygon's interior is covered (``contains_properly``, which stops at the
    first meeting with the boundary); one with a sample point clearly outside (farther than
    :data:`_OUTSIDE_M`) is not; only the others (those touching the boundary) get the full test,
    which on a polygon with many holes costs milliseconds a segment."""
    shapely.prepare(poly)
    segs = shapely.linestrings(np.stack([starts, ends], axis=1))
    covered = shapely.contains_properly(poly, segs)
    rest = np.flatnonzero(~covered)
    if not len(rest):
        return covered
    t = np.linspace(0.0, 1.0, _SAMPLES + 2)[1:-1]
    a, b = starts[rest], ends[rest]
    xy = a[:, None, :] + t[None, :, None] * (b - a)[:, None, :]          # (R, S, 2)
    out = ~shapely.intersects_xy(poly, xy[..., 0], xy[..., 1])
    has = out.any(axis=1)
    first = xy[np.flatnonzero(has), out[has].argmax(axis=1)]
    outside = np.zeros(len(rest), dtype=bool)
    outside[has] = ~shapely.dwithin(poly, shapely.points(first), _OUTSIDE_M)
    unsure = rest[~outside]
    covered[unsure] = shapely.covers(poly, segs[unsure])
    return covered


def is_direct(poly: Polygon, a: np.ndarray, b: np.ndarray) -> bool:
    """True when the straight segment from ``a`` to ``b`` (both inside ``poly``) needs no detour."""
    return bool(np.allclose(a, b, atol=1e-12) or poly.covers(LineString([a, b])))


def dual_edges(coords: np.ndarray, cent: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Edges of the dual graph of triangles ``coords`` (T, 3, 2) with centroids ``cent`` (T, 2), metres.

    Two triangles sharing a side are joined; an edge joins a side's second (third, ...) owner to
    its first, listed in the order a loop over the triangles and their sides meets the later owner.
    Returns the pairs (E, 2) (first owner, later owner), their weights (E,) (distance between the
    centroids) and the midpoints of the shared sides (E, 2)."""
    n = len(coords)
    p = coords.reshape(-1, 2)                                  # side h = 3 t + u starts at vertex u
    q = coords[:, [1, 2, 0]].reshape(-1, 2)
    swap = (q[:, 0] < p[:, 0]) | ((q[:, 0] == p[:, 0]) & (q[:, 1] < p[:, 1]))
    lo = np.where(swap[:, None], q, p)
    hi = np.where(swap[:, None], p, q)
    if not n:
        return np.empty((0, 2), dtype=np.int64), np.empty(0), np.empty((0, 2))
    # sides with the same ends form a group (compared as bits, -0.0 made 0.0 first); sorted by
    # side, then by loop order
    keys = (np.concatenate([lo, hi], axis=1) + 0.0).view(np.int64)
    order = np.lexsort((np.arange(3 * n), *keys.T[::-1]))
    sk = keys[order]
    first = np.ones(len(order), dtype=bool)
    first[1:] = (sk[1:] != sk[:-1]).any(axis=1)
    g = np.cumsum(first) - 1
    group = np.empty(3 * n, dtype=np.int64)
    group[order] = g
    owner_of_group = order[first] // 3
    later = np.sort(order[~first])                              # loop order of the later owners
    ts = later // 3
    os_ = owner_of_group[group[later]]
    weights = np.hypot(*(cent[os_] - cent[ts]).T)
    mids = (p[later] + q[later]) / 2.0
    return np.stack([os_, ts], axis=1), weights, mids


class TriangleMesh:
    """The constrained Delaunay triangles of one polygon (zero-area ones dropped), their STRtree,
    centroids (T, 2) and dual graph (:func:`dual_edges`) as a sparse matrix (each triangle's
    neighbours in the order a networkx Graph lists them), with the shared sides' midpoints (metres,
    the polygon's frame).

    The shortest chain of triangles is the one a networkx A* search (centroid distance as the
    heuristic) finds on the dual graph with its edges added in :func:`dual_edges` order, so the same
    chain among equal ones (:meth:`_shortest`), without a graph of per-edge objects."""

    def __init__(self, poly: Polygon):
        tris = shapely.get_parts(shapely.constrained_delaunay_triangles(poly))
        tris = tris[shapely.area(tris) > 0]
        self.tree = shapely.STRtree(tris)
        coords = shapely.get_coordinates(tris).reshape(len(tris), 4, 2)[:, :3]
        self.cent = coords.mean(axis=1)
        self.edges = dual_edges(coords, self.cent)
        pairs, weights, mids = self.edges
        n = len(tris)
        keys = pairs.min(axis=1) * n + pairs.max(axis=1)
        self._keys, first = np.unique(keys, return_index=True)
        # a pair listed twice keeps its first place among the neighbours and its last midpoint
        _, last = np.unique(keys[::-1], return_index=True)
        self._mids = mids[len(keys) - 1 - last]
        first = np.sort(first)
        a, b = pairs[first, 0], pairs[first, 1]
        node = np.concatenate([a, b])
        order = np.lexsort((np.tile(np.arange(len(first)), 2), node))   # by triangle, then edge order
        start = np.searchsorted(node[order], np.arange(n + 1))
        self.graph = csr_matrix((np.concatenate([weights[first], weights[first]])[order],
                                 np.concatenate([b, a])[order], start), shape=(n, n))
        self._G: nx.Graph | None = None

    def __len__(self) -> int:
        return len(self.cent)

    def triangles_at(self, p: np.ndarray) -> np.ndarray:
        """Indices of the triangles that hold point ``p`` (x, y), in the tree's order."""
        return self.tree.query(Point(p), predicate="intersects")

    def _shortest(self, src: int, dst: int) -> np.ndarray | None:
        """The chain :func:`networkx.astar_path` finds from ``src`` to ``dst`` on the dual graph, or None.

        Dijkstra (:func:`scipy.sparse.csgraph.dijkstra`, from both ends) finds a shortest chain; when
        every edge off it lies on chains longer by more than :data:`_TIE_M`, it is the only shortest
        one, so the one A* finds; else A* itself runs on the networkx graph (:meth:`_astar`: equal chains,
        its choice)."""
        if src == dst:
            return np.array([src])
        d, pred = dijkstra(self.graph, indices=[src, dst], return_predecessors=True)
        total = d[0, dst]
        if not np.isfinite(total):
            return None
        chain = [dst]
        while chain[-1] != src:
            chain.append(int(pred[0, chain[-1]]))
        chain = np.asarray(chain[::-1])
        n = len(self.cent)
        u = np.repeat(np.arange(n), np.diff(self.graph.indptr))
        v = self.graph.indices
        nxt_of = np.full(n, -1)
        nxt_of[chain[:-1]] = chain[1:]
        along = (nxt_of[u] == v) | (nxt_of[v] == u)           # edges of the chain, both ways
        detour = d[0, u] + self.graph.data + d[1, v]
        if np.all(detour[~along] > total + _TIE_M):
            return chain
        got = self._astar(src, dst)
        return None if got is None else np.asarray(got)

    def _astar(self, src: int, dst: int) -> list | None:
        """:func:`networkx.astar_path` (heuristic: the centroid distance) on :meth:`networkx_graph`; None
        when the triangles are not joined."""
        cent = self.cent
        try:
            return nx.astar_path(self.networkx_graph(), src, dst, weight="weight",
                                 heuristic=lambda u, v: float(np.hypot(*(cent[u] - cent[v]))))
        except nx.NetworkXNoPath:
            return None

    def networkx_graph(self) -> nx.Graph:
        """The dual graph as a networkx Graph (:func:`dual_graph`), made when first asked for (only
        chains with equal rivals, or pieces touching at a vertex, need it) and kept."""
        if self._G is None:
            self._G = dual_graph(len(self.cent), *self.edges)
        return self._G

    def chain(self, ta: np.ndarray, tb: np.ndarray) -> np.ndarray | None:
        """Shortest chain from the first triangle of ``ta`` to the first of ``tb``; when those are not
        joined (pieces touching only at a vertex), from the first pair of them that is (the
        networkx Dijkstra search on :func:`dual_graph`); else None."""
        got = self._shortest(int(ta[0]), int(tb[0]))
        if got is not None:
            return got
        G = self.networkx_graph()
        for s in ta:
            for d in tb:
                if nx.has_path(G, int(s), int(d)):
                    return np.asarray(nx.shortest_path(G, int(s), int(d), weight="weight"))
        return None

    def midpoints(self, chain: np.ndarray) -> np.ndarray:
        """Midpoints (M - 1, 2) of the sides a chain of M triangles crosses."""
        n = len(self.cent)
        keys = np.minimum(chain[:-1], chain[1:]) * n + np.maximum(chain[:-1], chain[1:])
        return self._mids[np.searchsorted(self._keys, keys)]


def dual_graph(n: int, pairs: np.ndarray, weights: np.ndarray, mids: np.ndarray) -> nx.Graph:
    """The dual graph of ``n`` triangles from their :func:`dual_edges`, as a networkx Graph: edges
    added in their order with ``weight`` (m) and ``mid`` (the shared side's midpoint); isolated
    triangles last."""
    G = nx.Graph()
    G.add_edges_from((int(o), int(t), {"weight": float(w), "mid": m}) for (o, t), w, m in zip(pairs, weights, mids))
    G.add_nodes_from(range(n))
    return G


def path_on_mesh(mesh: TriangleMesh, poly: Polygon, a: np.ndarray, b: np.ndarray) -> np.ndarray | None:
    """Waypoints (M, 2) from ``a`` to ``b`` (inside ``poly``) through ``mesh``, the triangulation of
    ``poly``, shortened in ``poly``; None when no chain of triangles joins them."""
    ta, tb = mesh.triangles_at(a), mesh.triangles_at(b)
    if not len(ta) or not len(tb):
        return None
    chain = mesh.chain(ta, tb)
    if chain is None:
        return None
    pts = np.concatenate([a[None, :], mesh.midpoints(chain), b[None, :]])
    return shortcut_in_polygon(poly, pts)


def path_in_polygon(poly: Polygon, a, b) -> np.ndarray | None:
    """Waypoints (M, 2) from ``a`` to ``b`` inside ``poly`` (local frame, metres), or None if either is outside."""
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    if not poly.covers(Point(a)) or not poly.covers(Point(b)):
        return None
    if is_direct(poly, a, b):
        return np.array([a, b])
    return path_on_mesh(TriangleMesh(poly), poly, a, b)
