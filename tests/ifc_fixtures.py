"""IFC test inputs: the six real models read in place, and small models built with ifcopenshell.api.

The real models live in ``../shared/models-ifc`` (licences differ from ours: never copied
here); their MANIFEST and ``stats.json`` are the outside source for storeys and counts.
Imports are cached per (model, storey, band) so the test modules share them.

The built model is a corridor designed in metres (all numbers below are the model's own
dimensions, set here; they are the expected widths and heights):

* corridor x 0 .. 12, y 0 .. 1.8 (free), walls 0.2 m thick, 2.7 m high;
* a cross wall at x 6.0 .. 6.2 with a door opening y 0.5 .. 1.3 (0.80 m) and head 2.10 m,
  filled by a door whose OverallWidth is 0.80 m;
* a table against the south wall, x 2.0 .. 3.2, y 0.0 .. 0.8, top 0.70 .. 0.72 m, four
  0.06 m legs at its corners;
* a duct across the corridor, x 9.0 .. 9.4, underside 2.20 m, top 2.50 m.
"""

from __future__ import annotations

import functools
import json
from pathlib import Path

SHARED = Path(__file__).resolve().parents[2] / "shared"
MODELS = SHARED / "models-ifc"
BCF_XSD = SHARED / "bcf-xsd"

DUPLEX = "buildingsmart-community__Community-Sample-Test-Files__Duplex_A_20110907.ifc"
FZK = "ThatOpen__engine_web-ifc__AC20-FZK-Haus.ifc"
INSTITUTE = "opensourceBIM__TestFiles__AC11-Institute-Var-2-IFC.ifc"
PAVILION = "yorikvanhavre__barcelona-pavillion__Pabellon_de_Barcelona.ifc"
REVIT = "opensourceBIM__TestFiles__revit2014_unicode.ifc"
OPENHOUSE = "ThatOpen__engine_web-ifc__IfcOpenHouse_IFC4.ifc"
ALL = (DUPLEX, FZK, INSTITUTE, PAVILION, REVIT, OPENHOUSE)

# the built corridor (metres)
WALL_T, WALL_H = 0.2, 2.7
DOOR_Y, DOOR_W, DOOR_HEAD = 0.5, 0.80, 2.10
TABLE = (2.0, 0.0, 3.2, 0.8)
TABLE_TOP = (0.70, 0.72)
LEG = 0.06
DUCT_X = (9.0, 9.4)
DUCT_Z = (2.20, 2.50)
CORRIDOR = (0.0, 0.0, 12.0, 1.8)
CROSS_X = (6.0, 6.2)


def model_path(name: str) -> Path:
    return MODELS / name


def have_models() -> bool:
    return all((MODELS / n).is_file() for n in ALL)


@functools.lru_cache(maxsize=1)
def stats() -> dict:
    data = json.loads((MODELS / "stats.json").read_text(encoding="utf-8"))
    return {f["file"]: f["analysis"] for f in data["files"]}


@functools.cache
def imported(name: str, storey=None, band_top_m=None):
    """The :class:`~floorfit.plan.ifc.IfcImport` of a real model (cached)."""
    from floorfit.plan.ifc import import_model

    return import_model(model_path(name), storey=storey, band_top_m=band_top_m)


# -- building a model with ifcopenshell.api --------------------------------------------------

def _box(f, x0, y0, z0, x1, y1, z1):
    """An extruded rectangle (world coordinates when the product sits at the origin)."""
    pos = f.createIfcAxis2Placement3D(f.createIfcCartesianPoint((0.5 * (x0 + x1), 0.5 * (y0 + y1), float(z0))),
                                      None, None)
    profile = f.createIfcRectangleProfileDef("AREA", None, None, float(x1 - x0), float(y1 - y0))
    return f.createIfcExtrudedAreaSolid(profile, pos, f.createIfcDirection((0.0, 0.0, 1.0)), float(z1 - z0))


def _product(f, body, storey, ifc_class, name, boxes, **attrs):
    import ifcopenshell.api.root
    import ifcopenshell.api.spatial

    p = ifcopenshell.api.root.create_entity(f, ifc_class=ifc_class, name=name)
    for k, v in attrs.items():
        setattr(p, k, v)
    origin = f.createIfcAxis2Placement3D(f.createIfcCartesianPoint((0.0, 0.0, 0.0)), None, None)
    p.ObjectPlacement = f.createIfcLocalPlacement(storey.ObjectPlacement, origin)
    rep = f.createIfcShapeRepresentation(body, "Body", "SweptSolid", [_box(f, *b) for b in boxes])
    p.Representation = f.createIfcProductDefinitionShape(None, None, [rep])
    if storey is not None and not p.is_a("IfcOpeningElement"):
        ifcopenshell.api.spatial.assign_container(f, products=[p], relating_structure=storey)
    return p


def build_corridor(path: Path, *, unit: str = "m", storey_z: float = 0.0, with_storey: bool = True) -> Path:
    """Write the corridor model (see the module docstring) to ``path``; ``storey_z`` lifts the
    storey (all heights stay relative to it)."""
    import ifcopenshell
    import ifcopenshell.api.aggregate
    import ifcopenshell.api.context
    import ifcopenshell.api.feature
    import ifcopenshell.api.root
    import ifcopenshell.api.unit

    f = ifcopenshell.file(schema="IFC4")
    project = ifcopenshell.api.root.create_entity(f, ifc_class="IfcProject", name="corridor")
    if unit == "mm":
        ifcopenshell.api.unit.assign_unit(f, length={"is_metric": True, "raw": "MILLIMETERS"})
    else:
        ifcopenshell.api.unit.assign_unit(f, length={"is_metric": True, "raw": "METERS"})
    scale = 1000.0 if unit == "mm" else 1.0
    model = ifcopenshell.api.context.add_context(f, context_type="Model")
    body = ifcopenshell.api.context.add_context(f, context_type="Model", context_identifier="Body",
                                                target_view="MODEL_VIEW", parent=model)
    site = ifcopenshell.api.root.create_entity(f, ifc_class="IfcSite", name="site")
    building = ifcopenshell.api.root.create_entity(f, ifc_class="IfcBuilding", name="building")
    ifcopenshell.api.aggregate.assign_object(f, products=[site], relating_object=project)
    ifcopenshell.api.aggregate.assign_object(f, products=[building], relating_object=site)
    origin = f.createIfcAxis2Placement3D(f.createIfcCartesianPoint((0.0, 0.0, 0.0)), None, None)
    building.ObjectPlacement = f.createIfcLocalPlacement(None, origin)
    container = building
    if with_storey:
        storey = ifcopenshell.api.root.create_entity(f, ifc_class="IfcBuildingStorey", name="Ground")
        ifcopenshell.api.aggregate.assign_object(f, products=[storey], relating_object=building)
        storey.Elevation = storey_z * scale
        pos = f.createIfcAxis2Placement3D(f.createIfcCartesianPoint((0.0, 0.0, storey_z * scale)), None, None)
        storey.ObjectPlacement = f.createIfcLocalPlacement(building.ObjectPlacement, pos)
        container = storey

    def s(*v):
        return tuple(x * scale for x in v)

    x0, y0, x1, y1 = CORRIDOR
    t = WALL_T
    walls = [
        ("south wall", s(x0 - t, y0 - t, 0, x1 + t, y0, WALL_H)),
        ("north wall", s(x0 - t, y1, 0, x1 + t, y1 + t, WALL_H)),
        ("west wall", s(x0 - t, y0, 0, x0, y1, WALL_H)),
        ("east wall", s(x1, y0, 0, x1 + t, y1, WALL_H)),
    ]
    for name, b in walls:
        _product(f, body, container, "IfcWall", name, [b])
    cross = _product(f, body, container, "IfcWall", "cross wall", [s(CROSS_X[0], y0, 0, CROSS_X[1], y1, WALL_H)])
    opening = _product(f, body, container, "IfcOpeningElement", "door opening",
                       [s(CROSS_X[0] - 0.1, DOOR_Y, 0, CROSS_X[1] + 0.1, DOOR_Y + DOOR_W, DOOR_HEAD)])
    ifcopenshell.api.feature.add_feature(f, feature=opening, element=cross)
    door = _product(f, body, container, "IfcDoor", "D01",
                    [s(CROSS_X[0] + 0.07, DOOR_Y, 0, CROSS_X[0] + 0.11, DOOR_Y + DOOR_W, DOOR_HEAD)],
                    OverallWidth=DOOR_W * scale, OverallHeight=DOOR_HEAD * scale)
    ifcopenshell.api.feature.add_filling(f, opening=opening, element=door)
    tx0, ty0, tx1, ty1 = TABLE
    legs = [s(x, y, 0, x + LEG, y + LEG, TABLE_TOP[0]) for x in (tx0, tx1 - LEG) for y in (ty0, ty1 - LEG)]
    _product(f, body, container, "IfcFurniture", "table", [s(tx0, ty0, TABLE_TOP[0], tx1, ty1, TABLE_TOP[1]), *legs])
    _product(f, body, container, "IfcDuctSegment", "duct", [s(DUCT_X[0], y0, DUCT_Z[0], DUCT_X[1], y1, DUCT_Z[1])])
    space = ifcopenshell.api.root.create_entity(f, ifc_class="IfcSpace", name="C01")
    space.LongName = "Corridor"
    space.ObjectPlacement = f.createIfcLocalPlacement(container.ObjectPlacement, origin)
    rep = f.createIfcShapeRepresentation(body, "Body", "SweptSolid", [_box(f, *s(x0, y0, 0, x1, y1, WALL_H))])
    space.Representation = f.createIfcProductDefinitionShape(None, None, [rep])
    if with_storey:
        ifcopenshell.api.aggregate.assign_object(f, products=[space], relating_object=container)
    f.write(str(path))
    return path


def write_corridor_dxf(folder: Path) -> tuple[Path, Path]:
    """The same corridor drawn as a DXF (metres) with a site file giving the heights."""
    import ezdxf

    doc = ezdxf.new("R2000")
    doc.units = 6
    msp = doc.modelspace()

    def rect(x0, y0, x1, y1, layer):
        msp.add_lwpolyline([(x0, y0), (x1, y0), (x1, y1), (x0, y1)], close=True, dxfattribs={"layer": layer})

    x0, y0, x1, y1 = CORRIDOR
    t = WALL_T
    rect(x0 - t, y0 - t, x1 + t, y0, "A-WALL")
    rect(x0 - t, y1, x1 + t, y1 + t, "A-WALL")
    rect(x0 - t, y0, x0, y1, "A-WALL")
    rect(x1, y0, x1 + t, y1, "A-WALL")
    rect(CROSS_X[0], y0, CROSS_X[1], DOOR_Y, "A-WALL")
    rect(CROSS_X[0], DOOR_Y + DOOR_W, CROSS_X[1], y1, "A-WALL")
    rect(CROSS_X[0], DOOR_Y, CROSS_X[1], DOOR_Y + DOOR_W, "LINTEL")
    tx0, ty0, tx1, ty1 = TABLE
    rect(tx0, ty0, tx1, ty1, "TABLE-TOP")
    for x in (tx0, tx1 - LEG):
        for y in (ty0, ty1 - LEG):
            rect(x, y, x + LEG, y + LEG, "TABLE-LEGS")
    rect(DUCT_X[0], y0, DUCT_X[1], y1, "DUCT")
    plan = folder / "corridor.dxf"
    doc.saveas(plan)
    site = folder / "corridor.site.toml"
    site.write_text(f"""
[clearance]
reference = "none"
[layers]
"LINTEL" = "wall"
"TABLE-TOP" = "solid"
"TABLE-LEGS" = "solid"
"DUCT" = "solid"
[heights]
"LINTEL" = [{DOOR_HEAD}, {WALL_H}]
"TABLE-TOP" = [{TABLE_TOP[0]}, {TABLE_TOP[1]}]
"TABLE-LEGS" = [0.0, {TABLE_TOP[0]}]
"DUCT" = [{DUCT_Z[0]}, {DUCT_Z[1]}]
""", encoding="utf-8")
    return plan, site
