"""Vehicle outlines from DXF (closed polyline on a layer or in a block) and from VDA 5050
factsheets (field names per VDA 5050 2.1.0 "agvGeometry" / "physicalParameters" and the
newer "mobileRobotGeometry" schema of the VDA5050/VDA5050 repository)."""

from __future__ import annotations

import json
import math

import dxf_fixtures as F
import pytest
import shapely

from floorfit.errors import VehicleError
from floorfit.plan.dxf import outline_from_dxf
from floorfit.plan.dxf.outline import OUTLINE_TOLERANCE_M
from floorfit.vehicles.factsheet import outline_from_factsheet


@pytest.mark.parametrize("unit", F.UNITS)
def test_outline_with_bulge_encloses_the_true_shape(tmp_path, unit):
    path = F.write_vehicle_outline(tmp_path / "agv.dxf", unit)
    pts = outline_from_dxf(path, layer="outline")
    poly = shapely.Polygon(pts)
    assert poly.is_valid and shapely.is_ccw(poly.exterior)
    # true shape: 1 x 0.6 box plus a half disc of radius 0.3 centred on (1, 0.3)
    truth = shapely.box(0, 0, 1, 0.6).union(shapely.Point(1, 0.3).buffer(0.3, quad_segs=4096))
    assert poly.buffer(1e-9).covers(truth.buffer(-1e-6))                   # never smaller than drawn
    assert truth.buffer(OUTLINE_TOLERANCE_M + 1e-6).covers(poly)           # at most 1 mm larger
    assert poly.area == pytest.approx(0.6 + math.pi * 0.09 / 2, abs=2e-3)


def test_outline_from_a_block_and_ambiguity(tmp_path):
    path = F.write_vehicle_outline(tmp_path / "agv.dxf", "mm")
    pts = outline_from_dxf(path, block="AGV")
    assert shapely.Polygon(pts).equals(shapely.box(-0.45, -0.3, 0.45, 0.3))
    with pytest.raises(VehicleError, match=r"2 closed polylines in model space, layer 'TWO' \(#"):
        outline_from_dxf(path, layer="TWO")
    with pytest.raises(VehicleError, match="no closed polyline in model space, layer 'NOPE'"):
        outline_from_dxf(path, layer="NOPE")
    with pytest.raises(VehicleError, match="no block named 'TRUCK'"):
        outline_from_dxf(path, block="TRUCK")
    assert shapely.Polygon(outline_from_dxf(path, block="AGV", units="m")).area == pytest.approx(0.54e6)


def test_outline_without_unit_needs_one(tmp_path):
    path = F.write_vehicle_outline(tmp_path / "agv.dxf", "mm")
    import ezdxf
    doc = ezdxf.readfile(path)
    doc.units = 0
    doc.saveas(tmp_path / "unitless.dxf")
    with pytest.raises(VehicleError) as info:
        outline_from_dxf(tmp_path / "unitless.dxf", block="AGV")
    assert str(info.value) == (f"{tmp_path / 'unitless.dxf'}: units: the drawing has no unit "
                               "($INSUNITS missing or unitless): give the unit")
    assert shapely.Polygon(outline_from_dxf(tmp_path / "unitless.dxf", block="AGV", units="mm")).area == \
        pytest.approx(0.54)


def _factsheet_v2(**extra):
    data = {
        "headerId": 1, "timestamp": "2024-01-01T00:00:00.00Z", "version": "2.1.0",
        "manufacturer": "Example", "serialNumber": "0001",
        "typeSpecification": {"seriesName": "Carrier-1200", "agvKinematic": "DIFF", "agvClass": "CARRIER",
                              "maxLoadMass": 1000, "localizationTypes": ["NATURAL"],
                              "navigationTypes": ["AUTONOMOUS"]},
        "physicalParameters": {"speedMin": 0.01, "speedMax": 1.5, "accelerationMax": 0.5,
                               "decelerationMax": 0.5, "heightMin": 0.3, "heightMax": 0.35,
                               "width": 0.8, "length": 1.2},
        "agvGeometry": {"envelopes2d": [
            {"set": "safety field slow", "polygonPoints": [{"x": -1, "y": -1}, {"x": 2, "y": -1}, {"x": 2, "y": 1}]},
            {"set": "unloaded", "polygonPoints": [{"x": 0.6, "y": 0.4}, {"x": -0.6, "y": 0.4},
                                                   {"x": -0.6, "y": -0.4}, {"x": 0.6, "y": -0.4}]},
            {"set": "loaded", "description": "with a EUR pallet",
             "polygonPoints": [{"x": -0.7, "y": -0.45}, {"x": 0.7, "y": -0.45}, {"x": 0.7, "y": 0.45},
                               {"x": -0.7, "y": 0.45}]},
        ]},
    }
    data.update(extra)
    return data


def test_factsheet_v2_envelopes(tmp_path):
    p = tmp_path / "fs.json"
    p.write_text(json.dumps(_factsheet_v2()), encoding="utf-8")
    fs = outline_from_factsheet(p)
    assert fs["name"] == "Carrier-1200" and fs["height_m"] == 0.35 and fs["source"] == "envelopes2d"
    assert shapely.Polygon(fs["outline"]).equals(shapely.box(-0.6, -0.4, 0.6, 0.4))
    assert shapely.is_ccw(shapely.Polygon(fs["outline"]).exterior)        # clockwise input reversed
    assert shapely.Polygon(fs["loaded_outline"]).equals(shapely.box(-0.7, -0.45, 0.7, 0.45))
    assert set(fs["envelopes"]) == {"safety field slow", "unloaded", "loaded"}


def test_factsheet_newer_schema_and_rectangle_fallback(tmp_path):
    data = _factsheet_v2()
    del data["agvGeometry"]
    data["physicalParameters"] = {"minimumHeight": 0.2, "maximumHeight": 1.9, "width": 0.7, "length": 1.1}
    data["mobileRobotGeometry"] = {"envelopes2d": [
        {"envelope2dId": "body", "vertices": [{"x": -0.5, "y": -0.3}, {"x": 0.5, "y": -0.3}, {"x": 0.5, "y": 0.3},
                                               {"x": -0.5, "y": 0.3}]}]}
    p = tmp_path / "fs3.json"
    p.write_text(json.dumps(data), encoding="utf-8")
    fs = outline_from_factsheet(p)
    assert fs["height_m"] == 1.9 and "loaded_outline" not in fs
    assert shapely.Polygon(fs["outline"]).equals(shapely.box(-0.5, -0.3, 0.5, 0.3))
    del data["mobileRobotGeometry"]
    p.write_text(json.dumps(data), encoding="utf-8")
    fs = outline_from_factsheet(p)
    assert fs["source"] == "physicalParameters"
    assert shapely.Polygon(fs["outline"]).equals(shapely.box(-0.55, -0.35, 0.55, 0.35))


def test_factsheet_errors(tmp_path):
    p = tmp_path / "bad.json"
    p.write_text("{not json", encoding="utf-8")
    with pytest.raises(VehicleError, match=r"bad.json: line 1: not valid JSON"):
        outline_from_factsheet(p)
    p.write_text(json.dumps({"manufacturer": "x"}), encoding="utf-8")
    with pytest.raises(VehicleError) as info:
        outline_from_factsheet(p)
    assert str(info.value) == f"{p}: physicalParameters: missing object 'physicalParameters'"
    data = _factsheet_v2()
    data["agvGeometry"]["envelopes2d"][1]["polygonPoints"][2]["x"] = "wide"
    p.write_text(json.dumps(data), encoding="utf-8")
    with pytest.raises(VehicleError) as info:
        outline_from_factsheet(p)
    assert str(info.value) == (f"{p}: agvGeometry.envelopes2d[1].polygonPoints[2].x: "
                               "expected a finite number, got 'wide'")
    with pytest.raises(VehicleError, match="file not found"):
        outline_from_factsheet(tmp_path / "none.json")
