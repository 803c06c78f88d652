"""``floorfit size``: the largest vehicle the layout still serves, and what limits it.

Also holds the input helpers that ``compare`` shares (vehicle, site, stations).
"""

from __future__ import annotations

import time
from pathlib import Path

from floorfit.commands._common import (
    add_budget_argument,
    add_cache_argument,
    add_heading_step_argument,
    add_plan_arguments,
    apply_cache_option,
    load_plan_from_args,
    parse_floats,
    site_with_budget,
    write_json_atomic,
)

NAME = "size"
HELP = ("find the largest width, length or scale of the vehicle for which every station pair stays "
        "connected, and the pinch point that limits it")
ORDER = 20

__all__ = ["NAME", "HELP", "ORDER", "add_arguments", "run", "add_station_arguments", "read_site_and_vehicle",
           "stations_for"]


def add_station_arguments(p) -> None:
    """``--vehicle``, ``--site``, ``--station``, ``--heading-step``, ``--max-direction-changes``, ``--workers``,
    ``--quiet``."""
    p.add_argument("--vehicle", required=True, metavar="VEHICLE.toml", help="vehicle file")
    p.add_argument("--site", metavar="SITE.toml", help="site file: stations, layer roles, heading step")
    p.add_argument("--station", action="append", default=[], metavar="NAME=X,Y[,HEADING]",
                   help="a station (drawing frame, metres; heading in degrees if docking); repeatable")
    add_heading_step_argument(p)
    add_budget_argument(p)
    p.add_argument("--workers", type=int, default=None, metavar="N",
                   help="processes for the slices (default: all cores; the answer is the same for any number)")
    p.add_argument("--quiet", action="store_true", help="no progress output")
    add_cache_argument(p)


def read_site_and_vehicle(args):
    """(site, vehicle, station flags) from the common arguments."""
    from floorfit.plan.site import Site, parse_station_flag, read_site
    from floorfit.vehicles.rigid import load_vehicle

    site = site_with_budget(read_site(args.site) if args.site else Site(), args)
    flags = [parse_station_flag(s) for s in args.station]
    return site, load_vehicle(args.vehicle), flags


def stations_for(plan_path, plan, site, flags) -> list:
    """Stations of one drawing: the site file's, those on its station layer, then the
    ``--station`` flags (which replace stations of the same name)."""
    from floorfit.plan.site import stations_from_drawing

    stations = list(site.stations)
    if site.station_layer:
        stations += stations_from_drawing(plan_path, site.station_layer, plan.metres_per_unit)
    given = {s.name for s in flags}
    return [s for s in stations if s.name not in given] + list(flags)


def add_arguments(p) -> None:
    add_plan_arguments(p)
    add_station_arguments(p)
    p.add_argument("--vary", required=True, choices=("width", "length", "scale"),
                   help="the outline dimension to vary (scale: the whole outline about the reference point)")
    p.add_argument("--precision", type=float, default=0.01, metavar="M",
                   help="bisection precision, metres (default 0.01)")
    p.add_argument("--max", type=float, metavar="M", dest="max_m",
                   help="largest value to try, metres (default: the drawing's diagonal)")
    p.add_argument("--json", metavar="OUT.json", help="write the answer as JSON")


def run(args) -> int:
    from floorfit.analysis.sizing import size_vehicle
    from floorfit.errors import InputError
    from floorfit.report import Progress

    if args.max_m is not None:
        parse_floats(str(args.max_m), 1, "--max")
        if args.max_m <= 0:
            raise InputError(f"--max must be positive, got {args.max_m:g}", None, "--max")
    site, vehicle, flags = read_site_and_vehicle(args)
    apply_cache_option(args)
    progress = Progress(quiet=args.quiet)
    started = time.monotonic()
    progress.stage("reading the drawing")
    plan = load_plan_from_args(args, roles=site.roles)
    stations = stations_for(args.plan, plan, site, flags)
    result = size_vehicle(plan, vehicle, stations, vary=args.vary, site=site, heading_step_deg=args.heading_step,
                          precision_m=args.precision, max_m=args.max_m, workers=args.workers,
                          progress=progress.stage)
    progress.done()
    if args.json:
        write_json_atomic(args.json, result.to_dict())
    print(f"{'FITS' if result.fits_now else 'DOES NOT FIT'}: {vehicle.name} in {Path(str(args.plan)).name} — "
          f"{result.summary()}")
    for note in result.notes:
        print(f"  note: {note}")
    bracket = ""
    if result.upper_m is not None:
        bracket = f"; the true limit lies below {result.upper_m:.3f} m (optimistic bound)"
    print(f"  precision {result.precision_m:g} m, geometry within {result.tolerance_m * 1000:.0f} mm at "
          f"{result.heading_step_deg:g}° heading steps (sound bound: errs low){bracket}; monotone: "
          f"{result.monotone}; {result.evaluations} evaluations in {time.monotonic() - started:.1f} s")
    if result.max_direction_changes is not None:
        n = result.max_direction_changes
        print(f"  judged by drivable paths within {n} direction change{'s' if n != 1 else ''} per station pair "
              f"(--max-direction-changes)")
    if args.json:
        print(f"json: {args.json}")
    return 0 if result.fits_now else 1
