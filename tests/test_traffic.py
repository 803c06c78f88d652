"""Fleet traffic: passing places and single-lane stretches against geometric closed forms.

The oracles are geometric closed forms, not measurements: two rectangles of widths w1 and w2
side by side across a straight corridor, kept g apart, fit iff the corridor is at least
w1 + w2 + g wide; in a corridor widened over [x0, x1] a pair of length l can stand abreast with
its centre anywhere in [x0 + l/2, x1 − l/2], so the single-lane stretches of a route from xA to
xB are x0 + l/2 − xA and xB − (x1 − l/2) long. The check errs towards "single-lane" by at most
its stated tolerance (sound bound), and lengths are within one route sample step.
"""

import json

import pytest
import shapely
from shapely.geometry import LineString

import floorfit as ff
from floorfit.analysis.check import run_check
from floorfit.analysis.findings import Station
from floorfit.analysis.traffic import SAMPLE_STEP_M
from floorfit.analysis.traffic_pair import pair_outline
from floorfit.errors import SiteError
from floorfit.plan.model import Label, Plan
from floorfit.plan.site import Site, Traffic, read_site
from floorfit.report import write_report

L, W1, W2, GAP = 0.9, 0.6, 0.8, 0.4
#: the closed forms hold within this much more width than the stated tolerance (float slack)
SLACK = 0.005


def corridor(width: float, length: float = 20.0, bay=None) -> Plan:
    """A straight corridor along x (y from 0 to ``width``); ``bay`` = (x0, x1, depth) widens it upwards."""
    if bay:
        x0, x1, depth = bay
        ring = [(0, 0), (length, 0), (length, width), (x1, width), (x1, width + depth), (x0, width + depth),
                (x0, width), (0, width), (0, 0)]
    else:
        ring = [(0, 0), (length, 0), (length, width), (0, width), (0, 0)]
    return Plan.from_geometries(walls=[LineString(ring)], labels=[Label("AISLE 4", length / 2, width / 2)])


def check(plan: Plan, width: float, others=(), gap: float = GAP, one_way: bool = False, stations=None):
    site = Site(required_clearance_m=0.0, clearance_reference="none",
                traffic=Traffic(vehicles=tuple(others), gap_m=gap, gap_reference="test", one_way=one_way))
    stations = stations or [Station("A", 1.0, width / 2), Station("B", 19.0, width / 2)]
    veh = ff.rectangle_vehicle(L, W1, name="robot")
    return run_check(plan, veh, stations, site=site, heading_step_deg=5.0)


def single_lane(r):
    return [f for f in r.findings if f.kind == "single-lane"]


def test_pair_outline_is_the_two_footprints_side_by_side_with_the_gap():
    a = ff.rectangle_vehicle(L, W1, reference_to_front=0.7, margin=0.05)    # reference off centre
    b = ff.rectangle_vehicle(1.4, W2, margin=0.0)
    shape = pair_outline(a, [b], GAP)
    x0, y0, x1, y1 = shape.bounds
    assert y1 - y0 == pytest.approx((W1 + 0.1) + GAP + W2, abs=1e-9)
    assert x1 - x0 == pytest.approx(1.4, abs=1e-9)
    assert (x0 + x1, y0 + y1) == pytest.approx((0.0, 0.0), abs=1e-9)      # reference at the box centre
    same = pair_outline(a, [a], GAP)
    turned = shapely.affinity.rotate(same, 180.0, origin=(0, 0))
    assert shapely.equals(same, turned)          # two equal vehicles: symmetric under a half turn


@pytest.mark.parametrize("others, needed", [((), 2 * W1 + GAP), ((ff.rectangle_vehicle(L, W2, name="tug"),),
                                                                  W1 + W2 + GAP)])
def test_straight_corridor_passes_iff_wide_enough(others, needed):
    # identical rectangles: W ≥ 2w + g; two different ones: W ≥ w1 + w2 + g (closed forms)
    narrow = needed - 0.01
    r = check(corridor(narrow), narrow, others)
    tr = r.traffic
    assert tr["settings"]["pair_width_m"] == pytest.approx(needed, abs=1e-9)
    (f,) = single_lane(r)
    (s,) = tr["stretches"]
    assert s["length_m"] == pytest.approx(18.0, abs=SAMPLE_STEP_M)        # the whole route A → B
    assert f.clear_width_m == pytest.approx(narrow, abs=1e-6)
    assert f.needed_width_m == pytest.approx(needed, abs=1e-9)
    assert s["widening_m"] == pytest.approx(0.01, abs=1e-6)
    assert f.label == "near AISLE 4"
    assert tr["passing_places"] == []

    wide = needed + 0.085
    r = check(corridor(wide), wide, others)
    assert r.traffic["settings"]["tolerance_m"] + SLACK <= 0.085     # the stated guarantee covers this width
    assert single_lane(r) == [] and r.traffic["stretches"] == []
    (p,) = r.traffic["passing_places"]
    assert p["length_m"] == pytest.approx(18.0, abs=SAMPLE_STEP_M)


def test_corridor_with_one_bay_gives_one_passing_place_and_two_stretches():
    width, x0, x1 = 1.0, 8.0, 12.0
    r = check(corridor(width, bay=(x0, x1, 1.0)), width)
    tr = r.traffic
    tol = tr["settings"]["tolerance_m"] + SAMPLE_STEP_M
    (p,) = tr["passing_places"]
    assert x0 < p["x"] < x1
    assert p["length_m"] == pytest.approx((x1 - x0) - L, abs=2 * tol)
    stretches = sorted(tr["stretches"], key=lambda s: s["x"])
    assert len(stretches) == 2 and len(single_lane(r)) == 2
    first, second = stretches
    assert first["length_m"] == pytest.approx(x0 + L / 2 - 1.0, abs=tol)
    assert second["length_m"] == pytest.approx(19.0 - (x1 - L / 2), abs=tol)
    for s in stretches:
        assert s["clear_width_m"] == pytest.approx(width, abs=1e-6)
        assert s["widening_m"] == pytest.approx(2 * W1 + GAP - width, abs=1e-6)
        assert [e["passing_place"] for e in s["ends"]] == [p["id"]]       # waits at the bay
        assert s["dead_end"]
    assert {tuple(s["stations_inside"]) for s in stretches} == {("A",), ("B",)}


def loop_plan() -> Plan:
    """A 20 × 8 m hall with a 16 × 6 m block in the middle: a ring corridor 1 m wide all round."""
    return Plan.from_geometries(walls=[shapely.box(0, 0, 20, 8).exterior], solids=[shapely.box(2, 1, 18, 7)])


@pytest.mark.parametrize("one_way", [False, True])
def test_single_lane_stretch_on_a_loop_is_no_finding_when_aisles_may_be_one_way(one_way):
    stations = [Station("A", 1.0, 4.0), Station("B", 19.0, 4.0)]
    r = check(loop_plan(), 1.0, stations=stations, one_way=one_way)
    loop = [s for s in r.traffic["stretches"] if s["one_way_possible"]]
    if one_way:
        assert loop and all(s["finding"] is None for s in loop)
    else:
        assert not loop and single_lane(r)


def test_without_traffic_nothing_changes(tmp_path):
    r = run_check(corridor(1.0), ff.rectangle_vehicle(L, W1), [Station("A", 1.0, 0.5), Station("B", 19.0, 0.5)],
                  site=Site(required_clearance_m=0.0, clearance_reference="none"), heading_step_deg=5.0)
    assert r.traffic is None
    written = write_report(r, tmp_path / "out", formats=("json", "csv", "dxf"), quiet=True)
    data = json.loads(written["json"].read_text(encoding="utf-8"))
    assert "traffic" not in data and "single-lane" not in data["verdict"]["findings_by_kind"]
    assert not (tmp_path / "out" / "traffic.csv").exists()


def test_report_files_hold_the_traffic_table_and_layers(tmp_path):
    r = check(corridor(1.0, bay=(8.0, 12.0, 1.0)), 1.0)
    written = write_report(r, tmp_path / "out", formats=("json", "csv", "dxf"), quiet=True)
    data = json.loads(written["json"].read_text(encoding="utf-8"))
    assert data["verdict"]["findings_by_kind"]["single-lane"] == 2
    assert len(data["traffic"]["stretches"]) == 2 and len(data["traffic"]["passing_places"]) == 1
    assert {s["finding_id"] for s in data["traffic"]["stretches"]} == {f.id for f in single_lane(r)}
    rows = (tmp_path / "out" / "traffic.csv").read_text(encoding="utf-8-sig").splitlines()
    assert rows[0].startswith("id,what,finding,label,x_m,y_m,length_m,clear_width_m,needed_width_m,widening_m")
    assert len(rows) == 4
    import ezdxf

    doc = ezdxf.readfile(written["dxf"])
    layers = {e.dxf.layer for e in doc.modelspace()}
    assert {"FF-TRAF-PASS", "FF-TRAF-SNGL", "FF-TRAF-WDTH", "FF-TRAF-IDEN", "FF-FIND-SNGL"} <= layers
    # a second run into the same folder recognises traffic.csv as its own file
    write_report(r, tmp_path / "out", formats=("json", "csv"), quiet=True)


def test_site_file_traffic_table(tmp_path):
    site = tmp_path / "s.toml"
    site.write_text('[traffic]\nvehicles = ["tug.toml"]\nreference = "b56.5"\none_way = true\n', encoding="utf-8")
    t = read_site(site).traffic
    assert t.gap_m == pytest.approx(0.45) and "B56.5" in t.gap_reference and t.one_way
    assert t.vehicles == (str(tmp_path / "tug.toml"),)
    assert read_site(_write(tmp_path, "[stations]\n")).traffic is None
    with pytest.raises(SiteError, match="gap"):
        read_site(_write(tmp_path, "[traffic]\ngapp = 0.5\n"))
    with pytest.raises(SiteError):
        read_site(_write(tmp_path, "[traffic]\ngap = -1\n"))


def _write(folder, text):
    p = folder / "x.toml"
    p.write_text(text, encoding="utf-8")
    return p
