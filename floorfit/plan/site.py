"""Site files: the stations a vehicle must serve, layer roles and the clearance asked for.

Site file (TOML, metres and degrees, drawing frame)::

    station_layer = "X-STATION"    # optional: POINTs / block INSERTs on this layer are stations

    [stations]
    DOCK = { x = 15.0, y = 2.2, heading = -90.0 }    # heading: must arrive at it (docking)
    PICK-A = { x = 6.5, y = 11.0 }                   # no heading: any heading will do

    [clearance]
    required = 0.45                 # metres between the vehicle outline and obstructions
    reference = "ANSI/ITSDF B56.5 §4.7.4"

    [analysis]
    heading_step = 2.0              # degrees (default: from the vehicle size)
    person_width = 0.5              # metres a person needs to walk through (default 0.5)
    envelope = "auto"               # floor analysed: "auto" (hull of the obstacles), "none", or [[x, y], ...]

    [layers]                        # layer-name pattern → role (see the import notes)
    "A-EQPM-RACK" = "solid"

    [report]
    routes = [["DOCK", "PICK-A"]]   # station pairs whose swept path the report draws

    [heights]                       # layer-name pattern → [bottom, top] above the floor, metres
    "M-CONV-OVHD" = [2.1, 2.6]      # an overhead conveyor: only vehicles taller than 2.1 m meet it
    "A-DOOR-HEAD" = [2.1, 1e9]      # a door header: 2.1 m and up

    [project]                       # shown on the report's cover and title blocks; all optional
    name = "Harbourside DC, level 0"
    number = "P-2031"               # a string or a whole number
    client = "Harbourside Logistics"
    revision = "B"
    prepared_by = "J. Planner"
    date = 2025-03-14               # a TOML date or "YYYY-MM-DD"; never taken from the clock

    [motion]                        # manoeuvre budget for differential and car-like vehicles
    max_direction_changes = 2       # forward/reverse changes a drive between two stations may use
                                    # (default 2: one three-point turn); more is a `maneuver` finding

    [doors]                         # doors are passable with the leaf open, except:
    closed = ["D-12", "2GhxCR$0b0"]  # door names, tags or element ids (IFC GlobalId, DXF handle)

    [traffic]                       # fleet traffic: where two vehicles can pass (omit: not checked)
    vehicles = ["tug.toml"]         # vehicle files the checked vehicle meets (relative to this file;
                                    # default: another vehicle like the checked one)
    gap = 0.45                      # metres kept between two vehicles passing each other
    reference = "ANSI/ITSDF B56.5 §4.7.4"   # or "b56.5", "ada-route", "none" (sets gap too)
    one_way = false                 # may aisles be run one-way (then stretches on a loop are no finding)
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from floorfit.errors import InputError, SiteError
from floorfit.plan.stations import Station
from floorfit.tomlcheck import check_keys, get_bool, get_number, get_string, read_toml

__all__ = ["Site", "read_site", "parse_station_flag", "apply_height_ranges", "CLEARANCE_REFERENCES",
           "DEFAULT_PERSON_WIDTH_M", "PROJECT_KEYS", "Traffic",
           "DEFAULT_HEADING_TOLERANCE_DEG", "stations_from_drawing", "DEFAULT_MAX_DIRECTION_CHANGES",
           "MAX_DIRECTION_CHANGES_LIMIT", "check_direction_changes", "close_doors", "DOOR_OPEN_NOTE"]

#: Width of floor a person needs to walk through, metres (common practice: shoulder width
#: of an adult is about 0.45–0.5 m).
DEFAULT_PERSON_WIDTH_M = 0.5
#: How closely a docking heading must be met, degrees (common practice for AMR docking).
DEFAULT_HEADING_TOLERANCE_DEG = 5.0
#: Manoeuvre budget: the most forward/reverse changes a differential or car-like vehicle may use to
#: drive between two stations (2: one three-point turn, or backing out of a dock and turning).
DEFAULT_MAX_DIRECTION_CHANGES = 2
#: Largest budget accepted (a drive with more changes is not one a planner would ask of a driver).
MAX_DIRECTION_CHANGES_LIMIT = 10_000

#: Clearance references a user may pick; values are settings, not law (see the cautions).
CLEARANCE_REFERENCES = {
    "b56.5": (0.45, "ANSI/ITSDF B56.5 §4.7.4: 450 mm between obstructions and the vehicle with its load"),
    "ada-route": (0.9144, "ADA 2010 Standards §403.5.1: 36 in clear width of an accessible route"),
    "none": (0.0, "no clearance required beyond the vehicle's own margin"),
}
DEFAULT_CLEARANCE = "b56.5"

_TOP = ("station_layer", "stations", "clearance", "analysis", "layers", "blocks", "heights", "report", "project",
        "traffic", "motion", "doors")
_DOORS = ("closed",)
#: The report note for plans whose doors come from a building model.
DOOR_OPEN_NOTE = ("doors are taken as passable with the leaf open (the leaf and its swing are not obstacles); "
                  "doors named in the site file's [doors] closed are walls")
_MOTION = ("max_direction_changes",)
_REPORT = ("routes",)
_STATION = ("x", "y", "heading", "heading_tolerance")
_CLEARANCE = ("required", "reference")
_ANALYSIS = ("heading_step", "person_width", "envelope")
_TRAFFIC = ("vehicles", "gap", "reference", "one_way")
#: Keys of the [project] table (report cover and title blocks), all optional.
PROJECT_KEYS = ("name", "number", "client", "revision", "prepared_by", "date")
_PROJECT_TEXT_MAX = 200
_NAME_RE = re.compile(r"^[A-Za-z0-9][A-Za-z0-9 _.\-/#]{0,63}$")


@dataclass(frozen=True)
class Traffic:
    """Fleet traffic settings (``[traffic]``): which vehicles the checked one meets, and how.

    ``vehicles``: vehicle file paths (resolved against the site file), or vehicle objects
    through the library API; empty means another vehicle like the checked one. ``gap_m``:
    metres kept between two vehicles passing each other (between their footprints, margins
    included), with ``gap_reference`` saying where the value comes from (a setting, not law;
    see the cautions). ``one_way``: aisles may be run one-way, so a single-lane stretch on a
    loop is listed but is no finding.
    """

    vehicles: tuple[Any, ...] = ()
    gap_m: float = CLEARANCE_REFERENCES[DEFAULT_CLEARANCE][0]
    gap_reference: str = CLEARANCE_REFERENCES[DEFAULT_CLEARANCE][1]
    one_way: bool = False


@dataclass
class Site:
    """Settings from a site file (or defaults)."""

    path: str | None = None
    stations: list[Station] = field(default_factory=list)
    station_layer: str | None = None
    roles: dict[str, Any] | None = None
    required_clearance_m: float = CLEARANCE_REFERENCES[DEFAULT_CLEARANCE][0]
    clearance_reference: str = CLEARANCE_REFERENCES[DEFAULT_CLEARANCE][1]
    heading_step_deg: float | None = None
    person_width_m: float = DEFAULT_PERSON_WIDTH_M
    heights: dict[str, tuple[float, float]] = field(default_factory=dict)
    routes: list[tuple[str, str]] = field(default_factory=list)
    #: floor the check analyses: "auto" (hull of the obstacles and stations), "none" (all), or a polygon
    envelope: Any = "auto"
    project: dict[str, str] = field(default_factory=dict)     # [project] fields given (text)
    traffic: Traffic | None = None                             # [traffic]; None: fleet traffic not checked
    #: [motion] max_direction_changes: the manoeuvre budget of differential and car-like vehicles
    max_direction_changes: int = DEFAULT_MAX_DIRECTION_CHANGES
    #: [doors] closed: doors (name, tag or element id) that are closed: walls across the opening
    closed_doors: tuple[str, ...] = ()


def _check_name(name: str, path: str | None, where: str, error=SiteError) -> str:
    if not _NAME_RE.match(name):
        raise error(f"station name '{name}' must start with a letter or digit and use only letters, digits, "
                    f"spaces and _ . - / # (at most 64 characters)", path, where)
    return name


def read_site(path: str | Path) -> Site:
    """Read and validate a site file. Raises :class:`SiteError` naming the file and key."""
    from floorfit.plan.dxf.roles import roles_from_site_table

    src = str(path)
    data = read_toml(path, SiteError)
    check_keys(data, _TOP, src, "", SiteError)
    site = Site(path=src)
    site.station_layer = get_string(data, "station_layer", src, "", SiteError)
    site.roles = roles_from_site_table({k: data[k] for k in ("layers", "blocks") if k in data}, src) or None
    for read_table in (_read_stations, _read_clearance, _read_report_routes, _read_heights):
        read_table(data, site, src)
    site.project = _read_project(data.get("project", {}), src)
    site.traffic = _read_traffic(data.get("traffic"), src)
    analysis = data.get("analysis", {})
    if not isinstance(analysis, dict):
        raise SiteError("[analysis] must be a table", src, "analysis")
    check_keys(analysis, _ANALYSIS, src, "analysis.", SiteError)
    site.heading_step_deg = get_number(analysis, "heading_step", src, "analysis.", SiteError,
                                       minimum=0.1, maximum=45.0)
    site.person_width_m = get_number(analysis, "person_width", src, "analysis.", SiteError,
                                     default=DEFAULT_PERSON_WIDTH_M, minimum=0.1, maximum=3.0)
    site.envelope = _read_envelope(analysis.get("envelope", "auto"), src)
    site.max_direction_changes = _read_motion(data.get("motion", {}), src)
    site.closed_doors = _read_doors(data.get("doors", {}), src)
    return site


def _read_doors(table: Any, src: str) -> tuple[str, ...]:
    """The [doors] table: ``closed = [names]`` (door names, tags or element ids)."""
    if not isinstance(table, dict):
        raise SiteError("[doors] must be a table", src, "doors")
    check_keys(table, _DOORS, src, "doors.", SiteError)
    names = table.get("closed", [])
    if not isinstance(names, list) or not all(isinstance(n, str) and n.strip() for n in names):
        raise SiteError(f"expected a list of door names, got {names!r}", src, "doors.closed")
    return tuple(n.strip() for n in names)


def _read_stations(data: dict, site: Site, src: str) -> None:
    """The [stations] table: NAME = { x, y [, heading, heading_tolerance] } (drawing frame, m, deg)."""
    stations = data.get("stations", {})
    if not isinstance(stations, dict):
        raise SiteError("[stations] must be a table of NAME = { x = .., y = .. }", src, "stations")
    for name, spec in stations.items():
        where = f"stations.{name}"
        _check_name(name, src, where)
        if not isinstance(spec, dict):
            raise SiteError("expected { x = .., y = .. [, heading = ..] }", src, where)
        check_keys(spec, _STATION, src, where + ".", SiteError)
        x = get_number(spec, "x", src, where + ".", SiteError, required=True)
        y = get_number(spec, "y", src, where + ".", SiteError, required=True)
        h = get_number(spec, "heading", src, where + ".", SiteError, minimum=-360, maximum=360)
        tol = get_number(spec, "heading_tolerance", src, where + ".", SiteError,
                         default=DEFAULT_HEADING_TOLERANCE_DEG, minimum=0.0, maximum=180.0)
        site.stations.append(Station(name, x, y, h, tol))


def _read_clearance(data: dict, site: Site, src: str) -> None:
    """The [clearance] table: required clearance (m) and the reference it comes from."""
    clearance = data.get("clearance", {})
    if not isinstance(clearance, dict):
        raise SiteError("[clearance] must be a table", src, "clearance")
    check_keys(clearance, _CLEARANCE, src, "clearance.", SiteError)
    ref = get_string(clearance, "reference", src, "clearance.", SiteError)
    req = get_number(clearance, "required", src, "clearance.", SiteError, minimum=0.0, maximum=10.0)
    if ref is not None and ref.lower() in CLEARANCE_REFERENCES and req is None:
        req, ref = CLEARANCE_REFERENCES[ref.lower()]
    if req is not None:
        site.required_clearance_m = req
        site.clearance_reference = ref or "site file"


def _read_report_routes(data: dict, site: Site, src: str) -> None:
    """The [report] table: station pairs whose drivable routes the report draws."""
    report = data.get("report", {})
    if not isinstance(report, dict):
        raise SiteError("[report] must be a table", src, "report")
    check_keys(report, _REPORT, src, "report.", SiteError)
    for i, pair in enumerate(report.get("routes", [])):
        if not (isinstance(pair, list) and len(pair) == 2 and all(isinstance(n, str) for n in pair)):
            raise SiteError(f"route {i + 1} must be [\"FROM\", \"TO\"] station names, got {pair!r}", src,
                            "report.routes")
        site.routes.append((pair[0], pair[1]))


def _read_heights(data: dict, site: Site, src: str) -> None:
    """The [heights] table: layer pattern = [bottom, top] in metres above the floor."""
    heights = data.get("heights", {})
    if not isinstance(heights, dict):
        raise SiteError("[heights] must be a table of layer pattern = [bottom, top]", src, "heights")
    for pattern, rng in heights.items():
        where = f"heights.{pattern}"
        if (not isinstance(rng, list) or len(rng) != 2
                or any(isinstance(v, bool) or not isinstance(v, (int, float)) for v in rng)):
            raise SiteError(f"expected [bottom, top] in metres, got {rng!r}", src, where)
        lo, hi = float(rng[0]), float(rng[1])
        if not (math.isfinite(lo) and lo >= 0 and hi > lo):
            raise SiteError(f"need 0 ≤ bottom < top (metres), got [{lo:g}, {hi:g}]", src, where)
        site.heights[pattern] = (lo, hi)


def _read_motion(table: Any, src: str) -> int:
    """The [motion] table: the manoeuvre budget (default :data:`DEFAULT_MAX_DIRECTION_CHANGES`)."""
    if not isinstance(table, dict):
        raise SiteError("[motion] must be a table", src, "motion")
    check_keys(table, _MOTION, src, "motion.", SiteError)
    if "max_direction_changes" not in table:
        return DEFAULT_MAX_DIRECTION_CHANGES
    return check_direction_changes(table["max_direction_changes"], src, "motion.max_direction_changes", SiteError)


def check_direction_changes(value: Any, path: str | None, where: str, error=InputError) -> int:
    """A manoeuvre budget: a whole number of direction changes, 0 to :data:`MAX_DIRECTION_CHANGES_LIMIT`."""
    if isinstance(value, str):
        try:
            value = int(value.strip())
        except ValueError:
            raise error(f"expected a whole number of direction changes, got '{value}'", path, where) from None
    if isinstance(value, bool) or not isinstance(value, int):
        raise error(f"expected a whole number of direction changes, got {type(value).__name__} {value!r}",
                    path, where)
    if not 0 <= value <= MAX_DIRECTION_CHANGES_LIMIT:
        raise error(f"must be between 0 and {MAX_DIRECTION_CHANGES_LIMIT}, got {value}", path, where)
    return value


def _read_envelope(value: Any, src: str):
    """``[analysis] envelope``: "auto", "none", or a polygon [[x, y], ...] (drawing frame, metres)."""
    where = "analysis.envelope"
    if isinstance(value, str):
        if value not in ("auto", "none"):
            raise SiteError(f'expected "auto", "none" or a polygon [[x, y], ...], got {value!r}', src, where)
        return value
    if not (isinstance(value, list) and len(value) >= 3 and all(
            isinstance(p, list) and len(p) == 2 and all(isinstance(v, (int, float)) and not isinstance(v, bool)
                                                     and math.isfinite(v) for v in p) for p in value)):
        raise SiteError("expected a polygon of at least three [x, y] points in metres", src, where)
    import shapely

    poly = shapely.Polygon([(float(x), float(y)) for x, y in value])
    if not poly.is_valid or poly.area <= 0:
        raise SiteError("the envelope polygon must be simple (no self-crossing) and enclose an area", src, where)
    return [(float(x), float(y)) for x, y in value]


def _read_project(table: Any, src: str) -> dict[str, str]:
    """The [project] table as text fields: strings (``number`` may be a whole number, ``date`` a
    TOML date or ``YYYY-MM-DD``), one line each, at most 200 characters."""
    import datetime

    if not isinstance(table, dict):
        raise SiteError("[project] must be a table of name, number, client, revision, prepared_by, date",
                        src, "project")
    check_keys(table, PROJECT_KEYS, src, "project.", SiteError)
    out: dict[str, str] = {}
    for key in PROJECT_KEYS:
        if key not in table:
            continue
        value, where = table[key], f"project.{key}"
        if key == "number" and isinstance(value, int) and not isinstance(value, bool):
            value = str(value)
        elif key == "date" and isinstance(value, datetime.date) and not isinstance(value, datetime.datetime):
            value = value.isoformat()
        elif key == "date" and isinstance(value, str):
            try:
                value = datetime.date.fromisoformat(value.strip()).isoformat()
            except ValueError:
                raise SiteError(f"expected a date YYYY-MM-DD, got {value!r}", src, where) from None
        elif not isinstance(value, str):
            wanted = {"number": "a string or a whole number", "date": "a date (YYYY-MM-DD)"}.get(key, "a string")
            raise SiteError(f"expected {wanted}, got {type(value).__name__} {value!r}", src, where)
        if not value.isprintable() or len(value) > _PROJECT_TEXT_MAX:
            raise SiteError(f"must be one line of at most {_PROJECT_TEXT_MAX} printable characters", src, where)
        out[key] = value.strip()
    return out


def _read_traffic(table: Any, src: str) -> Traffic | None:
    """The [traffic] table: vehicle files (relative to the site file), gap with its reference, one_way.
    None when the site file has no [traffic] table."""
    if table is None:
        return None
    if not isinstance(table, dict):
        raise SiteError("[traffic] must be a table of vehicles, gap, reference, one_way", src, "traffic")
    check_keys(table, _TRAFFIC, src, "traffic.", SiteError)
    files = table.get("vehicles", [])
    if isinstance(files, str):
        files = [files]
    if not isinstance(files, list) or not all(isinstance(f, str) and f.strip() for f in files):
        raise SiteError(f"expected a list of vehicle file names, got {files!r}", src, "traffic.vehicles")
    base = Path(src).parent
    paths = tuple(str(base / f) for f in files)
    ref = get_string(table, "reference", src, "traffic.", SiteError)
    gap = get_number(table, "gap", src, "traffic.", SiteError, minimum=0.0, maximum=10.0)
    if ref is not None and ref.lower() in CLEARANCE_REFERENCES and gap is None:
        gap, ref = CLEARANCE_REFERENCES[ref.lower()]
    one_way = get_bool(table, "one_way", src, "traffic.", SiteError, default=False)
    if gap is None:
        return Traffic(vehicles=paths, one_way=bool(one_way))
    return Traffic(vehicles=paths, gap_m=gap, gap_reference=ref or "site file", one_way=bool(one_way))


def apply_height_ranges(plan, ranges: dict[str, tuple[float, float]]):
    """A copy of ``plan`` whose obstacles on layers matching a pattern get that height range.

    Patterns are shell patterns, case-insensitive, matched against the obstacle's layer
    (a bound-xref prefix stripped). Later patterns win. Heights read from the drawing
    (elevation and thickness) are kept for layers no pattern matches.
    """
    import fnmatch

    import numpy as np

    if not ranges:
        return plan
    wh = plan.wall_heights.copy()
    sh = plan.solid_heights.copy()

    def strip(name: str) -> str:
        name = str(name)
        return name.rsplit("$0$", 1)[-1].rsplit("|", 1)[-1].lower()

    for pattern, (lo, hi) in ranges.items():
        pat = pattern.lower()
        for heights, layers in ((wh, plan.wall_layers), (sh, plan.solid_layers)):
            if not len(layers):
                continue
            hit = np.array([fnmatch.fnmatchcase(strip(n), pat) for n in layers], dtype=bool)
            heights[hit] = (lo, hi)
    return plan.with_heights(wh, sh)


def parse_station_flag(text: str) -> Station:
    """``NAME=X,Y[,HEADING]`` from the command line (metres, degrees, drawing frame)."""
    if "=" not in text:
        raise InputError(f"station must be NAME=X,Y[,HEADING], got '{text}'", None, "--station")
    name, _, rest = text.partition("=")
    name = name.strip()
    _check_name(name, None, "--station", InputError)
    parts = [p.strip() for p in rest.split(",")]
    if len(parts) not in (2, 3):
        raise InputError(f"station {name} must be NAME=X,Y[,HEADING], got '{text}'", None, "--station")
    try:
        vals = [float(p) for p in parts]
    except ValueError:
        raise InputError(f"station {name} has a value that is not a number: '{rest}'", None, "--station") from None
    if not all(math.isfinite(v) for v in vals):
        raise InputError(f"station {name} has a non-finite value: '{rest}'", None, "--station")
    return Station(name, vals[0], vals[1], vals[2] if len(vals) == 3 else None, DEFAULT_HEADING_TOLERANCE_DEG)


def stations_from_drawing(plan_path: str | Path, layer: str, metres_per_unit: float) -> list[Station]:
    """POINT entities and block INSERTs on ``layer`` as stations (drawing frame, metres).

    A station is named by the insert's first attribute, else by the block name and a
    running number; points are named S1, S2, … in drawing order.
    """
    import fnmatch

    import ezdxf

    doc = ezdxf.readfile(str(plan_path))
    out: list[Station] = []
    n = 0
    for e in doc.modelspace():
        if not fnmatch.fnmatch(e.dxf.layer.lower(), layer.lower()):
            continue
        kind = e.dxftype()
        if kind == "POINT":
            n += 1
            x, y = e.dxf.location.x, e.dxf.location.y
            name = f"S{n}"
            heading = None
        elif kind == "INSERT":
            n += 1
            x, y = e.dxf.insert.x, e.dxf.insert.y
            attribs = [a.dxf.text.strip() for a in e.attribs if a.dxf.text.strip()]
            name = attribs[0] if attribs else f"{e.dxf.name}-{n}"
            heading = float(e.dxf.rotation)
        else:
            continue
        name = re.sub(r"[^A-Za-z0-9 _.\-/#]", "_", name)[:64] or f"S{n}"
        out.append(Station(name, x * metres_per_unit, y * metres_per_unit, heading, DEFAULT_HEADING_TOLERANCE_DEG))
    if not out:
        raise SiteError(f"no POINT or INSERT found on station layer '{layer}'", str(plan_path), "station_layer")
    return out


def _closing_line(plan, door):
    """A line across a doorway from jamb to jamb (local frame), or None when no jambs are found:
    the direction through the door's centre whose free stretch between obstacles standing on the
    floor is closest to the door's width."""
    import numpy as np
    import shapely

    centre = np.array([door.x, door.y])
    reach = 0.75 * door.width_m + 0.3
    near = [g for g, h in zip([*plan.walls, *plan.solids], [*plan.wall_heights, *plan.solid_heights])
            if h[0] <= 0.0 and g.distance(shapely.Point(centre)) < reach]
    if not near:
        return None
    blockers = shapely.union_all(near)
    best = None
    for deg in range(0, 180, 5):
        u = np.array([math.cos(math.radians(deg)), math.sin(math.radians(deg))])
        line = shapely.LineString([centre - reach * u, centre + reach * u])
        for part in shapely.get_parts(shapely.difference(line, blockers)):
            if part.distance(shapely.Point(centre)) < 0.02 and part.length < 2 * reach - 1e-6:
                score = abs(part.length - door.width_m)
                if best is None or score < best[0]:
                    a, b = np.asarray(part.coords)[[0, -1]]
                    d = (b - a) / max(part.length, 1e-9)
                    best = (score, shapely.LineString([a - 0.05 * d, b + 0.05 * d]))
    return None if best is None else best[1]


def close_doors(plan, names) -> Any:
    """A copy of ``plan`` with the named doors closed: a full-height wall across each opening.

    A door matches by its name (label), or its element id (IFC GlobalId, DXF handle). Names
    that match no door are reported as an import note listing the doors there are.
    """
    from dataclasses import replace

    import numpy as np

    from floorfit.plan.model import FULL_HEIGHT, ImportIssue

    names = [n for n in names or ()]
    if not names:
        return plan
    closed, lines, issues = [], [], list(plan.issues)
    aliases = (plan.model or {}).get("door_names", {}) if isinstance(plan.model, dict) else {}
    for d in plan.doors:
        keys = {k for k in (d.label, d.handle, *aliases.get(d.handle, ())) if k}
        if keys & set(names):
            line = _closing_line(plan, d)
            if line is None:
                issues.append(ImportIssue("doors", f"door {d.label or d.handle}: no jambs found around it, "
                                                   f"so it cannot be closed", d.handle, d.layer))
                continue
            closed.append(d.label or d.handle)
            lines.append(line)
    unknown = [n for n in names if not any(n in (d.label, d.handle, *aliases.get(d.handle, ())) for d in plan.doors)]
    if unknown:
        known = ", ".join(sorted({d.label or d.handle or "?" for d in plan.doors})[:20]) or "none"
        issues.append(ImportIssue("doors", f"closed door(s) not in the plan: {', '.join(unknown)}; "
                                           f"the doors are: {known}"))
    if closed:
        issues.append(ImportIssue("doors", f"closed (site file): {', '.join(closed)}"))
    keep = [d for d in plan.doors if (d.label or d.handle) not in closed]
    extra = {name: np.concatenate([np.asarray(getattr(plan, name), dtype=object), [fill] * len(lines)])
             for name, fill in (("wall_ids", None), ("wall_handles", ""), ("wall_types", ""))
             if getattr(plan, name, None) is not None}
    return replace(plan, walls=[*plan.walls, *lines],
                   wall_heights=np.vstack([plan.wall_heights, np.tile(FULL_HEIGHT, (len(lines), 1))]),
                   wall_layers=np.concatenate([plan.wall_layers, ["closed door"] * len(lines)]),
                   doors=keep, issues=issues, **extra)
