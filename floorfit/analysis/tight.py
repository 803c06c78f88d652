"""Tight findings: passable, but with less clearance than the site asks for.

The same place-and-join analysis as for blocked findings runs for the vehicle outline grown
by the site's required clearance (a second slice set); a join of the grown vehicle that the
plain vehicle (with its margin) makes is a tight spot, and a station the plain vehicle serves
but the grown one does not is a tight station. Drawing frame for findings, metres.

The grown slices only propose candidates, so they are built at a coarser heading step than
the check's (:func:`grown_step_deg`: four times it, at most 8°, never finer than the check's;
the same station and wall-direction headings get slices of their own). They are sound slices:
a coarser step grows each slice's footprint by the rotation over a wider cell, so they err
further towards "tight" (they may split the grown vehicle's floor where a finer step would
not, proposing more candidate joins and stations), and every candidate is confirmed or
dropped by the exact clearance below.

The clearance a finding states is measured exactly where it stands (:func:`clearance_at`):
the largest distance between the vehicle outline and the obstacles it meets, over the
headings at which the vehicle fits there. A place or station where that is at least the
required clearance is not tight (the grown slices err towards "tight" by their tolerance),
so a tight finding never states a clearance at or above the requirement, and it states a
clear width only when the width measured there could hold the vehicle at all.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import shapely

from floorfit.analysis.context import CheckContext, ClearanceStage, Places, SliceStage
from floorfit.analysis.envelope import outside_envelope
from floorfit.analysis.findings import Finding
from floorfit.analysis.naming import place_name
from floorfit.analysis.passages import min_width, narrowest_width_near
from floorfit.analysis.places import find_places, locate_join, plain_regions, side_geometry, sides_of_events
from floorfit.cspace.headings import arc_deg
from floorfit.cspace.roadmap import build_roadmap
from floorfit.cspace.slices import build_slices, choose_headings

__all__ = ["tight_findings", "clearance_at", "grown_step_deg"]

#: The grown vehicle's slices use this many times the check's heading step ...
GROWN_STEP_FACTOR = 4.0
#: ... but no step coarser than this (degrees), and never a finer step than the check's.
GROWN_MAX_STEP_DEG = 8.0


def grown_step_deg(step_deg: float) -> float:
    """Uniform heading step (degrees) of the grown vehicle's slices for a check at ``step_deg``:
    :data:`GROWN_STEP_FACTOR` times it, at most :data:`GROWN_MAX_STEP_DEG` (a check coarser than
    that keeps its own step)."""
    return max(step_deg, min(GROWN_STEP_FACTOR * step_deg, GROWN_MAX_STEP_DEG))


def tight_findings(ctx: CheckContext, cs: SliceStage, clear: ClearanceStage, places: Places,
                   blocked: list[Finding], workers: int | None = None) -> list[Finding]:
    """Tight findings for the site's required clearance (none when it is not above the margin).

    ``workers``: processes for the grown vehicle's slices (default: the check's); the findings
    do not depend on it."""
    site, vehicle, plan = ctx.site, ctx.vehicle, ctx.plan
    req = site.required_clearance_m
    if not (req > vehicle.margin_m + 1e-9 and ctx.stations):
        return []
    ctx.progress(f"clearance {req:.2f} m")
    grown = replace(vehicle, outline=vehicle.outline.buffer(req, join_style="mitre", mitre_limit=10.0),
                    margin_m=0.0, name=vehicle.name + " + clearance")
    # a coarser step than the check's: the grown vehicle's split is confirmed by exact clearances below
    step = grown_step_deg(ctx.heading_step_deg or cs.cells.step_deg)
    gslices = build_slices(plan, grown, cells=choose_headings(plan, grown, heading_step_deg=step,
                                                                extra_headings=ctx.extra_headings),
                           workers=ctx.workers if workers is None else workers, obstacles=cs.obstacles)
    gplaces = find_places(ctx, gslices, build_roadmap(gslices), clear.field, clear.floor)
    outline_w = min_width(vehicle.outline)
    findings = _tight_stations(ctx, cs, places, gplaces, outline_w, req)
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
        if outside_envelope(ctx.envelope, px, py, 3 * clear.cell):
            continue      # outside the building envelope: not analysed
        width = w if w >= outline_w - 1e-9 else None      # a width below the vehicle's is not this passage's
        # the clearance found where the vehicle passes: the best pose with its reference point on
        # the narrowest cut (which every way through crosses), or at the join itself
        pts = [(px, py), (lx, ly)]
        if width is not None and q1 is not None:
            t = np.linspace(0.0, 1.0, 41)[1:-1, None]
            pts += [tuple(p) for p in (1 - t) * np.asarray(q1) + t * np.asarray(q2)]
        clearance = clearance_at(ctx, cs, np.asarray(pts))
        if clearance is None or clearance >= req - 1e-9:
            continue        # the grown vehicle's split is within the slices' tolerance: not tight
        summary = (f"passable, but with {clearance:.2f} m clearance where the site asks "
                   f"{req:.2f} m ({site.clearance_reference})")
        if width is not None:
            summary += f"; clear width {width:.2f} m"
        findings.append(Finding(kind="tight", cause="width" if not overlap else "turn", x=dx, y=dy,
                                label=place_name(plan, px, py), summary=summary,
                                clear_width_m=None if width is None else round(width, 4),
                                needed_width_m=round(outline_w + 2 * req, 4), clearance_m=round(clearance, 4),
                                required_clearance_m=req, cuts_off=[],  # passable: cuts nothing off
                                geometry=shapely.LineString([q1, q2]) if width is not None and q1 is not None
                                and not np.allclose(q1, q2) else None))
    return findings


def clearance_at(ctx: CheckContext, cs: SliceStage, points, heading_deg: float | None = None,
                 heading_tol_deg: float = 180.0) -> float | None:
    """Largest clearance (m) between the vehicle outline and the obstacles it meets with its
    reference point at one of the local ``points`` ((x, y) or (N, 2)), over the slice headings at
    which it fits there (within ``heading_tol_deg`` of ``heading_deg`` when given); None where
    it fits at no such pose.

    Exact for each pose (shapely's polygon distance); the outline is the vehicle without its
    safety margin, as the clearance a site asks for is measured from the vehicle itself.
    """
    slices = cs.slices
    pts = np.asarray(points, dtype=float).reshape(-1, 2)
    hs = np.asarray(slices.cells.headings, dtype=float)
    if heading_deg is not None:
        hs = hs[np.abs(arc_deg(hs, heading_deg)) <= heading_tol_deg + 1e-9]
    if not len(hs) or not len(pts):
        return None
    poses = np.c_[np.repeat(pts, len(hs), axis=0), np.tile(hs, len(pts))]
    poses = poses[slices.are_free(poses)]
    if not len(poses):
        return None
    tree = ctx.met_tree()
    if tree is None:
        return math.inf
    ring = np.asarray(ctx.vehicle.outline.exterior.coords)
    t = np.radians(poses[:, 2])[:, None]
    x = np.cos(t) * ring[None, :, 0] - np.sin(t) * ring[None, :, 1] + poses[:, 0:1]
    y = np.sin(t) * ring[None, :, 0] + np.cos(t) * ring[None, :, 1] + poses[:, 1:2]
    n, k = x.shape
    polys = shapely.polygons(shapely.linearrings(np.c_[x.ravel(), y.ravel()], indices=np.repeat(np.arange(n), k)))
    _, dist = tree.query_nearest(polys, return_distance=True, all_matches=False)
    return float(np.max(dist)) if len(dist) else math.inf


def _tight_stations(ctx: CheckContext, cs: SliceStage, places: Places, gplaces: Places, outline_w: float,
                    req: float) -> list[Finding]:
    """Stations where the vehicle fits but the vehicle grown by the clearance does not, and the
    clearance measured at the station is below the requirement."""
    out = []
    for s in ctx.stations:
        if places.station_places[s.name] and not gplaces.station_places.get(s.name):
            lx, ly = ctx.st_local[s.name]
            clearance = clearance_at(ctx, cs, (lx, ly), s.heading_deg, s.heading_tolerance_deg)
            if clearance is None or clearance >= req - 1e-9:
                continue
            w, px, py, q1, q2 = narrowest_width_near(ctx.index, lx, ly, radius=0.3)
            width = w if w >= outline_w - 1e-9 else None
            summary = (f"the vehicle fits at station {s.name}, but with at most {clearance:.2f} m clearance "
                       f"where the site asks {req:.2f} m ({ctx.site.clearance_reference})")
            if width is not None:
                summary += f"; clear width {width:.2f} m"
            out.append(Finding(
                kind="tight", cause="station", x=s.x, y=s.y, label=place_name(ctx.plan, lx, ly),
                summary=summary, clear_width_m=None if width is None else round(width, 4),
                needed_width_m=round(outline_w + 2 * req, 4),
                clearance_m=round(clearance, 4), required_clearance_m=req, cuts_off=[]))
    return out
