"""Blocked findings: stations where the vehicle does not fit, and pinch points a person passes but the vehicle does not.

Every join between the vehicle's places that still leaves at least a person's width is a
place where a person passes and the vehicle does not. Its clear width is measured exactly at
the narrowest point nearby (:func:`floorfit.analysis.passages.narrowest_width_near`); a join
whose floor is wide enough all the way is placed where the vehicle's free space breaks
(:func:`floorfit.analysis.places.locate_break`, e.g. a corridor corner) and measured there. If it is
at least what the vehicle needs to drive straight through, the cause is the turn (a corner or
approach it cannot make), or the height when an overhead obstacle the vehicle meets is near.
Findings are in the drawing frame; measurements in metres.
"""

from __future__ import annotations

import networkx as nx
import numpy as np
import shapely

from floorfit.analysis.context import CheckContext, ClearanceStage, Places, SliceStage
from floorfit.analysis.envelope import outside_envelope
from floorfit.analysis.findings import Finding
from floorfit.analysis.naming import place_name
from floorfit.analysis.passages import narrowest_width_near
from floorfit.analysis.places import locate_break, locate_join, side_geometry, sides_of_events

__all__ = ["station_fit_findings", "pinch_findings", "station_pair_cuts"]


def station_fit_findings(ctx: CheckContext, station_regions: dict[str, list[int]], needed: float) -> list[Finding]:
    """A blocked finding (cause ``station``) for each station where the vehicle does not fit at all."""
    out = []
    for s in ctx.stations:
        if station_regions[s.name]:
            continue
        lx, ly = ctx.st_local[s.name]
        hd = f" at heading {s.heading_deg:g}° (±{s.heading_tolerance_deg:g}°)" if s.heading_deg is not None else ""
        inside = len(ctx.plan.solids) and any(g.covers(shapely.Point(lx, ly)) for g in ctx.plan.solids)
        why = " (it lies inside an obstacle of this layout)" if inside else ""
        out.append(Finding(
            kind="blocked", cause="station", x=s.x, y=s.y, label=place_name(ctx.plan, lx, ly),
            summary=f"the vehicle does not fit at station {s.name}{hd}{why}",
            cuts_off=[s.name], needed_width_m=round(needed, 4)))
        ctx.notes.append(f"station {s.name}: the vehicle does not fit there{hd}")
    return out


def _blocked_summary(ctx: CheckContext, cause: str, w: float, needed: float, clear_h: float | None) -> str:
    if cause == "height":
        vehicle = ctx.vehicle
        need_h = f"{vehicle.height_m:.2f} m" if vehicle.height_m is not None else \
            "more (its height is not given, so it counts as unlimited)"
        return f"clear height {clear_h:.2f} m, the vehicle needs {need_h} (clear width {w:.2f} m would be enough)"
    if cause == "width":
        return f"clear width {w:.2f} m, the vehicle needs {needed:.2f} m (outline plus margin) to pass"
    return (f"clear width {w:.2f} m is enough to drive straight through ({needed:.2f} m), "
            f"but the vehicle cannot make the turn here")


def _join_point(ctx: CheckContext, field, ev, sides, straight: float):
    """``(x, y, measure_at)``: where a join is reported (local frame), and where its clear width is
    measured when that is not simply the narrowest floor near (x, y) (``None``).

    Sides that overlap in the plane, or on the raster, have no narrow floor between them: the
    floor is measured at the raster join cell. A join whose floor is at least ``straight`` wide all
    the way (its level less the raster's error, half a cell diagonal, doubled) is no narrow
    passage: the raster join cell can be anywhere along that floor, so the join is placed where the
    vehicle's free space breaks (:func:`locate_break`) and measured there.
    """
    lx, ly, overlap = locate_join(field, ev, sides)
    if ev.overlap or overlap:
        return lx, ly, field.centre_of(ev.iy, ev.ix)
    if 2.0 * ev.level - np.sqrt(2.0) * field.cell < straight:
        return lx, ly, None
    at = locate_break(field, sides)
    return (at[0], at[1], at) if at is not None else (lx, ly, None)


def pinch_findings(ctx: CheckContext, cs: SliceStage, clear: ClearanceStage, places: Places,
                   needed: float) -> tuple[list[Finding], nx.Graph]:
    """Blocked findings at the joins between places, and the tree of joins (edges carry ``finding``)."""
    plan, vehicle, slices, field, cell = ctx.plan, ctx.vehicle, cs.slices, clear.field, clear.cell
    person = ctx.site.person_width_m
    names = ctx.station_names
    comps, seeds = places.comps, places.seeds
    tree = nx.Graph()
    tree.add_nodes_from(seeds)
    region_stations = {cid: [n for n in names if cid in places.station_places[n]] for cid in seeds}
    findings = []
    for ev, (sa, sb) in zip(places.events, sides_of_events(places.events, list(seeds))):
        ga = side_geometry(slices, comps, sa)
        gb = side_geometry(slices, comps, sb)
        lx, ly, measure_at = _join_point(ctx, field, ev, (ga, gb), needed + slices.tolerance_m)
        if measure_at is not None:
            # no narrow floor between the sides (a turn or an overhead block): the floor there is
            # at least 2 × the join level wide; measure it where _join_point says
            w, _, _, q1, q2 = narrowest_width_near(ctx.index, *measure_at, radius=max(3 * cell, 0.15))
            px, py = lx, ly
        else:
            w, px, py, q1, q2 = narrowest_width_near(ctx.index, lx, ly, radius=max(3 * cell, 0.15))
            if w < person - 1e-6:
                continue      # not a passage a person uses: the regions are not walkably connected here
        st_a = sorted({n for r in sa for n in region_stations.get(r, [])})
        st_b = sorted({n for r in sb for n in region_stations.get(r, [])})
        cut = st_b if len(st_b) <= len(st_a) else st_a
        if not cut and outside_envelope(ctx.envelope, px, py, 3 * cell):
            continue      # outside the building and cutting no station off: not part of the question
        cause = "width" if w < needed + slices.tolerance_m else "turn"
        clear_h = ctx.clear_height_near(px, py, vehicle.radius_m + 0.5)
        if clear_h is not None and cause == "turn":
            cause = "height"
        summary = _blocked_summary(ctx, cause, w, needed, clear_h)
        if cut:
            summary += f"; cuts off {', '.join(cut)}"
        dx, dy = plan.to_drawing(px, py)
        geom = shapely.LineString([q1, q2]) if q1 is not None and q2 is not None and not np.allclose(q1, q2) else None
        f = Finding(kind="blocked", cause=cause, x=dx, y=dy, label=place_name(plan, px, py), summary=summary,
                    clear_width_m=round(w, 4), needed_width_m=round(needed, 4), cuts_off=cut, geometry=geom,
                    clear_height_m=None if cause != "height" else round(clear_h, 4),
                    needed_height_m=None if cause != "height" else vehicle.height_m)
        findings.append(f)
        tree.add_edge(ev.a, ev.b, finding=f)
    return findings, tree


def station_pair_cuts(ctx: CheckContext, places: Places, reach: dict, tree: nx.Graph) -> dict:
    """For each station pair the vehicle cannot drive between, the blocked findings that cut it."""
    names = ctx.station_names
    st_places = places.station_places
    cuts: dict[tuple[str, str], list[Finding]] = {}
    for i, a in enumerate(names):
        for b in names[i + 1:]:
            if reach[a][b]:
                continue
            found = _cut_between(tree, st_places[a], st_places[b])
            cuts[(a, b)] = found
            if not found and st_places[a] and st_places[b]:
                ctx.notes.append(f"{a} and {b} are not connected even for a person "
                                 f"({ctx.site.person_width_m:.2f} m wide): separate parts of the drawing")
    return cuts


def _cut_between(tree: nx.Graph, places_a: list[int], places_b: list[int]) -> list[Finding]:
    for ra in places_a:
        for rb in places_b:
            if ra in tree and rb in tree and nx.has_path(tree, ra, rb):
                path = nx.shortest_path(tree, ra, rb)
                found = [tree.edges[u, v]["finding"] for u, v in zip(path[:-1], path[1:])]
                found = [f for f in found if f is not None]
                if found:
                    return found
                break
    return []
