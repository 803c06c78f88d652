"""The heading-aware roadmap: cells of the configuration space and the rotations between them.

Nodes are ``(k, i)``: component ``i`` of heading slice ``k`` (a region where the vehicle
can translate freely at slice k's heading). An edge joins a component of slice k and one
of the adjacent slice k+1 (the circle wraps) when their free spaces overlap: inside the
overlap (the edge's ``zone``) the vehicle can rotate from one slice heading to the other,
because each slice is clear over its whole heading cell (sound bound).
"""

from __future__ import annotations

import math

import networkx as nx
import numpy as np
import shapely
from shapely.geometry import Point

from floorfit.cspace.headings import arc_deg
from floorfit.cspace.slices import SliceSet

__all__ = ["build_roadmap", "MIN_ZONE_AREA_M2", "reachable_cells", "station_nodes"]

#: Overlaps smaller than this are not used as rotation zones, square metres (conservative).
MIN_ZONE_AREA_M2 = 1e-8


def build_roadmap(slices: SliceSet) -> nx.Graph:
    """Build the roadmap graph of ``slices``.

    Node attributes: ``heading_deg``, ``area_m2``. Edge attributes: ``zone`` (shapely
    geometry, local frame), ``turn_deg`` (signed rotation from the lower-index slice to
    the other), ``weight`` (the rotation as arc length at the footprint radius, metres).
    Graph attributes: ``units``, ``heading_step_deg``, ``tolerance_m``, ``bound``,
    ``headings``.
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
    pairs = range(n) if n > 2 else range(1)
    twins = slices.twins
    done: dict[tuple[int, int], tuple] = {}
    for k in pairs:
        k2 = (k + 1) % n
        a, b = slices.components[k], slices.components[k2]
        if not len(a) or not len(b):
            continue
        # slices sharing their free space with twins (half-turn symmetric footprints): the
        # overlaps of the twin pair are the same geometry
        key = (int(twins[k]), int(twins[k2])) if twins is not None else (k, k2)
        if key in done:
            ia, ib, zones = done[key]
        else:
            ia, ib = slices.tree(k2).query(a, predicate="intersects")
            zones = shapely.intersection(a[ia], b[ib]) if len(ia) else None
            done[key] = (ia, ib, zones)
        if not len(ia):
            continue
        turn = float(arc_deg(slices.cells.headings[k], slices.cells.headings[k2]))
        w = rho * math.radians(abs(turn)) + 1e-6
        for i, j, z in zip(ia, ib, zones):
            if shapely.area(z) <= MIN_ZONE_AREA_M2:
                continue
            u, v = (k, int(i)), (k2, int(j))
            G.add_edge(u, v, zone=z, turn_deg=turn if u < v else -turn, weight=w)
    return G


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
