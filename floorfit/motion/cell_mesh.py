"""Paths inside free-space polygons, with each polygon's triangulation kept for the next query.

The station-pair drives of a check (:mod:`floorfit.analysis.budget`) ask for many legs inside the
same few free-space polygons: on a large site one slice's free space is one polygon with thousands
of holes, and triangulating it (constrained Delaunay, its dual graph) took most of a leg's time.
:class:`CellMeshes` keeps the triangulation, the triangles' search tree and dual graph and the
inset copies of recently used polygons, keyed by the polygon's WKB (its exact coordinates), and
answers exactly as :func:`floorfit.cspace.cellpath.path_in_polygon` and
:func:`floorfit.cspace.cellpath.point_inside` do: the same triangles, the same graph (edges added
in the same order, so the same shortest chain among equal ones) and the same shortening.
"""

from __future__ import annotations

from collections import OrderedDict

import networkx as nx
import numpy as np
import shapely
import shapely.ops
from shapely.geometry import Point, Polygon

from floorfit.cspace.cellpath import is_direct, shortcut_in_polygon

__all__ = ["CellMeshes", "MESHES"]


class _Mesh:
    """Triangles of one polygon, their STRtree, centroids and dual graph (as ``path_in_polygon`` builds them)."""

    def __init__(self, poly):
        tris = shapely.get_parts(shapely.constrained_delaunay_triangles(poly))
        tris = tris[shapely.area(tris) > 0]
        self.tree = shapely.STRtree(tris)
        coords = shapely.get_coordinates(tris).reshape(len(tris), 4, 2)[:, :3]
        self.cent = coords.mean(axis=1)
        self.G = _dual_graph(coords, self.cent)


def _dual_graph(coords: np.ndarray, cent: np.ndarray) -> nx.Graph:
    """Triangles sharing an edge, joined in the order a loop over triangles and their edges meets the
    second (third, ...) owner of each edge, joined to its first owner; isolated triangles last."""
    n = len(coords)
    p = coords.reshape(-1, 2)                                  # half-edge h = 3 t + u starts at vertex u
    q = coords[:, [1, 2, 0]].reshape(-1, 2)
    swap = (q[:, 0] < p[:, 0]) | ((q[:, 0] == p[:, 0]) & (q[:, 1] < p[:, 1]))
    lo = np.where(swap[:, None], q, p)
    hi = np.where(swap[:, None], p, q)
    keys = np.concatenate([lo, hi], axis=1)
    _, group = np.unique(keys, axis=0, return_inverse=True)
    group = group.ravel()
    order = np.lexsort((np.arange(3 * n), group))               # by edge, then by loop order
    g = group[order]
    first = np.ones(len(order), dtype=bool)
    first[1:] = g[1:] != g[:-1]
    owner_of_group = np.empty(group.max() + 1 if len(group) else 0, dtype=np.int64)
    owner_of_group[g[first]] = order[first] // 3
    later = np.sort(order[~first])                              # loop order of the later owners
    ts = later // 3
    os_ = owner_of_group[group[later]]
    weights = np.hypot(*(cent[os_] - cent[ts]).T)
    mids = (p[later] + q[later]) / 2.0
    G = nx.Graph()
    G.add_edges_from((int(o), int(t), {"weight": float(w), "mid": m})
                     for o, t, w, m in zip(os_, ts, weights, mids))
    G.add_nodes_from(range(n))
    return G


class CellMeshes:
    """Recently used polygons' triangulations (at most ``size``, and at most ``max_triangles`` triangles
    in all unless one polygon has more) and their eroded, inset and prepared copies (at most
    ``4 · size`` of each)."""

    def __init__(self, size: int = 8, max_triangles: int = 400_000):
        self.size = size
        self.max_triangles = max_triangles
        self._meshes: OrderedDict = OrderedDict()
        self._insets: OrderedDict = OrderedDict()
        self._polys: OrderedDict = OrderedDict()
        self._eroded: OrderedDict = OrderedDict()

    def clear(self) -> None:
        self._meshes.clear()
        self._insets.clear()
        self._polys.clear()
        self._eroded.clear()

    def _kept(self, store: OrderedDict, key, make):
        if key in store:
            store.move_to_end(key)
            return store[key]
        value = make()
        store[key] = value
        while len(store) > (self.size if store is self._meshes else 4 * self.size):
            store.popitem(last=False)
        if store is self._meshes:        # about 0.8 kB a triangle: the oldest go beyond max_triangles
            while len(store) > 1 and sum(len(m.cent) for m in store.values()) > self.max_triangles:
                store.popitem(last=False)
        return value

    def _prepared(self, poly, key):
        """The polygon itself, prepared once (a prepared copy answers the same predicates faster)."""
        def make():
            shapely.prepare(poly)
            return poly
        return self._kept(self._polys, key, make)

    def eroded(self, geom, distance: float):
        """``geom`` shrunk by ``distance`` (m, round joins), None when nothing is left; kept."""
        def make():
            e = geom.buffer(-distance) if geom.area > 0 else Polygon()
            return None if e.is_empty else e
        return self._kept(self._eroded, (geom.wkb, distance), make)

    def point_inside(self, region, near, inset: float = 1e-4) -> np.ndarray:
        """As :func:`floorfit.cspace.cellpath.point_inside`, with the inset copy kept."""
        key = (region.wkb, inset)
        inner = self._kept(self._insets, key, lambda: region.buffer(-inset) if region.area > 0 else region)
        target = inner if not inner.is_empty else region
        p = Point(near)
        if target.covers(p):
            return np.array(near, dtype=float)
        q = shapely.ops.nearest_points(target, p)[0]
        if not region.covers(q):
            q = region.representative_point()
        return np.array([q.x, q.y])

    def path(self, poly, a, b) -> np.ndarray | None:
        """As :func:`floorfit.cspace.cellpath.path_in_polygon`, with the triangulation kept."""
        a = np.asarray(a, dtype=float)
        b = np.asarray(b, dtype=float)
        key = poly.wkb
        poly = self._prepared(poly, key)
        if not poly.covers(Point(a)) or not poly.covers(Point(b)):
            return None
        if is_direct(poly, a, b):
            return np.array([a, b])
        mesh = self._kept(self._meshes, key, lambda: _Mesh(poly))
        ta = mesh.tree.query(Point(a), predicate="intersects")
        tb = mesh.tree.query(Point(b), predicate="intersects")
        if not len(ta) or not len(tb):
            return None
        chain = _chain(mesh, ta, tb)
        if chain is None:
            return None
        G = mesh.G
        pts = [a] + [G.edges[u, v]["mid"] for u, v in zip(chain[:-1], chain[1:])] + [b]
        return shortcut_in_polygon(poly, np.asarray(pts))


def _chain(mesh: _Mesh, ta, tb) -> list | None:
    G, cent = mesh.G, mesh.cent
    try:
        return nx.astar_path(G, int(ta[0]), int(tb[0]), heuristic=lambda u, v: float(np.hypot(*(cent[u] - cent[v]))),
                             weight="weight")
    except nx.NetworkXNoPath:
        # a and b may sit on triangles of different pieces touching only at a vertex: try others
        for s in ta:
            for d in tb:
                if nx.has_path(G, int(s), int(d)):
                    return nx.shortest_path(G, int(s), int(d), weight="weight")
        return None


#: The process's shared cache (keyed by exact geometry, so any plan and slice set may use it).
MESHES = CellMeshes()
