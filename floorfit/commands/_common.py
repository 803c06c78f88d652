"""Argument helpers shared by the sub-commands (not a command itself)."""

from __future__ import annotations

import json
import math
import os
import tempfile
from pathlib import Path

from floorfit.errors import InputError

__all__ = ["parse_pose", "parse_floats", "write_json_atomic", "add_plan_arguments", "load_plan_from_args",
           "add_cache_argument", "apply_cache_option", "add_plan_options", "heading_step_type",
           "add_heading_step_argument", "warn_unmatched_patterns", "check_output_first", "direction_changes_type",
           "add_budget_argument", "site_with_budget"]


def parse_floats(text: str, n: int | tuple[int, ...], what: str) -> tuple[float, ...]:
    """Comma-separated finite numbers, e.g. ``"1.5,2,90"``."""
    counts = (n,) if isinstance(n, int) else n
    parts = [p.strip() for p in str(text).split(",")]
    if len(parts) not in counts:
        raise InputError(f"{what} must be {' or '.join(str(c) for c in counts)} comma-separated numbers, "
                         f"got '{text}'", None, what)
    try:
        vals = tuple(float(p) for p in parts)
    except ValueError:
        raise InputError(f"{what} must be numbers, got '{text}'", None, what) from None
    if not all(math.isfinite(v) for v in vals):
        raise InputError(f"{what} has a non-finite value '{text}'", None, what)
    return vals


def parse_pose(text: str, what: str) -> tuple[float, float, float]:
    """``X,Y,HEADING``: metres in the drawing frame and degrees CCW from +x."""
    return parse_floats(text, 3, what)  # type: ignore[return-value]


def write_json_atomic(path: str | Path, data) -> None:
    """Write JSON to a temporary file beside ``path`` and rename it into place."""
    p = Path(path)
    if p.parent and not p.parent.exists():
        raise InputError(f"folder does not exist: {p.parent}", str(p))
    text = json.dumps(data, indent=2, sort_keys=True, ensure_ascii=False, allow_nan=False) + "\n"
    fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.", suffix=".part", dir=str(p.parent or "."))
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(text)
        os.replace(tmp, p)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def add_plan_options(p, *, window: bool = True) -> None:
    """The plan-reading options every command that reads a drawing shares, with the same names."""
    p.add_argument("--units", metavar="U", help="drawing unit, overriding the header: mm, cm, m, in, ft")
    if window:
        p.add_argument("--window", metavar="XMIN,YMIN,XMAX,YMAX",
                       help="use only this part of the drawing (drawing units)")
    p.add_argument("--layers", nargs="+", metavar="PATTERN",
                   help="read only layers matching these patterns (case-insensitive, * and ?)")
    p.add_argument("--storey", metavar="NAME|ELEVATION",
                   help="IFC models: the storey to check (default: the storey nearest 0 m that holds walls)")


def add_plan_arguments(p) -> None:
    """``PLAN.dxf`` and the plan-reading options (:func:`add_plan_options`)."""
    p.add_argument("plan", metavar="PLAN.dxf", help="floor plan (DXF) or building model (IFC)")
    add_plan_options(p)


def _vehicle_height(args) -> float | None:
    """The height of the command's vehicle (its [loaded] state with --loaded), if it states one."""
    from floorfit.errors import FloorfitError

    if not getattr(args, "vehicle", None):
        return None
    from floorfit.vehicles.loading import split_vehicle_file
    try:
        vehicle, _train = split_vehicle_file(args.vehicle, state="loaded" if getattr(args, "loaded", False)
                                             else "default")
    except FloorfitError:
        return None          # the command reports the vehicle file's problem itself
    return getattr(vehicle, "height_m", None)


def heading_step_type(text: str) -> float:
    """argparse type of ``--heading-step``: degrees in [0.1, 45]; 0, negative and absurd steps are refused."""
    import argparse

    from floorfit.cspace.slices import check_heading_step

    try:
        return check_heading_step(float(text))
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number of degrees, got '{text}'") from None
    except InputError as exc:
        raise argparse.ArgumentTypeError(exc.message if hasattr(exc, "message") else str(exc)) from None


def direction_changes_type(text: str) -> int:
    """argparse type of ``--max-direction-changes``: a whole number from 0 up."""
    import argparse

    from floorfit.plan.site import check_direction_changes

    try:
        return check_direction_changes(text, None, "--max-direction-changes")
    except InputError as exc:
        raise argparse.ArgumentTypeError(exc.message if hasattr(exc, "message") else str(exc)) from None


def add_budget_argument(p) -> None:
    """``--max-direction-changes N``: the manoeuvre budget (overrides the site file's [motion] value)."""
    p.add_argument("--max-direction-changes", type=direction_changes_type, metavar="N",
                   help="differential and car-like vehicles: the most forward/reverse changes a drive between "
                        "two stations may use; more is a 'maneuver' finding that cuts the pair (default: the "
                        "site file's [motion] max_direction_changes, else 2)")


def site_with_budget(site, args):
    """The site with ``--max-direction-changes`` applied, when given."""
    from dataclasses import replace

    n = getattr(args, "max_direction_changes", None)
    return site if n is None else replace(site, max_direction_changes=n)


def add_heading_step_argument(p) -> None:
    p.add_argument("--heading-step", type=heading_step_type, metavar="DEG",
                   help="uniform heading step, degrees (0.1 to 45; default: chosen from the vehicle size)")


def load_plan_from_args(args, roles=None, path=None):
    """The drawing ``path`` (default ``args.plan``) read with the plan-reading options.

    Site ``[layers]`` patterns that match no layer of the drawing are warned about on standard
    error (a misspelt pattern silently changes nothing).
    """
    from floorfit.plan.dxf import load_plan
    from floorfit.plan.ifc import band_for_height, is_ifc_path
    path = path if path is not None else args.plan
    window = parse_floats(args.window, 4, "--window") if getattr(args, "window", None) else None
    if is_ifc_path(path):     # the height band of a building model follows the vehicle's height
        return load_plan(path, units=getattr(args, "units", None), window=window, roles=roles,
                         storey=getattr(args, "storey", None), band_top_m=band_for_height(_vehicle_height(args)))
    plan = load_plan(path, units=getattr(args, "units", None), window=window, roles=roles,
                     layers=getattr(args, "layers", None), storey=getattr(args, "storey", None))
    warn_unmatched_patterns(plan)
    return plan


def warn_unmatched_patterns(plan) -> None:
    """One warning line per site ``[layers]`` pattern that matched no layer (import issue ``unused-pattern``)."""
    import sys

    for issue in getattr(plan, "issues", None) or []:
        if getattr(issue, "kind", None) == "unused-pattern":
            print(f"floorfit: warning: {issue.message}", file=sys.stderr)


def check_output_first(out_dir, force: bool, *inputs) -> None:
    """Refuse an output folder the report writer would refuse, before any computation."""
    from floorfit.report.writer import check_output_folder

    check_output_folder(out_dir, force=force, sources=[i for i in inputs if i])


def add_cache_argument(p) -> None:
    """``--no-cache``: build every slice afresh instead of reusing the disk cache."""
    p.add_argument("--no-cache", action="store_true",
                   help="do not reuse or store slices in the disk cache (also FLOORFIT_CACHE=off)")


def apply_cache_option(args) -> str | None:
    """Turn the slice cache and the IFC import cache on or off for this run (see
    :mod:`floorfit.cspace.slicecache`, :mod:`floorfit.plan.ifc.cache`); the folder or None."""
    from floorfit.cspace.slicecache import default_cache_dir, use_cache
    from floorfit.plan.ifc.cache import use_import_cache

    folder = None if getattr(args, "no_cache", False) else default_cache_dir()
    use_cache(folder)
    use_import_cache(None if folder is None else folder / "ifc")
    return None if folder is None else str(folder)
