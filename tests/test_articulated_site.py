"""Trains on plans: corner off-tracking findings, swept routes, turn-around circles, longest cart, `tow`."""

import json
import math

import pytest
import shapely
from shapely.geometry import Point

from floorfit.analysis.check import run_check
from floorfit.analysis.findings import Station
from floorfit.articulated import (
    SearchSettings,
    TrainChecker,
    articulated_check,
    follow,
    largest_cart_length,
    make_train,
    merge_into_result,
    train_route_sweep,
    turn_circle,
    turnaround_region,
)
from floorfit.cli import main
from floorfit.motion.route_query import find_route
from floorfit.motion.segments import arc
from floorfit.motion.swept import swept_annulus
from floorfit.plan.model import Plan
from floorfit.plan.site import Site
from floorfit.vehicles.rigid import rectangle_vehicle

OX, OY = 100.0, 200.0          # drawing-frame offset: positions reported must come back in this frame
TRACTOR = rectangle_vehicle(0.8, 0.6, reference_to_front=0.5, mode="differential", name="tug", margin=0.02)
CART = [(-0.45, -0.35), (0.75, -0.35), (0.75, 0.35), (-0.45, 0.35)]
TRAIN = make_train("tug + cart", TRACTOR, CART, (-0.35, 0.0), 1.6, 70.0)
FAST = SearchSettings(time_limit_s=8.0)


def ring(width: float, side: float = 10.0) -> Plan:
    """A square loop corridor of ``width`` round a solid block (invented), drawing frame offset by (OX, OY)."""
    return Plan.from_geometries(walls=[shapely.box(OX, OY, OX + side, OY + side)],
                                solids=[shapely.box(OX + width, OY + width, OX + side - width, OY + side - width)],
                                origin=(OX, OY))


def stations(width: float, side: float = 10.0):
    return [Station("A", OX + 3.5, OY + width / 2, 0.0), Station("B", OX + side - width / 2, OY + 5.0, 90.0)]


def test_corner_the_tractor_takes_but_the_train_does_not():
    w = 1.2
    plan = ring(w)
    st = stations(w)
    a, b = ((s.x, s.y, s.heading_deg) for s in st)
    # a rigid vehicle of the tractor's size takes the corners both ways
    assert find_route(plan, TRACTOR, a, b).reachable and find_route(plan, TRACTOR, b, a).reachable
    # the rigid check with the tractor, then the train's part folded into it (as `floorfit check` does)
    rigid = run_check(plan, TRAIN.tractor, st, site=Site(required_clearance_m=0.0, clearance_reference="none"))
    assert rigid.reachable["A"]["B"] and rigid.passed
    res = articulated_check(plan, TRAIN, st, reachable=rigid.reachable, settings=FAST, turnaround=False)
    assert res.reachable["A"]["B"] is False and res.reachable["B"]["A"] is False
    merge_into_result(rigid, res)
    assert not rigid.passed and rigid.reachable["A"]["B"] is False
    ids = {f.id for f in rigid.findings if f.cause == "off-tracking"}
    assert ids and set(rigid.cuts[("A", "B")]) <= ids and rigid.cuts[("A", "B")]
    assert {f.kind for f in res.findings} == {"blocked"}
    assert {f.cause for f in res.findings} == {"off-tracking"}
    ab = next(f for f in res.findings if f.cuts_off == ["B"])
    assert "the tractor alone passes, the train does not" in ab.summary and "A → B" in ab.summary
    # located where the cart meets the block near the corner it cuts (bottom-right inner corner), drawing frame
    corner = (OX + 10 - w, OY + w)
    assert math.hypot(ab.x - corner[0], ab.y - corner[1]) < 1.0
    assert shapely.box(OX + w, OY + w, OX + 10 - w, OY + 10 - w).exterior.distance(Point(ab.x, ab.y)) < 1e-6
    depth = float(ab.summary.split("by ")[1].split(" m")[0])
    assert 0.0 < depth <= 0.37 + 1e-9             # at most half the cart width plus its margin
    assert ab.geometry is not None and ab.geometry.area == pytest.approx(TRAIN.cart_footprint.area, rel=1e-9)


def test_wider_corridor_passes_both():
    w = 3.0
    plan = ring(w)
    st = stations(w)
    res = articulated_check(plan, TRAIN, st, settings=FAST, turnaround=False)     # tractor reach computed inside
    assert res.findings == []
    assert res.reachable["A"]["B"] and res.reachable["B"]["A"]
    route = res.routes[0]
    assert (route["from"], route["to"]) == ("A", "B")
    path = route["path"]
    assert path.shape[1] == 3 and path[0, :2] == pytest.approx([OX + 3.5, OY + w / 2])   # drawing frame
    assert math.hypot(path[-1, 0] - (OX + 10 - w / 2), path[-1, 1] - (OY + 5.0)) < 0.25
    swept = route["swept"]                                                                # local frame
    assert swept.contains(Point(3.5, w / 2)) and not swept.contains(Point(OX + 3.5, OY + w / 2))
    assert route["max_hitch_angle_deg"] <= 70.0
    # the swept area stays inside the corridor (clear of both the walls and the block)
    assert swept.within(shapely.box(0, 0, 10, 10)) and not swept.intersects(shapely.box(w, w, 10 - w, 10 - w))


def test_route_sweep_shape():
    w = 3.0
    plan = ring(w)
    d = train_route_sweep(plan, TRAIN, (OX + 3.5, OY + w / 2, 0.0), (OX + 10 - w / 2, OY + 5.0, 90.0),
                          from_name="A", to_name="B", settings=FAST)
    assert set(d) >= {"from", "to", "path", "swept", "cart_path"}
    assert d["path"].shape == d["cart_path"].shape
    # cart behind the tractor at the start, in line
    assert d["cart_path"][0, 0] < d["path"][0, 0] and d["cart_path"][0, 1] == pytest.approx(d["path"][0, 1])
    narrow = ring(1.2)
    assert train_route_sweep(narrow, TRAIN, (OX + 3.5, OY + 0.6, 0.0), (OX + 9.4, OY + 5.0, 90.0),
                             settings=FAST) is None


def test_turn_circle_and_turnaround_region():
    train = make_train("on-axle", TRACTOR, CART, (0.0, 0.0), 1.5, 89.0)
    c = turn_circle(train, radii=[3.0], tolerance_m=0.01)
    # settled: cart inner edge at sqrt(R^2 - L^2) - w/2 - margin; tractor outer front corner (common
    # practice, turning geometry; floorfit.motion.swept_annulus) with its margin
    assert c.steady_inner_m == pytest.approx(math.sqrt(9 - 2.25) - 0.35 - 0.02, abs=1e-9)
    assert c.steady_outer_m == pytest.approx(swept_annulus(3.0, 0.64, 0.52)[1], abs=1e-9)
    # the whole loop from an in-line entry: never inside the settled inner circle, outer grown by the entry
    assert c.steady_inner_m - 0.011 <= c.inner_m <= c.steady_inner_m
    assert c.outer_m >= c.steady_outer_m
    room = Plan.from_geometries(walls=[shapely.box(OX, OY, OX + 12, OY + 9)], origin=(OX, OY))
    region = turnaround_region(room, train, circle=c)
    x0, y0, x1, y1 = region.bounds
    r = c.outer_m
    # centres at least r from every wall (the disc is replaced by a circumscribed 64-gon: ≤ 0.13 % larger)
    assert x0 >= r - 1e-9 and y0 >= r - 1e-9 and x1 <= 12 - r + 1e-9 and y1 <= 9 - r + 1e-9
    assert x0 == pytest.approx(r, rel=2e-3) and x1 == pytest.approx(12 - r, rel=2e-3)
    small = Plan.from_geometries(walls=[shapely.box(OX, OY, OX + 2 * r - 0.1, OY + 12)], origin=(OX, OY))
    assert turnaround_region(small, train, circle=c).is_empty


def test_largest_cart_for_a_circle_round_a_column():
    # On-axle cart settled on a circle of R = 3 about a column of radius rho: its inner edge runs at
    # sqrt(R^2 - L^2) - w/2 (classic off-tracking, FIELD-NOTES), so the longest tongue that clears the
    # column by the growth g (sampling tolerance + cart margin) is sqrt(R^2 - (rho + w/2 + g)^2).
    # The column is a 64-gon between its inscribed and circumscribed circles: the answer lies between.
    cart = [(-0.3, -0.3), (0.3, -0.3), (0.3, 0.3), (-0.3, 0.3)]
    tractor = rectangle_vehicle(0.6, 0.5, mode="differential", name="t")
    train = make_train("t", tractor, cart, (0.0, 0.0), 1.0, 89.0)
    rho = 1.5
    col = shapely.Point(OX, OY).buffer(rho, quad_segs=16)
    plan = Plan.from_geometries(solids=[col], origin=(OX, OY))
    segs = [arc((3.0, 0.0, math.pi / 2), 2.5 * 2 * math.pi * 3.0, 1, 3.0)]
    tol = 0.01
    res = largest_cart_length(plan, train, segs, precision_m=0.005, tolerance_m=tol)
    g = tol
    rho_in = rho * math.cos(math.pi / 64)
    lo = math.sqrt(9 - (rho + 0.3 + g) ** 2)
    hi = math.sqrt(9 - (rho_in + 0.3 + g) ** 2)
    assert lo - 0.005 <= res.tongue_m <= hi + 1e-9
    assert res.limited_by is not None and res.limited_by.problem == "cart"
    assert res.notes == []                                      # monotone on the checked lengths
    # and directly: just above the answer the cart hits the column, just below it does not
    checker = TrainChecker(plan, train, tol)
    from floorfit.articulated import judge_motion
    for L, ok in ((res.tongue_m, True), (hi + 0.01, False)):
        t = train.with_tongue(L)
        assert judge_motion(checker.with_train(t), follow(segs, t, tolerance_m=tol)).passable is ok


def _dxf_ring(path, width, side=12.0):
    import ezdxf
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 6
    msp = doc.modelspace()
    msp.add_lwpolyline([(0, 0), (side, 0), (side, side), (0, side)], close=True, dxfattribs={"layer": "A-WALL"})
    msp.add_lwpolyline([(width, width), (side - width, width), (side - width, side - width), (width, side - width)],
                       close=True, dxfattribs={"layer": "A-WALL"})
    doc.saveas(path)


TRAIN_TOML = """name = "tug + cart"
[footprint]
outline = [[0.5, -0.3], [0.5, 0.3], [-0.3, 0.3], [-0.3, -0.3]]
margin = 0.02
[motion]
mode = "differential"
[cart]
outline = [[0.75, -0.35], [0.75, 0.35], [-0.45, 0.35], [-0.45, -0.35]]
hitch = [-0.35, 0.0]
tongue = 1.6
max_hitch_angle = 70
"""


def test_tow_command_route_and_search(tmp_path, capsys):
    wide, narrow = tmp_path / "wide.dxf", tmp_path / "narrow.dxf"
    _dxf_ring(wide, 3.0)
    _dxf_ring(narrow, 1.2)
    train = tmp_path / "train.toml"
    train.write_text(TRAIN_TOML, encoding="utf-8")
    out = tmp_path / "tow.json"
    code = main(["tow", str(wide), "--vehicle", str(train), "--route", "4,1.5,0", "8,1.5,0", "10.5,4,90",
                 "10.5,8,90", "--json", str(out)])
    text = capsys.readouterr().out
    assert code == 0, text
    data = json.loads(out.read_text())
    assert data["passable"] is True and data["mode"] == "route"
    assert data["max_hitch_angle_deg"] <= 70.0 and data["off_tracking_m"] > 0.1
    assert data["largest_cart"]["tongue_m"] >= 1.6 and data["largest_cart"]["limited_by"] in ("cart", "jack-knife")
    assert "longest cart for this route" in text and "not supported" in text
    code = main(["tow", str(narrow), "--vehicle", str(train), "--start", "3.5,0.6,0", "--goal", "11.4,6,90",
                 "--time-limit", "8"])
    text = capsys.readouterr().out
    assert code == 1 and "NOT passable forward" in text and "cuts inside the corner" in text


def test_tow_command_bad_input(tmp_path, capsys):
    plan = tmp_path / "wide.dxf"
    _dxf_ring(plan, 3.0)
    bad = tmp_path / "bad.toml"
    bad.write_text(TRAIN_TOML.replace("tongue = 1.6", "tongue = 0"), encoding="utf-8")
    code = main(["tow", str(plan), "--vehicle", str(bad), "--route", "4,1.5,0", "8,1.5,0"])
    err = capsys.readouterr().err
    assert code == 2 and err.count("\n") == 1 and "cart.tongue" in err
    good = tmp_path / "train.toml"
    good.write_text(TRAIN_TOML, encoding="utf-8")
    code = main(["tow", str(plan), "--vehicle", str(good), "--route", "4,1.5,0"])
    err = capsys.readouterr().err
    assert code == 2 and "at least two poses" in err
    code = main(["tow", str(plan), "--vehicle", str(good), "--route", "4,1.5,0", "8,1.5,0", "--start", "1,1,0"])
    assert code == 2 and "either --route" in capsys.readouterr().err
    code = main(["tow", str(plan), "--vehicle", str(good), "--route", "4,1.5,0", "8,1.5,-0", "--turn-radius", "-1"])
    assert code == 2 and "turn radius" in capsys.readouterr().err
