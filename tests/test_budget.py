"""Manoeuvre budgets (issue #15): differential and car-like vehicles judged by drivable paths within
a number of direction changes, in check, size and batch (floorfit.analysis.budget).

The invented drawing: two 4 × 4 m rooms, a 5 cm partition with a 1.0 m doorway. A differential
robot 0.6 m long and 1.2 m wide passes the doorway only sideways (its length across the opening),
which a base that cannot slide does by dozens of forward/reverse moves. The holonomic analysis
connects the rooms; within the default budget of 2 direction changes the robot does not.
"""

import json
import time
from dataclasses import replace

import ezdxf
import pytest
import shapely

import floorfit as ff
from floorfit.analysis.check import run_check
from floorfit.analysis.findings import Station
from floorfit.analysis.sizing import size_vehicle
from floorfit.cli import main
from floorfit.errors import InputError, SiteError
from floorfit.plan.model import Doorway, Plan
from floorfit.plan.site import DEFAULT_MAX_DIRECTION_CHANGES, Site, read_site

DOOR = (4.025, 2.0)       # centre of the 1.0 m doorway in the 5 cm partition at x = 4.0 .. 4.05
STATIONS = [Station("A", 2.0, 2.0), Station("B", 6.0, 2.0)]
STEP = 3.0
NO_CLEARANCE = Site(required_clearance_m=0.0, clearance_reference="none")


def _plan() -> Plan:
    outer = shapely.box(0, 0, 8.05, 4)
    solids = [shapely.box(4.0, 0, 4.05, 1.5), shapely.box(4.0, 2.5, 4.05, 4)]
    return Plan.from_geometries(walls=[outer], solids=solids, doors=[Doorway(*DOOR, 1.0, label="D-1")])


def _wide(mode="differential", **kw):
    return ff.rectangle_vehicle(0.6, 1.2, mode=mode, name="wide robot", **kw)


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    d = tmp_path_factory.mktemp("budget")
    doc = ezdxf.new("R2013", setup=False)
    doc.header["$INSUNITS"] = 6
    doc.layers.add("A-WALL")
    msp = doc.modelspace()
    for x0, y0, x1, y1 in ((0, 0, 8.05, 4), (4.0, 0, 4.05, 1.5), (4.0, 2.5, 4.05, 4)):
        msp.add_lwpolyline([(x0, y0), (x1, y0), (x1, y1), (x0, y1)], close=True, dxfattribs={"layer": "A-WALL"})
    doc.saveas(d / "plan.dxf")
    (d / "wide.toml").write_text('name = "wide robot"\n[footprint]\nwidth = 1.2\nlength = 0.6\n'
                                 '[motion]\nmode = "differential"\n')
    (d / "site.toml").write_text('[stations]\nA = { x = 2.0, y = 2.0 }\nB = { x = 6.0, y = 2.0 }\n'
                                 '[clearance]\nreference = "none"\n[analysis]\nheading_step = 3.0\n'
                                 '[motion]\nmax_direction_changes = 2\n')
    return d


def _args(files, *more):
    return [str(files / "plan.dxf"), "--vehicle", str(files / "wide.toml"), "--station", "A=2,2",
            "--station", "B=6,2", "--heading-step", str(STEP), "--quiet", *more]


# -- the site file and the command option -----------------------------------------------------------
def test_site_file_budget_key(tmp_path):
    assert read_site(_write(tmp_path, "")).max_direction_changes == DEFAULT_MAX_DIRECTION_CHANGES == 2
    assert read_site(_write(tmp_path, "[motion]\nmax_direction_changes = 6\n")).max_direction_changes == 6
    assert read_site(_write(tmp_path, "[motion]\nmax_direction_changes = 0\n")).max_direction_changes == 0
    for bad in ("max_direction_changes = -1", "max_direction_changes = 2.5", 'max_direction_changes = "x"',
                "max_direction_changes = true", "max_turns = 3"):
        with pytest.raises(SiteError, match="motion"):
            read_site(_write(tmp_path, f"[motion]\n{bad}\n"))


def _write(tmp_path, text):
    p = tmp_path / "site.toml"
    p.write_text(text)
    return p


@pytest.mark.parametrize("command", ["check", "size"])
@pytest.mark.parametrize("value", ["-1", "two", "1.5"])
def test_budget_option_is_validated_with_one_line_and_exit_2(files, tmp_path, capsys, command, value):
    more = ["--vary", "width"] if command == "size" else ["--out", str(tmp_path / "r")]
    with pytest.raises(SystemExit) as exc:
        main([command, *_args(files, *more), f"--max-direction-changes={value}"])
    assert exc.value.code == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--max-direction-changes" in err[0]


def test_batch_manifest_budget_is_validated(tmp_path, files):
    from floorfit.fleet.batch import read_manifest

    base = (f'[[site]]\nname = "rooms"\nplan = "{files / "plan.dxf"}"\n'
            f'[[vehicle]]\nname = "wide"\nfile = "{files / "wide.toml"}"\n')
    (tmp_path / "m.toml").write_text("[analysis]\nmax_direction_changes = 40\n" + base)
    assert read_manifest(tmp_path / "m.toml").cells()[0].max_direction_changes == 40
    (tmp_path / "m.toml").write_text("[analysis]\nmax_direction_changes = -3\n" + base)
    with pytest.raises(InputError, match="max_direction_changes"):
        read_manifest(tmp_path / "m.toml")


# -- check --------------------------------------------------------------------------------------------
def test_check_rejects_the_sideways_doorway_within_the_default_budget_and_accepts_a_raised_one(files, capsys):
    out1 = files / "r-default"
    assert main(["check", *_args(files, "--out", str(out1), "--force")]) == 1
    text = capsys.readouterr().out
    data = json.loads((out1 / "findings.json").read_text())
    found = [f for f in data["findings"] if f["kind"] == "maneuver"]
    assert len(found) == 1
    f = found[0]
    n = f["direction_changes"]
    assert f["cause"] == "over-budget" and n > 2
    assert abs(f["x"] - DOOR[0]) < 0.3 and abs(f["y"] - DOOR[1]) < 0.5        # at the doorway
    assert f["cuts_off"] in (["A"], ["B"])
    assert f"changes direction {n} times, more than the budget of 2 direction changes" in f["summary"]
    assert f"{f['id']} maneuver" in text and f"changes direction {n} times" in text
    assert "manoeuvre budget: 2 direction changes" in text
    # raised: the same robot is served (the holonomic analysis connects the rooms)
    r = run_check(_plan(), _wide(), STATIONS, site=replace(NO_CLEARANCE, max_direction_changes=1000),
                  heading_step_deg=STEP)
    assert r.passed and r.settings["max_direction_changes"] == 1000
    assert not [f for f in r.findings if f.kind == "maneuver"]


@pytest.mark.parametrize("case", ["sideways differential", "car with a three-point turn"])
def test_budget_verdicts_do_not_depend_on_the_clock(monkeypatch, case):
    # every limit that decides a verdict is a count (expansions, steering checks, split depth): on a
    # machine so loaded that each clock reading is 1000 s after the last, the findings are the same.
    # The wide robot's drive is over the budget; the car needs a search of some 170 expansions and
    # two direction changes (a wall-clock limit would have stopped it)
    if case.startswith("car"):
        vehicle = ff.rectangle_vehicle(0.8, 0.8, mode="car", min_turn_radius_m=1.0, name="car")
        stations = [Station("A", 2.0, 2.0, 90.0), Station("B", 6.0, 2.0, 90.0)]
    else:
        vehicle, stations = _wide(), STATIONS

    def findings():
        r = run_check(_plan(), vehicle, stations, site=NO_CLEARANCE, heading_step_deg=STEP)
        return r.passed, [(f.kind, f.cause, f.direction_changes, round(f.x, 6), round(f.y, 6)) for f in r.findings]

    real = findings()
    assert real[0] == case.startswith("car")
    clock = [time.perf_counter()]

    def slow() -> float:
        clock[0] += 1000.0
        return clock[0]

    monkeypatch.setattr(time, "perf_counter", slow)
    monkeypatch.setattr(time, "monotonic", slow)
    assert findings() == real


def test_omni_vehicles_have_no_budget():
    r = run_check(_plan(), _wide("omni"), STATIONS, site=NO_CLEARANCE, heading_step_deg=STEP)
    assert r.passed and r.settings["max_direction_changes"] is None
    assert not [f for f in r.findings if f.kind == "maneuver"]


def test_a_budget_the_drive_meets_gives_no_finding():
    # a 0.8 m wide robot drives straight through the 1.0 m doorway: no direction change at all
    veh = ff.rectangle_vehicle(0.6, 0.8, mode="differential")
    r = run_check(_plan(), veh, STATIONS, site=Site(required_clearance_m=0.0, max_direction_changes=0),
                  heading_step_deg=STEP)
    assert r.passed and r.settings["max_direction_changes"] == 0
    assert not [f for f in r.findings if f.kind == "maneuver"]


# -- size ---------------------------------------------------------------------------------------------
def test_size_reports_the_largest_robot_within_the_budget():
    # coarse precision: one drive (at 1.2 m) decides; the others (0.6, 0.9 m) drive straight through
    plan, veh = _plan(), _wide()
    r = size_vehicle(plan, veh, STATIONS, vary="width", site=Site(), heading_step_deg=STEP, precision_m=0.35)
    d = r.to_dict()
    assert d["status"] == "limited" and not d["fits_now"] and d["max_direction_changes"] == 2
    assert d["largest_m"] < 1.0 <= d["checked_above_m"]
    b = d["binding"]
    assert b["kind"] == "maneuver" and b["cause"] == "over-budget" and b["direction_changes"] > 2
    assert abs(b["x"] - DOOR[0]) < 0.3 and "D-1" in b["label"]
    assert d["upper_m"] is None                 # the holonomic bounds say nothing about a budget
    assert f"{b['direction_changes']} direction changes, budget 2" in r.summary()
    # raised budget: the 1.2 m robot is served as it is
    r = size_vehicle(plan, veh, STATIONS, vary="width", site=Site(), heading_step_deg=STEP, precision_m=0.35,
                     max_m=1.2, max_direction_changes=1000)
    assert r.fits_now and r.status == "not-limited" and r.max_direction_changes == 1000


@pytest.mark.slow
def test_size_command_within_the_default_budget_and_raised(files, tmp_path, capsys):
    out = tmp_path / "size.json"
    assert main(["size", *_args(files, "--vary", "width", "--precision", "0.05", "--json", str(out))]) == 1
    d = json.loads(out.read_text())
    assert 0.8 <= d["largest_m"] < 1.0 and d["binding"]["kind"] == "maneuver"
    # just above the limit the path found has too many direction changes, or none was found within the
    # search limits (max_steering_checks): either way not shown within the budget
    assert d["binding"]["cause"] in ("over-budget", "not-found-within-limits")
    assert "judged by drivable paths within 2 direction changes" in capsys.readouterr().out
    assert main(["size", *_args(files, "--vary", "width", "--max", "1.2", "--max-direction-changes", "1000",
                                "--json", str(out))]) == 0
    assert json.loads(out.read_text())["fits_now"]


# -- batch --------------------------------------------------------------------------------------------
def test_batch_cell_uses_the_budget(files):
    from floorfit.fleet.batch import CellSpec, SiteEntry, VehicleEntry, run_cell

    # the batch's budget (manifest or --max-direction-changes) overrides the site file's 2
    spec = CellSpec(SiteEntry("rooms", str(files / "plan.dxf"), str(files / "site.toml")),
                    VehicleEntry("wide", str(files / "wide.toml")), max_direction_changes=1000)
    rec = run_cell(spec)
    assert rec["status"] == "pass" and rec["max_direction_changes"] == 1000 and rec["findings"]["maneuver"] == 0
