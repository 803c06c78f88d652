"""Drivable routes for differential and car-like vehicles through ``find_route`` and ``floorfit route``.

Every path is re-checked by sampling it densely against the obstacles
(floorfit.testing.assert_path_clear). Plans are small and heading steps coarse where the
assertions allow, to keep these tests fast on shared 2-core machines (the stated
tolerance is asserted to fit inside each test's slack).
"""

import json
import math

import numpy as np
import pytest
import shapely
import shapely.affinity
from shapely.geometry import Polygon, box

import floorfit as ff
from floorfit.cli import main
from floorfit.cspace.headings import arc_deg
from floorfit.cspace.slices import build_slices
from floorfit.motion import swept_annulus
from floorfit.motion.drivable import DriveLimits
from floorfit.plan.model import Plan
from floorfit.testing import assert_path_clear

ORIGIN = (1000.0, 2000.0)     # a drawing far from 0: every test also exercises the frames


def _plan(walls=(), solids=()):
    def move(g):
        return shapely.affinity.translate(g, *ORIGIN)

    return Plan.from_geometries(walls=[move(g) for g in walls], solids=[move(g) for g in solids], origin=ORIGIN)


def _d(x, y, h):
    """A drawing-frame pose from coordinates relative to ORIGIN."""
    return (ORIGIN[0] + x, ORIGIN[1] + y, h)


DEFAULT_LIMITS = DriveLimits()


def _check_path_samples(res, limits=DEFAULT_LIMITS):
    """The path is dense (every path_step_m / path_step_deg) and the segments are consistent."""
    p = res.path
    step = np.hypot(*np.diff(p[:, :2], axis=0).T)
    turn = np.abs(arc_deg(p[:-1, 2], p[1:, 2]))
    assert step.max() <= limits.path_step_m + 1e-9 and turn.max() <= limits.path_step_deg + 1e-9
    kinds = {s["type"] for s in res.segments}
    assert res.direction_changes == sum(
        1 for a, b in zip([s for s in res.segments if s["type"] != "rotate"],
                          [s for s in res.segments if s["type"] != "rotate"][1:]) if a["direction"] != b["direction"])
    assert res.length_m == pytest.approx(sum(s["length_m"] for s in res.segments), abs=1e-5)
    for a, b in zip(res.segments, res.segments[1:]):
        assert np.allclose(a["end"][:2], b["start"][:2], atol=1e-5)
    return kinds


# --- car paths against the shortest-path oracles -------------------------------------------------

CAR_R = 1.5


def _open_plan():
    return _plan(walls=[box(-25, -25, 25, 25)])


def _ompl_length(space_name, start, goal, radius):
    ob = pytest.importorskip("ompl.base")
    space = getattr(ob, space_name)(radius)
    a, b = space.allocState(), space.allocState()
    for state, pose in ((a, start), (b, goal)):
        state.setX(pose[0])
        state.setY(pose[1])
        state.setYaw(math.radians(pose[2]))
    return space.distance(a, b)


@pytest.mark.parametrize("reverse, space", [(True, "ReedsSheppStateSpace"), (False, "DubinsStateSpace")])
def test_unobstructed_car_paths_are_within_ten_percent_of_the_shortest(reverse, space):
    # Oracle: OMPL 2.x ReedsSheppStateSpace / DubinsStateSpace distance (Reeds & Shepp,
    # Pacific J. Math. 145(2), 1990; Dubins, Amer. J. Math. 79, 1957), an independent
    # implementation. The search's cost is set to plain length (no reverse or cusp
    # penalty) and the goal must be met exactly, so the path can never be shorter than the
    # optimum and should be at most 1.1 times it.
    plan = _open_plan()
    veh = ff.rectangle_vehicle(2.0, 1.0, reference_to_front=1.6, mode="car", min_turn_radius_m=CAR_R,
                               reverse=reverse)
    limits = DriveLimits(reverse_cost_factor=1.0, direction_change_cost_m=0.0, goal_tolerance_m=0.0,
                         goal_tolerance_deg=0.0, max_expansions=4000)
    rng = np.random.default_rng(11)
    slices = build_slices(plan, veh, heading_step_deg=5.0)
    for _ in range(4):
        s = (float(rng.uniform(-7, 7)), float(rng.uniform(-7, 7)), float(rng.uniform(-180, 180)))
        g = (float(rng.uniform(-7, 7)), float(rng.uniform(-7, 7)), float(rng.uniform(-180, 180)))
        res = ff.find_route(plan, veh, _d(*s), _d(*g), slices=slices, limits=limits)
        assert res.status == "reachable", res.notes
        best = _ompl_length(space, s, g, CAR_R)
        assert best * (1 - 1e-9) <= res.length_m <= 1.1 * best
        kinds = _check_path_samples(res, limits)
        assert kinds <= {"arc", "straight"}
        assert all(seg["radius_m"] >= CAR_R - 1e-9 for seg in res.segments if seg["type"] == "arc")
        if not reverse:
            assert res.direction_changes == 0 and all(seg["direction"] == "forward" for seg in res.segments)
        assert np.allclose(res.path[0], _d(*s), atol=1e-6)
        assert np.allclose(res.path[-1][:2], _d(*g)[:2], atol=1e-6)
        assert abs(float(arc_deg(res.path[-1][2], g[2]))) < 1e-6
        assert_path_clear(plan, veh, res.path)


# --- swept annulus: a corner as wide as the outer radius is one forward move ---------------------

def test_corner_as_wide_as_the_swept_annulus_is_one_forward_move():
    # Car turning at its minimum radius R (rear-axle reference, width w, wheelbase plus front
    # overhang d): inner R - w/2, outer sqrt((R + w/2)^2 + d^2) (common practice, vehicle turning
    # geometry; FIELD-NOTES: R 2.0, w 0.8, d 1.5 -> 1.6 / 2.830194). Corridors of that width plus
    # the stated tolerance take the 90° corner forward in one move.
    R, w, front, rear = 2.0, 0.8, 1.5, 0.3
    inner, outer = swept_annulus(R, w, front, rear)
    assert outer == pytest.approx(2.830194, abs=1e-6) and inner == pytest.approx(1.6)
    slack = 0.1
    width = outer + slack
    arm = 14.0
    corner = Polygon([(0, 0), (arm, 0), (arm, arm), (arm - width, arm), (arm - width, width), (0, width)])
    plan = _plan(walls=[corner])
    veh = ff.rectangle_vehicle(front + rear, w, reference_to_front=front, mode="car", min_turn_radius_m=R,
                               reverse=False)
    start = _d(1.0, width - R, 0.0)
    goal = _d(arm - width + R, arm - 3.0, 90.0)
    res = ff.find_route(plan, veh, start, goal, heading_step_deg=2.0)
    assert res.tolerance_m < slack
    assert res.status == "reachable", res.notes
    assert res.direction_changes == 0
    assert all(s["direction"] == "forward" for s in res.segments)
    assert any(s["type"] == "arc" and s["angle_deg"] > 45 for s in res.segments)
    _check_path_samples(res)
    assert_path_clear(plan, veh, res.path)


# --- VDI 2198 right-angle stacking aisle ---------------------------------------------------------

# VDI 2198 right-angle stacking aisle width for counterbalance trucks: Ast = Wa + x + l6 + a with a
# safety allowance a = 0.2 m (formula from memory; check the guideline. A secondary source, the
# supralift.com glossary "Arbeitsgangbreite" quoting the VDI 2198 type sheet, gives a = 2 x 100 mm
# and x as the distance from the centre of the front axle to the fork back).
WA, X, L6, A = 2.0, 0.45, 1.2, 0.2
AST = WA + X + L6 + A


def _counterbalance_truck(reverse: bool):
    """A counterbalance truck as a car-like vehicle.

    The truck turns about a centre on the line of its drive (front, load-side) axle, so that
    axle's centre is the car reference point and "forward" points towards the forks. Turning
    centre R = 0.8 m beside it; body 1.2 m wide; the outer rear (counterweight) corner lies at
    the turning radius Wa from the centre, which fixes the rear overhang r = sqrt(Wa² - (R + b/2)²);
    the fork face is x ahead of the axle and the load (0.8 m wide) reaches l6 beyond it.
    Ast then follows from the turn: load front at the rack face, turning centre x + l6 behind
    it, rear corner sweeping Wa on the other side.
    """
    R, b, load_w = 0.8, 1.2, 0.8
    r = math.sqrt(WA ** 2 - (R + b / 2) ** 2)
    outline = shapely.union(box(-r, -b / 2, X, b / 2), box(X, -load_w / 2, X + L6, load_w / 2))
    return ff.vehicle_from_outline(list(outline.exterior.coords)[:-1], name="counterbalance truck", mode="car",
                                   min_turn_radius_m=R, reverse=reverse), R


def _stacking_aisle(width: float):
    """An aisle along +x between two rack rows; a bay opening 1.4 m wide in the upper row at x 9.9..11.3."""
    depth = 1.5
    solids = [box(-1, -1, 15, 0), box(-1, width, 9.9, width + depth), box(11.3, width, 15, width + depth),
              box(-1, width + depth, 15, width + depth + 1), box(-2, -1, -1, width + depth + 1),
              box(15, -1, 16, width + depth + 1)]
    return _plan(solids=solids)


@pytest.mark.parametrize("width, fits", [(AST, True), (3.3, False)])
def test_counterbalance_truck_turns_into_a_rack_bay_in_the_vdi_aisle_width(width, fits):
    truck, R = _counterbalance_truck(reverse=False)
    plan = _stacking_aisle(width)
    # goal: facing the bay (+y), load front at the rack face; start: in the aisle, facing +x
    goal = _d(10.6, width - X - L6, 90.0)
    start = _d(2.5, width - X - L6 - R, 0.0)
    res = ff.find_route(plan, truck, start, goal, heading_step_deg=2.0,
                        limits=DriveLimits(max_expansions=3000, time_limit_s=20.0))
    assert res.tolerance_m < A          # the allowance a covers the check's tolerance
    if fits:
        assert res.status == "reachable", res.notes
        assert res.direction_changes == 0
        clearance = assert_path_clear(plan, truck, res.path)
        assert clearance <= A + 1e-6    # the rear corner passes within the allowance of the far rack
    else:
        assert res.status in ("not-found-within-limits", "unreachable")
        assert res.status != "reachable" and len(res.path) == 0


# --- differential bases --------------------------------------------------------------------------

def _dead_end_plan(width: float):
    """A 6 x 6 m room with a 3 m dead-end aisle of ``width`` on its right side."""
    outline = Polygon([(0, 0), (6, 0), (6, 3 - width / 2), (9, 3 - width / 2), (9, 3 + width / 2),
                       (6, 3 + width / 2), (6, 6), (0, 6)])
    return _plan(walls=[outline])


@pytest.mark.parametrize("reverse", [True, False])
def test_differential_base_backs_out_of_a_dead_end_only_when_it_may_reverse(reverse):
    # Reversing the heading in a straight corridor needs W >= sqrt(l² + w²) (FIELD-NOTES closed
    # form): 0.9 x 0.6 -> 1.0817 m. In a 0.8 m aisle the base that drove in forwards cannot turn.
    length, width = 0.9, 0.6
    aisle = 0.8
    assert aisle < math.hypot(length, width)
    veh = ff.rectangle_vehicle(length, width, mode="differential", reverse=reverse)
    plan = _dead_end_plan(aisle)
    res = ff.find_route(plan, veh, _d(8.2, 3.0, 0.0), _d(2.0, 2.0, 90.0), heading_step_deg=5.0)
    assert aisle - width > 2 * res.tolerance_m
    if reverse:
        assert res.status == "reachable", res.notes
        kinds = _check_path_samples(res)
        assert kinds <= {"rotate", "straight"}
        assert any(s["type"] == "straight" and s["direction"] == "reverse" and s["length_m"] > 2.0
                   for s in res.segments)
        assert np.allclose(res.path[0], _d(8.2, 3.0, 0.0)) and np.allclose(res.path[-1], _d(2.0, 2.0, 90.0))
        assert_path_clear(plan, veh, res.path)
    else:
        assert res.status in ("not-found-within-limits", "unreachable")
        assert len(res.path) == 0 and res.segments == []


def test_differential_base_takes_a_corner_with_one_rotation():
    # An L of 1.2 m corridors: the 0.9 x 0.6 base (diagonal 1.08 m) can spin in the corridors, so
    # the natural path is drive, rotate 90°, drive; rotate-and-drive should not add rotations.
    corner = Polygon([(-6, 0), (1.2, 0), (1.2, 7.2), (0, 7.2), (0, 1.2), (-6, 1.2)])
    plan = _plan(walls=[corner])
    veh = ff.rectangle_vehicle(0.9, 0.6, mode="differential", reverse=False)
    res = ff.find_route(plan, veh, _d(-5.0, 0.6, 0.0), _d(0.6, 6.0, 90.0), heading_step_deg=5.0)
    assert res.status == "reachable", res.notes
    rotations = [s for s in res.segments if s["type"] == "rotate"]
    # one turn of 90°, perhaps split by a small alignment turn: no wasted rotation
    assert len(rotations) <= 2 and sum(abs(s["angle_deg"]) for s in rotations) == pytest.approx(90.0, abs=1.0)
    assert res.length_m == pytest.approx(5.6 + 5.4, abs=0.05)
    assert res.direction_changes == 0
    _check_path_samples(res)
    assert_path_clear(plan, veh, res.path)


def test_unreachable_stays_unreachable_for_drive_modes():
    # the holonomic analysis bounds every motion mode: a door narrower than the vehicle
    plan = _plan(walls=[Polygon([(0, 0), (4, 0), (4, 1.7), (4.5, 1.7), (4.5, 0), (8, 0), (8, 4), (4.5, 4),
                                 (4.5, 2.3), (4, 2.3), (4, 4), (0, 4)])])
    veh = ff.rectangle_vehicle(1.0, 0.7, reference_to_front=0.8, mode="car", min_turn_radius_m=1.0)
    res = ff.find_route(plan, veh, _d(1.5, 2.0, 0.0), _d(6.5, 2.0, 0.0), heading_step_deg=5.0)
    assert res.status == "unreachable"
    assert any("no car path exists either" in n for n in res.notes)


# --- the command line ----------------------------------------------------------------------------

def _write_corner_dxf(path, width):
    import ezdxf
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 6
    arm = 12.0
    pts = [(0, 0), (arm, 0), (arm, arm), (arm - width, arm), (arm - width, width), (0, width)]
    doc.modelspace().add_lwpolyline(pts, close=True, dxfattribs={"layer": "A-WALL"})
    doc.saveas(path)


CAR_TOML = """name = "tug"
[footprint]
length = 1.8
width = 0.8
reference_to_front = 1.5
[motion]
mode = "car"
min_turn_radius = 2.0
"""


def test_cli_prints_segments_and_exits_3_when_the_search_gives_up(tmp_path, capsys):
    dxf = tmp_path / "corner.dxf"
    _write_corner_dxf(dxf, 3.0)
    veh = tmp_path / "tug.toml"
    veh.write_text(CAR_TOML)
    out = tmp_path / "r.json"
    args = ["route", str(dxf), "--vehicle", str(veh), "--start", "2,1.5,0", "--goal", "10.5,9,90",
            "--heading-step", "5", "--json", str(out)]
    assert main(args) == 0
    text = capsys.readouterr().out
    assert "direction change" in text and "arc forward" in text
    data = json.loads(out.read_text())
    assert data["status"] == "reachable" and data["segments"] and data["direction_changes"] >= 0
    assert {"type", "direction", "length_m", "angle_deg", "radius_m"} <= set(data["segments"][0])
    assert data["search"]["mode"] == "car"
    assert_path_clear(ff.load_plan(dxf), ff.load_vehicle(veh), np.array(data["path"]))
    # with reverse, a search stopped after one expansion hands over to the subdivision of the
    # holonomic route, which is complete: still reachable
    assert main(args[:-2] + ["--max-expansions", "1"]) == 0
    capsys.readouterr()
    # forward only, one expansion is not enough for a path round the corner: a distinct status and
    # exit code, and the advice names the limit that stopped it
    veh.write_text(CAR_TOML.replace('mode = "car"', 'mode = "car"\nreverse = false'))
    assert main(args[:-2] + ["--max-expansions", "1"]) == 3
    text = capsys.readouterr().out
    assert "not-found-within-limits" in text and "cannot reverse" in text and "--max-expansions" in text
    assert main(args[:-2] + ["--time-limit", "0"]) == 2
