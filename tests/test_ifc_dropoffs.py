"""Drop-offs from an IFC storey's floor slabs: a stair well and the edge of the floor are
obstacles over the full height; on a built room and on a real model (read in place).

The built room (metres, set here; the expected places are these numbers): walls around
x 0 .. 10, y 0 .. 3; a floor slab (top at the storey floor, 0.2 m thick) over x 0 .. 8 only,
so x 8 .. 10 has no floor; a stair-well opening in it over x 3.5 .. 5.0, y 1.0 .. 3.0, which
leaves a 1.0 m passage along the south wall.
"""

from __future__ import annotations

import numpy as np
import pytest
import shapely
from ifc_fixtures import FZK, _product, have_models, model_path

import floorfit as ff
from floorfit.analysis.check import run_check
from floorfit.analysis.findings import Station
from floorfit.plan.ifc import import_model, load_ifc
from floorfit.plan.ifc.dropoffs import DROP_CLASS

ROOM = (0.0, 0.0, 10.0, 3.0)
SLAB_X1 = 8.0
WELL = (3.5, 1.0, 5.0, 3.0)
PASSAGE = WELL[1] - ROOM[1]


def build_room(path):
    import ifcopenshell
    import ifcopenshell.api.aggregate
    import ifcopenshell.api.context
    import ifcopenshell.api.feature
    import ifcopenshell.api.root
    import ifcopenshell.api.unit

    f = ifcopenshell.file(schema="IFC4")
    project = ifcopenshell.api.root.create_entity(f, ifc_class="IfcProject", name="room")
    ifcopenshell.api.unit.assign_unit(f, length={"is_metric": True, "raw": "METERS"})
    model = ifcopenshell.api.context.add_context(f, context_type="Model")
    body = ifcopenshell.api.context.add_context(f, context_type="Model", context_identifier="Body",
                                                target_view="MODEL_VIEW", parent=model)
    building = ifcopenshell.api.root.create_entity(f, ifc_class="IfcBuilding", name="building")
    ifcopenshell.api.aggregate.assign_object(f, products=[building], relating_object=project)
    origin = f.createIfcAxis2Placement3D(f.createIfcCartesianPoint((0.0, 0.0, 0.0)), None, None)
    building.ObjectPlacement = f.createIfcLocalPlacement(None, origin)
    storey = ifcopenshell.api.root.create_entity(f, ifc_class="IfcBuildingStorey", name="Upper")
    ifcopenshell.api.aggregate.assign_object(f, products=[storey], relating_object=building)
    storey.Elevation = 0.0
    storey.ObjectPlacement = f.createIfcLocalPlacement(building.ObjectPlacement, origin)
    x0, y0, x1, y1 = ROOM
    t = 0.2
    for name, b in (("south", (x0 - t, y0 - t, 0, x1 + t, y0, 2.7)), ("north", (x0 - t, y1, 0, x1 + t, y1 + t, 2.7)),
                    ("west", (x0 - t, y0, 0, x0, y1, 2.7)), ("east", (x1, y0, 0, x1 + t, y1, 2.7))):
        _product(f, body, storey, "IfcWall", name, [b])
    slab = _product(f, body, storey, "IfcSlab", "floor", [(x0, y0, -0.2, SLAB_X1, y1, 0.0)], PredefinedType="FLOOR")
    well = _product(f, body, storey, "IfcOpeningElement", "stair well", [(*WELL[:2], -0.3, *WELL[2:], 0.1)])
    ifcopenshell.api.feature.add_feature(f, feature=well, element=slab)
    f.write(str(path))
    return path


@pytest.fixture(scope="module")
def room(tmp_path_factory):
    return build_room(tmp_path_factory.mktemp("room") / "room.ifc")


def _drops(plan):
    return [(g, h) for g, h, c in zip(plan.solids, plan.solid_heights, plan.solid_layers) if c == DROP_CLASS]


def _shift(plan, x0, y0, x1, y1):
    ox, oy = plan.origin
    return shapely.box(x0 - ox, y0 - oy, x1 - ox, y1 - oy)


def test_stair_well_and_floor_edge_are_full_height_obstacles(room):
    plan = load_ifc(room)
    drops = _drops(plan)
    expected = [_shift(plan, *WELL), _shift(plan, SLAB_X1, ROOM[1], ROOM[2], ROOM[3])]
    assert len(drops) == 2
    for box in expected:
        g, h = next((g, h) for g, h in drops if g.intersects(box))
        assert shapely.symmetric_difference(g, box).area < 0.01
        assert h[0] == 0.0 and h[1] == float("inf")
    assert any(i.kind == "drop-offs" and "2 area(s)" in i.message for i in plan.issues)


@pytest.mark.parametrize("width, reachable", [(0.6, True), (1.2, False)])
def test_a_vehicle_cannot_cross_the_well(room, width, reachable):
    plan = load_ifc(room, band_top_m=1.1)
    vehicle = ff.rectangle_vehicle(1.4, width, height_m=1.0, name=f"{width} wide")
    stations = [Station("WEST", 1.5, 1.5), Station("EAST", 6.5, 1.5)]
    result = run_check(plan, vehicle, stations, heading_step_deg=10.0)
    assert result.reachable["WEST"]["EAST"] is reachable
    if not reachable:
        f = min((f for f in result.findings if f.kind == "blocked"), key=lambda b: abs(b.x - 4.25))
        assert WELL[0] - 0.5 < f.x < WELL[2] + 0.5
        assert f.clear_width_m == pytest.approx(PASSAGE, abs=0.02)


def test_the_floor_edge_stops_the_vehicle(room):
    plan = load_ifc(room, band_top_m=1.1)
    vehicle = ff.rectangle_vehicle(0.6, 0.6, height_m=1.0, name="small")
    stations = [Station("WEST", 1.5, 0.5), Station("BEYOND", 9.0, 1.5)]
    result = run_check(plan, vehicle, stations, heading_step_deg=10.0, stations_inside_ok=True)
    assert not result.reachable["WEST"]["BEYOND"]


@pytest.mark.skipif(not have_models(), reason="../shared/models-ifc not present")
def test_real_stair_well_matches_the_slab_opening():
    """FZK-Haus, attic: the floor slab's opening (the stair well) is the one drop-off."""
    import ifcopenshell
    import ifcopenshell.geom

    imp = import_model(model_path(FZK), storey="Dachgeschoss")
    drops = _drops(imp.plan)
    model = ifcopenshell.open(str(model_path(FZK)))
    settings = ifcopenshell.geom.settings()
    settings.set("use-world-coords", True)
    openings = [r.RelatedOpeningElement for s in model.by_type("IfcSlab") if s.PredefinedType == "FLOOR"
                for r in s.HasOpenings]
    assert len(openings) == 1 and len(drops) == 1
    shape = ifcopenshell.geom.create_shape(settings, openings[0])
    v = np.asarray(shape.geometry.verts, dtype=float).reshape(-1, 3)
    box = _shift(imp.plan, v[:, 0].min(), v[:, 1].min(), v[:, 0].max(), v[:, 1].max())
    g, _ = drops[0]
    assert shapely.symmetric_difference(g, box).area < 0.02 * box.length
    assert imp.plan.model["drop_offs"] == 1
