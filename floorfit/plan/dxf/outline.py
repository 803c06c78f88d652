"""Vehicle outlines drawn in DXF: one closed polyline on a layer or inside a block.

Arcs in the outline (bulges) are replaced by polylines that *enclose* the true outline
(circumscribed where the arc bulges out, chords where it bulges in), within
:data:`OUTLINE_TOLERANCE_M`, so a vehicle is never made smaller than drawn.
"""

from __future__ import annotations

import fnmatch

import numpy as np

from floorfit.errors import PlanImportError, VehicleError
from floorfit.plan.dxf.curves import bulge_polyline
from floorfit.plan.dxf.reading import open_drawing
from floorfit.plan.dxf.units import INSUNITS_NAMES, UNIT_METRES, parse_units

__all__ = ["outline_from_dxf", "OUTLINE_TOLERANCE_M"]

#: Largest distance between a flattened outline arc and the true arc, metres (outwards).
OUTLINE_TOLERANCE_M = 0.001


def _closed_polylines(entities, layer: str | None):
    found = []
    for e in entities:
        t = e.dxftype()
        if t not in ("LWPOLYLINE", "POLYLINE"):
            continue
        if layer is not None and not fnmatch.fnmatchcase(e.dxf.get("layer", "0").lower(), layer.lower()):
            continue
        if t == "LWPOLYLINE":
            data = np.array(list(e.get_points("xyb")), dtype=float).reshape(-1, 3)
            closed = bool(e.closed)
        else:
            if not e.is_2d_polyline:
                continue
            data = np.array([(*tuple(v.dxf.location)[:2], v.dxf.get("bulge", 0.0)) for v in e.vertices],
                            dtype=float).reshape(-1, 3)
            closed = bool(e.is_closed)
        if len(data) >= 2 and np.allclose(data[0, :2], data[-1, :2]):
            data = data[:-1]
            closed = True
        if closed and len(data) >= 3:
            found.append((e, data))
    return found


def outline_from_dxf(path, *, layer: str | None = None, block: str | None = None,
                     units: str | None = None) -> list[tuple[float, float]]:
    """The vehicle outline (metres, counter-clockwise) from a closed polyline in a DXF.

    Parameters
    ----------
    path : str or Path
        DXF file.
    layer : str, optional
        Layer-name pattern (case-insensitive) the polyline must be on.
    block : str, optional
        Block whose definition holds the outline (block coordinates are used as-is:
        the block's base point is the vehicle origin). Without it, model space is searched.
    units : str, optional
        Drawing unit overriding $INSUNITS; required when the header has no unit.

    Raises
    ------
    VehicleError
        no closed polyline, several candidates (ambiguous), unknown unit, bad geometry.
    """
    try:
        doc, _ = open_drawing(path)
    except PlanImportError as exc:
        raise VehicleError(exc.message, exc.path, exc.where) from None
    if units is not None:
        name, mpu = parse_units(units)
    else:
        code = doc.header.get("$INSUNITS", 0) if "$INSUNITS" in doc.header else None
        name = INSUNITS_NAMES.get(code) if code is not None else None
        if name is None:
            raise VehicleError("the drawing has no unit ($INSUNITS missing or unitless): give the unit",
                               str(path), "units")
        mpu = UNIT_METRES[name]
    if block is not None:
        layout = doc.blocks.get(block)
        if layout is None:
            names = sorted(b.name for b in doc.blocks if not b.name.startswith("*"))
            raise VehicleError(f"no block named '{block}' (blocks: {', '.join(names[:20]) or 'none'})",
                               str(path), "block")
        entities, place = layout, f"block '{block}'"
    else:
        entities, place = doc.modelspace(), "model space"
    found = _closed_polylines(entities, layer)
    where = place + (f", layer '{layer}'" if layer else "")
    if not found:
        raise VehicleError(f"no closed polyline in {where}", str(path))
    if len(found) > 1:
        handles = ", ".join(f"#{e.dxf.handle}" for e, _ in found[:6])
        raise VehicleError(f"{len(found)} closed polylines in {where} ({handles}): choose one with a layer or block",
                           str(path))
    entity, data = found[0]
    xy, bulges = data[:, :2], data[:, 2]
    if not np.all(np.isfinite(data)):
        raise VehicleError("outline has a non-finite coordinate", str(path), f"entity #{entity.dxf.handle}")
    area2 = float(np.sum(xy[:, 0] * np.roll(xy[:, 1], -1) - np.roll(xy[:, 0], -1) * xy[:, 1]))
    chord_poly = bulge_polyline(xy, bulges, True, OUTLINE_TOLERANCE_M / mpu)
    area_c = float(np.sum(chord_poly[:, 0] * np.roll(chord_poly[:, 1], -1)
                          - np.roll(chord_poly[:, 0], -1) * chord_poly[:, 1]))
    orientation = np.sign(area_c if area_c != 0 else area2)
    if orientation == 0:
        raise VehicleError("outline encloses no area", str(path), f"entity #{entity.dxf.handle}")
    pts = bulge_polyline(xy, bulges, True, OUTLINE_TOLERANCE_M / mpu, outside=True, orientation=orientation)
    if np.allclose(pts[0], pts[-1]):
        pts = pts[:-1]
    pts = pts * mpu
    if orientation < 0:
        pts = pts[::-1]
    return [(float(x), float(y)) for x, y in pts]
