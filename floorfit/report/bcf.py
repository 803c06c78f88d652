"""``findings.bcf``: the findings of a check on a building model as BCF 3.0 topics.

BCF (buildingSMART's BIM Collaboration Format) carries issues into the model viewers BIM
coordinators already use. The file is a zip archive:

* ``bcf.version`` (3.0), ``extensions.xml`` (the topic types, statuses, priorities and labels
  used here) and ``project.bcfp`` (the IFC project's GlobalId);
* one folder per finding, named by the topic's GUID, holding ``markup.bcf`` (title,
  description, labels, the model file), ``viewpoint.bcfv`` (an orthogonal camera looking down
  on the finding's location in model coordinates, the storey's floor height included, with a
  clipping plane above the storey's usable band, and the GlobalIds of the elements that
  bound the place as selected components) and ``snapshot.png`` (a close-up of the plan).

Topic GUIDs are derived from the model file, the storey and the finding (kind and place), so
checking the same model again gives the same topics. Everything is written with the standard
library's XML tools; the tests validate each part against buildingSMART's schemas.
"""

from __future__ import annotations

import io
import math
import uuid
import zipfile
from datetime import UTC, datetime
from typing import Any
from xml.etree import ElementTree as ET

import numpy as np
import shapely

__all__ = ["findings_bcf", "is_model_plan", "bounding_elements", "BCF_SIGNATURE", "TOPIC_TYPES"]

#: Zip comment that marks a findings.bcf floorfit wrote.
BCF_SIGNATURE = b"floorfit findings (BCF 3.0)"
#: Topic type per finding kind.
TOPIC_TYPES = {"blocked": "Blocked passage", "no-turn": "No turning room", "tight": "Tight clearance",
               "maneuver": "Manoeuvre needed"}
_STATUS = "Open"
_PRIORITIES = ("High", "Normal", "Low")
_AUTHOR = "floorfit"
_NAMESPACE = uuid.UUID("6f1d2c3e-8a4b-5c6d-9e0f-112233445566")
_CAMERA_ABOVE_M = 10.0       # camera height above the storey floor
_VIEW_HEIGHT_M = 8.0         # visible height of the close-up view, metres
_ASPECT = 4.0 / 3.0
_SNAPSHOT_PX = (640, 480)
_MAX_COMPONENTS = 8


def is_model_plan(plan: Any) -> bool:
    """True when ``plan`` came from a building model (it knows its storey and element GlobalIds)."""
    model = getattr(plan, "model", None)
    return isinstance(model, dict) and model.get("format") == "ifc"


def _sub(parent, tag: str, text: str | None = None, **attrib) -> ET.Element:
    el = ET.SubElement(parent, tag, {k: v for k, v in attrib.items() if v is not None})
    if text is not None:
        el.text = text
    return el


def _xml(root: ET.Element) -> bytes:
    ET.indent(root, space="  ")
    return ET.tostring(root, encoding="utf-8", xml_declaration=True)


def _point(parent, tag: str, xyz) -> None:
    el = _sub(parent, tag)
    for name, v in zip(("X", "Y", "Z"), xyz):
        _sub(el, name, repr(float(v)))


def _guid(*parts) -> str:
    return str(uuid.uuid5(_NAMESPACE, "|".join(str(p) for p in parts)))


def bounding_elements(plan: Any, finding: Any, vehicle: Any = None, limit: int = _MAX_COMPONENTS) -> list[str]:
    """GlobalIds of the elements nearest the finding that count for the vehicle (nearest first),
    plus the door there, if any."""
    x, y = plan.to_local(finding.x, finding.y)
    here = shapely.Point(x, y)
    height = getattr(vehicle, "height_m", None)
    h = math.inf if height is None else height
    reach = max(1.0, float(finding.needed_width_m or 0.0), float(finding.clear_width_m or 0.0))
    scored: dict[str, float] = {}
    for geoms, heights, ids in ((plan.walls, plan.wall_heights, getattr(plan, "wall_ids", None)),
                                (plan.solids, plan.solid_heights, getattr(plan, "solid_ids", None))):
        if ids is None or len(ids) != len(geoms) or not len(geoms):
            continue
        counts = (heights[:, 0] < h) & (heights[:, 1] > 0)
        dist = shapely.distance(here, geoms)
        for i in np.flatnonzero(counts & (dist <= reach)):
            gid = str(ids[i])
            scored[gid] = min(scored.get(gid, math.inf), float(dist[i]))
    out = [gid for gid, _ in sorted(scored.items(), key=lambda kv: (kv[1], kv[0]))][:limit]
    for d in plan.doors:
        if d.handle and math.hypot(d.x - x, d.y - y) <= 1.5 and d.handle not in out:
            out.append(str(d.handle))
    return out


def _snapshot(plan: Any, finding: Any, mark: str) -> bytes:
    """A close-up PNG of the plan around the finding (drawing frame, metres)."""
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib.figure import Figure

    half_h = _VIEW_HEIGHT_M / 2
    half_w = half_h * _ASPECT
    fig = Figure(figsize=(_SNAPSHOT_PX[0] / 100, _SNAPSHOT_PX[1] / 100), dpi=100)
    ax = fig.add_axes((0, 0, 1, 1))
    box = shapely.box(finding.x - half_w, finding.y - half_h, finding.x + half_w, finding.y + half_h)
    ox, oy = plan.origin
    window = shapely.box(finding.x - half_w - ox, finding.y - half_h - oy, finding.x + half_w - ox,
                         finding.y + half_h - oy)
    for g in plan.solids[shapely.intersects(plan.solids, window)] if len(plan.solids) else []:
        for poly in shapely.get_parts(shapely.intersection(g, window)):
            if poly.geom_type != "Polygon" or poly.is_empty:
                continue
            xs, ys = np.asarray(poly.exterior.coords).T
            ax.fill(xs + ox, ys + oy, color="#9a9a9a", ec="#2b2b2b", lw=0.6)
    for g in plan.walls[shapely.intersects(plan.walls, window)] if len(plan.walls) else []:
        for line in shapely.get_parts(shapely.intersection(g, window)):
            if line.is_empty or line.geom_type not in ("LineString", "LinearRing"):
                continue
            xs, ys = np.asarray(line.coords).T
            ax.plot(xs + ox, ys + oy, color="#2b2b2b", lw=1.0)
    if finding.geometry is not None:
        for part in shapely.get_parts(plan.geometry_to_drawing(finding.geometry)):
            if part.geom_type == "Polygon":
                xs, ys = np.asarray(part.exterior.coords).T
                ax.fill(xs, ys, color="#d9480f", alpha=0.35, lw=0)
    ax.plot([finding.x], [finding.y], marker="o", ms=14, mfc="none", mec="#d9480f", mew=2.5)
    ax.text(finding.x, finding.y + 0.45, mark, color="#d9480f", ha="center", va="bottom", fontsize=12,
            fontweight="bold")
    x0, y0, x1, y1 = box.bounds
    ax.set_xlim(x0, x1)
    ax.set_ylim(y0, y1)
    ax.set_aspect("equal")
    ax.set_axis_off()
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=100, metadata={"Software": None})
    return buf.getvalue()


def _title(finding: Any) -> str:
    where = f" at {finding.label}" if finding.label else ""
    kind = TOPIC_TYPES.get(finding.kind, finding.kind)
    return f"{finding.id} {kind}{where}"[:250]


def _description(finding: Any, plan: Any, vehicle: Any) -> str:
    lines = [finding.summary]
    if finding.cuts_off:
        lines.append("Cuts off stations: " + ", ".join(finding.cuts_off) + ".")
    name = getattr(vehicle, "name", None)
    storey = plan.model.get("storey") or "building level"
    lines.append(f"Vehicle: {name}. Storey: {storey}. Location x {finding.x:.2f} m, y {finding.y:.2f} m "
                 f"(model coordinates).")
    lines.append("Doors are assumed open (leaf at 90 degrees). Geometric screening only, not a risk assessment.")
    return "\n".join(lines)


def _priority(finding: Any) -> str:
    if finding.kind == "blocked":
        return _PRIORITIES[0]
    return _PRIORITIES[1] if finding.kind in ("no-turn", "maneuver") else _PRIORITIES[2]


def _markup(finding: Any, plan: Any, vehicle: Any, topic: str, viewpoint: str, created: str) -> bytes:
    model = plan.model
    root = ET.Element("Markup")
    header = _sub(root, "Header")
    files = _sub(header, "Files")
    f = _sub(files, "File", IfcProject=model.get("project_id"), IfcSpatialStructureElement=model.get("storey_id"),
             IsExternal="true")
    _sub(f, "Filename", model.get("file") or "model.ifc")
    t = _sub(root, "Topic", Guid=topic, TopicType=TOPIC_TYPES.get(finding.kind, finding.kind), TopicStatus=_STATUS)
    _sub(t, "Title", _title(finding))
    _sub(t, "Priority", _priority(finding))
    labels = _sub(t, "Labels")
    _sub(labels, "Label", "floorfit")
    _sub(labels, "Label", finding.kind)
    if finding.cause:
        _sub(labels, "Label", f"cause: {finding.cause}")
    _sub(t, "CreationDate", created)
    _sub(t, "CreationAuthor", _AUTHOR)
    _sub(t, "Description", _description(finding, plan, vehicle))
    vps = _sub(t, "Viewpoints")
    vp = _sub(vps, "ViewPoint", Guid=viewpoint)
    _sub(vp, "Viewpoint", "viewpoint.bcfv")
    _sub(vp, "Snapshot", "snapshot.png")
    return _xml(root)


def _visinfo(finding: Any, plan: Any, vehicle: Any, viewpoint: str) -> bytes:
    model = plan.model
    floor = float(model.get("floor_z_m") or 0.0)
    band_top = float((model.get("band_m") or [0.0, 2.0])[1])
    root = ET.Element("VisualizationInfo", Guid=viewpoint)
    components = bounding_elements(plan, finding, vehicle)
    if components:
        comp = _sub(root, "Components")
        sel = _sub(comp, "Selection")
        for gid in components:
            _sub(sel, "Component", IfcGuid=gid)
    cam = _sub(root, "OrthogonalCamera")
    _point(cam, "CameraViewPoint", (finding.x, finding.y, floor + _CAMERA_ABOVE_M))
    _point(cam, "CameraDirection", (0.0, 0.0, -1.0))
    _point(cam, "CameraUpVector", (0.0, 1.0, 0.0))
    _sub(cam, "ViewToWorldScale", repr(_VIEW_HEIGHT_M))
    _sub(cam, "AspectRatio", repr(_ASPECT))
    planes = _sub(root, "ClippingPlanes")
    plane = _sub(planes, "ClippingPlane")          # hide what lies above the storey's usable band
    _point(plane, "Location", (finding.x, finding.y, floor + band_top + 0.3))
    _point(plane, "Direction", (0.0, 0.0, 1.0))
    return _xml(root)


def _extensions() -> bytes:
    root = ET.Element("Extensions")
    for group, item, values in (("TopicTypes", "TopicType", TOPIC_TYPES.values()),
                                ("TopicStatuses", "TopicStatus", (_STATUS,)),
                                ("Priorities", "Priority", _PRIORITIES),
                                ("TopicLabels", "TopicLabel", ("floorfit", *TOPIC_TYPES))):
        el = _sub(root, group)
        for v in values:
            _sub(el, item, v)
    return _xml(root)


def findings_bcf(result: Any, *, created: datetime | None = None) -> bytes:
    """The BCF 3.0 archive (bytes) of a check's findings on a building model.

    ``result`` is a :class:`~floorfit.analysis.findings.CheckResult` whose plan came from an
    IFC model (see :func:`is_model_plan`). ``created`` stamps the topics (default: now, UTC).
    """
    plan = result.plan
    if not is_model_plan(plan):
        raise ValueError("findings.bcf needs a plan read from a building model (IFC)")
    model = plan.model
    stamp = (created or datetime.now(UTC)).astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", compression=zipfile.ZIP_DEFLATED) as zf:
        zf.comment = BCF_SIGNATURE
        zf.writestr("bcf.version", _xml(ET.Element("Version", VersionId="3.0")))
        zf.writestr("extensions.xml", _extensions())
        info = ET.Element("ProjectInfo")
        _sub(_sub(info, "Project", ProjectId=model.get("project_id") or _guid(model.get("file"))), "Name",
             model.get("file") or "model")
        zf.writestr("project.bcfp", _xml(info))
        for number, f in enumerate(result.findings, start=1):
            topic = _guid(model.get("file"), model.get("storey"), f.kind, f.cause, round(f.x, 2), round(f.y, 2), f.id)
            viewpoint = _guid(topic, "viewpoint")
            zf.writestr(f"{topic}/markup.bcf", _markup(f, plan, result.vehicle, topic, viewpoint, stamp))
            zf.writestr(f"{topic}/viewpoint.bcfv", _visinfo(f, plan, result.vehicle, viewpoint))
            zf.writestr(f"{topic}/snapshot.png", _snapshot(plan, f, f.id or str(number)))
    return buf.getvalue()
