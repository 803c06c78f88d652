"""The machine-readable outputs: ``findings.json`` and ``findings.csv``.

Both are byte-identical for the same inputs: keys sorted, no timestamps, findings in
report order (see :func:`floorfit.report.kinds.numbered_findings`), floats rounded
(coordinates and lengths to 0.1 mm, i.e. 4 decimals in metres; other settings to 6
decimals). The JSON schema is documented field by field in ``docs/report.md``.
"""

from __future__ import annotations

import csv
import io
import json
import math
from collections.abc import Sequence
from typing import Any

import numpy as np
import shapely

from floorfit import __version__
from floorfit.analysis.findings import FINDING_KINDS, FLEET_KINDS
from floorfit.report.kinds import numbered_findings

__all__ = [
    "REPORT_FORMAT", "REPORT_FORMAT_VERSION", "CSV_COLUMNS",
    "report_data", "findings_json", "findings_csv",
    "station_names", "unreachable_pairs", "escape_csv_cell", "report_kinds",
    "TRAFFIC_CSV_COLUMNS", "traffic_data", "traffic_csv",
]

#: Value of the ``format`` field of findings.json.
REPORT_FORMAT = "floorfit-site-check"
#: Bumped whenever a field changes meaning or disappears (adding a field does not bump it).
REPORT_FORMAT_VERSION = 1

#: Column order of findings.csv (fixed).
CSV_COLUMNS: tuple[str, ...] = (
    "number", "id", "kind", "cause", "label", "x_m", "y_m",
    "clear_width_m", "needed_width_m", "clearance_m", "required_clearance_m",
    "heading_ranges_deg", "cuts_off", "summary",
)

_NUMBER_COLUMNS = frozenset({"number", "x_m", "y_m", "clear_width_m", "needed_width_m",
                             "clearance_m", "required_clearance_m"})
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


# -- plain values ------------------------------------------------------------------
def _num(value: Any, digits: int = 6) -> Any:
    """A JSON-safe rounded number; non-finite values become the strings "inf", "-inf", "nan"."""
    x = float(value)
    if math.isnan(x):
        return "nan"
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    return round(x, digits) + 0.0  # + 0.0 turns -0.0 into 0.0


def _jsonable(value: Any, digits: int = 6) -> Any:
    """``value`` as plain JSON data (dicts, lists, str, rounded numbers, bool, None)."""
    if value is None or isinstance(value, (bool, np.bool_)):
        return None if value is None else bool(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        return _num(value, digits)
    if isinstance(value, str):
        return value
    if isinstance(value, dict):
        return {str(k): _jsonable(v, digits) for k, v in value.items()}
    if isinstance(value, (list, tuple, set, frozenset, np.ndarray)):
        items = sorted(value, key=str) if isinstance(value, (set, frozenset)) else list(value)
        return [_jsonable(v, digits) for v in items]
    if isinstance(value, shapely.Geometry):
        return value.geom_type
    return str(value)


def _ring(polygon: Any) -> list[list[float]] | None:
    if polygon is None or not isinstance(polygon, shapely.Polygon) or polygon.is_empty:
        return None
    return [[_num(x, 4), _num(y, 4)] for x, y in polygon.exterior.coords]


# -- pieces shared with the HTML report -----------------------------------------------
def station_names(result: Any) -> list[str]:
    """Station names in the order of ``result.stations``, then any other names the
    reachability table mentions, sorted."""
    names = [s.name for s in result.stations]
    seen = set(names)
    extra = set()
    for a, row in result.reachable.items():
        extra.add(a)
        extra.update(row)
    names.extend(sorted(n for n in extra - seen))
    return names


def unreachable_pairs(result: Any) -> list[tuple[str, str, list[str]]]:
    """(from, to, finding ids that explain it) for every station pair marked unreachable."""
    pairs = []
    for a in station_names(result):
        row = result.reachable.get(a, {})
        for b in station_names(result):
            if a != b and row.get(b) is False:
                pairs.append((a, b, [str(i) for i in result.cuts.get((a, b), [])]))
    return pairs


def _reachability(result: Any) -> dict[str, Any]:
    names = station_names(result)
    matrix = []
    for a in names:
        row = result.reachable.get(a, {})
        matrix.append([None if b not in row else bool(row[b]) for b in names])
    return {
        "stations": names,
        "matrix": matrix,
        "unreachable": [{"from": a, "to": b, "finding_ids": ids}
                        for a, b, ids in unreachable_pairs(result)],
    }


def _vehicle(vehicle: Any) -> dict[str, Any]:
    return {
        "name": vehicle.name,
        "mode": vehicle.mode,
        "width_m": _num(vehicle.width_m, 4),
        "length_m": _num(vehicle.length_m, 4),
        "margin_m": _num(vehicle.margin_m, 4),
        "source": None if vehicle.source is None else str(vehicle.source),
        "outline": _ring(vehicle.outline),
        "footprint": _ring(vehicle.footprint),
    }


def _plan(plan: Any) -> dict[str, Any]:
    return {
        "source": str(plan.source),
        "units": plan.units,
        "metres_per_unit": _num(plan.metres_per_unit, 12),
        "origin": [_num(v, 4) for v in plan.origin],
        "extent_m": [_num(v, 4) for v in plan.extent_m],
        "walls": len(plan.walls),
        "solids": len(plan.solids),
        "doors": len(plan.doors),
        "labels": len(plan.labels),
    }


def report_kinds(result: Any) -> list[str]:
    """The finding kinds a report counts: fleet kinds only when fleet traffic was checked."""
    traffic = getattr(result, "traffic", None) is not None
    return [k for k in FINDING_KINDS if traffic or k not in FLEET_KINDS]


def _verdict(result: Any) -> dict[str, Any]:
    counts = {k: 0 for k in report_kinds(result)}
    for f in result.findings:
        counts[f.kind] = counts.get(f.kind, 0) + 1
    return {
        "passed": bool(result.passed),
        "finding_count": len(result.findings),
        "findings_by_kind": counts,
        "unreachable_pair_count": len(unreachable_pairs(result)),
        **_pair_counts(result),
    }


def _pair_counts(result: Any) -> dict[str, int]:
    """Station pairs as the console and the report count them (see ``unconnected_station_pairs``)."""
    from floorfit.analysis.findings import unconnected_station_pairs

    bad, total = unconnected_station_pairs(result.reachable)
    return {"station_pair_count": total, "station_pairs_not_connected": len(bad)}


def _station(station: Any) -> dict[str, Any]:
    d = station.to_dict()
    for key in ("x", "y"):
        d[key] = _num(d[key], 4)
    for key in ("heading_deg", "heading_tolerance_deg"):
        d[key] = None if d[key] is None else _num(d[key], 4)
    return d


def report_data(result: Any, files: Sequence[str] = ()) -> dict[str, Any]:
    """Everything findings.json holds, as plain data (see docs/report.md for the schema).

    ``files`` names the other files written in the same run (they are listed so a reader
    of findings.json knows what belongs with it).
    """
    findings = []
    for number, f in numbered_findings(result.findings):
        d = _jsonable(f.to_dict(), 4)
        d["number"] = number
        findings.append(d)
    return {
        "format": REPORT_FORMAT,
        "format_version": REPORT_FORMAT_VERSION,
        "generator": f"floorfit {__version__}",
        "complete": True,
        "files": sorted(files),
        "verdict": _verdict(result),
        "plan": _plan(result.plan),
        "vehicle": _vehicle(result.vehicle),
        "settings": _jsonable(result.settings),
        "stations": [_station(s) for s in result.stations],
        "reachability": _reachability(result),
        "findings": findings,
        "notes": [str(n) for n in result.notes],
        **({"traffic": traffic_data(result)} if getattr(result, "traffic", None) is not None else {}),
    }


def findings_json(result: Any, files: Sequence[str] = ()) -> bytes:
    """findings.json as UTF-8 bytes: sorted keys, 2-space indent, trailing newline."""
    text = json.dumps(report_data(result, files), sort_keys=True, indent=2,
                      ensure_ascii=False, allow_nan=False)
    return (text + "\n").encode("utf-8")


# -- fleet traffic ----------------------------------------------------------------------
_LOCAL_ONLY = ("geometry", "narrowest_local", "finding")


def traffic_data(result: Any) -> dict[str, Any]:
    """The ``traffic`` record of findings.json: settings, passing places and single-lane stretches
    (drawing frame, metres; each stretch names its finding id, null when one-way traffic settles it)."""
    traffic = result.traffic
    numbers = {id(f): n for n, f in numbered_findings(result.findings)}

    def plain(item: dict) -> dict:
        d = {k: v for k, v in item.items() if k not in _LOCAL_ONLY}
        if "finding" in item:
            f = item["finding"]
            d["finding_id"] = None if f is None else f.id
            d["finding_number"] = None if f is None else numbers.get(id(f))
        return _jsonable(d, 4)

    return {
        "settings": _jsonable(traffic["settings"]),
        "passing_places": [plain(p) for p in traffic["passing_places"]],
        "stretches": [plain(s) for s in traffic["stretches"]],
    }


#: Column order of traffic.csv (fixed): one row per passing place and per single-lane stretch.
TRAFFIC_CSV_COLUMNS: tuple[str, ...] = (
    "id", "what", "finding", "label", "x_m", "y_m", "length_m", "clear_width_m", "needed_width_m",
    "widening_m", "station_pairs", "ends", "one_way_possible",
)
_TRAFFIC_NUMBERS = frozenset({"x_m", "y_m", "length_m", "clear_width_m", "needed_width_m", "widening_m"})


def _traffic_rows(result: Any) -> list[dict[str, Any]]:
    data = traffic_data(result)
    rows = []
    for s in data["stretches"]:
        ends = "; ".join(f"{e['passing_place'] or 'none'} at {e['distance_m'] or 0:.2f} m" for e in s["ends"])
        rows.append({"id": s["id"], "what": "single-lane stretch", "finding": s["finding_id"] or "",
                     "label": s["label"] or "", "x_m": s["x"], "y_m": s["y"], "length_m": s["length_m"],
                     "clear_width_m": s["clear_width_m"], "needed_width_m": s["needed_width_m"],
                     "widening_m": s["widening_m"], "station_pairs": "; ".join("–".join(p) for p in s["pairs"]),
                     "ends": ends or ("dead end" if s["dead_end"] else ""),
                     "one_way_possible": "yes" if s["one_way_possible"] else "no"})
    for p in data["passing_places"]:
        rows.append({"id": p["id"], "what": "passing place", "finding": "", "label": p["label"] or "",
                     "x_m": p["x"], "y_m": p["y"], "length_m": p["length_m"], "clear_width_m": None,
                     "needed_width_m": None, "widening_m": None,
                     "station_pairs": "; ".join("–".join(q) for q in p["pairs"]), "ends": "",
                     "one_way_possible": ""})
    return rows


def traffic_csv(result: Any) -> bytes:
    """traffic.csv as bytes (same conventions as findings.csv): the single-lane stretches with
    their length, the width they have, the width passing needs and the widening, then the
    passing places."""
    buf = io.StringIO(newline="")
    writer = csv.writer(buf, lineterminator="\r\n", quoting=csv.QUOTE_MINIMAL)
    writer.writerow(TRAFFIC_CSV_COLUMNS)
    for row in _traffic_rows(result):
        writer.writerow([_csv_number(row[c]) if c in _TRAFFIC_NUMBERS else escape_csv_cell(str(row[c]))
                         for c in TRAFFIC_CSV_COLUMNS])
    return buf.getvalue().encode("utf-8-sig")


# -- CSV ------------------------------------------------------------------------------
def escape_csv_cell(text: str) -> str:
    """``text`` made safe for spreadsheets: a leading = + - @ tab or CR gets a ``'`` in front.

    Spreadsheet programs run such cells as formulas (CSV injection; OWASP "CSV
    Injection" guidance). Nothing else in the text is changed.
    """
    return "'" + text if text.startswith(_FORMULA_START) else text


def _csv_number(value: Any) -> str:
    if value is None:
        return ""
    v = _num(value, 4)
    return v if isinstance(v, str) else repr(v)


def _deg(value: Any) -> str:
    v = _num(value, 2)
    return v if isinstance(v, str) else f"{v:g}"


def _csv_row(number: int, f: Any) -> list[str]:
    d = f.to_dict()
    ranges = "; ".join(f"[{_deg(a)}, {_deg(b)}]" for a, b in f.heading_ranges_deg)
    text = {
        "id": d["id"], "kind": d["kind"], "cause": d["cause"],
        "label": "" if d["label"] is None else d["label"],
        "heading_ranges_deg": ranges, "cuts_off": "; ".join(str(s) for s in d["cuts_off"]),
        "summary": d["summary"],
    }
    numbers = {
        "number": str(number), "x_m": _csv_number(f.x), "y_m": _csv_number(f.y),
        "clear_width_m": _csv_number(f.clear_width_m),
        "needed_width_m": _csv_number(f.needed_width_m),
        "clearance_m": _csv_number(f.clearance_m),
        "required_clearance_m": _csv_number(f.required_clearance_m),
    }
    row = []
    for col in CSV_COLUMNS:
        if col in _NUMBER_COLUMNS:
            # Made here from a float: a number (possibly negative), never a formula.
            row.append(numbers[col])
        else:
            row.append(escape_csv_cell(str(text[col])))
    return row


def findings_csv(result: Any) -> bytes:
    """findings.csv as bytes: UTF-8 with a byte-order mark (so spreadsheet programs read
    non-ASCII labels correctly), CRLF line ends (RFC 4180), a header row, one row per
    finding in report order."""
    buf = io.StringIO(newline="")
    writer = csv.writer(buf, lineterminator="\r\n", quoting=csv.QUOTE_MINIMAL)
    writer.writerow(CSV_COLUMNS)
    for number, f in numbered_findings(result.findings):
        writer.writerow(_csv_row(number, f))
    return buf.getvalue().encode("utf-8-sig")
