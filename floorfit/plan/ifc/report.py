"""The ``floorfit inspect`` report of an IFC model: storeys, element counts, unit, warnings."""

from __future__ import annotations

from floorfit.plan.ifc.importer import IfcImport

__all__ = ["report_from_import", "format_ifc_report"]

def report_from_import(imp: IfcImport) -> dict:
    """The JSON-ready report of one IFC import."""
    plan = imp.plan
    by_class = dict(imp.counts)
    grouped = dict(imp.main_counts)
    return {
        "file": plan.source,
        "format": "ifc",
        "schema": imp.schema,
        "units": {"name": imp.unit.name, "metres_per_unit": imp.unit.metres_per_unit, "source": imp.unit.source,
                  "warning": next((i.message for i in plan.issues if i.kind == "units"), None)},
        "storeys": [{"name": s.label, "elevation_m": round(s.elevation_m, 4),
                     "elevation_attribute_m": None if s.elevation_attr_m is None else round(s.elevation_attr_m, 4),
                     "global_id": s.global_id, "walls": s.walls, "elements": s.elements,
                     "chosen": imp.storey is not None and s.global_id == imp.storey.global_id}
                    for s in imp.storeys],
        "storey": None if imp.storey is None else imp.storey.label,
        "storey_reason": imp.storey_reason,
        "floor_z_m": round(imp.floor_z, 4),
        "band_m": [round(v, 4) for v in imp.band],
        "counts": {"by_class": by_class, "main_classes": grouped, "obstacle_elements": imp.storey_counts,
                   "obstacles": plan.obstacle_count, "walls": int(len(plan.walls)), "solids": int(len(plan.solids)),
                   "doors": len(plan.doors), "labels": len(plan.labels)},
        "extent_m": [round(v, 4) for v in plan.extent_m],
        "origin_m": list(plan.origin),
        "doors": [{"x": round(d.x + plan.origin[0], 4), "y": round(d.y + plan.origin[1], 4),
                   "clear_width_m": round(d.width_m, 4), "global_id": d.handle, "name": d.label,
                   "measured": d.source == "ifc"} for d in plan.doors],
        "labels": [{"text": lb.text, "x": round(lb.x + plan.origin[0], 4), "y": round(lb.y + plan.origin[1], 4),
                    "global_id": lb.handle} for lb in plan.labels],
        "failed": list(imp.failed),
        "seconds": {k: round(v, 3) for k, v in imp.seconds.items()},
        "issues": [i.to_dict() for i in plan.issues],
    }


def _printable(text) -> str:
    return "".join(ch if ch.isprintable() else "?" for ch in str(text))


def format_ifc_report(report: dict) -> str:
    """A readable multi-line summary of an IFC inspect report."""
    u = report["units"]
    c = report["counts"]
    x0, y0, x1, y1 = report["extent_m"]
    lines = [
        f"file        {_printable(report['file'])}",
        f"IFC         {report['schema']}",
        f"unit        {u['name']} ({u['metres_per_unit']:g} m per unit): {_printable(u['source'])}",
    ]
    if u.get("warning"):
        lines.append(f"WARNING     {_printable(u['warning'])}")
    chosen = report["storey"] or "none (building level)"
    lines += [
        f"storey      {_printable(chosen)}, floor at {report['floor_z_m']:.2f} m"
        + (f" ({_printable(report['storey_reason'])})" if report["storey_reason"] else ""),
        f"band        {report['band_m'][0]:.2f} .. {report['band_m'][1]:.2f} m above the floor",
        f"extent      x {x0:.3f} .. {x1:.3f} m, y {y0:.3f} .. {y1:.3f} m ({x1 - x0:.2f} x {y1 - y0:.2f} m, "
        f"model coordinates)",
        f"obstacles   {c['obstacles']} ({c['walls']} linework, {c['solids']} filled) from "
        f"{sum(c['obstacle_elements'].values())} elements",
        f"doors       {c['doors']}",
        f"labels      {c['labels']} (spaces)",
        f"time        {report['seconds'].get('total', 0):.2f} s (meshing {report['seconds'].get('mesh', 0):.2f} s)",
        "",
        f"storeys ({len(report['storeys'])}):" if report["storeys"] else "storeys: none",
    ]
    for s in report["storeys"]:
        mark = "*" if s["chosen"] else " "
        lines.append(f" {mark} {_printable(s['name']):<24} {s['elevation_m']:>8.2f} m  {s['walls']:>4} walls  "
                     f"{s['elements']:>5} elements")
    lines.append("")
    lines.append("elements by class:")
    for cls, n in report["counts"]["main_classes"].items():
        if n:
            lines.append(f"  {cls:<26} {n:>6}")
    lines.append("")
    lines.append(f"issues ({len(report['issues'])}):" if report["issues"] else "issues: none")
    for issue in report["issues"]:
        tail = f" [{issue['handle']}]" if issue.get("handle") else ""
        lines.append(f"  {issue['kind']}: {_printable(issue['message'])}{tail}")
    return "\n".join(lines)
