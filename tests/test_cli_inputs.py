"""Honest input checks and one set of plan arguments across the commands (issue 16)."""

import argparse
import json

import ezdxf
import pytest
import shapely

import floorfit as ff
from floorfit.analysis.compare import compare_layouts
from floorfit.analysis.findings import Station
from floorfit.cli import build_parser, main
from floorfit.commands._common import load_plan_from_args
from floorfit.demo import write_demo_site
from floorfit.plan.model import Plan
from floorfit.plan.site import Site


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    return write_demo_site(tmp_path_factory.mktemp("demo"))


@pytest.mark.parametrize("step", ["0", "-2", "400", "0.01", "nan"])
def test_non_positive_or_absurd_heading_steps_are_refused(demo, step, capsys):
    with pytest.raises(SystemExit) as exc:      # refused while reading the arguments: nothing computed
        main(["check", str(demo["plan"]), "--vehicle", str(demo["vehicle"]), f"--heading-step={step}", "--quiet"])
    assert exc.value.code == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--heading-step" in err[0]


def test_site_heading_step_zero_is_refused(tmp_path):
    from floorfit.errors import SiteError
    from floorfit.plan.site import read_site

    (tmp_path / "s.toml").write_text("[analysis]\nheading_step = 0\n")
    with pytest.raises(SiteError, match="heading_step"):
        read_site(tmp_path / "s.toml")


def test_route_goal_far_outside_is_outside_the_drawing(demo, capsys):
    # the demo site is 42 × 24 m: (500, 500) is no pose on it, and read as millimetres it would be
    code = main(["route", str(demo["plan"]), "--vehicle", str(demo["vehicle"]), "--start", "6.5,11,0",
                 "--goal", "500,500,0", "--quiet"])
    assert code == 2
    err = capsys.readouterr().err
    assert "goal pose (500, 500) m lies outside the drawing" in err and "millimetres: (0.50, 0.50) m" in err


def test_route_pose_given_in_millimetres_names_the_likely_unit(demo, capsys):
    code = main(["route", str(demo["plan"]), "--vehicle", str(demo["vehicle"]), "--start", "6500,11000,0",
                 "--goal", "15,2.2,-90", "--quiet"])
    assert code == 2
    assert "if these are millimetres: (6.50, 11.00) m" in capsys.readouterr().err


def test_layer_pattern_matching_no_layer_is_warned(demo, capsys):
    args = argparse.Namespace(plan=str(demo["plan"]), units=None, window=None, layers=None)
    plan = load_plan_from_args(args, roles={"A-EQPM-RAKC*": "solid", "a-wall*": "wall"})
    err = capsys.readouterr().err
    assert "warning: site [layers] pattern 'a-eqpm-rakc*' (role solid) matches no layer" in err
    assert "a-wall*" not in err                    # a pattern that matches is not warned about
    assert any(i.kind == "unused-pattern" for i in plan.issues)


def test_refused_output_folder_is_refused_before_any_computation(demo, tmp_path, monkeypatch, capsys):
    out = tmp_path / "mine"
    out.mkdir()
    (out / "notes.txt").write_text("the user's own file")

    def no_check(*a, **k):
        raise AssertionError("the check ran although the output folder is refused")

    monkeypatch.setattr("floorfit.analysis.check.run_check", no_check)
    code = main(["check", str(demo["plan"]), "--vehicle", str(demo["vehicle"]), "--out", str(out), "--quiet"])
    assert code == 2
    assert "output folder holds files floorfit did not write (notes.txt)" in capsys.readouterr().err


def _subparsers():
    parser = build_parser()
    action = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    return action.choices


@pytest.mark.parametrize("command", ["check", "route", "size", "tow", "inspect", "compare"])
def test_every_command_that_reads_a_plan_has_the_same_plan_arguments(command):
    p = _subparsers()[command]
    opts = {o: a for a in p._actions for o in a.option_strings}
    for flag, metavar in (("--units", "U"), ("--window", "XMIN,YMIN,XMAX,YMAX"), ("--layers", "PATTERN")):
        assert flag in opts and opts[flag].metavar == metavar, (command, flag)
    positional = [a.metavar for a in p._actions if not a.option_strings and a.metavar]
    assert positional == (["BEFORE.dxf", "AFTER.dxf"] if command == "compare" else ["PLAN.dxf"])
    if command not in ("inspect", "tow"):
        assert opts["--heading-step"].metavar == "DEG"


ROOMS = [shapely.box(0, 0, 12.2, 5).exterior]
DOOR = [shapely.box(6, 0, 6.2, 2.0), shapely.box(6, 3.0, 6.2, 5)]        # a 1.0 m door
STATIONS = [Station("A", 3.0, 2.5), Station("B", 9.0, 2.5)]
NO_CLEARANCE = Site(required_clearance_m=0.0, clearance_reference="none")
CART = ff.rectangle_vehicle(0.9, 0.62, margin=0.05)


def test_compare_station_inside_a_new_obstacle_is_a_lost_pair():
    before = Plan.from_geometries(walls=ROOMS, solids=DOOR)
    after = Plan.from_geometries(walls=ROOMS, solids=DOOR + [shapely.box(8.5, 2.0, 9.5, 3.0)])   # a rack on B
    c = compare_layouts(before, after, CART, STATIONS, site=NO_CLEARANCE, heading_step_deg=10.0)
    assert c.pairs_lost == [("A", "B")] and c.after_worse and c.headline == "WORSE"
    (f,) = [f for f in c.after.findings if f.kind == "blocked"]
    assert f.cause == "station" and "inside an obstacle" in f.summary


def test_compare_headline_is_not_not_worse_when_findings_appeared():
    # a 0.45 m clearance (ANSI/ITSDF B56.5 §4.7.4) is not met by the 1.0 m door for a 0.62 m cart; a
    # column added beside the door's approach keeps every pair but adds a tight place
    site = Site(required_clearance_m=0.45, clearance_reference="b56.5")
    before = Plan.from_geometries(walls=[shapely.box(0, 0, 12.2, 5).exterior], solids=[])
    after = Plan.from_geometries(walls=[shapely.box(0, 0, 12.2, 5).exterior], solids=DOOR)
    c = compare_layouts(before, after, CART, STATIONS, site=site, heading_step_deg=10.0)
    assert not c.pairs_lost and c.counts()["appeared"] >= 1
    assert c.headline == "WORSE IN PLACES"
    assert c.summary_lines()[0].startswith("WORSE IN PLACES:")
    assert json.loads(json.dumps(c.to_dict()))["headline"] == "WORSE IN PLACES"


def test_compare_command_reports_the_covered_station_instead_of_exit_2(tmp_path, capsys):
    for name, extra in (("before", []), ("after", [(8.5, 2.0, 9.5, 3.0)])):
        doc = ezdxf.new("R2013", setup=False)
        doc.header["$INSUNITS"] = 6
        msp = doc.modelspace()
        for x0, y0, x1, y1 in [(0, 0, 12.2, 5), (6, 0, 6.2, 2.0), (6, 3.0, 6.2, 5), *extra]:
            msp.add_lwpolyline([(x0, y0), (x1, y0), (x1, y1), (x0, y1)], close=True, dxfattribs={"layer": "A-WALL"})
        doc.saveas(tmp_path / f"{name}.dxf")
    (tmp_path / "v.toml").write_text('name = "cart"\n[footprint]\nwidth = 0.62\nlength = 0.9\nmargin = 0.05\n')
    (tmp_path / "site.toml").write_text('[stations]\nA = { x = 3.0, y = 2.5 }\nB = { x = 9.0, y = 2.5 }\n'
                                        '[clearance]\nreference = "none"\n[analysis]\nheading_step = 10\n')
    code = main(["compare", str(tmp_path / "before.dxf"), str(tmp_path / "after.dxf"), "--vehicle",
                 str(tmp_path / "v.toml"), "--site", str(tmp_path / "site.toml"), "--quiet", "--no-reports",
                 "--out", str(tmp_path / "cmp")])
    assert code == 1
    out = capsys.readouterr().out
    assert out.startswith("WORSE:") and "lost: A ↔ B" in out
