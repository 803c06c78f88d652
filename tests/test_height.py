"""Height-aware obstacles: an overhead obstacle blocks a tall vehicle and not a short one."""

import numpy as np
import pytest
import shapely

import floorfit as ff
from floorfit.check import run_check
from floorfit.findings import Station
from floorfit.plan import Plan
from floorfit.site import Site, apply_height_ranges, read_site

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
