"""Remedies and sheet poses not covered by test_report_remedies: a station the vehicle does not fit
at, a block where the vehicle cannot make the turn, the height side view, and the sheets' wording
of headings and turn-round classes.

Small invented drawings: the full remedy removes the finding, half of it leaves the finding standing.
"""

from __future__ import annotations

import io

import numpy as np
import pdfplumber
import pytest
from shapely.geometry import LineString, Point, box
from shapely.ops import unary_union

from floorfit.analysis.check import run_check
from floorfit.plan.model import Plan
from floorfit.plan.site import Site
from floorfit.plan.stations import Station
from floorfit.report.pdf import render_pdf
from floorfit.report.remedies import compute_remedy
from floorfit.report.sheets import build_sheets, headings_text
from floorfit.vehicles.rigid import rectangle_vehicle

ROBOT = rectangle_vehicle(0.8, 0.6, margin=0.05, mode="differential", name="0.8 x 0.6 robot")   # needs 0.70 m
SITE = Site(required_clearance_m=0.0)


def _kinds(result, kind, cause=None):
    return [f for f in result.findings if f.kind == kind and (cause is None or f.cause == cause)]


def _pdf_pages(result) -> list[str]:
    with pdfplumber.open(io.BytesIO(render_pdf(result))) as pdf:
        return [p.extract_text() or "" for p in pdf.pages]


# -- a station in a niche too narrow for the vehicle ----------------------------------------------------
def _niche_plan(width: float) -> Plan:
    """A 6 × 6 m room with a niche 3 m deep off its right wall, ``width`` wide, centred on y = 3."""
    y0, y1 = 3.0 - width / 2, 3.0 + width / 2
    return Plan.from_geometries([LineString([(0, 0), (6, 0), (6, y0), (9, y0), (9, y1), (6, y1), (6, 6), (0, 6),
                                             (0, 0)])], [])


NICHE_STATIONS = [Station("DOCK", 7.5, 3.0, 0.0, 5.0), Station("ROOM", 2.0, 3.0, None, 5.0)]


def test_station_block_widened_by_the_stated_amount_lets_the_vehicle_stand_there():
    result = run_check(_niche_plan(0.60), ROBOT, NICHE_STATIONS, site=SITE)
    f = _kinds(result, "blocked", "station")
    assert len(f) == 1 and f[0].cuts_off == ["DOCK"]
    remedy = compute_remedy(result, f[0])
    assert remedy.action == "station" and remedy.target_m >= 0.70
    assert remedy.change_m == pytest.approx(remedy.target_m - 0.60, abs=0.005)
    assert f"{remedy.target_m:.2f} m" in remedy.text and f"{remedy.change_m * 100:.0f} cm more" in remedy.text
    # the stated remedy: the niche as wide as the target round the station
    fixed = run_check(_niche_plan(0.60 + remedy.change_m), ROBOT, NICHE_STATIONS, site=SITE)
    assert not _kinds(fixed, "blocked", "station") and fixed.reachable["ROOM"]["DOCK"]
    half = run_check(_niche_plan(0.60 + remedy.change_m / 2), ROBOT, NICHE_STATIONS, site=SITE)
    assert _kinds(half, "blocked", "station")
    # the sheet draws the vehicle at the station at its docking heading, with the clear width
    sheet = next(s for s in build_sheets(result) if s.finding is f[0])
    assert sheet.pose is not None and (sheet.pose.x, sheet.pose.y, sheet.pose.heading_deg) == (7.5, 3.0, 0.0)
    assert any(d.text == "clear 0.60 m" for d in sheet.dims)


# -- a corner the vehicle cannot turn ------------------------------------------------------------------------
LONG = rectangle_vehicle(2.0, 0.6, margin=0.05, mode="differential", name="2.0 x 0.6 robot")
CORNER = (10.475, 2.975)        # centre of the square where the corridor's two legs meet


def _corner_floor(extra=None):
    """Two round rooms joined by a 0.95 m corridor with one right-angle corner; ``extra`` opened too."""
    parts = [Point(3, 3).buffer(3.2, 64), box(6, 2.5, 10.95, 3.45), box(10, 2.5, 10.95, 8),
             Point(10.5, 10.5).buffer(2.8, 64)]
    g = unary_union(parts + ([extra] if extra is not None else []))
    return Plan.from_geometries([g.exterior, *g.interiors], [])


CORNER_STATIONS = [Station("A", 3.0, 3.0, None, 5.0), Station("B", 10.5, 10.5, None, 5.0)]


def test_turn_block_opened_by_the_stated_circle_is_gone():
    result = run_check(_corner_floor(), LONG, CORNER_STATIONS, site=SITE)
    f = _kinds(result, "blocked", "turn")
    assert len(f) == 1
    remedy = compute_remedy(result, f[0])
    assert remedy.action == "turn-room" and remedy.at is not None
    assert np.hypot(remedy.at[0] - CORNER[0], remedy.at[1] - CORNER[1]) < 0.5
    x, y = remedy.at
    fixed = run_check(_corner_floor(Point(x, y).buffer(remedy.target_m / 2, 64)), LONG, CORNER_STATIONS, site=SITE)
    assert not _kinds(fixed, "blocked") and fixed.reachable["A"]["B"]
    half = run_check(_corner_floor(Point(x, y).buffer((remedy.target_m - remedy.change_m / 2) / 2, 64)), LONG,
                     CORNER_STATIONS, site=SITE)
    assert _kinds(half, "blocked")


def test_turn_block_remedy_states_the_turn_round_circle():
    result = run_check(_corner_floor(), LONG, CORNER_STATIONS, site=SITE)
    f = _kinds(result, "blocked", "turn")
    assert len(f) == 1 and f[0].cuts_off == ["B"]
    remedy = compute_remedy(result, f[0])
    # a reversing base turns round in its footprint's smallest enclosing circle (plus a map cell each side)
    assert remedy.action == "turn-room" and remedy.target_m >= 2 * np.hypot(1.05, 0.35)
    assert remedy.change_m is not None and remedy.change_m > 0
    assert f"Clear a {remedy.target_m:.2f} m circle" in remedy.text
    sheet = next(s for s in build_sheets(result) if s.finding is f[0])
    assert any(c[2] == remedy.target_m for c in sheet.circles)


# -- the height side view ----------------------------------------------------------------------------------
def test_height_sheet_has_a_side_view_of_the_clear_and_the_vehicle_height():
    tall = rectangle_vehicle(0.8, 0.6, margin=0.05, mode="differential", name="tall robot", height_m=2.4)
    walls = [LineString([(0, 0), (6, 0), (6, 8), (0, 8), (0, 0)]),
             LineString([(0, 4), (2, 4)]), LineString([(4, 4), (6, 4)])]
    plan = Plan.from_geometries(walls, [box(2, 3.9, 4, 4.1)], wall_heights=np.tile([0.0, np.inf], (3, 1)),
                                solid_heights=np.array([[2.1, 2.6]]), solid_layers=np.array(["A-BEAM"], dtype=object))
    stations = [Station("A", 3.0, 2.0, None, 5.0), Station("B", 3.0, 6.0, None, 5.0)]
    result = run_check(plan, tall, stations, site=SITE)
    f = _kinds(result, "blocked", "height")
    assert len(f) == 1
    sheet = next(s for s in build_sheets(result) if s.finding is f[0])
    assert sheet.side_view == (pytest.approx(2.1), pytest.approx(2.4))
    overhead = [b for b in sheet.bounds if b.side == "overhead"]
    assert overhead and overhead[0].layer == "A-BEAM" and "2.10 m above the floor" in overhead[0].entity
    page = _pdf_pages(result)[1]
    assert "side view (not to scale)" in page
    assert "clear" in page and "2.10 m" in page and "vehicle" in page and "2.40 m" in page
    assert "Raise the underside" in page


# -- wording: headings and the turn-round legend -------------------------------------------------------------
def test_guard_slice_ranges_are_printed_as_the_one_heading():
    assert headings_text([(-90.05, -89.95)]) == "-90° (aligned only)"
    assert headings_text([(179.95, -179.95), (-99.5, -81.5)]) == "-180° (aligned only), -99.5° to -81.5°"
    assert headings_text([(90.0, 90.0)]) == "90° (aligned only)"


def test_turn_map_legend_of_a_car_steered_vehicle_says_nothing_of_spinning():
    car = rectangle_vehicle(1.2, 0.7, margin=0.05, mode="car", name="small car", min_turn_radius_m=1.5)
    plan = Plan.from_geometries([LineString([(0, 0), (10, 0), (10, 8), (0, 8), (0, 0)])], [])
    stations = [Station("A", 3.0, 3.0, None, 5.0), Station("B", 7.0, 5.0, None, 5.0)]
    for vehicle, spins in ((car, False), (ROBOT, True)):
        result = run_check(plan, vehicle, stations, site=SITE)
        text = "\n".join(_pdf_pages(result))
        assert ("spin in place" in text) is spins and "spins in place" not in text
