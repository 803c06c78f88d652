"""``floorfit compare``: what a change to the layout did for a vehicle.

Exit 0 when no station pair lost reachability, 1 when AFTER loses any pair, 2 bad input.
"""

from __future__ import annotations

from pathlib import Path

from floorfit.commands._common import (
    add_plan_options,
    apply_cache_option,
    check_output_first,
    load_plan_from_args,
    parse_floats,
)
from floorfit.commands.size import add_station_arguments, read_site_and_vehicle, stations_for

NAME = "compare"
HELP = ("compare two layouts for a vehicle: findings that appeared, disappeared or got worse, "
        "station pairs lost or gained; writes an HTML page, a PDF with a sheet per changed finding, and JSON")
ORDER = 25

__all__ = ["NAME", "HELP", "ORDER", "add_arguments", "run"]


def add_arguments(p) -> None:
    p.add_argument("before", metavar="BEFORE.dxf", help="the layout as it is (floor plan, DXF or IFC)")
    p.add_argument("after", metavar="AFTER.dxf", help="the changed layout (floor plan, DXF or IFC)")
    add_plan_options(p)          # --units, --window, --layers: for both drawings
    add_station_arguments(p)
    p.add_argument("--size", choices=("width", "length", "scale"),
                   help="also find the largest vehicle on both layouts, varying this dimension")
    p.add_argument("--match-distance", type=float, default=1.0, metavar="M",
                   help="findings of one kind this close in both layouts are the same place (default 1.0 m)")
    p.add_argument("--out", default="floorfit-compare", metavar="DIR",
                   help="output folder (default ./floorfit-compare)")
    p.add_argument("--no-reports", action="store_true",
                   help="do not write the full report of each layout into DIR/before and DIR/after")
    p.add_argument("--force", action="store_true", help="write the reports into folders that hold other files")
    p.add_argument("--revision", metavar="REV", help="revision on report.pdf (overrides the site file's [project])")
    p.add_argument("--paper", choices=("a4", "letter", "a3"), default="a4", help="paper of report.pdf (default a4)")
    p.add_argument("--no-pdf", action="store_true",
                   help="do not write report.pdf (a sheet per finding that appeared, got worse or disappeared)")


def run(args) -> int:
    from floorfit.analysis.compare import compare_layouts
    from floorfit.errors import InputError
    from floorfit.report import Progress
    from floorfit.report.compare_html import write_comparison

    parse_floats(str(args.match_distance), 1, "--match-distance")
    if not args.match_distance > 0:
        raise InputError(f"--match-distance must be positive, got {args.match_distance:g}", None, "--match-distance")
    if not args.no_reports:     # the full reports' folders: refused now, not after the computation
        for side in ("before", "after"):
            check_output_first(Path(args.out) / side, args.force, args.before, args.after)
    site, vehicle, flags = read_site_and_vehicle(args)
    apply_cache_option(args)
    progress = Progress(quiet=args.quiet)
    progress.stage("reading the drawings")
    before_plan = load_plan_from_args(args, roles=site.roles, path=args.before)
    after_plan = load_plan_from_args(args, roles=site.roles, path=args.after)
    before_st = stations_for(args.before, before_plan, site, flags)
    after_st = stations_for(args.after, after_plan, site, flags)
    comparison = compare_layouts(before_plan, after_plan, vehicle, before_st, after_st, site=site,
                                 heading_step_deg=args.heading_step, size=args.size,
                                 match_distance_m=args.match_distance, workers=args.workers,
                                 progress=progress.stage)
    progress.stage("writing the comparison")
    project = dict(site.project)
    if args.revision:
        project["revision"] = args.revision
    written = write_comparison(comparison, args.out, reports=not args.no_reports, force=args.force,
                               quiet=True, pdf=not args.no_pdf, project=project, paper=args.paper)
    progress.done()
    print("\n".join(comparison.summary_lines()))
    budget = comparison.before.settings.get("max_direction_changes")
    if budget is not None:
        print(f"  both layouts judged by drivable paths within {budget} direction change{'s' if budget != 1 else ''} "
              f"per drive between two stations (--max-direction-changes)")
    print(f"comparison: {written['html']}")
    if "pdf" in written:
        print(f"sheets: {written['pdf']}")
    return 1 if comparison.after_worse else 0
