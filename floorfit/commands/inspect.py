"""``floorfit inspect PLAN.dxf``: what the importer sees in a drawing, before any fit check.

Prints the DXF version, the unit used and why (with a warning naming the likely unit
when the header looks wrong), the extent in metres, every layer with its entity count
and role, the number of obstacles (with their edges as drawn and after clean-up, and the
wall bands formed from double wall lines), doors and labels, and every import issue with
entity handles. ``--json OUT.json`` writes the same report as JSON.
"""

from __future__ import annotations

import argparse
import json
import os
import tempfile
from pathlib import Path

from floorfit.commands._common import add_plan_arguments
from floorfit.errors import InputError

NAME = "inspect"
HELP = "show how a DXF floor plan is read: unit, extent, layers and roles, doors, labels, issues"
ORDER = 8

__all__ = ["NAME", "HELP", "ORDER", "add_arguments", "run", "parse_window"]


def parse_window(text: str) -> tuple[float, float, float, float]:
    """``"xmin,ymin,xmax,ymax"`` (drawing units) -> four floats."""
    parts = [p for p in str(text).replace(";", ",").split(",")]
    try:
        values = tuple(float(p) for p in parts)
    except ValueError:
        raise InputError(f"expected four numbers xmin,ymin,xmax,ymax, got '{text}'", None, "--window") from None
    if len(values) != 4:
        raise InputError(f"expected four numbers xmin,ymin,xmax,ymax, got {len(values)} in '{text}'",
                         None, "--window")
    return values


def add_arguments(parser: argparse.ArgumentParser) -> None:
    add_plan_arguments(parser)      # PLAN.dxf, --units U, --window, --layers, --storey: as every command
    parser.add_argument("--site", metavar="SITE.toml", help="site file (TOML) with [layers] and [blocks] role tables")
    parser.add_argument("--json", metavar="OUT.json", help="also write the report as JSON")


def write_json_atomic(path: str | os.PathLike, data: dict) -> None:
    """Write JSON to a temporary file in the target folder, then rename it over the target."""
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise InputError("folder does not exist", str(folder), "--json")
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            json.dump(data, fh, indent=2, ensure_ascii=False, allow_nan=False)
            fh.write("\n")
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise


def run(args: argparse.Namespace) -> int:
    from floorfit.plan.dxf import inspect_plan, read_roles
    from floorfit.plan.dxf.report import format_report
    from floorfit.plan.ifc import inspect_ifc, is_ifc_path

    if is_ifc_path(args.plan):     # a building model: storeys, element counts, unit, warnings
        from floorfit.plan.ifc.report import format_ifc_report
        for name in ("units", "window", "layers"):
            if getattr(args, name):
                raise InputError(f"--{name} applies to DXF drawings only", args.plan, f"--{name}")
        report = inspect_ifc(args.plan, storey=args.storey)
        print(format_ifc_report(report))
        if args.json:
            write_json_atomic(args.json, report)
        return 0
    if args.storey is not None:
        raise InputError("--storey applies to IFC models only", args.plan, "--storey")
    roles = read_roles(args.site) if args.site else None
    window = parse_window(args.window) if args.window else None
    report = inspect_plan(args.plan, units=args.units, roles=roles, window=window, layers=args.layers)
    print(format_report(report))
    if args.json:
        write_json_atomic(args.json, report)
    return 0
