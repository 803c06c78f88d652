"""``floorfit tow``: can a tractor with a cart drive a route forward, where does the cart cut in,
how long may the cart be, and how much floor does it need to turn round.

Exit codes: 0 passable, 1 not passable (a route that collides, or a search that searched every
cell reachable forward at its resolution: no forward path exists at this resolution), 2 bad
input, 3 the search with --start/--goal gave up at --max-expansions or --time-limit (nothing
proves it impossible).
"""

from __future__ import annotations

import math
from dataclasses import replace

from floorfit.commands._common import (
    add_plan_arguments,
    load_plan_from_args,
    parse_floats,
    parse_pose,
    write_json_atomic,
)
from floorfit.errors import InputError

NAME = "tow"
HELP = ("a tractor towing a cart: drive a route forward (or search one), off-tracking, jack-knife, "
        "longest cart, turn-around circle")
ORDER = 30

#: Exit code when the search with --start/--goal gave up at a limit (nothing proves it impossible).
EXIT_NOT_FOUND_WITHIN_LIMITS = 3


def add_arguments(p) -> None:
    add_plan_arguments(p)
    p.add_argument("--vehicle", required=True, metavar="TRAIN.toml",
                   help="train file: a vehicle file with a [cart] table (hitch, tongue, max_hitch_angle)")
    p.add_argument("--route", nargs="+", metavar="X,Y,HEADING",
                   help="poses the tractor drives through forward, in order (drawing frame, m, deg); "
                        "also 'X,Y,H;X,Y,H' in one argument (use --route='-1,2,0;...' for negative values)")
    p.add_argument("--start", metavar="X,Y,HEADING", help="start pose, cart in line behind (instead of --route)")
    p.add_argument("--goal", metavar="X,Y[,HEADING]", help="goal of the tractor's reference point (with --start)")
    p.add_argument("--turn-radius", type=float, metavar="M",
                   help="radius of the curves between route poses (default: the smallest the train can hold)")
    p.add_argument("--time-limit", type=float, default=30.0, metavar="S",
                   help="time limit of the search with --start/--goal, seconds (default 30)")
    p.add_argument("--max-expansions", type=int, metavar="N",
                   help="states the search with --start/--goal may expand before giving up (default 20000)")
    p.add_argument("--json", metavar="OUT.json", help="write the answer as JSON")


# the tow command end to end: route or search, then verdict, cart sizing and turn circle, into one answer
def run(args) -> int:  # noqa: C901
    from floorfit.articulated import (
        SearchSettings,
        TrainChecker,
        default_turn_radius,
        explain_blocked,
        follow,
        judge_motion,
        largest_cart_length,
        load_train,
        off_tracking_m,
        path_through,
        plan_forward,
        turn_circle,
    )

    if bool(args.route) == bool(args.start or args.goal):
        raise InputError("give either --route X,Y,H X,Y,H ... or --start X,Y,H with --goal X,Y[,H]", None, "--route")
    if args.start and not args.goal or args.goal and not args.start:
        raise InputError("--start and --goal go together", None, "--start")
    if args.time_limit is not None and not (args.time_limit > 0 and math.isfinite(args.time_limit)):
        raise InputError(f"time limit must be a positive number of seconds, got {args.time_limit!r}", None,
                         "--time-limit")
    max_exp = getattr(args, "max_expansions", None)
    if max_exp is not None and max_exp < 1:
        raise InputError(f"must be a whole number ≥ 1, got {max_exp}", None, "--max-expansions")
    train = load_train(args.vehicle)
    route = None
    if args.route:
        texts = [part for text in args.route for part in str(text).split(";") if part.strip()]
        route = [parse_pose(text.strip(), "--route") for text in texts]
    start = parse_pose(args.start, "--start") if args.start else None
    goal = parse_floats(args.goal, (2, 3), "--goal") if args.goal else None
    if route is not None and len(route) < 2:
        raise InputError("a route needs at least two poses", None, "--route")
    plan = load_plan_from_args(args)
    settings = SearchSettings(time_limit_s=args.time_limit)
    if max_exp is not None:
        settings = replace(settings, max_expansions=max_exp)
    gave_up = False
    checker = TrainChecker(plan, train, settings.tolerance_m)
    data: dict = {"plan": str(args.plan), "train": train.describe(), "tolerance_m": round(checker.grow_m, 4),
                  "reversing": "not supported: the train drives forward only"}
    lines = [f"{train.name}: tractor {train.tractor.length_m:.2f} × {train.tractor.width_m:.2f} m, cart "
             f"{train.cart_length_m:.2f} × {train.cart_width_m:.2f} m on a {train.tongue_m:.2f} m tongue "
             f"({'on' if train.on_axle else 'off'}-axle hitch), hitch limit {train.max_hitch_deg:g}°"]
    segments = None
    if route is not None:
        radius = args.turn_radius if args.turn_radius is not None else default_turn_radius(train)
        local = [(*plan.to_local(x, y), math.radians(h)) for x, y, h in route]
        segments = path_through(local, radius, train=train)
        data["mode"] = "route"
        data["turn_radius_m"] = round(radius, 4)
        lines.append(f"  route through {len(route)} poses, forward, curves of radius {radius:.2f} m")
        start_pose = local[0]
    else:
        s_loc = (*plan.to_local(start[0], start[1]), math.radians(start[2]))
        g_loc = (*plan.to_local(goal[0], goal[1]), math.radians(goal[2]) if len(goal) == 3 else None)
        res = plan_forward(checker, [s_loc], g_loc, settings=settings)
        data["mode"] = "search"
        data["search"] = {"status": res.status, "reason": res.reason, "expansions": res.expansions,
                          "elapsed_s": round(res.elapsed_s, 3), "settings": res.settings,
                          "stopped_by": res.stopped_by or None}
        start_pose = s_loc
        if res.found:
            segments = res.segments
            lines.append(f"  forward path found ({res.expansions} states searched, {res.elapsed_s:.1f} s)")
        elif res.status != "not-found-within-limits":
            lines.append(f"  {res.status}: {res.reason}")
        else:
            ex = explain_blocked(checker, [s_loc], g_loc, settings=settings)
            if ex.passes and ex.tractor_line is not None:
                segments = ex.tractor_line.segments
                lines.append("  forward path found (the cart follows the tractor's own line)")
            else:
                dx, dy = plan.to_drawing(ex.x, ex.y)
                data["blocked"] = {"cause": ex.cause, "x": round(dx, 4), "y": round(dy, 4),
                                   "depth_m": round(ex.depth_m, 4), "clearance_m": ex.clearance_m,
                                   "hitch_angle_deg": round(ex.hitch_angle_deg, 2)}
                if res.gave_up:
                    gave_up = True
                    flag = "--max-expansions" if res.stopped_by == "max_expansions" else "--time-limit"
                    lines.append(f"  not found within the search limits: {res.reason}; no obstacle proves it "
                                 f"impossible, a larger {flag} may find a path")
                else:
                    lines.append(f"  NOT passable forward: no forward path exists at this resolution "
                                 f"({res.reason})")
                lines.append(_explain_line(ex, dx, dy, train))
    passable = False
    if segments:
        motion = follow(segments, train, cart_heading=start_pose[2], tolerance_m=checker.tolerance_m)
        v = judge_motion(checker, motion)
        passable = v.passable
        ot = off_tracking_m(motion)
        data.update({"passable": v.passable, "length_m": round(float(motion.travel_m[-1]), 4),
                     "max_hitch_angle_deg": round(v.hitch_angle_deg, 3), "off_tracking_m": round(ot, 4)})
        path = motion.tractor_deg()[:: max(1, len(motion) // 400)]
        path[:, 0] += plan.origin[0]
        path[:, 1] += plan.origin[1]
        data["path"] = [[round(float(x), 4), round(float(y), 4), round(float(h), 3)] for x, y, h in path]
        if v.passable:
            lines.append(f"  passable forward: {motion.travel_m[-1]:.2f} m, largest hitch angle "
                         f"{v.hitch_angle_deg:.0f}° (limit {train.max_hitch_deg:g}°), cart wheels up to {ot:.2f} m "
                         f"inside the hitch's track")
        else:
            dx, dy = plan.to_drawing(v.x, v.y)
            data["blocked"] = {"cause": v.problem, "x": round(dx, 4), "y": round(dy, 4),
                               "depth_m": round(v.depth_m, 4), "clearance_m": v.clearance_m}
            lines.append(f"  NOT passable: {_verdict_text(v, train)} at ({dx:.2f}, {dy:.2f}) m")
        if route is not None:
            size = largest_cart_length(plan, train, segments, checker=checker)
            data["largest_cart"] = size.to_dict()
            if size.tongue_m > 0:
                lines.append(f"  longest cart for this route: tongue {size.tongue_m:.2f} m (±{size.precision_m:g} m; "
                             f"cart {size.cart_length_m:.2f} m long), now {train.tongue_m:.2f} m")
            else:
                lines.append("  no cart length passes this route")
            lines.extend(f"  note: {n}" for n in size.notes)
    try:
        circle = turn_circle(train, tolerance_m=settings.tolerance_m)
        data["turn_circle"] = circle.to_dict()
        lines.append(f"  to turn round forward it needs a clear circle of radius {circle.outer_m:.2f} m "
                     f"(tractor reference on radius {circle.radius_m:.2f} m, settled hitch angle "
                     f"{abs(circle.hitch_angle_deg):.0f}°)")
    except InputError as exc:
        lines.append(f"  no forward loop: {exc.message}")
    lines.append(f"  geometry within {checker.grow_m * 100:.1f} cm (sampled motion, footprints grown: errs towards "
                 f"'does not pass'); reversing with a cart is not supported")
    data["passable"] = passable
    data["status"] = "passable" if passable else ("not-found-within-limits" if gave_up else "not-passable")
    if args.json:
        write_json_atomic(args.json, data)
    print("\n".join(lines))
    if passable:
        return 0
    return EXIT_NOT_FOUND_WITHIN_LIMITS if gave_up else 1


def _verdict_text(v, train) -> str:
    if v.problem == "cart":
        return (f"the cart hits, the obstacle reaching {v.depth_m:.2f} m into it" if v.depth_m > 0 else
                f"the cart comes within {v.clearance_m or 0.0:.3f} m of an obstacle (below the tolerance)")
    if v.problem == "tractor":
        return (f"the tractor hits, the obstacle reaching {v.depth_m:.2f} m into it" if v.depth_m > 0 else
                f"the tractor comes within {v.clearance_m or 0.0:.3f} m of an obstacle (below the tolerance)")
    if v.problem == "jack-knife":
        return f"jack-knife: the hitch angle passes its {train.max_hitch_deg:g}° limit"
    return "the cart would be pushed backwards (reversing with a cart is not supported)"


def _explain_line(ex, dx: float, dy: float, train) -> str:
    if ex.cause in ("off-tracking", "cart-width"):
        what = "cuts inside the corner" if ex.cause == "off-tracking" else "does not fit"
        amount = f"by {ex.depth_m:.2f} m" if ex.depth_m > 0 else f"(within {ex.clearance_m or 0.0:.3f} m)"
        return f"  on the tractor's own forward line the cart {what} {amount} at ({dx:.2f}, {dy:.2f}) m"
    if ex.cause == "jack-knife":
        return (f"  on the tractor's own forward line the hitch angle reaches {ex.hitch_angle_deg:.0f}° "
                f"(limit {train.max_hitch_deg:g}°) at ({dx:.2f}, {dy:.2f}) m")
    if ex.cause == "forward":
        return "  the tractor alone finds no forward path either (it would have to reverse)"
    return f"  the tractor itself hits at ({dx:.2f}, {dy:.2f}) m"
