"""One storey of an IFC building model as a :class:`~floorfit.plan.model.Plan`.

Pipeline: open the model and read its unit (:mod:`.reading`), pick the storey, mesh the
candidate elements on all cores (:mod:`.meshing`), cut each element into plan pieces with
their own bottom and top (:mod:`.sections`), measure the doors (:mod:`.doors`), name the
rooms after the spaces, and shift everything into a local frame as the DXF importer does.

The *drawing frame* of an IFC plan is the model's world x, y in metres; heights are metres
above the storey floor. ``Plan.model`` keeps what is needed to go back into the model (the
storey's world z, the project's GlobalId) and ``Plan.wall_ids`` / ``Plan.solid_ids`` the
GlobalId of the element each obstacle came from.
"""

from __future__ import annotations

import time
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import shapely

from floorfit.errors import PlanImportError
from floorfit.plan.ifc.doors import door_aliases, measure_doors
from floorfit.plan.ifc.dropoffs import DROP_CLASS, DropOffs, find_dropoffs
from floorfit.plan.ifc.meshing import LINEAR_DEFLECTION_M, Mesh, mesh_elements
from floorfit.plan.ifc.reading import (
    LengthUnit,
    Storey,
    choose_storey,
    length_unit,
    list_storeys,
    open_model,
    storey_elements,
)
from floorfit.plan.ifc.sections import element_pieces, section
from floorfit.plan.model import FULL_HEIGHT, ImportIssue, Label, LayerInfo, Plan

__all__ = ["IfcImport", "import_model", "DEFAULT_BAND_TOP_M", "FLOOR_SKIN_M", "OVERHEAD_ALLOWANCE_M"]

#: Top of the usable height band (metres above the floor) when the vehicle's height is not
#: known: below the usual door head (2.0-2.1 m), so lintels do not close the doors. Elements
#: starting at or above it are left out; give the vehicle a height to check overhead clearance.
DEFAULT_BAND_TOP_M = 2.0
#: Added above the vehicle's height when it is known: elements starting within it are kept
#: (and reported with their height) although they do not stop the vehicle.
OVERHEAD_ALLOWANCE_M = 0.10
#: Material less than this high above the storey floor is the floor itself (finishes, sills).
FLOOR_SKIN_M = 0.02
#: Slabs and coverings whose top is at most this high above the floor are floor build-up.
FLOOR_BUILDUP_M = 0.10

#: Classes that are never obstacles: openings and other features, virtual elements, doors
#: (passable with the leaf open; measured separately).
_NOT_OBSTACLES = ("IfcFeatureElement", "IfcVirtualElement", "IfcDoor")
_WALL_CLASSES = ("IfcWall", "IfcCurtainWall")
#: Classes of the storey below that may reach up into this one (walls over two storeys, stairs
#: and ramps coming up, railings, risers); its furniture, doors, windows and slabs cannot.
_REACH_UP = ("IfcWall", "IfcCurtainWall", "IfcColumn", "IfcStair", "IfcStairFlight", "IfcRamp", "IfcRampFlight",
             "IfcRailing", "IfcMember", "IfcPlate", "IfcBuildingElementProxy", "IfcDistributionElement")
#: Classes ``inspect`` counts (subtypes included: IfcWall counts IfcWallStandardCase).
MAIN_CLASSES = ("IfcBuildingStorey", "IfcWall", "IfcCurtainWall", "IfcDoor", "IfcWindow", "IfcSlab", "IfcColumn",
                "IfcBeam", "IfcStair", "IfcRamp", "IfcRailing", "IfcCovering", "IfcFurnishingElement",
                "IfcBuildingElementProxy", "IfcMember", "IfcPlate", "IfcRoof", "IfcFlowSegment", "IfcSpace",
                "IfcOpeningElement")


@dataclass
class IfcImport:
    """What importing one storey produced (the plan) and learnt (for ``inspect``)."""

    plan: Plan
    schema: str
    unit: LengthUnit
    storeys: list[Storey]
    storey: Storey | None
    storey_reason: str
    floor_z: float
    band: tuple[float, float]
    counts: dict[str, int] = field(default_factory=dict)          # elements in the model by class
    storey_counts: dict[str, int] = field(default_factory=dict)   # obstacles' elements by class
    main_counts: dict[str, int] = field(default_factory=dict)     # by_type counts (subtypes included)
    failed: list[str] = field(default_factory=list)               # GlobalIds that did not mesh
    seconds: dict[str, float] = field(default_factory=dict)


def _is_a_any(entity, classes) -> bool:
    return any(entity.is_a(c) for c in classes)


def _door_parts(doors) -> set[int]:
    import ifcopenshell.util.element as ue

    ids = set()
    for d in doors:
        ids.update(e.id() for e in ue.get_decomposition(d))
    return ids


def _candidates(model, storeys: list[Storey], chosen: Storey | None, band_top: float):
    """Elements that may reach into the chosen storey's band: those of the storey, of the
    storey below (tall elements, stairs coming up), of any storey starting inside the band,
    and those not contained in any storey."""
    import ifcopenshell.util.element as ue

    if chosen is None:
        return [e for e in model.by_type("IfcElement")]
    z0 = chosen.elevation_m
    below = [s for s in storeys if s.elevation_m < z0 - 1e-6]
    lowest = max((s.elevation_m for s in below), default=z0)
    picked: dict[int, object] = {}
    for s in storeys:
        if lowest - 1e-6 <= s.elevation_m < z0 + band_top:
            lower = s.elevation_m < z0 - 1e-6
            for e in storey_elements(s.entity):
                if not lower or _is_a_any(e, _REACH_UP):
                    picked[e.id()] = e
    for e in model.by_type("IfcElement"):
        if e.id() in picked:
            continue
        container = ue.get_container(e)
        if container is None:
            parent = ue.get_aggregate(e)
            while parent is not None and container is None:
                container = ue.get_container(parent)
                parent = ue.get_aggregate(parent)
        if container is None or not container.is_a("IfcBuildingStorey"):
            picked[e.id()] = e
    return list(picked.values())


def _floor_from_walls(meshes: list[Mesh]) -> tuple[float, str]:
    """Floor height for a model without storeys: the wall base nearest z = 0."""
    bottoms = [round(float(m.verts[:, 2].min()), 2) for m in meshes
               if m.ifc_class.startswith(_WALL_CLASSES) and len(m.verts)]
    if not bottoms:
        return 0.0, "no walls: floor at z = 0"
    counts = Counter(bottoms)
    z = min(counts, key=lambda v: (abs(v), -counts[v]))
    return float(z), f"the wall base nearest z = 0 ({counts[z]} of {len(bottoms)} walls start there)"


def _space_labels(spaces: list[Mesh], entities: dict, floor_z: float) -> list[tuple[str, float, float, str, object]]:
    """(text, x, y, GlobalId, area) for each space: its name at the centre of its largest
    inscribed circle, and its plan area (drawing frame)."""
    out = []
    for m in spaces:
        e = entities[m.id]
        text = " ".join(t for t in ((e.Name or "").strip(), (getattr(e, "LongName", None) or "").strip()) if t)
        if not text or len(m.faces) == 0:
            continue
        z = m.verts[:, 2] - floor_z
        cut = min(max(1.0, float(z.min()) + 0.05), float(z.max()) - 0.01)
        area, _ = section(np.column_stack([m.verts[:, :2], z]), m.faces, cut)
        if area is None:
            continue
        try:
            centre = shapely.get_coordinates(shapely.maximum_inscribed_circle(area, 0.05))[0]
        except (shapely.errors.GEOSException, IndexError):
            centre = shapely.get_coordinates(area.representative_point())[0]
        out.append((text, float(centre[0]), float(centre[1]), m.global_id, area))
    return out


def _unit_check(unit: LengthUnit, doors) -> tuple[ImportIssue | None, float]:
    """A warning when attribute values contradict the unit assignment; the factor that makes
    door OverallWidth values agree with the measured openings."""
    pairs = [(d.overall_width_raw, d.clear_width_m) for d in doors
             if d.overall_width_raw and d.clear_width_m and d.measured]
    if not pairs:
        return None, unit.metres_per_unit
    ratios = np.array([c / (w * unit.metres_per_unit) for w, c in pairs])
    med = float(np.median(ratios))
    if 0.5 <= med <= 2.0:
        return None, unit.metres_per_unit
    from floorfit.plan.dxf.units import UNIT_METRES

    candidates = ("mm", "cm", "m", "in", "ft")
    likely = min(candidates, key=lambda u: abs(np.log(np.median([c / (w * UNIT_METRES[u]) for w, c in pairs]))))
    raw = np.array([w for w, _ in pairs]) * unit.metres_per_unit
    clear = np.array([c for _, c in pairs])
    msg = (f"the unit assignment says {unit.name} ({unit.source}), but door OverallWidth values would make "
           f"the doors {np.median(raw):.4g} m wide (median of {len(pairs)}) while their openings measure "
           f"{np.median(clear):.2f} m in the geometry; likely unit of those values: {likely}; "
           f"geometry is read in metres and is not affected; door widths are compared as {likely}")
    return ImportIssue("units", msg), UNIT_METRES[likely]


class _Obstacles:
    """Plan pieces collected element by element (drawing frame, heights above the floor)."""

    def __init__(self):
        self.walls, self.wall_h, self.wall_cls, self.wall_ids = [], [], [], []
        self.solids, self.solid_h, self.solid_cls, self.solid_ids = [], [], [], []
        self.per_class: Counter = Counter()
        self.filled, self.filled_h = [], []      # every piece filled (walls too): for measuring doors

    def add(self, mesh: Mesh, pieces) -> None:
        if pieces:
            self.per_class[mesh.ifc_class] += 1
        linework = mesh.ifc_class.startswith(_WALL_CLASSES)
        for p in pieces:
            parts = shapely.get_parts(p.geometry)
            for g in parts:
                if g.geom_type == "Polygon":
                    self.filled.append(g)
                    self.filled_h.append((p.bottom, p.top))
            if linework:       # walls are outlines, as in drawings (their directions set heading slices)
                parts = [r for g in parts for r in (shapely.get_rings(g) if g.geom_type == "Polygon" else [g])]
            for g in parts:
                filled = g.geom_type == "Polygon"
                (self.solids if filled else self.walls).append(
                    g if filled or g.geom_type == "LineString" else shapely.LineString(g.coords))
                (self.solid_h if filled else self.wall_h).append((p.bottom, p.top))
                (self.solid_cls if filled else self.wall_cls).append(mesh.ifc_class)
                (self.solid_ids if filled else self.wall_ids).append(mesh.global_id)

    def origin(self) -> tuple[float, float]:
        """The lower-left corner of the obstacles rounded down to whole metres."""
        b = shapely.bounds(np.array([*self.walls, *self.solids], dtype=object))
        return float(np.floor(np.nanmin(b[:, 0]))), float(np.floor(np.nanmin(b[:, 1])))

    def layers(self) -> list[LayerInfo]:
        counts = Counter(self.wall_cls) + Counter(self.solid_cls)
        return [LayerInfo(c, "wall" if c.startswith(_WALL_CLASSES) else "solid", n, "IFC class")
                for c, n in sorted(counts.items())]


def _band_top(band_top_m: float | None, issues: list[ImportIssue], src: str) -> float:
    band_top = DEFAULT_BAND_TOP_M if band_top_m is None else float(band_top_m)
    if not (band_top > FLOOR_SKIN_M):
        raise PlanImportError(f"the height band must reach above the floor, got {band_top:g} m", src)
    if band_top_m is None:
        issues.append(ImportIssue("band", f"the vehicle's height is not known: elements starting "
                                          f"{DEFAULT_BAND_TOP_M:.2f} m or more above the floor are left out; "
                                          f"give the vehicle a height to check overhead clearance"))
    return band_top


def _pick_storey(storeys: list[Storey], storey, issues: list[ImportIssue], src: str):
    if not storeys:
        if storey is not None:
            raise PlanImportError(f"the model has no storeys, so --storey '{storey}' cannot be chosen", src)
        return None, "building level"
    chosen, reason = choose_storey(storeys, storey, src)
    issues.append(ImportIssue("storey", f"storey {chosen.label} at {chosen.elevation_m:.2f} m: {reason}"))
    if chosen.elevation_attr_m is not None and abs(chosen.elevation_attr_m - chosen.elevation_m) > 0.01:
        issues.append(ImportIssue("storey", f"storey {chosen.label}: Elevation attribute "
                                            f"{chosen.elevation_attr_m:.3f} m differs from its placement "
                                            f"({chosen.elevation_m:.3f} m); using the placement"))
    return chosen, reason


def _main_counts(model) -> dict[str, int]:
    out = {}
    for cls in MAIN_CLASSES:
        try:
            out[cls] = len(model.by_type(cls))
        except RuntimeError:          # a class this schema does not have
            continue
    return out


def _elements_to_mesh(model, storeys, chosen, band_top):
    """{id: entity} of the obstacle candidates, doors and spaces to mesh."""
    import ifcopenshell.util.element as ue

    candidates = _candidates(model, storeys, chosen, band_top)
    doors = [e for e in candidates if e.is_a("IfcDoor")]
    skip = _door_parts(doors)
    obstacles = [e for e in candidates if e.id() not in skip and not _is_a_any(e, _NOT_OBSTACLES)]
    if chosen is not None:
        spaces = [e for e in ue.get_decomposition(chosen.entity) if e.is_a("IfcSpace")]
    else:
        spaces = list(model.by_type("IfcSpace"))
    return {e.id(): e for e in [*obstacles, *doors, *spaces]}


def _cut(meshes: list[Mesh], entities: dict, floor_z: float, band: tuple[float, float]):
    """Obstacles from the meshes, plus the door, space and slab meshes set aside."""
    obstacles = _Obstacles()
    doors, spaces, slabs = [], [], []
    for m in meshes:
        e = entities[m.id]
        if e.is_a("IfcSlab"):
            slabs.append((e, m))
        if e.is_a("IfcDoor"):
            doors.append(m)
        elif e.is_a("IfcSpace"):
            spaces.append(m)
        elif len(m.faces) and not (_is_a_any(e, ("IfcSlab", "IfcCovering"))
                                   and float(m.verts[:, 2].max()) - floor_z <= FLOOR_BUILDUP_M):
            obstacles.add(m, element_pieces(m.verts, m.faces, floor_z, band))
    return obstacles, doors, spaces, slabs


def _add_dropoffs(obs: _Obstacles, slabs, floor_z: float, issues: list[ImportIssue]) -> DropOffs:
    """Drop-offs (stair wells, open floor edges) as obstacles over the full height band."""
    standing = [g for g, (bottom, _) in zip(obs.filled, obs.filled_h) if bottom <= FLOOR_SKIN_M]
    drops = find_dropoffs(slabs, standing, floor_z, FLOOR_BUILDUP_M)
    issues.append(ImportIssue("drop-offs", drops.message))
    for area, gid in zip(drops.areas, drops.slab_ids):
        obs.solids.append(area)
        obs.solid_h.append(FULL_HEIGHT)
        obs.solid_cls.append(DROP_CLASS)
        obs.solid_ids.append(gid)
    if drops.areas:
        obs.per_class[DROP_CLASS] += len(drops.areas)
    return drops


def _doorways(measured, unit: LengthUnit, origin, issues: list[ImportIssue]):
    unit_issue, width_scale = _unit_check(unit, measured)
    if unit_issue is not None:
        issues.append(unit_issue)
    doorways = []
    for d in measured:
        doorways.append(d.doorway(origin))
        issue = d.width_issue(width_scale)
        if issue is not None:
            issues.append(issue)
    return doorways


def import_model(path, *, storey: str | float | None = None, band_top_m: float | None = None,
                 workers: int | None = None) -> IfcImport:
    """Import one storey of an IFC model (see :func:`floorfit.plan.ifc.load_ifc`)."""
    src = str(path)
    t0 = time.perf_counter()
    model = open_model(path)
    seconds = {"open": time.perf_counter() - t0}
    unit = length_unit(model)
    issues: list[ImportIssue] = [ImportIssue("units", unit.warning)] if unit.warning else []
    storeys = list_storeys(model, unit)
    band_top = _band_top(band_top_m, issues, src)
    chosen, reason = _pick_storey(storeys, storey, issues, src)
    entities = _elements_to_mesh(model, storeys, chosen, band_top)
    t1 = time.perf_counter()
    meshes, failed = mesh_elements(model, list(entities.values()), workers)
    seconds["mesh"] = time.perf_counter() - t1
    if chosen is not None:
        floor_z = chosen.elevation_m
    else:
        floor_z, why = _floor_from_walls([m for m in meshes if entities[m.id].is_a("IfcWall")])
        issues.append(ImportIssue("storey", f"the model has no storeys (IfcBuildingStorey); read at building "
                                            f"level with the floor at z = {floor_z:.2f} m: {why}"))
    t2 = time.perf_counter()
    band = (FLOOR_SKIN_M, band_top)
    obs, door_meshes, space_meshes, slabs = _cut(meshes, entities, floor_z, band)
    drops = _add_dropoffs(obs, slabs, floor_z, issues)
    seconds["cut"] = time.perf_counter() - t2
    if not obs.solids and not obs.walls:
        where = f"storey {chosen.label}" if chosen is not None else "the building level"
        raise PlanImportError(f"no walls, slabs or other obstacles on {where} "
                              f"(floor at {floor_z:.2f} m, band up to {band_top:.2f} m)", src)
    if failed:
        ids = ", ".join(e.GlobalId for e in failed[:10]) + (" ..." if len(failed) > 10 else "")
        issues.append(ImportIssue("mesh-failed", f"{len(failed)} element(s) could not be meshed and are left out: "
                                                 f"{ids}"))
    origin = obs.origin()
    t3 = time.perf_counter()
    open_lines = [(g, h) for g, h, c in zip(obs.walls, obs.wall_h, obs.wall_cls) if not c.startswith(_WALL_CLASSES)]
    measured = measure_doors([(entities[m.id], m) for m in door_meshes], obs.filled, obs.filled_h,
                             [g for g, _ in open_lines], [h for _, h in open_lines], floor_z)
    doorways = _doorways(measured, unit, origin, issues)
    entities_by_gid = {entities[m.id].GlobalId: entities[m.id] for m in door_meshes}
    seconds["doors"] = time.perf_counter() - t3
    spaces = _space_labels(space_meshes, entities, floor_z)
    labels = [Label(text, x - origin[0], y - origin[1], "IfcSpace", gid) for text, x, y, gid, _ in spaces]
    rooms = [(text, gid, shapely.transform(area, lambda c: c - np.array(origin))) for text, _, _, gid, area in spaces]
    layers = obs.layers()
    if doorways:
        layers.append(LayerInfo("IfcDoor", "door", len(doorways), "IFC class: passable with the leaf open"))
    if labels:
        layers.append(LayerInfo("IfcSpace", "label", len(labels), "IFC class: room names"))
    project = model.by_type("IfcProject")
    shift = np.array(origin)
    plan = Plan(
        walls=[shapely.transform(g, lambda c: c - shift) for g in obs.walls],
        solids=[shapely.transform(g, lambda c: c - shift) for g in obs.solids],
        origin=origin, source=src, units="m", metres_per_unit=1.0,
        unit_reason=f"model unit {unit.name} ({unit.source}); geometry read in metres",
        curve_tolerance_m=LINEAR_DEFLECTION_M,
        wall_heights=np.array(obs.wall_h, dtype=float).reshape(-1, 2),
        solid_heights=np.array(obs.solid_h, dtype=float).reshape(-1, 2),
        wall_layers=np.array(obs.wall_cls, dtype=object), solid_layers=np.array(obs.solid_cls, dtype=object),
        doors=doorways, labels=labels, layers=layers, issues=issues,
        wall_ids=np.array(obs.wall_ids, dtype=object), solid_ids=np.array(obs.solid_ids, dtype=object),
        model={
            "format": "ifc", "schema": model.schema, "file": Path(src).name,
            "project_id": project[0].GlobalId if project else None,
            "storey": None if chosen is None else chosen.label,
            "storey_id": None if chosen is None else chosen.global_id,
            "floor_z_m": floor_z, "band_m": [FLOOR_SKIN_M, band_top],
            "rooms": rooms, "door_names": {d.global_id: door_aliases(entities_by_gid[d.global_id])
                                           for d in measured},
            "drop_offs": len(drops.areas), "drop_off_m2": round(sum(a.area for a in drops.areas), 3),
        },
    )
    seconds["total"] = time.perf_counter() - t0
    return IfcImport(plan, model.schema, unit, storeys, chosen, reason, floor_z, band,
                     dict(sorted(Counter(e.is_a() for e in model.by_type("IfcProduct")).items())),
                     dict(sorted(obs.per_class.items())), _main_counts(model),
                     [e.GlobalId for e in failed], seconds)
