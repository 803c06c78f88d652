"""Stations read from a station layer of the drawing (POINTs and block INSERTs with a name attribute)."""

import ezdxf
import pytest

from floorfit.plan.site import read_site, stations_from_drawing


def test_points_and_named_blocks_on_the_station_layer(tmp_path):
    doc = ezdxf.new("R2013")
    doc.header["$INSUNITS"] = 4
    msp = doc.modelspace()
    msp.add_lwpolyline([(0, 0), (10000, 0), (10000, 6000), (0, 6000)], close=True, dxfattribs={"layer": "A-WALL"})
    msp.add_point((2000, 3000), dxfattribs={"layer": "X-STATION"})
    blk = doc.blocks.new("DOCKMARK")
    blk.add_circle((0, 0), 150)
    blk.add_attdef("NAME", (0, 0), dxfattribs={"height": 100})
    ref = msp.add_blockref("DOCKMARK", (8000, 1000), dxfattribs={"layer": "X-STATION", "rotation": 90})
    ref.add_auto_attribs({"NAME": "DOCK-1"})
    msp.add_point((5000, 5000), dxfattribs={"layer": "A-WALL"})       # not on the station layer
    path = tmp_path / "site.dxf"
    doc.saveas(path)
    stations = stations_from_drawing(path, "x-station", 0.001)
    by_name = {s.name: s for s in stations}
    assert set(by_name) == {"S1", "DOCK-1"}
    assert (by_name["S1"].x, by_name["S1"].y, by_name["S1"].heading_deg) == pytest.approx((2.0, 3.0, None))
    assert (by_name["DOCK-1"].x, by_name["DOCK-1"].y, by_name["DOCK-1"].heading_deg) == pytest.approx((8.0, 1.0, 90.0))
    site = tmp_path / "site.toml"
    site.write_text('station_layer = "X-STATION"\n')
    assert read_site(site).station_layer == "X-STATION"
