"""``floorfit check``: the whole site check with findings, turnability map and report."""

from __future__ import annotations

from pathlib import Path

from floorfit.commands._common import (
    add_budget_argument,
    add_cache_argument,
    add_heading_step_argument,
    add_plan_arguments,
    apply_cache_option,
    check_output_first,
    load_plan_from_args,
    site_with_budget,
)

NAME = "check"
HELP = "check a site for a vehicle: stations, pinch points, no-turn stretches, clearance; writes a report"
ORDER = 10


def add_arguments(p) -> None:
    add_plan_arguments(p)
    p.add_argument("--vehicle", required=True, metavar="VEHICLE.toml", help="vehicle file")
    p.add_argument("--site", metavar="SITE.toml", help="site file: stations, layer roles, clearance")
    p.add_argument("--station", action="append", default=[], metavar="NAME=X,Y[,HEADING]",
                   help="a station (drawing frame, metres; heading in degrees if docking); repeatable")
    p.add_argument("--out", default="floorfit-report", metavar="DIR", help="output folder (default ./floorfit-report)")
    p.add_argument("--force", action="store_true", help="write into a folder that holds other files")
    add_heading_step_argument(p)
    add_budget_argument(p)
    p.add_argument("--workers", type=int, default=None, metavar="N",
                   help="processes for the slices (default: all cores; the answer is the same for any number)")
    p.add_argument("--sweep", action="append", default=[], metavar="FROM:TO",
                   help="draw the drivable path and swept area between two stations; repeatable")
    p.add_argument("--loaded", action="store_true", help="use the vehicle file's [loaded] outline and height")
    p.add_argument("--traffic", action="append", nargs="?", const="", default=None, metavar="VEHICLE.toml",
                   help="check fleet traffic: where the vehicle can pass another one (this vehicle file; "
                        "without a file, another vehicle like the checked one); repeatable; adds to [traffic]")
    p.add_argument("--traffic-gap", type=float, metavar="M",
                   help="metres kept between two vehicles passing each other (default 0.45, B56.5 §4.7.4)")
    p.add_argument("--one-way", action="store_true",
                   help="aisles may be run one way: single-lane stretches on a loop are no finding")
    p.add_argument("--no-traffic", action="store_true", help="skip the site file's [traffic] check")
    p.add_argument("--quiet", action="store_true", help="no progress output")
    add_cache_argument(p)
    p.add_argument("--revision", metavar="REV", help="revision on the report (overrides the site file's [project])")
    p.add_argument("--paper", choices=("a4", "letter", "a3"), default="a4", help="paper of report.pdf (default a4)")


def run(args) -> int:
    result, written = check_and_report(args)
    print(summary_text(result, written))
    return 0 if result.passed else 1


def check_and_report(args):
    """Shared by ``check`` and ``demo``: read inputs, run the check, write the report."""
    from floorfit.analysis.check import run_check
    from floorfit.errors import InputError
    from floorfit.plan.site import (
        DOOR_OPEN_NOTE,
        Site,
        apply_height_ranges,
        close_doors,
        parse_station_flag,
        read_site,
        stations_from_drawing,
    )
    from floorfit.report import Progress, write_report
    from floorfit.vehicles.loading import split_vehicle_file

    # an output folder the writer would refuse is refused now, not after the whole computation
    check_output_first(args.out, args.force, args.plan, args.vehicle, getattr(args, "site", None))
    site = site_with_budget(_traffic_options(read_site(args.site) if args.site else Site(), args), args)
    extra = [parse_station_flag(s) for s in args.station]
    from floorfit.articulated import articulated_check, merge_into_result

    state = "loaded" if getattr(args, "loaded", False) else "default"
    vehicle, train = split_vehicle_file(args.vehicle, state=state)
    apply_cache_option(args)
    progress = Progress(quiet=args.quiet)
    progress.stage("reading the drawing")
    plan = close_doors(apply_height_ranges(load_plan_from_args(args, roles=site.roles), site.heights),
                       site.closed_doors)
    stations = list(site.stations)
    if site.station_layer:
        stations += stations_from_drawing(args.plan, site.station_layer, plan.metres_per_unit)
    given = {s.name for s in extra}
    stations = [s for s in stations if s.name not in given] + extra
    sweeps = None
    if getattr(args, "sweep", None):
        sweeps = list(site.routes)
        for text in args.sweep:
            a, sep, b = text.partition(":")
            if not sep or not a.strip() or not b.strip():
                raise InputError(f"--sweep must be FROM:TO station names, got '{text}'", None, "--sweep")
            sweeps.append((a.strip(), b.strip()))
    result = run_check(plan, vehicle, stations, site=site, heading_step_deg=args.heading_step,
                       workers=args.workers, progress=progress, routes=sweeps)
    if train is not None:      # a tractor with a cart: the train must follow forward
        tc = articulated_check(plan, train, stations, site, reachable=result.reachable,
                               progress=progress.stage, floor=result.turnability.get("fits"))
        merge_into_result(result, tc)
    if isinstance(plan.model, dict) and plan.model.get("format") == "ifc":
        result.notes.insert(0, DOOR_OPEN_NOTE)
    progress.done()
    project = dict(site.project)
    if getattr(args, "revision", None):
        project["revision"] = args.revision
    written = write_report(result, args.out, force=args.force, quiet=args.quiet, project=project,
                           paper=getattr(args, "paper", "a4"), workers=args.workers)
    return result, written


def _traffic_options(site, args):
    """The site with the command line's traffic options applied (they add to or override [traffic])."""
    from dataclasses import replace

    from floorfit.errors import InputError
    from floorfit.plan.site import Traffic

    if getattr(args, "no_traffic", False):
        return replace(site, traffic=None)
    files = getattr(args, "traffic", None)
    gap = getattr(args, "traffic_gap", None)
    one_way = getattr(args, "one_way", False)
    if files is None and gap is None and not one_way:
        return site
    traffic = site.traffic or Traffic()
    if files:
        traffic = replace(traffic, vehicles=traffic.vehicles + tuple(f for f in files if f))
    if gap is not None:
        if not (0.0 <= gap <= 10.0):
            raise InputError(f"--traffic-gap must be between 0 and 10 metres, got {gap:g}", None, "--traffic-gap")
        traffic = replace(traffic, gap_m=gap, gap_reference="command line")
    if one_way:
        traffic = replace(traffic, one_way=True)
    return replace(site, traffic=traffic)


def summary_text(result, written) -> str:
    lines = []
    verdict = "PASS" if result.passed else "FAIL"
    n = len(result.stations)
    from floorfit.analysis.findings import pairs_text

    bad, total = result.station_pairs()
    lines.append(f"{verdict}: {result.vehicle.name} in {Path(str(result.plan.source)).name} — "
                 f"{n} stations, {pairs_text(len(bad), total)}, {len(result.findings)} findings")
    for f in result.findings:
        where = f" [{f.label}]" if f.label else ""
        lines.append(f"  {f.id} {f.kind:8s} at ({f.x:.2f}, {f.y:.2f}) m{where}: {f.summary}")
    traffic = getattr(result, "traffic", None)
    if traffic is not None:
        st = traffic["stretches"]
        lines.append(f"  traffic: {len(traffic['passing_places'])} passing places, {len(st)} single-lane stretches "
                     f"({sum(s['length_m'] for s in st):.1f} m) for {traffic['settings']['vehicle']} meeting "
                     f"{', '.join(traffic['settings']['meets'])} {traffic['settings']['gap_m']:.2f} m apart")
    for note in result.notes:
        lines.append(f"  note: {note}")
    s = result.settings
    if s.get("max_direction_changes") is not None:
        n = s["max_direction_changes"]
        lines.append(f"  manoeuvre budget: {n} direction change{'s' if n != 1 else ''} per drive between two stations "
                     f"(--max-direction-changes; [motion] max_direction_changes)")
    lines.append(f"  geometry within {s['tolerance_m'] * 1000:.0f} mm (sound bound: errs towards 'does not fit'); "
                 f"{s['headings']} heading slices; screening only, not a risk assessment")
    if "html" in written:
        lines.append(f"report: {written['html']}")
    return "\n".join(lines)
