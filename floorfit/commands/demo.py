"""``floorfit demo``: write the bundled invented site and run the whole check on it."""

from __future__ import annotations

import argparse
from pathlib import Path

NAME = "demo"
HELP = "write the bundled demo site (invented) and run route queries and the full check on it"
ORDER = 5


def add_arguments(p) -> None:
    p.add_argument("--out", default=".", metavar="DIR",
                   help="folder for plans/ (the demo drawing) and reports/demo/ (default: current folder)")
    p.add_argument("--quiet", action="store_true", help="no progress output")


def run(args) -> int:
    from floorfit.commands.check import check_and_report, summary_text
    from floorfit.commands.route import format_route
    from floorfit.demo import DEMO_ROUTES, write_demo_site
    from floorfit.motion.route_query import find_route
    from floorfit.plan.dxf import load_plan
    from floorfit.plan.site import read_site
    from floorfit.vehicles.rigid import load_vehicle

    out = Path(args.out)
    paths = write_demo_site(out / "plans")
    print(f"demo site (invented): {paths['plan']}")
    site = read_site(paths["site"])
    plan = load_plan(paths["plan"], roles=site.roles)
    vehicle = load_vehicle(paths["vehicle"])
    print(f"vehicle: {vehicle.name}, {vehicle.length_m:.2f} × {vehicle.width_m:.2f} m, "
          f"margin {vehicle.margin_m:.2f} m, {vehicle.mode}")
    print()
    for a, b, start, goal in DEMO_ROUTES:
        r = find_route(plan, vehicle, start, goal)
        print(f"route {a} → {b}: " + format_route(r, vehicle.name).split(": ", 1)[1])
    print()
    ns = argparse.Namespace(plan=str(paths["plan"]), units=None, window=None, vehicle=str(paths["vehicle"]),
                            site=str(paths["site"]), station=[], out=str(out / "reports" / "demo"), force=True,
                            heading_step=None, workers=1, quiet=args.quiet, loaded=False, sweep=[])
    result, written = check_and_report(ns)
    print(summary_text(result, written))
    return 0
