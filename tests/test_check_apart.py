"""The check's station-pair drives on a second process give the answer one process gives.

The manoeuvre budget's drives run on a forked child while the clearance and turnability stages
run in the parent (:mod:`floorfit.forking`, whose own behaviour tests/test_report_speed.py tests);
findings, reach, cuts, notes and swept routes must be those of the one-process check, in the
same order.
"""

from __future__ import annotations

import pytest
import shapely

import floorfit as ff
import floorfit.analysis.check as check_module
from floorfit.analysis.check import run_check
from floorfit.analysis.findings import Station
from floorfit.forking import _may_fork
from floorfit.plan.model import Doorway, Plan
from floorfit.plan.site import Site

pytestmark = pytest.mark.skipif(not _may_fork(2), reason="needs a forked second process")


def _plan() -> Plan:
    # a room with a 5 cm partition and a 1.0 m doorway (as tests/test_budget.py), and a closet in
    # its corner (x 6.55 .. 8.05, y 2.95 .. 4 m) entered by a 0.55 m gap a person passes and no vehicle here
    outer = shapely.box(0, 0, 8.05, 4)
    solids = [shapely.box(4.0, 0, 4.05, 1.5), shapely.box(4.0, 2.5, 4.05, 4),
              shapely.box(7.1, 2.9, 8.05, 2.95), shapely.box(6.5, 2.9, 6.55, 4)]
    return Plan.from_geometries(walls=[outer], solids=solids, doors=[Doorway(4.025, 2.0, 1.0, label="D-1")])


def _summary(r):
    return (r.passed, r.reachable, r.cuts, r.notes, r.settings,
            [(f.id, f.kind, f.cause, f.direction_changes, round(f.x, 6), round(f.y, 6), f.summary) for f in r.findings],
            [(d.get("from"), d.get("to"), d.get("status")) for d in (r.routes or [])])


@pytest.mark.parametrize("case", ["car over the budget", "differential within it, tight, swept route"])
def test_check_with_drives_apart_equals_one_process(monkeypatch, case):
    # a car (turning radius 1.0 m) needs a three-point turn between the stations (2 direction changes),
    # over a budget of 1; a 0.6 x 0.8 m differential robot drives through the 1.0 m doorway with 0.2 m each side,
    # which the required clearance (0.3 m) makes tight, and the report's swept route is planned
    if case.startswith("car"):
        vehicle = ff.rectangle_vehicle(0.8, 0.8, mode="car", min_turn_radius_m=1.0, name="car")
        stations = [Station("A", 2.0, 2.0, 90.0), Station("B", 6.0, 2.0, 90.0)]
        site = Site(required_clearance_m=0.0, clearance_reference="none", max_direction_changes=1)
    else:
        vehicle = ff.rectangle_vehicle(0.6, 0.8, mode="differential", name="robot")
        stations = [Station("A", 2.0, 2.0), Station("B", 6.0, 2.0), Station("C", 1.0, 1.0), Station("D", 7.4, 3.5)]
        site = Site(required_clearance_m=0.3, clearance_reference="test", max_direction_changes=2,
                    routes=[("A", "B")])
    one = run_check(_plan(), vehicle, stations, site=site, heading_step_deg=3.0, workers=1)
    monkeypatch.setattr(check_module, "DRIVES_APART_MIN_WORK", 0)
    started = []
    real_start = check_module.start

    def watching_start(*a, **kw):
        pending = real_start(*a, **kw)
        started.append(pending.apart)
        return pending

    monkeypatch.setattr(check_module, "start", watching_start)
    two = run_check(_plan(), vehicle, stations, site=site, heading_step_deg=3.0, workers=2)
    assert started == [True, True]       # the clearance raster beside the roadmap, then the drives
    assert _summary(two) == _summary(one)
    kinds = {(f.kind, f.cause) for f in one.findings}
    if case.startswith("car"):
        assert ("maneuver", "over-budget") in kinds and one.reachable["A"]["B"] is False and one.notes
    else:
        assert ("tight", "width") in kinds and one.reachable["A"]["B"] and one.routes
        # the closet's blocked finding cuts the pairs with D: its id must reach the cuts
        assert ("blocked", "width") in kinds and two.cuts[("A", "D")] == one.cuts[("A", "D")] != [""]
