"""The routes fleet traffic is checked along: sampled, with their cross-sections.

This module owns the route sampling of :mod:`floorfit.analysis.traffic`: :func:`station_routes`
(the checked vehicle's roadmap route between every connected station pair), the route pulled taut
within the floor where the vehicle fits, samples at equal spacing with the direction of travel,
and each sample's *cross-section* (the line across the route between the first obstacles each
side), held in :class:`TrafficRoute`. Local frame, metres.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import networkx as nx
import numpy as np
import shapely

from floorfit.analysis.context import CheckContext, SliceStage
from floorfit.cspace.roadmap import station_nodes
from floorfit.motion.route_query import route_in_slices

__all__ = ["station_routes", "TrafficRoute"]

#: The direction of travel at a sample is the chord over this distance along the route (metres).
DIRECTION_CHORD_M = 1.0


# -- routes and their cross-sections ---------------------------------------------------------
@dataclass
class TrafficRoute:
    """One station pair's route, sampled: positions ``p`` (N, 2), unit directions ``d``, normals
    ``n``, cross-section extent ``t_neg`` ≤ 0 ≤ ``t_pos`` along ``n``, ``two_way`` flags,
    ``step`` (metres of route per sample). Local frame, metres."""

    a: str
    b: str
    p: np.ndarray
    d: np.ndarray
    step: float
    n: np.ndarray = field(init=False)
    t_neg: np.ndarray | None = None
    t_pos: np.ndarray | None = None
    two_way: np.ndarray | None = None

    def __post_init__(self) -> None:
        self.n = np.c_[-self.d[:, 1], self.d[:, 0]]

    @property
    def width(self) -> np.ndarray:
        return self.t_pos - self.t_neg


def _sample(xy: np.ndarray, step: float) -> tuple[np.ndarray, np.ndarray, float] | None:
    """Samples at the centres of equal pieces of the polyline ``xy`` (each at most ``step`` long),
    with the direction of travel as the chord over :data:`DIRECTION_CHORD_M` around each."""
    keep = np.r_[True, np.any(np.abs(np.diff(xy, axis=0)) > 1e-9, axis=1)]
    xy = xy[keep]
    if len(xy) < 2:
        return None
    cum = np.r_[0.0, np.cumsum(np.hypot(*np.diff(xy, axis=0).T))]
    total = float(cum[-1])
    if total <= 1e-6:
        return None
    count = max(1, math.ceil(total / step))
    s = (np.arange(count) + 0.5) * (total / count)
    at = np.c_[np.interp(s, cum, xy[:, 0]), np.interp(s, cum, xy[:, 1])]
    half = DIRECTION_CHORD_M / 2.0
    lo, hi = np.clip(s - half, 0.0, total), np.clip(s + half, 0.0, total)
    chord = np.c_[np.interp(hi, cum, xy[:, 0]) - np.interp(lo, cum, xy[:, 0]),
                  np.interp(hi, cum, xy[:, 1]) - np.interp(lo, cum, xy[:, 1])]
    length = np.hypot(chord[:, 0], chord[:, 1])
    length[length <= 1e-12] = 1.0
    return at, chord / length[:, None], total / count


def station_routes(ctx: CheckContext, cs: SliceStage, reach: dict) -> list[tuple[str, str, np.ndarray]]:
    """(from, to, local (N, 2) path) of the checked vehicle's roadmap route for every connected
    station pair, in station order."""
    comp: dict = {}
    for cid, nodes in enumerate(nx.connected_components(cs.roadmap)):
        for node in nodes:
            comp[node] = cid
    heads = cs.slices.cells.headings
    by = {s.name: s for s in ctx.stations}
    names = ctx.station_names
    nodes = {s.name: station_nodes(cs.slices, ctx.st_local[s.name], s.heading_deg, s.heading_tolerance_deg)
             for s in ctx.stations}
    out = []
    for i, a in enumerate(names):
        for b in names[i + 1:]:
            if not (reach[a][b] or reach[b][a]):
                continue
            sa, sb = by[a], by[b]
            la, lb = ctx.st_local[a], ctx.st_local[b]
            na, nb = nodes[a], nodes[b]
            pair = next(((u, v) for u in na for v in nb if comp.get(u) == comp.get(v)), None)
            if pair is None:
                continue
            tries = [(float(heads[pair[0][0]]), float(heads[pair[1][0]]))]
            if sa.heading_deg is not None or sb.heading_deg is not None:
                tries.insert(0, (sa.heading_deg if sa.heading_deg is not None else tries[0][0],
                                 sb.heading_deg if sb.heading_deg is not None else tries[0][1]))
            for ha, hb in tries:
                status, path, _ = route_in_slices(cs.slices, cs.roadmap, (*la, ha), (*lb, hb))
                if status == "reachable":
                    out.append((a, b, np.asarray(path)[:, :2]))
                    break
    return out


def _straighten(xy: np.ndarray, fits, spacing: float = 0.5) -> np.ndarray:
    """The route pulled taut within ``fits`` (where the vehicle fits at some heading): from each
    point, on to the farthest later point (found by doubling, then halving) that a straight line
    inside ``fits`` reaches. Removes the detours a route takes to find room to turn."""
    if fits is None or fits.is_empty or len(xy) < 3:
        return xy
    line = shapely.LineString(xy)
    count = max(2, math.ceil(line.length / spacing) + 1)
    pts = shapely.get_coordinates(shapely.line_interpolate_point(line, np.linspace(0.0, line.length, count)))
    shapely.prepare(fits)

    def clear(i: int, j: int) -> bool:
        return bool(fits.covers(shapely.LineString([pts[i], pts[j]])))

    out, i, last = [pts[0]], 0, len(pts) - 1
    while i < last:
        good, step = i + 1, 1
        while good + step <= last and clear(i, good + step):
            good += step
            step *= 2
        lo, hi = good, min(good + step, last + 1)
        while hi - lo > 1:
            mid = (lo + hi) // 2
            if clear(i, mid):
                lo = mid
            else:
                hi = mid
        out.append(pts[lo])
        i = lo
    return np.asarray(out)


def _cross_sections(route: TrafficRoute, tree: shapely.STRtree, geoms: np.ndarray, reach: float) -> None:
    """Fill ``route.t_neg`` / ``t_pos``: where the cross-section meets the first obstacle each side."""
    p, n = route.p, route.n
    m = len(p)
    t_pos, t_neg = np.full(m, reach), np.full(m, -reach)
    if len(geoms):
        segs = shapely.linestrings(np.stack([p - reach * n, p + reach * n], axis=1))
        si, oi = tree.query(segs, predicate="intersects")
        if len(si):
            hit = shapely.intersection(segs[si], geoms[oi])
            xy, k = shapely.get_coordinates(hit, return_index=True)
            owner = si[k]
            t = np.einsum("ij,ij->i", xy - p[owner], n[owner])
            pos, neg = t > 1e-9, t < -1e-9
            np.minimum.at(t_pos, owner[pos], t[pos])
            np.maximum.at(t_neg, owner[neg], t[neg])
            on = owner[~(pos | neg)]
            t_pos[on] = t_neg[on] = 0.0
    route.t_neg, route.t_pos = t_neg, t_pos
