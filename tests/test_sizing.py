"""Sizing: the largest vehicle a layout serves, against known answers (doorway, Moretti's corner)."""

import json
import math

import ezdxf
import pytest
import shapely
from scipy.optimize import minimize_scalar
from shapely.geometry import Polygon

import floorfit as ff
from floorfit.analysis.findings import Station
from floorfit.analysis.sizing import family_is_nested, size_vehicle, vehicle_family
from floorfit.cli import main
from floorfit.cspace.slicememo import sharing
from floorfit.errors import InputError
from floorfit.plan.dxf.importer import DEFAULT_CURVE_TOLERANCE_M
from floorfit.plan.model import Doorway, Label, Plan


def two_rooms(door_width: float, wall_t: float = 0.2) -> Plan:
    """Two 6 × 5 m rooms side by side; a wall of thickness wall_t at x = 6 with one door centred at y = 2.5."""
    outer = shapely.box(0, 0, 12 + wall_t, 5)
    y0, y1 = 2.5 - door_width / 2, 2.5 + door_width / 2
    solids = [shapely.box(6, 0, 6 + wall_t, y0), shapely.box(6, y1, 6 + wall_t, 5)]
    return Plan.from_geometries(walls=[outer], solids=solids,
                                doors=[Doorway(6 + wall_t / 2, 2.5, door_width, label="D-1")],
                                labels=[Label("STORE", 3, 4), Label("LAB", 9, 4)])


STATIONS = [Station("A", 3.0, 2.5), Station("B", 9.0, 2.5)]


def test_doorway_largest_width_is_just_under_the_door_minus_margin():
    # A rigid body passes a slit in a wall only if its smallest width fits the slit: with a
    # 0.90 m door and a 0.05 m margin all round, the true limit is an outline 0.80 m wide.
    plan = two_rooms(0.90)
    veh = ff.rectangle_vehicle(1.0, 0.6, margin=0.05)
    r = size_vehicle(plan, veh, STATIONS, vary="width")      # default: 3° steps, 0.01 m precision
    d = r.to_dict()
    assert d["status"] == "limited" and d["vary"] == "width" and d["precision_m"] == 0.01
    # sound bound: errs low. The door is crossed at the wall-aligned heading, whose cell is ±0.05°
    # wide, so the outline is grown there by 2ρ·sin(0.025°) < 1 mm (ρ ≈ 0.6 m) on each side.
    grow = 2 * veh.with_width(0.8).radius_m * math.sin(math.radians(0.025))
    assert 0.80 - d["precision_m"] - 2 * grow - 1e-4 <= d["largest_m"] < 0.80
    assert d["largest_with_margin_m"] == pytest.approx(d["largest_m"] + 0.10, abs=1e-9)
    assert d["largest_with_margin_m"] < 0.90
    assert d["sizing_margin_m"] == pytest.approx(d["largest_m"] - 0.6, abs=1e-4) and d["fits_now"]
    # the optimistic bound separates the rooms just above: the true limit (0.80) is bracketed
    assert d["largest_m"] < 0.80 < d["upper_m"] <= d["largest_m"] + 2 * d["precision_m"]
    assert d["checked_above_m"] - d["largest_m"] <= d["precision_m"] + 1e-4
    assert d["errs"] == "low" and d["monotone"] == "proved nested"
    # the binding place: the doorway, with its exact clear width
    b = d["binding"]
    assert b["kind"] == "blocked" and b["cause"] == "width" and "D-1" in b["label"]
    assert math.hypot(b["x"] - 6.1, b["y"] - 2.5) <= 0.3
    assert b["clear_width_m"] == pytest.approx(0.90, abs=1e-6)
    assert b["cuts_off"] in (["A"], ["B"])
    json.dumps(d, allow_nan=False)       # JSON-ready


def moretti_length(a: float, b: float, w: float) -> float:
    # Longest rectangle of width w that turns a right-angle corner between corridors of widths
    # a and b: L* = min_t a/sin t + b/cos t − w/(sin t cos t)  (C. Moretti, "Moving a couch
    # around a corner", College Math. J. 33(3), 2002)
    def f(t):
        return a / math.sin(t) + b / math.cos(t) - w / (math.sin(t) * math.cos(t))

    r = minimize_scalar(f, bounds=(1e-3, math.pi / 2 - 1e-3), method="bounded", options={"xatol": 1e-12})
    return float(r.fun)


def corner_plan(a: float, b: float, arm: float = 8.0) -> Plan:
    """Closed L-shaped corridor: horizontal arm of width a (y in [0, a], x ≤ b), vertical arm of width b."""
    return Plan.from_geometries(walls=[Polygon([(-arm, 0), (b, 0), (b, a + arm), (0, a + arm), (0, a), (-arm, a)])])


@pytest.mark.parametrize("a, b, w", [(1.0, 1.0, 0.4), (1.5, 2.0, 0.6)])
def test_largest_length_around_a_corner_brackets_the_closed_form(a, b, w):
    Lstar = moretti_length(a, b, w)
    # FIELD-NOTES instances of the same closed form: (1.5, 2.0, 0.6) → 3.724603; a = b: 2√2·a − 2w
    assert Lstar == pytest.approx(3.724603 if a == 1.5 else 2 * math.sqrt(2) * a - 2 * w, abs=1e-5)
    plan = corner_plan(a, b)
    veh = ff.rectangle_vehicle(1.0, w)                     # reference point at the centre
    st = [Station("W", -6.0, a / 2), Station("N", b / 2, a + 6.0)]
    # 2° steps and 2 cm precision keep the run short; the bounds below scale with both
    r = size_vehicle(plan, veh, st, vary="length", heading_step_deg=2.0, precision_m=0.02)
    d = r.to_dict()
    # sound below, optimistic above: the closed form lies between
    assert d["largest_m"] <= Lstar < d["upper_m"]
    # and close: the sound bound grows the vehicle by ≤ tolerance_m, which shortens the admissible
    # length by at most ~6 × tolerance at a 45° pinch (as in test_reachability_reference)
    assert Lstar - d["largest_m"] <= 6 * d["tolerance_m"] + d["precision_m"]
    assert d["monotone"] == "proved nested"
    b_ = d["binding"]
    assert b_["cause"] == "turn"
    assert -0.5 <= b_["x"] <= b + 0.5 and -0.5 <= b_["y"] <= a + 0.5      # at the corner


def test_nesting_of_outline_families():
    rect = ff.rectangle_vehicle(1.0, 0.6)
    assert family_is_nested(rect, "width") and family_is_nested(rect, "length") and family_is_nested(rect, "scale")
    # reference point ahead of the outline: stretching about it moves the outline, not nested
    ahead = ff.rectangle_vehicle(1.0, 0.6, reference_to_front=-0.2)
    assert not family_is_nested(ahead, "length")
    _, make = vehicle_family(ahead, "length")
    assert not make(1.2).footprint.covers(make(1.0).footprint)
    # an L-shaped (non-convex) outline scaled about a point of its kernel: nested, but not by the
    # convexity rule, so it is checked
    ell = ff.vehicle_from_outline([(-0.5, -0.3), (0.5, -0.3), (0.5, 0.0), (0.0, 0.0), (0.0, 0.3), (-0.5, 0.3)])
    assert not family_is_nested(ell, "scale")
    _, make = vehicle_family(ell, "scale")
    assert make(1.1).footprint.covers(make(1.0).footprint)


def test_non_nested_family_is_reported_and_separate_rooms_fit_nothing():
    # no door at all: the stations are never connected, whatever the size
    plan = two_rooms(0.0)
    ell = ff.vehicle_from_outline([(-0.5, -0.3), (0.5, -0.3), (0.5, 0.0), (0.0, 0.0), (0.0, 0.3), (-0.5, 0.3)])
    r = size_vehicle(plan, ell, STATIONS, vary="scale", heading_step_deg=5.0, precision_m=0.05, find_binding=False)
    d = r.to_dict()
    assert d["status"] == "none-fits" and d["largest_m"] is None and not d["fits_now"]
    assert d["monotone"] == "checked"
    ahead = ff.rectangle_vehicle(1.0, 0.6, reference_to_front=-0.2)
    r = size_vehicle(two_rooms(1.2), ahead, STATIONS, vary="length", heading_step_deg=5.0, precision_m=0.05,
                     find_binding=False, upper_bound=False)
    assert r.monotone == "not nested" and any("not nested" in n for n in r.notes)
    # the length it reports still fits (a sound answer): the vehicle passes the 1.2 m door
    assert r.status == "limited" and r.largest_m >= 1.0


def test_bad_sizing_input_is_a_floorfit_error():
    plan = two_rooms(0.9)
    veh = ff.rectangle_vehicle(1.0, 0.6)
    with pytest.raises(InputError, match="at least one station"):
        size_vehicle(plan, veh, [], vary="width")
    with pytest.raises(InputError, match="precision"):
        size_vehicle(plan, veh, STATIONS, vary="width", precision_m=0.0)
    with pytest.raises(InputError, match="cannot vary"):
        size_vehicle(plan, veh, STATIONS, vary="height")


def write_rooms_dxf(path, door: float) -> None:
    """The two-room plan as a DXF in metres (walls as closed polylines on A-WALL)."""
    doc = ezdxf.new("R2013", setup=False)
    doc.header["$INSUNITS"] = 6
    doc.layers.add("A-WALL")
    msp = doc.modelspace()

    def rect(x0, y0, x1, y1):
        msp.add_lwpolyline([(x0, y0), (x1, y0), (x1, y1), (x0, y1)], close=True, dxfattribs={"layer": "A-WALL"})

    rect(0, 0, 12.2, 5)
    rect(6, 0, 6.2, 2.5 - door / 2)
    rect(6, 2.5 + door / 2, 6.2, 5)
    doc.saveas(path)


def test_size_command_writes_json_and_exit_codes(tmp_path, capsys):
    write_rooms_dxf(tmp_path / "plan.dxf", 0.90)
    (tmp_path / "v.toml").write_text('name = "cart"\n[footprint]\nwidth = 0.6\nlength = 1.0\nmargin = 0.05\n')
    (tmp_path / "big.toml").write_text('name = "big"\n[footprint]\nwidth = 0.85\nlength = 1.0\nmargin = 0.05\n')
    args = [str(tmp_path / "plan.dxf"), "--station", "A=3,2.5", "--station", "B=9,2.5", "--vary", "width",
            "--heading-step", "5", "--precision", "0.02", "--quiet"]   # 5°: the door is crossed at a wall heading
    out = tmp_path / "size.json"
    assert main(["size", *args, "--vehicle", str(tmp_path / "v.toml"), "--json", str(out)]) == 0
    d = json.loads(out.read_text())
    assert d["vary"] == "width" and d["precision_m"] == 0.02 and d["heading_step_deg"] == 5.0
    # door 0.90 m less the 0.10 m of margin, the precision and the importer's curve tolerance (each side)
    assert (0.80 - 0.02 - 2 * DEFAULT_CURVE_TOLERANCE_M - 0.002 <= d["largest_m"] < 0.80
            and d["binding"]["clear_width_m"] == pytest.approx(0.9, abs=1e-6))
    assert "FITS" in capsys.readouterr().out
    # a vehicle wider than the door allows: exit 1, negative margin
    assert main(["size", *args, "--vehicle", str(tmp_path / "big.toml"), "--json", str(out)]) == 1
    d = json.loads(out.read_text())
    assert d["sizing_margin_m"] < 0 and not d["fits_now"]
    # bad input: exit 2 with one line
    assert main(["size", *args, "--vehicle", str(tmp_path / "v.toml"), "--precision", "0"]) == 2
    assert main(["size", str(tmp_path / "plan.dxf"), "--vehicle", str(tmp_path / "v.toml"), "--vary", "width"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert err[-1].startswith("floorfit size:") and "station" in err[-1]


def test_each_candidate_is_built_once_and_the_binding_check_reuses_its_slices(monkeypatch):
    # the doorway of the first test: every evaluation builds one slice set; the full check just above
    # the limit (the binding place) takes the sound slices of that value and the prepared obstacles
    # from the search's own
    import floorfit.cspace.slices as slices_mod

    built = []
    real = slices_mod.run_slice_jobs

    def counting(obstacles, jobs, *a, **k):
        built.append(len(jobs))
        return real(obstacles, jobs, *a, **k)

    prepared = []
    real_prepare = slices_mod.prepare_obstacles

    def preparing(*a, **k):
        prepared.append(1)
        return real_prepare(*a, **k)

    monkeypatch.setattr(slices_mod, "run_slice_jobs", counting)
    monkeypatch.setattr(slices_mod, "prepare_obstacles", preparing)
    veh = ff.rectangle_vehicle(1.0, 0.6, margin=0.05)
    with sharing() as memo:
        r = size_vehicle(two_rooms(0.90), veh, STATIONS, vary="width")
        assert len(memo) == 1           # memory: only the set of the value just above the limit is kept
    assert r.binding is not None and r.binding["clear_width_m"] == pytest.approx(0.90, abs=1e-6)
    assert len(built) == r.evaluations
    assert len(prepared) == 1           # the obstacles too: once for the search and the check
