"""Places of a slice set and the joins between them: where the vehicle's free space splits.

The roadmap's connected components are *regions*. Regions that hold the same floor facing
opposite ways are merged into one *place* first (a vehicle that cannot turn there is a no-turn
matter, not a blocked passage). A raster of floor clearance is then swept from wide to narrow,
joining places where the widest connecting path allows (a maximin path problem): each join
is a candidate pinch point. Local plan frame, metres.
"""

from __future__ import annotations

import networkx as nx
import numpy as np
import shapely
import shapely.ops
from networkx.utils import UnionFind
from shapely.geometry import Point

from floorfit.analysis.clearance_field import join_events
from floorfit.analysis.context import CheckContext, Places
from floorfit.cspace.roadmap import station_nodes
from floorfit.cspace.slices import SliceSet

__all__ = ["station_regions", "find_places", "locate_join", "locate_break", "side_geometry", "sides_of_events",
           "plain_regions"]


def station_regions(ctx: CheckContext, slices: SliceSet, G: nx.Graph):
    """``(comps, comp_of, station → sorted region ids)`` of the roadmap ``G`` of ``slices``."""
    comp_of = {}
    comps = list(nx.connected_components(G))
    for cid, c in enumerate(comps):
        for n in c:
            comp_of[n] = cid
    st_regions = {}
    for s in ctx.stations:
        nodes = station_nodes(slices, ctx.st_local[s.name], s.heading_deg, s.heading_tolerance_deg)
        st_regions[s.name] = sorted({comp_of[n] for n in nodes})
    return comps, comp_of, st_regions


def _seeds(ctx: CheckContext, slices: SliceSet, comps, st_regions, field, min_area):
    """Raster cells of each region worth joining: regions with a station, and big inner regions."""
    seeds = {}
    keep = set(r for rs in st_regions.values() for r in rs)
    edge = slices.domain.exterior
    for cid, c in enumerate(comps):
        big = max(slices.components[k][i].area for k, i in c) >= min_area
        exterior = cid not in keep and any(slices.components[k][i].intersects(edge) for k, i in c)
        if cid in keep or (big and not exterior):
            pts = []
            for k, i in c:
                p = slices.components[k][i].representative_point()
                pts.append((p.x, p.y))
            for name, rs in st_regions.items():
                if cid in rs:
                    pts.append(ctx.st_local[name])
            pts = np.asarray(pts)
            iy, ix = field.index_of(pts[:, 0], pts[:, 1])
            seeds[cid] = np.unique(np.c_[iy, ix], axis=0)
    return seeds


def _merge_reversed(slices: SliceSet, comps, seeds, min_area) -> UnionFind:
    """Union regions that cover the same floor at opposite mean headings (with at most 60 regions)."""
    group = UnionFind(seeds)
    ids = sorted(seeds)
    if len(ids) > 60:
        return group
    direction = {r: _mean_heading(slices, comps[r]) for r in ids}
    geoms: dict = {}         # each region's floor, built when a pair with opposite headings needs it
    for i, ra in enumerate(ids):
        for rb in ids[i + 1:]:
            if not _reversed(direction, [ra], [rb]):
                continue
            for r in (ra, rb):
                if r not in geoms:
                    geoms[r] = side_geometry(slices, comps, [r])
            inter = geoms[ra].intersection(geoms[rb])
            if not inter.is_empty and inter.area > 0.25 * min(geoms[ra].area, geoms[rb].area):
                group.union(ra, rb)
    return group


def find_places(ctx: CheckContext, slices: SliceSet, G: nx.Graph, field, floor: float, regions=None) -> Places:
    """Places of ``slices`` and the join events between them down to clearance ``floor`` (m).

    ``regions``: the result of :func:`station_regions` for the same slices, if already known.
    """
    comps, comp_of, st_regions = regions if regions is not None else station_regions(ctx, slices, G)
    min_area = 2.0 * ctx.vehicle.footprint.area
    seeds = _seeds(ctx, slices, comps, st_regions, field, min_area)
    group = _merge_reversed(slices, comps, seeds, min_area)
    find = group.__getitem__
    places: dict[int, set] = {}
    place_seeds: dict[int, list] = {}
    for r in sorted(seeds):
        g = find(r)
        places.setdefault(g, set()).update(comps[r])
        place_seeds.setdefault(g, []).append(seeds[r])
    pseeds = {g: np.unique(np.vstack(v), axis=0) for g, v in place_seeds.items()}
    pcomps = [set() for _ in range(len(comps))]
    for g, nodes in places.items():
        pcomps[g] = nodes
    st_places = {n: sorted({find(r) for r in rs if r in seeds}) for n, rs in st_regions.items()}
    events = join_events(field, pseeds, floor)
    return Places(comps=pcomps, comp_of=comp_of, station_regions=st_regions, station_places=st_places,
                  seeds=pseeds, events=events)


def locate_join(field, ev, union_sides) -> tuple[float, float, bool]:
    """Local (x, y) of a join; for regions that overlap in the plane, a point of the overlap.

    The third value is True when the point lies in the overlap of the two sides.
    """
    x, y = field.centre_of(ev.iy, ev.ix)
    a_side, b_side = union_sides
    if a_side is not None and b_side is not None:
        inter = a_side.intersection(b_side)
        if not inter.is_empty and inter.area > 0:
            p = shapely.ops.nearest_points(inter, Point(x, y))[0]
            return p.x, p.y, True
        if ev.overlap:
            # the floor between the sides was never narrow: the block is where the vehicle's
            # regions come closest (an overhead obstacle, a corner)
            pa, pb = shapely.ops.nearest_points(a_side, b_side)
            return (pa.x + pb.x) / 2.0, (pa.y + pb.y) / 2.0, False
    return x, y, False


def locate_break(field, union_sides, max_pairs: int = 12) -> tuple[float, float] | None:
    """Local (x, y) where the vehicle's free space breaks between two sides that are apart in the plane.

    For a join whose floor is wide enough all the way (a corner the vehicle cannot make), the
    raster join cell can lie anywhere along that floor. The break is where the two sides' free
    regions come closest over open floor: the nearest pair of their pieces whose connecting
    segment crosses no obstacle of the raster, moved from the segment's middle uphill in clearance
    (no farther than the segment is long) to the middle of a corner. ``None`` when the sides touch
    or every near pair lies across an obstacle.
    """
    a_side, b_side = union_sides
    if a_side is None or b_side is None or a_side.is_empty or b_side.is_empty:
        return None
    parts_a, parts_b = shapely.get_parts(a_side), shapely.get_parts(b_side)
    d = shapely.distance(parts_a[:, None], parts_b[None, :])
    for flat in np.argsort(d, axis=None)[:max_pairs]:
        i, j = np.unravel_index(flat, d.shape)
        if d[i, j] <= 0:
            continue
        pa, pb = shapely.ops.nearest_points(parts_a[i], parts_b[j])
        if not _open_between(field, (pa.x, pa.y), (pb.x, pb.y)):
            continue
        mx, my = (pa.x + pb.x) / 2.0, (pa.y + pb.y) / 2.0
        return _climb(field, mx, my, max(float(d[i, j]), 3 * field.cell))
    return None


def _open_between(field, p, q) -> bool:
    """True when no obstacle cell of the raster lies on the segment p–q."""
    n = max(2, int(np.ceil(np.hypot(q[0] - p[0], q[1] - p[1]) / (field.cell / 2.0))) + 1)
    t = np.linspace(0.0, 1.0, n)
    iy, ix = field.index_of(p[0] + t * (q[0] - p[0]), p[1] + t * (q[1] - p[1]))
    return not field.blocked[iy, ix].any()


def _climb(field, x: float, y: float, radius: float) -> tuple[float, float]:
    """Centre of the cell reached from (x, y) by steepest ascent of the clearance, within ``radius``."""
    iy, ix = (int(v) for v in field.index_of(x, y))
    ny, nx = field.shape
    for _ in range(int(4 * radius / field.cell) + 4):
        best = (field.dist[iy, ix], iy, ix)
        for jy in range(max(iy - 1, 0), min(iy + 2, ny)):
            for jx in range(max(ix - 1, 0), min(ix + 2, nx)):
                cx, cy = field.centre_of(jy, jx)
                if field.dist[jy, jx] > best[0] + 1e-9 and np.hypot(cx - x, cy - y) <= radius:
                    best = (field.dist[jy, jx], jy, jx)
        if (best[1], best[2]) == (iy, ix):
            break
        iy, ix = best[1], best[2]
    cx, cy = field.centre_of(iy, ix)
    return float(cx), float(cy)


def side_geometry(slices: SliceSet, comps, members, limit: int = 240):
    """Union of the free-space pieces of the regions ``members`` (at most ``limit`` pieces, evenly taken)."""
    polys = [slices.components[k][i] for cid in members for k, i in comps[cid]]
    if len(polys) > limit:
        step = len(polys) / limit
        polys = [polys[int(j * step)] for j in range(limit)]
    return shapely.union_all(polys) if polys else None


def sides_of_events(events, regions) -> list[tuple[set, set]]:
    """For each event, the member regions of each side at the time of the join."""
    uf = UnionFind(regions)
    out = []
    for ev in events:
        groups = {frozenset(g) for g in uf.to_sets()}
        side_a = next(g for g in groups if ev.a in g)
        side_b = next(g for g in groups if ev.b in g)
        out.append((set(side_a), set(side_b)))
        uf.union(ev.a, ev.b)
    return out


def plain_regions(slices: SliceSet, comp_of, gslices: SliceSet, gcomps, members) -> set:
    """Regions of ``slices`` that hold the representative points of ``gslices``' regions ``members``."""
    out = set()
    for cid in members:
        for k, i in list(gcomps[cid])[:20]:
            p = gslices.components[k][i].representative_point()
            kk = slices.cells.index_of(float(gslices.cells.headings[k]))
            for j in slices.tree(kk).query(p, predicate="intersects"):
                out.add(comp_of.get((kk, int(j))))
    out.discard(None)
    return out


def _mean_heading(slices: SliceSet, nodes) -> complex:
    """Area-weighted mean heading direction of roadmap nodes, as a unit-ish complex number."""
    z = 0j
    for k, i in nodes:
        z += slices.components[k][i].area * np.exp(1j * np.radians(slices.cells.headings[k]))
    return z


def _reversed(mean_dir, sa, sb, tol_deg: float = 30.0) -> bool:
    """True when the two sides' mean headings are opposite (within ``tol_deg``)."""
    za = sum(mean_dir[r] for r in sa if r in mean_dir)
    zb = sum(mean_dir[r] for r in sb if r in mean_dir)
    if abs(za) < 1e-12 or abs(zb) < 1e-12:
        return False
    diff = abs(np.degrees(np.angle(za / zb)))
    return diff > 180.0 - tol_deg
