"""The site check: reachability between stations, pinch points, no-turn stretches, tight spots.

``run_check(plan, vehicle, stations, site=...)`` returns a :class:`~floorfit.analysis.findings.CheckResult`.
It runs named stages in order, each a function with typed inputs and outputs that can be
timed, reported in progress or skipped on its own:

1. :func:`space_stages`: heading cells, C-obstacles, sound slices and the roadmap (:mod:`floorfit.cspace`), and
2. in the same function, the floor clearance raster people and vehicles are measured on (on a large
   site, on a second process while the roadmap is built);
3. :func:`floorfit.analysis.places.find_places`: roadmap regions merged into places, and their joins;
4. :func:`floorfit.analysis.blocked.station_fit_findings` and
   :func:`~floorfit.analysis.blocked.pinch_findings`: ``blocked`` findings, then the station pairs they cut;
5. :func:`floorfit.analysis.tight.tight_findings`: ``tight`` findings for the required clearance;
6. :func:`manoeuvre_stage`: manoeuvres of car-like vehicles, the manoeuvre budget of differential and
   car-like vehicles (:mod:`floorfit.analysis.budget`) and the swept routes the report draws;
7. :func:`floorfit.analysis.noturn.turnability_map` and :func:`~floorfit.analysis.noturn.noturn_findings`:
   the turnability map and ``no-turn`` findings;
8. :func:`floorfit.analysis.traffic.traffic_stage` (only with the site's ``traffic`` settings): passing
   places and ``single-lane`` findings along the routes between stations.

``quick=True`` stops after stage 4: what sizing needs to name the binding place.
"""

from __future__ import annotations

from collections.abc import Callable

from floorfit.analysis.blocked import pinch_findings, station_fit_findings, station_pair_cuts
from floorfit.analysis.budget import budget_applies, budget_findings, budget_text
from floorfit.analysis.clearance_field import choose_cell_size, clearance_field
from floorfit.analysis.context import CheckContext, ClearanceStage, SliceStage
from floorfit.analysis.findings import CheckResult, Finding, rank_findings
from floorfit.analysis.maneuvers import maneuver_findings, route_sweeps
from floorfit.analysis.noturn import MAP_MAX_CELLS, noturn_findings, turnability_map
from floorfit.analysis.passages import min_width
from floorfit.analysis.places import find_places, station_regions
from floorfit.analysis.tight import tight_findings
from floorfit.analysis.traffic import traffic_stage
from floorfit.cspace.roadmap import build_roadmap
from floorfit.cspace.sizelimits import check_problem_size
from floorfit.cspace.slicepool import POOL_MIN_WORK, pool_size, worker_count
from floorfit.cspace.slices import build_slices, choose_headings, obstacles_for
from floorfit.errors import SiteError
from floorfit.forking import start
from floorfit.plan.model import Plan
from floorfit.plan.site import Site
from floorfit.plan.stations import Station, validate_stations
from floorfit.vehicles.rigid import Vehicle

__all__ = ["run_check", "rank_findings", "space_stages", "manoeuvre_stage",
           "MAP_MAX_CELLS", "PERSON_HEADROOM_M"]

#: Headroom a person needs, metres: obstacles starting higher do not block people (common
#: practice; door heights are about 2.03 m / 80 in, from memory).
PERSON_HEADROOM_M = 2.0
#: Floor around the drawing's extent that the rasters cover, metres.
_RASTER_PAD_M = 1.0


def _noop(_msg: str) -> None:
    pass


#: Obstacle pieces × slices from which the check does work on a second process (the clearance
#: raster and half the roadmap beside the rest of the roadmap; the station-pair drives beside the
#: clearance and turnability stages): below it, forking costs more than it saves.
DRIVES_APART_MIN_WORK = POOL_MIN_WORK


def _apart_pays(ctx: CheckContext, obstacles, n_cells: int) -> bool:
    """More than one worker allowed and a large site (:data:`DRIVES_APART_MIN_WORK`)."""
    return worker_count(ctx.workers) >= 2 and obstacles.piece_count * n_cells >= DRIVES_APART_MIN_WORK


def _slices(ctx: CheckContext):
    """Heading cells, C-obstacles and sound slices for the check's vehicle."""
    plan, vehicle = ctx.plan, ctx.vehicle
    cells = choose_headings(plan, vehicle, heading_step_deg=ctx.heading_step_deg, extra_headings=ctx.extra_headings)
    check_problem_size(plan, len(cells), slices_for_step=lambda step: len(choose_headings(
        plan, vehicle, heading_step_deg=step, extra_headings=ctx.extra_headings)),
        keep=list(ctx.st_local.values()))
    obstacles = obstacles_for(plan, vehicle)
    processes = pool_size(obstacles, len(cells), ctx.workers)
    ctx.progress(f"slices: {len(cells)} headings on {processes} process{'es' if processes > 1 else ''}")
    # a progress object with an ``update(done, total)`` method also gets the count of slices done
    slices = build_slices(plan, vehicle, cells=cells, workers=ctx.workers, obstacles=obstacles,
                          progress=getattr(ctx.progress, "update", None))
    return cells, obstacles, slices


def _clearance_grid(ctx: CheckContext) -> tuple[tuple[float, float, float, float], float]:
    """Bounds (local frame, metres) and cell size (metres) of the clearance raster: the drawing's
    extent with :data:`_RASTER_PAD_M` around it, 5 cm cells, coarser on big sites."""
    x0, y0, x1, y1 = ctx.plan.local_bounds()
    pad = _RASTER_PAD_M
    bounds = (x0 - pad, y0 - pad, x1 + pad, y1 + pad)
    return bounds, choose_cell_size(bounds, 0.05)


def _clearance_on(plan: Plan, site: Site, bounds: tuple[float, float, float, float], cell: float) -> ClearanceStage:
    """The clearance raster over ``bounds`` with ``cell`` (metres) of the obstacles standing on the floor."""
    pw = plan.wall_heights[:, 0] <= 0.0
    ps = plan.solid_heights[:, 0] <= 0.0
    field = clearance_field(plan.walls[pw], plan.solids[ps], bounds, cell)
    floor = max(site.person_width_m / 2.0 - 0.75 * cell, cell)
    return ClearanceStage(bounds=bounds, cell=cell, field=field, floor=floor)


def space_stages(ctx: CheckContext) -> tuple[SliceStage, ClearanceStage]:
    """Heading cells, C-obstacles, sound slices and their roadmap for the check's vehicle; and the
    floor clearance raster (5 cm cells, coarser on big sites) of the obstacles standing on the floor.

    Obstacles that start above the floor (an overhead duct, a shelf a low robot drives under)
    leave the floor open: where they stop a vehicle, that is a ``blocked`` finding with cause
    ``height`` at the obstacle, not a separation of the drawing. The raster needs only the
    drawing: where a second process pays (:func:`_apart_pays`) it is computed there while this
    one builds the roadmap (the same function, so the same raster)."""
    cells, obstacles, slices = _slices(ctx)
    bounds, cell = _clearance_grid(ctx)
    apart = _apart_pays(ctx, obstacles, len(cells))
    raster = start(_clearance_on, ctx.plan, ctx.site, bounds, cell, workers=ctx.workers if apart else 1)
    try:
        if raster.apart:
            ctx.progress(f"roadmap; meanwhile the clearance field ({cell * 100:.0f} cm cells) on a second process")
        else:
            ctx.progress("roadmap")
        roadmap = build_roadmap(slices, workers=ctx.workers if apart else 1)
        if not raster.apart:
            ctx.progress(f"clearance field ({cell * 100:.0f} cm cells)")
        clear = raster.result()
    finally:
        raster.cancel()
    return SliceStage(cells=cells, obstacles=obstacles, slices=slices, roadmap=roadmap), clear


def manoeuvre_stage(ctx: CheckContext, cs: SliceStage, routes, reach: dict | None = None,
                    cuts: dict | None = None) -> tuple[list[Finding], list[dict]]:
    """Manoeuvre findings of car-like vehicles, the manoeuvre budget of differential and car-like
    vehicles (with ``reach``: pairs served only over the budget become unreachable, their findings
    go to ``cuts``; :mod:`floorfit.analysis.budget`), and the swept routes the report draws."""
    vehicle, stations, site = ctx.vehicle, ctx.stations, ctx.site
    findings: list[Finding] = []
    pair_drives: dict = {}
    budget = site.max_direction_changes if reach is not None else None
    if vehicle.mode == "car" and len(stations) > 1:
        ctx.progress("manoeuvres")
        findings = maneuver_findings(ctx.plan, vehicle, cs.slices, stations, roadmap=cs.roadmap, notes=ctx.notes,
                                     pair_drives=pair_drives, max_direction_changes=budget)
    if budget_applies(vehicle, budget) and len(stations) > 1:
        ctx.progress(f"manoeuvre budget ({budget_text(budget)})")
        findings += budget_findings(ctx.plan, vehicle, cs.slices, stations, budget=budget, reach=reach,
                                    roadmap=cs.roadmap, cuts=cuts, notes=ctx.notes, pair_drives=pair_drives)
    wanted = list(routes if routes is not None else site.routes)
    route_dicts: list[dict] = []
    if wanted:
        ctx.progress("swept routes")
        route_dicts = route_sweeps(ctx.plan, vehicle, cs.slices, stations, wanted, roadmap=cs.roadmap,
                                   notes=ctx.notes, pair_drives=pair_drives)
    return findings, route_dicts


def _manoeuvre_part(ctx: CheckContext, cs: SliceStage, routes, reach: dict, cuts: dict,
                    progress: Callable[[str], None] | None):
    """:func:`manoeuvre_stage` with what it changes: findings, swept routes, ``reach``, ``cuts`` and
    the notes it adds (``progress``: where its stage lines go; None: the check's own)."""
    n0 = len(ctx.notes)
    own = ctx.progress
    if progress is not None:
        ctx.progress = progress
    try:
        findings, route_dicts = manoeuvre_stage(ctx, cs, routes, reach=reach, cuts=cuts)
    finally:
        ctx.progress = own
    return findings, route_dicts, reach, cuts, ctx.notes[n0:]


def _drives_apart(ctx: CheckContext, cs: SliceStage, routes) -> bool:
    """Whether the manoeuvre stage goes to a second process: a second process pays
    (:func:`_apart_pays`) and there are drives to plan (a car's manoeuvres, a manoeuvre budget
    or swept routes)."""
    if not _apart_pays(ctx, cs.obstacles, len(cs.cells)):
        return False
    site, vehicle = ctx.site, ctx.vehicle
    pairs = len(ctx.stations) > 1 and (vehicle.mode == "car" or budget_applies(vehicle, site.max_direction_changes))
    return pairs or bool(list(routes if routes is not None else site.routes))


def _manoeuvre_words(ctx: CheckContext) -> str:
    if budget_applies(ctx.vehicle, ctx.site.max_direction_changes) and len(ctx.stations) > 1:
        return f"manoeuvre budget ({budget_text(ctx.site.max_direction_changes)})"
    return "manoeuvres and swept routes"


def _check_route_names(ctx: CheckContext, routes) -> None:
    wanted = list(routes if routes is not None else ctx.site.routes)
    unknown = sorted({n for pair in wanted for n in pair} - set(ctx.station_names))
    if unknown:
        raise SiteError(f"route names a station that is not defined: {', '.join(unknown)}", ctx.site.path,
                        "report.routes")


def run_check(plan: Plan, vehicle: Vehicle, stations: list[Station], *, site: Site | None = None,
              heading_step_deg: float | None = None, workers: int | None = 1,
              progress: Callable[[str], None] | None = None, quick: bool = False,
              routes=None, stations_inside_ok: bool = False) -> CheckResult:
    """Check a site for a vehicle. Stations in the drawing frame (metres, degrees).

    ``quick=True`` finds reachability and blocked places only (no tight spots, no
    turnability map, no no-turn stretches): what sizing needs to name the binding place.
    ``routes``: (from, to) station-name pairs whose drivable path and swept area the report
    draws (default: the site file's ``[report] routes``). ``stations_inside_ok``: a station inside
    an obstacle is a blocked finding (the vehicle does not fit there) instead of bad input, as a
    layout comparison needs.
    """
    site = site or Site()
    validate_stations(plan, stations, site.path, inside_ok=stations_inside_ok)
    ctx = CheckContext.build(plan, vehicle, stations, site, progress or _noop, workers,
                             heading_step_deg if heading_step_deg is not None else site.heading_step_deg)
    cs, clear = space_stages(ctx)
    needed = min_width(vehicle.footprint)
    regions = station_regions(ctx, cs.slices, cs.roadmap)
    places = find_places(ctx, cs.slices, cs.roadmap, clear.field, clear.floor, regions=regions)
    names = ctx.station_names
    st_graph = places.station_regions
    reach = {a: {b: bool(set(st_graph[a]) & set(st_graph[b])) for b in names} for a in names}

    findings = station_fit_findings(ctx, st_graph, needed)
    ctx.progress("pinch points")
    pinches, join_tree = pinch_findings(ctx, cs, clear, places, needed)
    findings += pinches
    cuts = station_pair_cuts(ctx, places, reach, join_tree)
    _check_route_names(ctx, routes)
    if quick:
        return _finish(ctx, findings, cuts, cs, clear, None, needed, reach, {})
    # the station-pair drives need neither the clearance nor the turnability stage (nor they them):
    # on a large site they run on a second process meanwhile (same code, same counted limits)
    apart = _drives_apart(ctx, cs, routes)
    drives = start(_manoeuvre_part, ctx, cs, routes, reach, cuts, _noop if apart else None,
                   workers=ctx.workers if apart else 1)
    try:
        if drives.apart:
            ctx.progress(f"{_manoeuvre_words(ctx)} on a second process, meanwhile:")
        # with the drives on the second core, one process here: a pool would only share that core
        findings += tight_findings(ctx, cs, clear, places, findings, workers=1 if drives.apart else None)
        n_tight = len(ctx.notes)
        if not drives.apart:
            manoeuvres, route_dicts = drives.result()[:2]

        ctx.progress("turnability map")
        map_cell = choose_cell_size(clear.bounds, 0.1, MAP_MAX_CELLS)
        turnability, raster, fits = turnability_map(ctx, cs, clear, map_cell)
        noturn = noturn_findings(ctx, cs, turnability, raster, fits, map_cell)
    except BaseException:          # an error or Ctrl-C here: the drives are not wanted any more
        drives.cancel()
        raise
    if drives.apart:
        ctx.progress(f"waiting for the {_manoeuvre_words(ctx)}")
        n_turn = len(ctx.notes)
        manoeuvres, route_dicts, reach_after, cuts_after, notes = drives.result()
        reach.update(reach_after)
        for key, cut_by in cuts_after.items():
            # the drives only append to a pair's findings: the ones before are this process's own
            # objects (the ids given later must reach them), the rest came back with the findings
            own = cuts.setdefault(key, [])
            own.extend(cut_by[len(own):])
        # the notes in the order one process writes them: clearance, drives, turnability
        ctx.notes[n_tight:] = notes + ctx.notes[n_tight:n_turn]
    findings += manoeuvres
    findings += noturn
    traffic = None
    if site.traffic is not None:
        more, traffic = traffic_stage(ctx, cs, reach, turnability.get("fits"))
        findings += more
    result = _finish(ctx, findings, cuts, cs, clear, map_cell, needed, reach, turnability)
    result.routes = route_dicts
    result.traffic = traffic
    return result


def _finish(ctx: CheckContext, findings, cuts, cs: SliceStage, clear: ClearanceStage, map_cell, needed, reach,
            turnability) -> CheckResult:
    findings = rank_findings(findings)
    cuts_ids = {k: [f.id for f in v] for k, v in cuts.items()}
    site, vehicle = ctx.site, ctx.vehicle
    settings = cs.slices.settings()
    settings.update({
        "vehicle_mode": vehicle.mode, "person_width_m": site.person_width_m,
        "required_clearance_m": site.required_clearance_m,
        "clearance_reference": site.clearance_reference, "raster_cell_m": round(clear.cell, 4),
        "map_cell_m": None if map_cell is None else round(map_cell, 4), "needed_width_m": round(needed, 4),
        "location_tolerance_m": round(3 * clear.cell, 4), "vehicle_height_m": vehicle.height_m,
        # the manoeuvre budget that judged station pairs (differential and car-like vehicles), else None
        "max_direction_changes": site.max_direction_changes if budget_applies(vehicle, site.max_direction_changes)
        else None,
    })
    return CheckResult(plan=ctx.plan, vehicle=vehicle, settings=settings, stations=list(ctx.stations),
                       reachable=reach, findings=findings, cuts=cuts_ids, turnability=turnability, notes=ctx.notes)
