"""Vehicle files that point to an outline drawing or a VDA 5050 factsheet (invented vehicles)."""

import json

import ezdxf
import pytest

import floorfit as ff
from floorfit.errors import VehicleError


def test_outline_from_dxf_in_millimetres(tmp_path):
    doc = ezdxf.new("R2000")
    doc.header["$INSUNITS"] = 4
    doc.modelspace().add_lwpolyline([(-350, -310), (550, -310), (550, 310), (-350, 310)], close=True,
                                    dxfattribs={"layer": "VEHICLE"})
    doc.saveas(tmp_path / "robot.dxf")
    (tmp_path / "v.toml").write_text('name = "from drawing"\n[footprint]\noutline_dxf = "robot.dxf"\n'
                                     'outline_layer = "VEHICLE"\nmargin = 0.05\n')
    v = ff.load_vehicle(tmp_path / "v.toml")
    assert v.outline.bounds == pytest.approx((-0.35, -0.31, 0.55, 0.31), abs=1e-9)
    assert v.margin_m == 0.05


def test_outline_and_height_from_vda5050_factsheet(tmp_path):
    # field names of VDA 5050 2.1.0 (agvGeometry.envelopes2d[].polygonPoints, physicalParameters.heightMax)
    sheet = {"typeSpecification": {"seriesName": "demo tugger"},
             "physicalParameters": {"length": 1.2, "width": 0.7, "heightMax": 1.45},
             "agvGeometry": {"envelopes2d": [
                 {"set": "body", "polygonPoints": [{"x": 0.8, "y": -0.35}, {"x": 0.8, "y": 0.35},
                                                   {"x": -0.4, "y": 0.35}, {"x": -0.4, "y": -0.35}]}]}}
    (tmp_path / "agv.json").write_text(json.dumps(sheet))
    (tmp_path / "v.toml").write_text('[footprint]\nfactsheet = "agv.json"\n')
    v = ff.load_vehicle(tmp_path / "v.toml")
    assert v.outline.bounds == pytest.approx((-0.4, -0.35, 0.8, 0.35))
    assert v.height_m == pytest.approx(1.45)


def test_outline_file_and_rectangle_conflict(tmp_path):
    (tmp_path / "v.toml").write_text('[footprint]\nfactsheet = "agv.json"\nwidth = 1\n')
    with pytest.raises(VehicleError, match=r"footprint\.width: an outline file and the rectangle"):
        ff.load_vehicle(tmp_path / "v.toml")
