"""The turnability map and no-turn findings: where the vehicle fits, where it can turn round, where it cannot.

The map counts, per raster cell, the heading slices at which the vehicle's reference point may
stand there (:func:`floorfit.analysis.turnability.heading_raster`). Floor where the vehicle fits
but that lies farther than a short move from any place where it can turn around is a no-turn
stretch: a dead end it must back out of, or a passage it cannot reverse its heading in. Local
frame for geometry, drawing frame for findings, metres and degrees.
"""

from __future__ import annotations

import math

import numpy as np
import shapely
from scipy import ndimage
from shapely.geometry import Point

from floorfit.analysis.context import CheckContext, ClearanceStage, SliceStage
from floorfit.analysis.envelope import envelope_mask
from floorfit.analysis.findings import Finding
from floorfit.analysis.maneuvers import turnaround_circle
from floorfit.analysis.naming import place_name
from floorfit.analysis.turnability import format_heading_ranges, heading_ranges, heading_raster, turn_region
from floorfit.cspace.raster import fill_polygons

__all__ = ["turnability_map", "noturn_findings", "cells_to_geometry", "MAP_MAX_CELLS"]

#: The turnability map is sampled on at most this many cells (its cell size grows on big sites).
MAP_MAX_CELLS = 400_000
#: Motion modes that can spin in place (turn about the reference point without moving it).
SPIN_MODES = ("differential", "omni")


def cells_to_geometry(mask: np.ndarray, x0: float, y0: float, cell: float):
    """Union of the boxes of True cells, local frame (metres; cell (ix, iy) spans
    [x0 + ix·cell, x0 + (ix + 1)·cell] × [y0 + iy·cell, y0 + (iy + 1)·cell]).

    Each row's runs of True cells are boxes; a run repeated in the rows above joins one
    taller box, so a rectangular area is one box however many rows it spans (seven times
    fewer boxes to union on a warehouse's turnability map).
    """
    m = np.asarray(mask, dtype=bool)
    if not m.any():
        return shapely.Polygon()
    ny, nx = m.shape
    padded = np.zeros((ny, nx + 2), dtype=np.int8)
    padded[:, 1:-1] = m
    step = np.diff(padded, axis=1)
    rows, a = np.nonzero(step == 1)          # run starts and ends, row by row: they pair up
    b = np.nonzero(step == -1)[1]
    order = np.lexsort((rows, b, a))         # the same run in consecutive rows: consecutive here
    a, b, rows = a[order], b[order], rows[order]
    first = np.flatnonzero(np.r_[True, (a[1:] != a[:-1]) | (b[1:] != b[:-1]) | (rows[1:] != rows[:-1] + 1)])
    last = np.r_[first[1:], len(a)] - 1
    boxes = shapely.box(x0 + a[first] * cell, y0 + rows[first] * cell, x0 + b[first] * cell,
                        y0 + (rows[last] + 1) * cell)
    return shapely.union_all(boxes)


def turnability_map(ctx: CheckContext, cs: SliceStage, clear: ClearanceStage, map_cell: float):
    """``(turnability dict for the report, raster, fits mask)``: heading counts, fits, rotates, free space.

    Floor connected to the map's border (outside the drawing) is cleared unless a station lies there,
    and so is floor outside the building envelope (:mod:`floorfit.analysis.envelope`).
    """
    slices, stations = cs.slices, ctx.stations
    raster = heading_raster(slices, clear.bounds, map_cell)
    counts = raster.counts
    turnability = {"heading_count": {"x0": raster.x0, "y0": raster.y0, "cell_m": map_cell,
                                     "counts": counts, "n_headings": len(slices)}}
    outside = _exterior(counts > 0, raster, stations, ctx.st_local)
    # floor outside the building envelope is not analysed (see floorfit.analysis.envelope)
    outside |= ~envelope_mask(ctx.envelope, raster.x0, raster.y0, map_cell, counts.shape[1], counts.shape[0])
    counts = np.where(outside, 0, counts)
    turnability["heading_count"]["counts"] = counts
    fits = counts > 0
    turnability["fits"] = cells_to_geometry(fits, raster.x0, raster.y0, map_cell)
    # only a base that turns on the spot can spin in place (a car-steered vehicle never can,
    # however much room it has): no "spins" area at all for the others
    turnability["rotates"] = (cells_to_geometry(counts == len(slices), raster.x0, raster.y0, map_cell)
                              if len(slices) > 1 else shapely.Polygon()) if ctx.vehicle.mode in SPIN_MODES else None
    # the free space (reference point) at one representative heading, for the CAD overlay
    rep_h = next((s.heading_deg for s in stations if s.heading_deg is not None), 0.0)
    k_rep = slices.cells.index_of(rep_h)
    rep = [c for c in slices.components[k_rep] if not c.intersects(slices.domain.exterior)
           or any(c.covers(Point(ctx.st_local[s.name])) for s in stations)]
    turnability["free_at_heading"] = {"heading_deg": float(slices.cells.headings[k_rep]),
                                      "geometry": shapely.union_all(rep) if rep else shapely.Polygon()}
    return turnability, raster, fits


def noturn_findings(ctx: CheckContext, cs: SliceStage, turnability: dict, raster, fits: np.ndarray,
                    map_cell: float) -> list[Finding]:
    """No-turn findings; adds the ``turns_around`` area to ``turnability``. Vehicles that never
    turn (mode ``fixed``) or cannot turn at all get a note instead."""
    plan, vehicle, slices = ctx.plan, ctx.vehicle, cs.slices
    centre, rho_min, _how = turnaround_circle(vehicle)
    if not (vehicle.mode != "fixed" and len(slices) > 1 and math.isfinite(rho_min)):
        ctx.notes.append(f"no-turn analysis is not done for motion mode '{vehicle.mode}'")
        return []
    counts = turnability["heading_count"]["counts"]
    troom = turn_region(cs.obstacles, slices.domain, rho_min + plan.curve_tolerance_m)
    turnability["turns_around"] = troom.intersection(turnability["fits"].buffer(map_cell))
    tmask = fill_polygons(shapely.get_parts(troom), raster.x0, raster.y0, map_cell, *counts.shape[::-1])
    # the no-turn rule ignores places within a short move of a turn-around place
    reach_d = float(np.hypot(*centre)) + 0.5 * vehicle.length_m + map_cell
    far = ndimage.distance_transform_edt(~tmask) * map_cell > reach_d if tmask.any() else np.ones_like(tmask)
    noturn = fits & far
    lab, n = ndimage.label(noturn, structure=np.ones((3, 3), bool))
    min_cells = max(4, int(vehicle.footprint.area / map_cell ** 2))
    findings = []
    for L in range(1, n + 1):
        m = lab == L
        if m.sum() < min_cells:
            continue
        f = _noturn_finding(ctx, slices, raster, m, fits)
        if f is not None:
            findings.append(f)
    return findings


def _exterior(fits: np.ndarray, raster, stations, st_local) -> np.ndarray:
    """Cells of floor connected to the map's border (outside the drawing), unless a station lies there."""
    lab, _ = ndimage.label(fits, structure=np.ones((3, 3), bool))
    border = np.unique(np.concatenate([lab[0], lab[-1], lab[:, 0], lab[:, -1]]))
    border = set(int(b) for b in border if b > 0)
    for s in stations:
        iy, ix = raster.index_of(*st_local[s.name])
        border.discard(int(lab[iy, ix]))
    return np.isin(lab, list(border)) if border else np.zeros_like(fits)


def _noturn_finding(ctx: CheckContext, slices, raster, mask, fits):
    plan, vehicle = ctx.plan, ctx.vehicle
    ys, xs = np.nonzero(mask)
    cx, cy = raster.centres()
    px, py = cx[xs], cy[ys]
    # the cell nearest the centroid, inside the stretch
    mx, my = px.mean(), py.mean()
    j = int(np.argmin(np.hypot(px - mx, py - my)))
    lx, ly = float(px[j]), float(py[j])
    # headings at which the vehicle can travel along the stretch: free over at least half of
    # the stretch's cells (a vehicle that fits across an aisle only at one spot is not listed)
    frac = raster.free[:, ys, xs].mean(axis=1)
    free = frac >= 0.5 * frac.max()
    ranges = heading_ranges(free, slices.cells.headings, slices.cells.below, slices.cells.above)
    # mouths: where the stretch meets floor from which the vehicle can turn
    ring = ndimage.binary_dilation(mask, np.ones((3, 3), bool), iterations=2) & fits & ~mask
    _, mouths = ndimage.label(ring, structure=np.ones((3, 3), bool))
    x0, x1 = px.min() - raster.cell / 2, px.max() + raster.cell / 2
    y0, y1 = py.min() - raster.cell / 2, py.max() + raster.cell / 2
    length = max(x1 - x0, y1 - y0)
    if length < vehicle.length_m:
        return None
    inside = []
    for s in ctx.stations:
        iy, ix = raster.index_of(*ctx.st_local[s.name])
        if mask[iy, ix]:
            inside.append(s.name)
    dead = mouths <= 1
    rng = format_heading_ranges(ranges)
    what = "dead end: the vehicle must back out the way it came" if dead else \
        "the vehicle can pass through but cannot reverse its heading inside"
    summary = f"{length:.1f} m stretch where the vehicle cannot turn around ({what}); it fits only at headings {rng}"
    if inside:
        summary += f"; {', '.join(inside)} lie{'s' if len(inside) == 1 else ''} in it"
    dx0, dy0 = plan.to_drawing(x0, y0)
    dx1, dy1 = plan.to_drawing(x1, y1)
    dx, dy = plan.to_drawing(lx, ly)
    geom = cells_to_geometry(mask, raster.x0, raster.y0, raster.cell)
    return Finding(kind="no-turn", cause="dead-end" if dead else "through", x=dx, y=dy,
                   label=place_name(plan, lx, ly), summary=summary, heading_ranges_deg=ranges,
                   extent=(dx0, dy0, dx1, dy1), cuts_off=[], geometry=geom,
                   clear_width_m=None, needed_width_m=None)
