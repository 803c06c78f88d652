"""Tight findings: passable, but with less clearance than the site asks for.

The same place-and-join analysis as for blocked findings runs for the vehicle outline grown
by the site's required clearance (a second slice set); a join of the grown vehicle that the
plain vehicle (with its margin) makes is a tight spot, and a station the plain vehicle serves
but the grown one does not is a tight station. Drawing frame for findings, metres.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import shapely

from floorfit.analysis.context import CheckContext, ClearanceStage, Places, SliceStage
from floorfit.analysis.findings import Finding
from floorfit.analysis.naming import place_name
from floorfit.analysis.passages import min_width, narrowest_width_near
from floorfit.analysis.places import find_places, locate_join, plain_regions, side_geometry, sides_of_events
from floorfit.cspace.roadmap import build_roadmap
from floorfit.cspace.slices import build_slices, choose_headings

__all__ = ["tight_findings"]


def tight_findings(ctx: CheckContext, cs: SliceStage, clear: ClearanceStage, places: Places,
                   blocked: list[Finding]) -> list[Finding]:
    """Tight findings for the site's required clearance (none when it is not above the margin)."""
    site, vehicle, plan = ctx.site, ctx.vehicle, ctx.plan
    req = site.required_clearance_m
    if not (req > vehicle.margin_m + 1e-9 and ctx.stations):
        return []
    ctx.progress(f"clearance {req:.2f} m")
    grown = replace(vehicle, outline=vehicle.outline.buffer(req, join_style="mitre", mitre_limit=10.0),
                    margin_m=0.0, name=vehicle.name + " + clearance")
    gslices = build_slices(plan, grown, cells=choose_headings(plan, grown, heading_step_deg=ctx.heading_step_deg,
                                                                extra_headings=ctx.extra_headings),
                           workers=ctx.workers, obstacles=cs.obstacles)
    gplaces = find_places(ctx, gslices, build_roadmap(gslices), clear.field, clear.floor)
    outline_w = min_width(vehicle.outline)
    findings = _tight_stations(ctx, places, gplaces, outline_w, req)
    blocked_xy = [(f.x, f.y) for f in blocked if f.kind == "blocked"]
    for ev, (sa, sb) in zip(gplaces.events, sides_of_events(gplaces.events, list(gplaces.seeds))):
        # keep only joins the plain vehicle makes: both sides in one plain region
        pa = plain_regions(cs.slices, places.comp_of, gslices, gplaces.comps, sa)
        pb = plain_regions(cs.slices, places.comp_of, gslices, gplaces.comps, sb)
        if not (pa & pb):
            continue
        ga = side_geometry(gslices, gplaces.comps, sa)
        gb = side_geometry(gslices, gplaces.comps, sb)
        lx, ly, overlap = locate_join(clear.field, ev, (ga, gb))
        w, px, py, q1, q2 = narrowest_width_near(ctx.index, lx, ly, radius=max(3 * clear.cell, 0.15))
        if overlap:
            px, py = lx, ly
            w, q1, q2 = ctx.index.width_at(px, py)
        dx, dy = plan.to_drawing(px, py)
        if any(math.hypot(dx - bx, dy - by) < 1.0 for bx, by in blocked_xy):
            continue
        clearance = max(0.0, (w - outline_w) / 2.0)
        summary = (f"passable, but with {clearance:.2f} m clearance each side where the site asks "
                   f"{req:.2f} m ({site.clearance_reference}); clear width {w:.2f} m")
        findings.append(Finding(kind="tight", cause="width" if not overlap else "turn", x=dx, y=dy,
                                label=place_name(plan, px, py), summary=summary, clear_width_m=round(w, 4),
                                needed_width_m=round(outline_w + 2 * req, 4), clearance_m=round(clearance, 4),
                                required_clearance_m=req, cuts_off=[],  # passable: cuts nothing off
                                geometry=shapely.LineString([q1, q2]) if q1 is not None and not np.allclose(q1, q2)
                                else None))
    return findings


def _tight_stations(ctx: CheckContext, places: Places, gplaces: Places, outline_w: float,
                    req: float) -> list[Finding]:
    """Stations the plain vehicle serves but the vehicle grown by the clearance does not."""
    out = []
    for s in ctx.stations:
        if places.station_places[s.name] and not gplaces.station_places.get(s.name):
            lx, ly = ctx.st_local[s.name]
            w, px, py, q1, q2 = narrowest_width_near(ctx.index, lx, ly, radius=0.3)
            clearance = max(0.0, (w - outline_w) / 2.0)
            out.append(Finding(
                kind="tight", cause="station", x=s.x, y=s.y, label=place_name(ctx.plan, lx, ly),
                summary=(f"station {s.name} is served, but with about {clearance:.2f} m clearance each side "
                         f"where the site asks {req:.2f} m ({ctx.site.clearance_reference}); clear width {w:.2f} m"),
                clear_width_m=round(w, 4), needed_width_m=round(outline_w + 2 * req, 4),
                clearance_m=round(clearance, 4), required_clearance_m=req, cuts_off=[s.name]))
    return out
