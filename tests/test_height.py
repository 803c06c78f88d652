"""Height-aware obstacles: an overhead obstacle blocks a tall vehicle and not a short one."""

import numpy as np
import pytest
import shapely

import floorfit as ff
from floorfit.analysis.check import run_check
from floorfit.analysis.findings import Station
from floorfit.plan.model import Plan
from floorfit.plan.site import Site, apply_height_ranges, read_site

NO_CLEARANCE = dict(required_clearance_m=0.0, clearance_reference="none")


def conveyor_corridor() -> Plan:
    """A 12 × 2.5 m corridor (walls on A-WALL) crossed at x = 6 by an overhead conveyor drawn as a
    0.6 m wide band on layer M-CONV-OVHD (invented scenario)."""
    walls = [shapely.box(0, 0, 12, 2.5)]
    conveyor = shapely.box(5.7, 0, 6.3, 2.5)
    plan = Plan.from_geometries(walls=walls, solids=[conveyor])
    plan.wall_layers = np.array(["A-WALL"] * len(plan.walls), dtype=object)
    plan.solid_layers = np.array(["M-CONV-OVHD"], dtype=object)
    return plan


STATIONS = [Station("IN", 2.0, 1.25), Station("OUT", 10.0, 1.25)]


def test_site_height_range_blocks_tall_vehicle_only(tmp_path):
    site_file = tmp_path / "site.toml"
    site_file.write_text('[heights]\n"m-conv-*" = [2.1, 2.6]\n[clearance]\nreference = "none"\n')
    site = read_site(site_file)
    assert site.heights == {"m-conv-*": (2.1, 2.6)}
    plan = apply_height_ranges(conveyor_corridor(), site.heights)
    assert plan.solid_heights.tolist() == [[2.1, 2.6]]
    tall = ff.rectangle_vehicle(1.2, 0.8, height_m=2.35, name="mast up")
    short = ff.rectangle_vehicle(1.2, 0.8, height_m=0.4, name="low robot")
    r = run_check(plan, short, STATIONS, site=site)
    assert r.reachable["IN"]["OUT"] and not [f for f in r.findings if f.kind == "blocked"]
    r = run_check(plan, tall, STATIONS, site=site)
    assert not r.reachable["IN"]["OUT"]
    (f,) = [f for f in r.findings if f.kind == "blocked"]
    assert f.cause == "height"
    assert f.clear_height_m == pytest.approx(2.1) and f.needed_height_m == pytest.approx(2.35)
    assert "clear height 2.10 m, the vehicle needs 2.35 m" in f.summary
    assert 5.0 <= f.x <= 7.0


def test_without_heights_every_obstacle_counts():
    plan = conveyor_corridor()        # no ranges given: the band reaches the floor
    short = ff.rectangle_vehicle(1.2, 0.8, height_m=0.4)
    r = run_check(plan, short, STATIONS, site=Site(**NO_CLEARANCE))
    assert not r.reachable["IN"]["OUT"]
    # the band then reaches the floor and closes the corridor wall to wall: not even a person
    # passes, so it is not a pinch point but a separation, said in the notes
    assert [f for f in r.findings if f.kind == "blocked"] == []
    assert any("not connected even for a person" in n for n in r.notes)


def test_vehicle_file_height_and_loaded_state(tmp_path):
    v = tmp_path / "truck.toml"
    v.write_text("""
name = "reach truck"
[footprint]
width = 1.1
length = 2.0
reference_to_front = 1.6
height = 2.1
[loaded]
length = 2.9
reference_to_front = 2.5
height = 2.6
[motion]
mode = "differential"
""")
    empty = ff.load_vehicle(v)
    loaded = ff.load_vehicle(v, state="loaded")
    assert (empty.height_m, empty.length_m) == (2.1, 2.0)
    assert loaded.height_m == 2.6 and loaded.length_m == pytest.approx(2.9) and loaded.width_m == pytest.approx(1.1)
    plan = apply_height_ranges(conveyor_corridor(), {"M-CONV-OVHD": (2.3, 2.8)})
    st = [Station("IN", 2.0, 1.25, 0.0), Station("OUT", 10.0, 1.25, 0.0)]
    site = Site(**NO_CLEARANCE)
    assert run_check(plan, empty, st, site=site).reachable["IN"]["OUT"]
    assert not run_check(plan, loaded, st, site=site).reachable["IN"]["OUT"]


def _corridor_dxf(path, *, conveyor_elevation_mm=None, thickness_mm=0.0, conveyor_layer="M-CONV"):
    """A 12 × 2.5 m corridor in millimetres with a 0.6 m wide conveyor band across it (invented)."""
    import ezdxf
    doc = ezdxf.new("R2013")
    doc.header["$INSUNITS"] = 4
    msp = doc.modelspace()
    msp.add_lwpolyline([(0, 0), (12000, 0), (12000, 2500), (0, 2500)], close=True, dxfattribs={"layer": "A-WALL"})
    attribs = {"layer": conveyor_layer}
    if conveyor_elevation_mm is not None:
        attribs["elevation"] = conveyor_elevation_mm
    if thickness_mm:
        attribs["thickness"] = thickness_mm
    msp.add_lwpolyline([(5700, 0), (6300, 0), (6300, 2500), (5700, 2500)], close=True, dxfattribs=attribs)
    doc.saveas(path)


def test_dxf_elevation_and_thickness_give_the_height_range(tmp_path):
    plan_path = tmp_path / "corridor.dxf"
    _corridor_dxf(plan_path, conveyor_elevation_mm=2100, thickness_mm=500)
    plan = ff.load_plan(plan_path, roles={"M-CONV": "solid"})
    (i,) = [k for k, layer in enumerate(plan.solid_layers) if layer == "M-CONV"]
    assert plan.solid_heights[i].tolist() == pytest.approx([2.1, 2.6])
    assert np.all(plan.wall_heights == [0.0, np.inf])       # flat walls block every height
    site = Site(**NO_CLEARANCE)
    tall = ff.rectangle_vehicle(1.2, 0.8, height_m=2.35)
    short = ff.rectangle_vehicle(1.2, 0.8, height_m=0.4)
    assert run_check(plan, short, STATIONS, site=site).reachable["IN"]["OUT"]
    r = run_check(plan, tall, STATIONS, site=site)
    (f,) = [f for f in r.findings if f.kind == "blocked"]
    assert f.cause == "height" and "clear height 2.10 m, the vehicle needs 2.35 m" in f.summary


def test_site_heights_apply_to_drawing_layers_on_the_command_line(tmp_path):
    import json

    from floorfit.cli import main
    plan_path = tmp_path / "corridor.dxf"
    _corridor_dxf(plan_path, conveyor_layer="M-CONV-OVHD")
    site = tmp_path / "site.toml"
    site.write_text('[layers]\n"M-CONV*" = "solid"\n[heights]\n"M-CONV*" = [2.1, 2.6]\n'
                    '[clearance]\nreference = "none"\n'
                    '[stations]\nIN = { x = 2.0, y = 1.25 }\nOUT = { x = 10.0, y = 1.25 }\n')
    tall = tmp_path / "tall.toml"
    tall.write_text('[footprint]\nwidth = 0.8\nlength = 1.2\nheight = 2.35\n')
    out = tmp_path / "rep"
    code = main(["check", str(plan_path), "--vehicle", str(tall), "--site", str(site), "--out", str(out),
                 "--quiet", "--heading-step", "5"])
    assert code == 1
    data = json.loads((out / "findings.json").read_text())
    (f,) = [f for f in data["findings"] if f["kind"] == "blocked"]
    assert f["cause"] == "height" and f["clear_height_m"] == pytest.approx(2.1)


def shelf_passage(bottom: float) -> Plan:
    """Two 5 × 4 m rooms joined by a 1.5 m wide, 2 m long passage (x 5..7, y 1.25..2.75) under a
    shelf on layer A-SHLF that fills the passage from ``bottom`` up to 2.0 m (invented scenario:
    a shelf a low robot drives under)."""
    walls = [shapely.LineString([(0, 0), (5, 0), (5, 1.25), (7, 1.25), (7, 0), (12, 0), (12, 4), (7, 4),
                                 (7, 2.75), (5, 2.75), (5, 4), (0, 4), (0, 0)])]
    shelf = shapely.box(5.4, 1.25, 6.6, 2.75)
    plan = Plan.from_geometries(walls=walls, solids=[shelf])
    plan.wall_layers = np.array(["A-WALL"], dtype=object)
    plan.solid_layers = np.array(["A-SHLF"], dtype=object)
    return apply_height_ranges(plan, {"A-SHLF": (bottom, 2.0)})


def test_under_ride_shelf_is_a_height_block_at_the_shelf():
    # issue 16: the shelf starting 0.50 m above the floor stops a 1.2 m tall tug; the floor under it
    # is open, so the answer is a blocked finding with cause height and the clear height, located
    # at the shelf, not "separate parts of the drawing".
    plan = shelf_passage(0.5)
    stations = [Station("A", 2.5, 2.0), Station("B", 9.5, 2.0)]
    low = ff.rectangle_vehicle(0.9, 0.6, height_m=0.35, name="under-ride robot")
    tall = ff.rectangle_vehicle(0.9, 0.6, height_m=1.2, name="tug")
    r = run_check(plan, low, stations, site=Site(**NO_CLEARANCE), heading_step_deg=5.0)
    assert r.reachable["A"]["B"] and not [f for f in r.findings if f.kind == "blocked"]
    r = run_check(plan, tall, stations, site=Site(**NO_CLEARANCE), heading_step_deg=5.0)
    assert not r.reachable["A"]["B"]
    (f,) = [f for f in r.findings if f.kind == "blocked"]
    assert f.cause == "height"
    assert f.clear_height_m == pytest.approx(0.50) and f.needed_height_m == pytest.approx(1.2)
    assert "clear height 0.50 m, the vehicle needs 1.20 m" in f.summary
    assert 5.0 - 0.5 <= f.x <= 7.0 + 0.5 and 1.25 <= f.y <= 2.75
    assert f.cuts_off in (["A"], ["B"]) and r.cuts[("A", "B")] == [f.id]
    assert not any("not connected even for a person" in n for n in r.notes)
