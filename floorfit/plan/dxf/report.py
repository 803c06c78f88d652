"""The ``floorfit inspect`` report: what the importer saw and decided, as JSON and text."""

from __future__ import annotations

from collections import Counter

import numpy as np
import shapely

from floorfit.plan.dxf.cleanup import clean_segments, segments_of_lines
from floorfit.plan.dxf.importer import ImportResult, import_drawing

__all__ = ["inspect_plan", "report_from_result", "format_report", "cleaned_edge_count"]


def cleaned_edge_count(plan) -> int:
    """Obstacle edges left after the linework clean-up the C-obstacles start from
    (:func:`floorfit.plan.dxf.cleanup.clean_segments`: zero-length and duplicate segments dropped,
    collinear overlapping ones merged; filled polygons, wall bands among them
    (:mod:`floorfit.plan.dxf.wallbands`), keep their ring edges)."""
    n = 0
    if len(plan.walls):
        coords, idx = shapely.get_coordinates(plan.walls, return_index=True)
        n += len(clean_segments(segments_of_lines(coords, idx)))
    if len(plan.solids):
        rings = shapely.get_rings(plan.solids)
        n += int(np.sum(shapely.get_num_coordinates(rings) - 1))
    return n


def report_from_result(result: ImportResult) -> dict:
    """The JSON-ready report of one import."""
    plan = result.plan
    counts = Counter(d.source for d in plan.doors)
    bands = result.notes            # wall bands: floorfit.plan.dxf.wallbands.form_wall_bands
    extent = result.drawn_extent_m or plan.extent_m
    return {
        "file": plan.source,
        "dxf_version": plan.dxf_version,
        "dxf_release": result.release,
        "binary": result.binary,
        "units": {
            "name": plan.units,
            "metres_per_unit": plan.metres_per_unit,
            "reason": plan.unit_reason,
            "warning": result.units.warning,
            "likely": result.units.likely,
        },
        "extent_m": [round(v, 6) for v in extent],
        "size_m": [round(extent[2] - extent[0], 6), round(extent[3] - extent[1], 6)],
        "obstacle_extent_m": [round(v, 6) for v in plan.extent_m],
        "origin_m": list(plan.origin),
        "curve_tolerance_m": plan.curve_tolerance_m,
        "layers": [layer.to_dict() for layer in plan.layers],
        "counts": {
            "obstacles": plan.obstacle_count,
            "walls": int(len(plan.walls)),
            "solids": int(len(plan.solids)),
            "doors": len(plan.doors),
            "doors_by_source": dict(sorted(counts.items())),
            "labels": len(plan.labels),
            "edges": plan.edge_count() + bands.get("wall-band-segments", 0) - bands.get("wall-band-edges", 0),
            "edges_after_cleanup": cleaned_edge_count(plan),
            "wall_bands": bands.get("wall-bands", 0),
            "wall_band_lines": bands.get("wall-band-lines", 0),
            "expanded_entities": result.block_stats.expanded_entities,
            "block_depth": result.block_stats.max_depth,
        },
        "doors": [{"x": round(d.x, 4), "y": round(d.y, 4), "width_m": round(d.width_m, 4), "layer": d.layer,
                   "source": d.source, "handle": d.handle, "label": d.label} for d in plan.doors],
        "labels": [{"text": lb.text, "x": round(lb.x, 4), "y": round(lb.y, 4), "layer": lb.layer,
                    "handle": lb.handle} for lb in plan.labels],
        "issues": [i.to_dict() for i in plan.issues],
    }


def inspect_plan(path, **kwargs) -> dict:
    """Import ``path`` like :func:`~floorfit.plan.dxf.load_plan` (same keyword arguments) and
    return the report of ``floorfit inspect`` as a JSON-ready dict.

    Keys: ``dxf_version``, ``units`` {name, metres_per_unit, reason, warning, likely},
    ``extent_m`` [xmin, ymin, xmax, ymax] (drawing frame, metres, from geometry),
    ``layers`` [{name, role, entities, reason}], ``counts`` {obstacles, walls, solids,
    doors, labels, ...}, ``doors``, ``labels``, ``issues``.
    """
    return report_from_result(import_drawing(path, **kwargs))


def _printable(text: str) -> str:
    """Text from a drawing made safe for a terminal (no escape sequences)."""
    return "".join(ch if ch.isprintable() else "?" for ch in str(text))


def format_report(report: dict, max_layers: int = 60) -> str:
    """A readable multi-line summary of an inspect report."""
    u = report["units"]
    x0, y0, x1, y1 = report["extent_m"]
    c = report["counts"]
    lines = [
        f"file        {_printable(report['file'])}",
        f"DXF         {report['dxf_version']}" + (f" ({report['dxf_release']})" if report.get("dxf_release") else "")
        + (", binary" if report.get("binary") else ""),
        f"unit        {u['name']} ({u['metres_per_unit']:g} m per unit): {_printable(u['reason'])}",
    ]
    if u.get("warning"):
        lines.append(f"WARNING     {_printable(u['warning'])}")
    lines += [
        f"extent      x {x0:.3f} .. {x1:.3f} m, y {y0:.3f} .. {y1:.3f} m "
        f"({x1 - x0:.2f} x {y1 - y0:.2f} m, all geometry read, drawing frame)",
        f"obstacles   within {report['obstacle_extent_m'][2] - report['obstacle_extent_m'][0]:.2f} x "
        f"{report['obstacle_extent_m'][3] - report['obstacle_extent_m'][1]:.2f} m",
        f"obstacles   {c['obstacles']} ({c['walls']} linework, {c['solids']} filled), {c['edges']} edges"
        + (f" ({c['edges_after_cleanup']} after clean-up; {c.get('wall_bands', 0)} wall bands from "
           f"{c.get('wall_band_lines', 0)} lines)" if c.get("edges_after_cleanup") is not None else "")
        + f", curves flattened to {report['curve_tolerance_m'] * 1000:g} mm",
        f"doors       {c['doors']}" + (" (" + ", ".join(f"{k} {v}" for k, v in c["doors_by_source"].items()) + ")"
                                       if c["doors_by_source"] else ""),
        f"labels      {c['labels']}",
        f"blocks      {c['expanded_entities']} entities after expansion, nesting depth {c['block_depth']}",
        "",
        f"layers ({len(report['layers'])}):",
    ]
    width = max([len(_printable(layer["name"])) for layer in report["layers"][:max_layers]] + [5])
    for layer in report["layers"][:max_layers]:
        lines.append(f"  {_printable(layer['name']):<{width}}  {layer['entities']:>7}  {layer['role']:<9}  "
                     f"{_printable(layer['reason'])}")
    if len(report["layers"]) > max_layers:
        lines.append(f"  ... and {len(report['layers']) - max_layers} more layers (see --json)")
    lines.append("")
    lines.append(f"issues ({len(report['issues'])}):" if report["issues"] else "issues: none")
    for issue in report["issues"]:
        where = []
        if issue.get("handle"):
            where.append(f"#{issue['handle']}")
        if issue.get("layer"):
            where.append(f"layer {_printable(issue['layer'])}")
        tail = f" [{', '.join(where)}]" if where else ""
        lines.append(f"  {issue['kind']}: {_printable(issue['message'])}{tail}")
    return "\n".join(lines)
