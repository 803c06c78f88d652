"""``floorfit route``: can the vehicle get from one pose to another, and how.

Exit codes: 0 reachable (path given), 1 not reachable or a pose in collision (or the answer
is inconclusive), 2 bad input, 3 not found within the search limits (differential and car
vehicles: the holonomic analysis connects the poses, the drive search gave up).
"""

from __future__ import annotations

from floorfit.commands._common import (
    add_cache_argument,
    add_heading_step_argument,
    add_plan_arguments,
    apply_cache_option,
    load_plan_from_args,
    parse_pose,
    write_json_atomic,
)

NAME = "route"
HELP = "find a collision-free motion between two poses (x,y in metres, heading in degrees)"
ORDER = 20

#: Exit code when a drive search gives up within its limits.
EXIT_NOT_FOUND_WITHIN_LIMITS = 3
#: Segments listed one per line up to this many; longer paths get a count by type.
MAX_LISTED_SEGMENTS = 12


def add_arguments(p) -> None:
    add_plan_arguments(p)
    p.add_argument("--vehicle", required=True, metavar="VEHICLE.toml", help="vehicle file")
    p.add_argument("--start", required=True, metavar="X,Y,HEADING", help="start pose (drawing frame, m, deg)")
    p.add_argument("--goal", required=True, metavar="X,Y,HEADING", help="goal pose (drawing frame, m, deg)")
    add_heading_step_argument(p)
    p.add_argument("--workers", type=int, default=None, metavar="N",
                   help="processes for the slices (default: all cores; the answer is the same for any number)")
    p.add_argument("--max-expansions", type=int, metavar="N",
                   help="car search: node expansions before giving up (default 30000)")
    p.add_argument("--time-limit", type=float, metavar="S",
                   help="car search: seconds before giving up (default 30)")
    p.add_argument("--json", metavar="OUT.json", help="write the answer as JSON")
    p.add_argument("--quiet", action="store_true", help="no progress output")
    p.add_argument("--full-slices", action="store_true",
                   help="build the slices for the whole drawing at the heading step at once instead of first "
                        "near start and goal, then at a coarse step")
    add_cache_argument(p)


def _check_inside(plan, vehicle, start, goal) -> None:
    """Refuse a start or goal outside the floor the slices cover (the drawing's extent grown by the
    vehicle radius and 1 m), naming the likely unit when the pose looks like millimetres or inches."""
    from floorfit.cspace.slices import DOMAIN_PAD_M
    from floorfit.errors import InputError
    from floorfit.plan.stations import outside_drawing

    for flag, pose in (("--start", start), ("--goal", goal)):
        msg = outside_drawing(plan, pose[0], pose[1], vehicle.radius_m + DOMAIN_PAD_M)
        if msg is not None:
            raise InputError(f"{flag[2:]} pose {msg}", None, flag)


def _limits(args):
    from dataclasses import replace

    from floorfit.errors import InputError
    from floorfit.motion.drivable import DriveLimits

    limits = DriveLimits()
    if args.max_expansions is not None:
        if args.max_expansions < 1:
            raise InputError(f"must be a whole number ≥ 1, got {args.max_expansions}", None, "--max-expansions")
        limits = replace(limits, max_expansions=args.max_expansions)
    if args.time_limit is not None:
        if not args.time_limit > 0:
            raise InputError(f"must be a positive number of seconds, got {args.time_limit:g}", None, "--time-limit")
        limits = replace(limits, time_limit_s=args.time_limit)
    return limits


def run(args) -> int:
    from floorfit.cspace.roadmap import build_roadmap
    from floorfit.cspace.sizelimits import check_problem_size
    from floorfit.cspace.slicepool import pool_size
    from floorfit.cspace.slices import build_slices, cached_share, choose_headings, obstacles_for
    from floorfit.motion.coarse_route import settle_coarse
    from floorfit.motion.route_query import (
        COARSE_FINAL,
        NOT_FOUND_WITHIN_LIMITS,
        coarse_cells,
        coarse_note,
        find_route,
    )
    from floorfit.report.progress import Progress
    from floorfit.vehicles.rigid import load_vehicle

    start = parse_pose(args.start, "--start")
    goal = parse_pose(args.goal, "--goal")
    limits = _limits(args)
    vehicle = load_vehicle(args.vehicle)
    cache = apply_cache_option(args)
    progress = Progress(quiet=getattr(args, "quiet", False))
    plan = load_plan_from_args(args)
    _check_inside(plan, vehicle, start, goal)
    # after reading, so that bad input still gives one line on standard error
    progress.stage(f"drawing read: {plan.obstacle_count} obstacles")
    # the slices find_route would build (start and goal headings get slices of their own),
    # built here so that each stage can be reported
    cells = choose_headings(plan, vehicle, heading_step_deg=args.heading_step, extra_headings=(start[2], goal[2]))
    full = getattr(args, "full_slices", False)
    window = None if full else _lazy_window(plan, vehicle, start, goal)
    obstacles = None
    cached_whole = False
    if window is not None and cache is not None:
        # slices of the whole drawing mostly in the cache (a check ran before): reuse them instead
        obstacles = obstacles_for(plan, vehicle)
        cached_whole = cached_share(plan, vehicle, cells, obstacles) >= LAZY_CACHED_SHARE
        window = None if cached_whole else window
    result = slices = None
    if window is not None:
        # the slices near start and goal first: a route found there is a route in the plan
        progress.stage(f"slices near start and goal: {len(cells)} headings")
        slices = build_slices(plan, vehicle, cells=cells, workers=args.workers, window=window,
                              progress=progress.update)
        progress.stage(f"roadmap and route search near start and goal ({slices.workers_used or 1} "
                       f"process{'es' if slices.workers_used > 1 else ''} for the slices)")
        result = find_route(plan, vehicle, start, goal, heading_step_deg=args.heading_step, workers=args.workers,
                            limits=limits, slices=slices, roadmap=build_roadmap(slices), check_optimistic=False)
        if result.status not in LAZY_FINAL:
            result = None          # not settled near the poses: the whole drawing decides
    coarse = None if args.heading_step is not None or cached_whole or full \
        else coarse_cells(plan, vehicle, (start[2], goal[2]))
    if result is None:
        # the whole drawing's slices follow: refuse a run too large, with advice that works
        check_problem_size(plan, len(cells), slices_for_step=lambda step: len(choose_headings(
            plan, vehicle, heading_step_deg=step, extra_headings=(start[2], goal[2]))),
            keep=[plan.to_local(start[0], start[1]), plan.to_local(goal[0], goal[1])])

    def whole_drawing(heading_cells, what: str):
        """The slices of the whole drawing for ``heading_cells``, announced as ``what``."""
        nonlocal obstacles
        obstacles = obstacles if obstacles is not None else obstacles_for(plan, vehicle)
        processes = pool_size(obstacles, len(heading_cells), args.workers)
        progress.stage(f"{what}: {len(heading_cells)} headings on {processes} process{'es' if processes > 1 else ''}")
        return build_slices(plan, vehicle, cells=heading_cells, workers=args.workers, obstacles=obstacles,
                            progress=progress.update)

    if result is None and coarse is not None:
        # coarse slices of the whole drawing: a route found on them is a route
        slices = whole_drawing(coarse, f"slices at a coarse {coarse.step_deg:g}° step first")
        progress.stage("roadmap and route search on the coarse slices")
        result = find_route(plan, vehicle, start, goal, workers=args.workers, limits=limits, slices=slices,
                            roadmap=build_roadmap(slices), check_optimistic=False)
        window = None
        if result.status in COARSE_FINAL:
            result.notes.append(coarse_note(slices))
        elif result.status == "unreachable":
            # the coarse optimistic slices may settle it, or a refinement at the pinch points
            settled = settle_coarse(plan, vehicle, start, goal, slices, result, search=find_route,
                                    workers=args.workers, limits=limits, progress=progress.stage)
            result, slices = settled if settled is not None else (None, slices)
        else:
            result = None          # the default step decides
    if result is None:
        slices = whole_drawing(cells, "slices")
        progress.stage("roadmap")
        roadmap = build_roadmap(slices)
        progress.stage("route search (a failed search also builds the optimistic slices)")
        result = find_route(plan, vehicle, start, goal, heading_step_deg=args.heading_step, workers=args.workers,
                            limits=limits, slices=slices, roadmap=roadmap)
        window = None
    progress.done()
    data = result.to_dict()
    data["plan"] = str(args.plan)
    data["vehicle"] = vehicle.describe()
    if args.json:
        write_json_atomic(args.json, data)
    print(format_route(result, vehicle.name))
    print(_slices_line(slices, cache, window, plan))
    if result.reachable:
        return 0
    return EXIT_NOT_FOUND_WITHIN_LIMITS if result.status == NOT_FOUND_WITHIN_LIMITS else 1


#: Answers the slices near start and goal settle (any other answer is decided on the whole drawing).
LAZY_FINAL = ("reachable", "start-blocked", "goal-blocked")
#: The window around start and goal reaches this far beyond them, metres (plus the vehicle's radius).
LAZY_MARGIN_M = 3.0
#: A window covering more than this share of the whole slice domain is not worth a first try.
LAZY_MAX_SHARE = 0.5
#: When the disk cache holds at least this share of the whole drawing's slices, those are used.
LAZY_CACHED_SHARE = 0.5


def _lazy_window(plan, vehicle, start, goal):
    """The rectangle (local frame, metres) around start and goal whose slices are tried first, or None."""
    from floorfit.cspace.incremental import obstacles_bounds
    from floorfit.cspace.slices import slice_domain

    (sx, sy), (gx, gy) = plan.to_local(start[0], start[1]), plan.to_local(goal[0], goal[1])
    pad = LAZY_MARGIN_M + vehicle.radius_m
    win = (min(sx, gx) - pad, min(sy, gy) - pad, max(sx, gx) + pad, max(sy, gy) + pad)
    domain = slice_domain(obstacles_bounds(plan, vehicle), vehicle)
    x0, y0, x1, y1 = domain.bounds
    cut = (max(win[0], x0), max(win[1], y0), min(win[2], x1), min(win[3], y1))
    if cut[0] >= cut[2] or cut[1] >= cut[3] or vehicle.mode == "fixed":
        return None
    if (cut[2] - cut[0]) * (cut[3] - cut[1]) > LAZY_MAX_SHARE * domain.area:
        return None
    return cut


def _slices_line(slices, cache: str | None, window=None, plan=None) -> str:
    """Where the slices came from: built (on how many processes, for which part of the drawing), kept
    from the coarse slices a refined set grew from, or read from the disk cache."""
    computed = len(set(int(t) for t in slices.twins)) if slices.twins is not None else len(slices)
    built = computed - slices.reused - slices.kept
    text = f"  slices: {built} built" + (f" on {slices.workers_used} processes" if slices.workers_used > 1 else "")
    if slices.kept:
        text += f", {slices.kept} kept from the coarse slices"
    if window is not None:
        (ax, ay), (bx, by) = plan.to_drawing(window[0], window[1]), plan.to_drawing(window[2], window[3])
        text += (f" for x {ax:.1f} .. {bx:.1f} m, y {ay:.1f} .. {by:.1f} m around start and goal only, which settled "
                 f"the answer (--full-slices builds them for the whole drawing)")
    if cache is None:
        return text + ", disk cache off"
    return text + f", {slices.reused} reused from the disk cache {cache} (--no-cache to rebuild)"


def format_segment(seg: dict) -> str:
    """One line for a segment dict of :class:`floorfit.motion.route_query.RouteResult` (metres, degrees)."""
    if seg["type"] == "rotate":
        a = seg["angle_deg"]
        return f"rotate in place {a:+.1f}°" if abs(a) >= 0.95 else f"rotate in place {a:+.3f}°"
    if seg["type"] == "straight":
        return f"straight {seg['direction']} {seg['length_m']:.2f} m"
    side = "left" if (seg["angle_deg"] > 0) == (seg["direction"] == "forward") else "right"
    return (f"arc {seg['direction']} {seg['length_m']:.2f} m, centre on the {side}, heading {seg['angle_deg']:+.1f}°, "
            f"radius {seg['radius_m']:.2f} m")


def format_route(result, vehicle_name: str) -> str:
    """A short human-readable answer."""
    lines = [f"{vehicle_name}: {result.status}"]
    if result.reachable:
        lines.append(f"  {len(result.path)} waypoints, {result.length_m:.2f} m of travel, "
                     f"{result.rotation_deg:.0f}° of rotation")
    if result.segments:
        changes = result.direction_changes
        lines.append(f"  {len(result.segments)} segment{'s' if len(result.segments) != 1 else ''}, "
                     f"{changes} direction change{'s' if changes != 1 else ''} (forward/reverse)")
        if len(result.segments) <= MAX_LISTED_SEGMENTS:
            lines.extend(f"    {i}. {format_segment(s)}" for i, s in enumerate(result.segments, 1))
        else:
            counts: dict[str, int] = {}
            for s in result.segments:
                counts[s["type"]] = counts.get(s["type"], 0) + 1
            lines.append("    " + ", ".join(f"{n} {t}" for t, n in sorted(counts.items())))
    if result.stuck:
        s = result.stuck
        lines.append(f"  gets no closer than {s['distance_to_goal_m']:.2f} m to the goal: "
                     f"stuck near x={s['x']:.2f}, y={s['y']:.2f} (heading {s['heading_deg']:.0f}°)")
    for n in result.notes:
        lines.append(f"  note: {n}")
    lines.append(f"  tolerance {result.tolerance_m * 1000:.1f} mm, heading step "
                 f"{result.settings['heading_step_deg']:g}°, {result.settings['headings']} slices")
    return "\n".join(lines)
