"""The command line end to end: exit codes, one-line errors, JSON answers."""

import json
import math

import pytest

from floorfit.cli import main
from floorfit.demo import write_demo_site


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    return write_demo_site(tmp_path_factory.mktemp("demo") / "plans")


def _err_line(capsys):
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1, err          # exactly one line, no traceback
    return err[0]


def test_route_reachable_writes_json(demo, tmp_path, capsys):
    out = tmp_path / "r.json"
    code = main(["route", str(demo["plan"]), "--vehicle", str(demo["vehicle"]), "--start", "15,2.2,-90",
                 "--goal", "6.5,11,90", "--json", str(out)])
    assert code == 0
    data = json.loads(out.read_text())
    assert data["reachable"] is True and data["status"] == "reachable"
    assert data["path"][0][:2] == [15.0, 2.2] and data["path"][-1][:2] == [6.5, 11.0]
    assert data["tolerance_m"] > 0 and "heading_step_deg" in data["settings"] and data["settings"]["margin_m"] == 0.05


def test_route_through_too_narrow_door_is_unreachable_with_stuck_place(demo, tmp_path, capsys):
    out = tmp_path / "r.json"
    code = main(["route", str(demo["plan"]), "--vehicle", str(demo["vehicle"]), "--start", "36,7,0",
                 "--goal", "36,20,90", "--json", str(out)])
    assert code == 1
    data = json.loads(out.read_text())
    assert data["reachable"] is False and data["status"] == "unreachable"
    # it gets stuck at the 0.70 m door D-03 (x 35.0–35.7 at y 14.0–14.2)
    s = data["stuck"]
    assert 34.5 <= s["x"] <= 36.2 and 13.0 <= s["y"] <= 14.2


def test_route_start_in_collision_exits_1_and_says_so(demo, capsys):
    code = main(["route", str(demo["plan"]), "--vehicle", str(demo["vehicle"]), "--start", "0.1,0.1,0",
                 "--goal", "6.5,11,90"])
    assert code == 1
    assert "start-blocked" in capsys.readouterr().out


@pytest.mark.parametrize("args, expected", [
    (["--start", "1,2", "--goal", "3,4,0"], "--start must be 3 comma-separated numbers, got '1,2'"),
    (["--start", "1,nan,0", "--goal", "3,4,0"], "--start has a non-finite value '1,nan,0'"),
    (["--start", "1,x,0", "--goal", "3,4,0"], "--start must be numbers, got '1,x,0'"),
])
def test_route_bad_pose_is_one_line_exit_2(demo, capsys, args, expected):
    code = main(["route", str(demo["plan"]), "--vehicle", str(demo["vehicle"])] + args)
    assert code == 2
    assert _err_line(capsys) == f"floorfit route: --start: {expected}"


def test_missing_plan_file(demo, tmp_path, capsys):
    missing = tmp_path / "nope.dxf"
    code = main(["route", str(missing), "--vehicle", str(demo["vehicle"]), "--start", "1,1,0", "--goal", "2,2,0"])
    assert code == 2
    line = _err_line(capsys)
    assert line.startswith("floorfit route: ") and str(missing) in line


@pytest.mark.parametrize("text, expected", [
    ('name = "x"\n[footprint]\noutlne = [[0,0],[1,0],[1,1]]\n',
     "footprint.outlne: unknown key 'outlne' (did you mean 'outline'?)"),
    ('[footprint]\noutline = [[0,0],[1,1],[1,0],[0,1]]\n',
     "footprint.outline: outline is not a simple polygon (Self-intersection[0.5 0.5]); "
     "list the corners in order around the vehicle"),
    ('[footprint]\noutline = [[0,0],[1,0],[2,0]]\n',
     "footprint.outline: outline has zero area (points are collinear or repeated)"),
    ('[footprint]\nwidth = 620\nlength = 900\n',
     "footprint: outline is 900 m across, which is not a plausible vehicle; "
     "vehicle files are in metres (was it given in millimetres?)"),
    ('[footprint]\noutline = [[10,10],[11,10],[11,11],[10,11]]\n',
     "footprint.outline: the reference point (0, 0) lies 14.1 m outside an outline only 1 m across; "
     "outline coordinates are relative to the reference point"),
    ('[footprint]\nwidth = "wide"\nlength = 1\n', "footprint.width: expected a number, got str 'wide'"),
    ('[footprint]\nwidth = 0.6\nlength = 0.9\n[motion]\nmode = "diferential"\n',
     "motion.mode: 'diferential' is not one of omni, differential, car, fixed (did you mean 'differential'?)"),
    ('[footprint]\nwidth = 0.6\nlength = 0.9\nmargin = nan\n', "footprint.margin: expected a finite number, got nan"),
    ('[footprint\nwidth = 0.6\n', None),
])
def test_bad_vehicle_files_one_line_with_place(demo, tmp_path, capsys, text, expected):
    v = tmp_path / "v.toml"
    v.write_text(text)
    code = main(["route", str(demo["plan"]), "--vehicle", str(v), "--start", "15,2.2,-90", "--goal", "6.5,11,90"])
    assert code == 2
    line = _err_line(capsys)
    if expected is None:
        assert line.startswith(f"floorfit route: {v}: not valid TOML:")
    else:
        assert line == f"floorfit route: {v}: {expected}"


def test_check_demo_site_fails_with_blocked_door_and_writes_report(demo, tmp_path, capsys):
    out = tmp_path / "rep"
    code = main(["check", str(demo["plan"]), "--vehicle", str(demo["vehicle"]), "--site", str(demo["site"]),
                 "--out", str(out), "--quiet"])
    assert code == 1
    data = json.loads((out / "findings.json").read_text())
    kinds = sorted(f["kind"] for f in data["findings"])
    assert kinds == ["blocked", "no-turn", "single-lane", "tight"]     # the demo site has a small fleet
    lane = next(f for f in data["findings"] if f["kind"] == "single-lane")
    assert lane["clear_width_m"] == pytest.approx(1.0, abs=1e-6) and lane["needed_width_m"] == pytest.approx(2.07)
    assert (out / "traffic.csv").stat().st_size > 0
    blocked = next(f for f in data["findings"] if f["kind"] == "blocked")
    assert blocked["cuts_off"] == ["CHARGER"] and blocked["clear_width_m"] == pytest.approx(0.70, abs=1e-6)
    assert math.hypot(blocked["x"] - 35.35, blocked["y"] - 14.1) < 0.3
    for name in ("report.html", "findings.csv", "overlay.dxf"):
        assert (out / name).stat().st_size > 0


def test_check_station_flags_and_bad_station(demo, tmp_path, capsys):
    out = tmp_path / "rep"
    code = main(["check", str(demo["plan"]), "--vehicle", str(demo["vehicle"]), "--station", "A=15,2.2",
                 "--station", "B=6.5,11", "--out", str(out), "--quiet", "--heading-step", "5"])
    # A and B are connected, but the door D-03 still blocks floor a person uses: the site fails
    assert code == 1
    data = json.loads((out / "findings.json").read_text())
    assert data["settings"]["heading_step_deg"] == 5.0
    blocked = [f for f in data["findings"] if f["kind"] == "blocked"]
    assert len(blocked) == 1 and blocked[0]["cuts_off"] == []
    code = main(["check", str(demo["plan"]), "--vehicle", str(demo["vehicle"]), "--station", "A=15",
                 "--out", str(out), "--quiet"])
    assert code == 2
    assert _err_line(capsys) == "floorfit check: --station: station A must be NAME=X,Y[,HEADING], got 'A=15'"


def test_site_file_unknown_key(demo, tmp_path, capsys):
    site = tmp_path / "s.toml"
    site.write_text('[stations]\nA = { x = 1, y = 2, heading = 0, headng_tol = 3 }\n')
    code = main(["check", str(demo["plan"]), "--vehicle", str(demo["vehicle"]), "--site", str(site),
                 "--out", str(tmp_path / "o"), "--quiet"])
    assert code == 2
    assert _err_line(capsys) == (f"floorfit check: {site}: stations.A.headng_tol: unknown key 'headng_tol' "
                                 f"(did you mean 'heading_tolerance'?)")
