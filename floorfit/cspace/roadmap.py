"""The heading-aware roadmap: cells of the configuration space and the rotations between them.

Nodes are ``(k, i)``: component ``i`` of heading slice ``k`` (a region where the vehicle
can translate freely at slice k's heading). An edge joins a component of slice k and one
of the adjacent slice k+1 (the circle wraps) when their free spaces overlap: inside the
overlap (the edge's rotation zone, :func:`rotation_zone`) the vehicle can rotate from one
slice heading to the other, because each slice is clear over its whole heading cell (sound
bound).
"""

from __future__ import annotations

import math
import weakref
from collections import OrderedDict

import networkx as nx
import numpy as np
import shapely
from shapely.geometry import Point

from floorfit.cspace.headings import arc_deg
from floorfit.cspace.slices import SliceSet
from floorfit.forking import start

__all__ = ["build_roadmap", "MIN_ZONE_AREA_M2", "reachable_cells", "rotation_zone", "station_nodes"]

#: Overlaps smaller than this are not used as rotation zones, square metres (conservative).
MIN_ZONE_AREA_M2 = 1e-8


def build_roadmap(slices: SliceSet, workers: int | None = 1) -> nx.Graph:
    """Build the roadmap graph of ``slices``.

    Node attributes: ``heading_deg``, ``area_m2``. Edge attributes: ``turn_deg`` (signed
    rotation from the lower-index slice to the other), ``weight`` (the rotation as arc length
    at the footprint radius, metres). An edge joins two components whose overlap has more
    than :data:`MIN_ZONE_AREA_M2` of area; the overlap itself (the rotation zone) is made on
    demand by :func:`rotation_zone`, near where a route needs it. Graph attributes: ``units``,
    ``heading_step_deg``, ``tolerance_m``, ``bound``, ``headings``.

    ``workers``: with 2 or more (None: the usable cores) and slices of at least
    :data:`SPLIT_MIN_VERTICES` vertices in all, the first half of the neighbouring slice pairs
    is overlapped in a forked second process (:mod:`floorfit.forking`); the graph is the same.
    """
    G = nx.Graph(units={"length": "m", "heading": "deg"}, heading_step_deg=slices.cells.step_deg,
                 tolerance_m=slices.tolerance_m, bound=slices.bound, headings=len(slices))
    n = len(slices)
    for k in range(n):
        comps = slices.components[k]
        areas = shapely.area(comps) if len(comps) else []
        for i in range(len(comps)):
            G.add_node((k, i), heading_deg=float(slices.cells.headings[k]), area_m2=float(areas[i]))
    if n < 2:
        return G
    rho = slices.vehicle.radius_m
    twins = slices.twins
    # neighbouring slices with free space; slices sharing their free space with twins (half-turn
    # symmetric footprints) have the overlaps of the twin pair
    pairs = []
    for k in (range(n) if n > 2 else range(1)):
        k2 = (k + 1) % n
        if len(slices.components[k]) and len(slices.components[k2]):
            pairs.append((k, k2, (int(twins[k]), int(twins[k2])) if twins is not None else (k, k2)))
    first_of: dict = {}
    for k, k2, key in pairs:
        first_of.setdefault(key, (k, k2))
    todo = list(first_of.items())
    split = len(todo) // 2 if _split_worth_it(slices, workers) else 0
    apart = start(_overlaps, slices, todo[:split], workers=workers if split else 1)
    try:
        done = _overlaps(slices, todo[split:])
        done.update(apart.result())
    finally:
        apart.cancel()
    for k, k2, key in pairs:
        ia, ib = done[key]
        turn = float(arc_deg(slices.cells.headings[k], slices.cells.headings[k2]))
        w = rho * math.radians(abs(turn)) + 1e-6
        for i, j in zip(ia, ib):
            u, v = (k, int(i)), (k2, int(j))
            G.add_edge(u, v, turn_deg=turn if u < v else -turn, weight=w)
    return G


#: Slice sets with at least this many vertices in all have their overlaps computed on two
#: processes when allowed (below it, forking costs more than it saves).
SPLIT_MIN_VERTICES = 1_000_000


def _split_worth_it(slices: SliceSet, workers: int | None) -> bool:
    if workers is not None and int(workers) < 2:
        return False
    total = sum(int(shapely.get_num_coordinates(c).sum()) for c in slices.components if len(c))
    return total >= SPLIT_MIN_VERTICES


def _overlaps(slices: SliceSet, todo: list) -> dict:
    """``{key: (ia, ib)}``: :func:`_overlapping` of each ``(key, (k, k2))`` in ``todo``, in order."""
    probes = _Probes(slices)
    done = {}
    for key, (k, k2) in todo:
        done[key] = _overlapping(probes, k, k2)
        probes.forget(k)                          # slice k is done with
    probes.forget_all()
    return done


#: Radius (m) of the probe octagon, which must lie inside both components: its area,
#: 2·√2·r² ≈ 2.8e-8 m², exceeds :data:`MIN_ZONE_AREA_M2`, so a probe proves an edge.
_PROBE_RADIUS_M = 1e-4


class _Probes:
    """Per slice: a small octagon inside each component, and the components prepared for
    containment tests (made once; :meth:`forget` releases them)."""

    def __init__(self, slices: SliceSet):
        self.slices = slices
        self._probes: dict[int, np.ndarray] = {}
        self._prepared: dict[int, np.ndarray] = {}

    def octagons(self, k: int) -> np.ndarray:
        if k not in self._probes:
            pts = shapely.point_on_surface(self.slices.components[k])
            self._probes[k] = shapely.buffer(pts, _PROBE_RADIUS_M, quad_segs=2)
        return self._probes[k]

    def components(self, k: int) -> np.ndarray:
        comps = self.slices.components[k]
        if k not in self._prepared:
            fresh = ~shapely.is_prepared(comps)
            shapely.prepare(comps[fresh])
            self._prepared[k] = comps[fresh]
        return comps

    def forget(self, k: int) -> None:
        self._probes.pop(k, None)
        mine = self._prepared.pop(k, None)
        if mine is not None:
            shapely.destroy_prepared(mine)

    def forget_all(self) -> None:
        for k in list(self._prepared):
            self.forget(k)

    def inside_both(self, octs, k: int, i, k2: int, j) -> np.ndarray:
        """Whether each octagon lies inside component i of slice k and component j of slice k2."""
        return (shapely.contains_properly(self.components(k)[i], octs)
                & shapely.contains_properly(self.components(k2)[j], octs))


def _overlapping(probes: _Probes, k: int, k2: int) -> tuple[np.ndarray, np.ndarray]:
    """Index pairs (i, j) of components of slices k and k2 that overlap by more than MIN_ZONE_AREA_M2.

    A pair is proved by a probe (a tiny octagon around a point inside one component) that
    lies inside both; the pairs left are decided by their exact overlap area, as before
    probes existed. The answer is the same as computing every overlap.
    """
    slices = probes.slices
    a, b = slices.components[k], slices.components[k2]
    ia, ib = slices.tree(k2).query(a)             # envelopes meet
    if not len(ia):
        return ia, ib
    proved = probes.inside_both(probes.octagons(k)[ia], k, ia, k2, ib)
    rest = ~proved
    if rest.any():
        proved[rest] = probes.inside_both(probes.octagons(k2)[ib[rest]], k, ia[rest], k2, ib[rest])
    rest = np.flatnonzero(~proved)
    if len(rest):
        # the prepared component of the pair asks (a large free space against the small pieces
        # in its holes answers from its index)
        pa, pb = probes.components(k)[ia[rest]], probes.components(k2)[ib[rest]]
        a_asks = shapely.get_num_coordinates(pa) >= shapely.get_num_coordinates(pb)
        meet = np.empty(len(rest), dtype=bool)
        meet[a_asks] = shapely.intersects(pa[a_asks], pb[a_asks])
        meet[~a_asks] = shapely.intersects(pb[~a_asks], pa[~a_asks])
        rest = rest[meet]
    if len(rest):
        areas = shapely.area(shapely.intersection(a[ia[rest]], b[ib[rest]]))
        proved[rest[areas > MIN_ZONE_AREA_M2]] = True
    return ia[proved], ib[proved]


#: Rotation zones kept for the next query (:func:`rotation_zone`): at most this many coordinates in all.
ZONES_KEPT_COORDINATES = 2_000_000


class _KeptZones:
    """Recent rotation zones by (id of the slice set, u, v, window), oldest first, with a weak
    reference to their slice set (an id may be reused once a slice set is gone)."""

    def __init__(self):
        self.zones: OrderedDict = OrderedDict()
        self.coordinates = 0

    def get(self, slices: SliceSet, key):
        kept = self.zones.get(key)
        if kept is None or kept[0]() is not slices:
            return None
        self.zones.move_to_end(key)
        return kept[1]

    def put(self, slices: SliceSet, key, zone) -> None:
        n = int(shapely.get_num_coordinates(zone))
        old = self.zones.pop(key, None)
        self.coordinates += n - (old[2] if old is not None else 0)
        self.zones[key] = (weakref.ref(slices), zone, n)
        while len(self.zones) > 1 and self.coordinates > ZONES_KEPT_COORDINATES:
            self.coordinates -= self.zones.popitem(last=False)[1][2]

    def clear(self) -> None:
        self.zones.clear()
        self.coordinates = 0


_ZONES = _KeptZones()


def rotation_zone(slices: SliceSet, u, v, window: tuple[float, float, float, float] | None = None):
    """The overlap of roadmap nodes ``u`` and ``v`` (local frame), where the vehicle can rotate
    between their headings; with ``window`` (xmin, ymin, xmax, ymax, metres) only its part inside
    that rectangle (the components are cut to it first, so a large free space costs little).

    The zones of recent queries are kept (at most :data:`ZONES_KEPT_COORDINATES` coordinates): the
    routes between many station pairs on one slice set ask for the same zones again."""
    key = (id(slices), u, v, window)
    zone = _ZONES.get(slices, key)
    if zone is None:
        zone = _overlap(slices, u, v, window)
        _ZONES.put(slices, key, zone)
    return zone


def _overlap(slices: SliceSet, u, v, window):
    """:func:`rotation_zone` made anew."""
    a = slices.components[u[0]][u[1]]
    b = slices.components[v[0]][v[1]]
    if window is not None:
        box = shapely.box(*window)
        a, b = shapely.intersection(a, box), shapely.intersection(b, box)
    return shapely.intersection(a, b)


def reachable_cells(G: nx.Graph, source) -> set:
    """All roadmap nodes connected to ``source``."""
    return nx.node_connected_component(G, source)


def edge_turn(G: nx.Graph, u, v) -> float:
    """Signed rotation (degrees) when moving from node ``u`` to node ``v``."""
    t = G.edges[u, v]["turn_deg"]
    return t if u < v else -t


def station_nodes(slices: SliceSet, st_local: tuple[float, float], heading: float | None, tol: float) -> list:
    """Roadmap nodes (slice, component) holding a station point at an allowed heading."""
    pt = Point(st_local)
    if heading is None:
        ks = range(len(slices))
    else:
        d = np.abs(arc_deg(slices.cells.headings, heading))
        ks = list(np.flatnonzero(d <= tol + 1e-9)) or [int(np.argmin(d))]
    nodes = []
    for k in ks:
        hits = slices.tree(int(k)).query(pt, predicate="intersects")
        nodes.extend((int(k), int(i)) for i in hits)
    return nodes
