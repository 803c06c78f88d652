"""``floorfit route``: can the vehicle get from one pose to another, and how."""

from __future__ import annotations

from ._common import add_plan_arguments, load_plan_from_args, parse_pose, write_json_atomic

NAME = "route"
HELP = "find a collision-free motion between two poses (x,y in metres, heading in degrees)"
ORDER = 20


def add_arguments(p) -> None:
    add_plan_arguments(p)
    p.add_argument("--vehicle", required=True, metavar="VEHICLE.toml", help="vehicle file")
    p.add_argument("--start", required=True, metavar="X,Y,HEADING", help="start pose (drawing frame, m, deg)")
    p.add_argument("--goal", required=True, metavar="X,Y,HEADING", help="goal pose (drawing frame, m, deg)")
    p.add_argument("--heading-step", type=float, metavar="DEG",
                   help="uniform heading step in degrees (default: chosen from the vehicle size)")
    p.add_argument("--workers", type=int, default=1, metavar="N", help="processes for the slices (default 1)")
    p.add_argument("--json", metavar="OUT.json", help="write the answer as JSON")


def run(args) -> int:
    from ..route import find_route
    from ..vehicle import load_vehicle

    start = parse_pose(args.start, "--start")
    goal = parse_pose(args.goal, "--goal")
    vehicle = load_vehicle(args.vehicle)
    plan = load_plan_from_args(args)
    result = find_route(plan, vehicle, start, goal, heading_step_deg=args.heading_step, workers=args.workers)
    data = result.to_dict()
    data["plan"] = str(args.plan)
    data["vehicle"] = vehicle.describe()
    if args.json:
        write_json_atomic(args.json, data)
    print(format_route(result, vehicle.name))
    return 0 if result.reachable else 1


def format_route(result, vehicle_name: str) -> str:
    """A short human-readable answer."""
    lines = [f"{vehicle_name}: {result.status}"]
    if result.reachable:
        lines.append(f"  {len(result.path)} waypoints, {result.length_m:.2f} m of travel, "
                     f"{result.rotation_deg:.0f}° of rotation")
    if result.stuck:
        s = result.stuck
        lines.append(f"  gets no closer than {s['distance_to_goal_m']:.2f} m to the goal: "
                     f"stuck near x={s['x']:.2f}, y={s['y']:.2f} (heading {s['heading_deg']:.0f}°)")
    for n in result.notes:
        lines.append(f"  note: {n}")
    lines.append(f"  tolerance {result.tolerance_m * 1000:.1f} mm, heading step "
                 f"{result.settings['heading_step_deg']:g}°, {result.settings['headings']} slices")
    return "\n".join(lines)
