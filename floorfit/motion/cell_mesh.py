"""Paths inside free-space polygons, with each polygon's triangulation kept for the next query.

The station-pair drives of a check (:mod:`floorfit.analysis.budget`) ask for many legs inside the
same few free-space polygons: on a large site one slice's free space is one polygon with thousands
of holes, and triangulating it (constrained Delaunay, its dual graph) took most of a leg's time.
:class:`CellMeshes` keeps the triangulation (:class:`floorfit.cspace.cellpath.TriangleMesh`: the
triangles' search tree and their dual graph as a sparse matrix) and the inset copies of recently
used polygons, keyed by the polygon's WKB (its exact coordinates), and answers exactly as
:func:`floorfit.cspace.cellpath.path_in_polygon` and :func:`floorfit.cspace.cellpath.point_inside`
do: the same triangles, graph, shortest chain and shortening.
"""

from __future__ import annotations

from collections import OrderedDict

import networkx as nx
import numpy as np
import shapely
from shapely.geometry import Point, Polygon

from floorfit.cspace.cellpath import TriangleMesh, dual_edges, dual_graph, is_direct, path_on_mesh, point_inside_of

__all__ = ["CellMeshes", "MESHES"]


def _dual_graph(coords: np.ndarray, cent: np.ndarray) -> nx.Graph:
    """The dual graph of triangles ``coords`` (T, 3, 2) with centroids ``cent`` as a networkx Graph
    (:func:`floorfit.cspace.cellpath.dual_graph`; the searches run on
    :class:`~floorfit.cspace.cellpath.TriangleMesh`)."""
    return dual_graph(len(coords), *dual_edges(coords, cent))


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
        if store is self._meshes:        # about 0.9 kB a triangle: the oldest go beyond max_triangles
            while len(store) > 1 and sum(len(m) for m in store.values()) > self.max_triangles:
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
        return point_inside_of(region, near, inset, lambda: self._kept(
            self._insets, (region.wkb, inset), lambda: region.buffer(-inset) if region.area > 0 else region))

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
        mesh = self._kept(self._meshes, key, lambda: TriangleMesh(poly))
        return path_on_mesh(mesh, poly, a, b)


#: The process's shared cache (keyed by exact geometry, so any plan and slice set may use it).
MESHES = CellMeshes()
