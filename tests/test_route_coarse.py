"""The coarse first try of a route: coarse sound slices settle what they can, then the coarse
optimistic slices (unreachable) or slices refined near the pinch points (reachable), the default
step the rest.

The corridor corner and the longest rectangle that turns it come from C. Moretti, "Moving a
couch around a corner", College Math. J. 33(3), 2002 (the closed form in
tests/test_reachability_reference.py).
"""

from __future__ import annotations

import pytest
from test_reachability_reference import corner_plan, moretti_length

import floorfit as ff
from floorfit.cspace.slices import build_slices, choose_headings, default_step
from floorfit.motion.route_query import COARSE_FACTOR, coarse_cells, find_route
from floorfit.testing import assert_path_clear

A, B, W = 1.5, 2.0, 0.6          # corridor widths and vehicle width, metres
START, GOAL = (-4.0, A / 2, 0.0), (B / 2, A + 4.0, 90.0)


def _corner(shorter_by: float):
    plan = corner_plan(A, B)
    vehicle = ff.rectangle_vehicle(moretti_length(A, B, W) - shorter_by, W)
    return plan, vehicle


def test_coarse_cells_are_a_multiple_of_the_default_step():
    plan, vehicle = _corner(1.0)
    step = default_step(plan, vehicle)
    cells = coarse_cells(plan, vehicle, (START[2], GOAL[2]))
    assert cells.step_deg == pytest.approx(COARSE_FACTOR * step)
    assert len(cells) < len(choose_headings(plan, vehicle, extra_headings=(0.0, 90.0))) / 2


def test_an_easy_route_is_settled_on_the_coarse_slices():
    plan, vehicle = _corner(1.0)         # a metre shorter than the longest that turns the corner
    r = find_route(plan, vehicle, START, GOAL)
    assert r.status == "reachable"
    assert r.settings["heading_step_deg"] == pytest.approx(COARSE_FACTOR * default_step(plan, vehicle))
    assert any("coarse slices" in n for n in r.notes)
    assert_path_clear(plan, vehicle, r.path)
    # the same answer at the default step, asked for explicitly
    fine = find_route(plan, vehicle, START, GOAL, heading_step_deg=default_step(plan, vehicle))
    assert fine.status == "reachable"


@pytest.mark.parametrize("shorter_by", [0.1, 0.2])
def test_a_tight_corner_the_coarse_slices_miss_is_passed_on_slices_refined_near_it(shorter_by):
    plan, vehicle = _corner(shorter_by)
    step = default_step(plan, vehicle)
    coarse = build_slices(plan, vehicle, cells=coarse_cells(plan, vehicle, (START[2], GOAL[2])))
    # precondition: the coarse sound slices, conservative by a wider heading cell, see no route
    assert find_route(plan, vehicle, START, GOAL, slices=coarse, check_optimistic=False).status == "unreachable"
    r = find_route(plan, vehicle, START, GOAL)
    assert r.status == "reachable"
    # refined to the default step near the pinch only: fewer slices than the default step everywhere,
    # stated with the coarse step and its (larger) tolerance
    assert any(f"refined to {step:g}°" in n and "pinch points" in n for n in r.notes)
    assert r.settings["headings"] < len(choose_headings(plan, vehicle, extra_headings=(START[2], GOAL[2])))
    assert r.tolerance_m == pytest.approx(coarse.tolerance_m)
    assert_path_clear(plan, vehicle, r.path)
    # the same answer at the default step everywhere, asked for explicitly
    assert find_route(plan, vehicle, START, GOAL, heading_step_deg=step).status == "reachable"


def test_a_route_too_long_for_the_corner_stays_unreachable():
    plan, vehicle = _corner(-0.2)        # 0.2 m longer than the closed form allows
    r = find_route(plan, vehicle, START, GOAL)
    assert r.status == "unreachable"
    # settled on the coarse bounds: even the vehicle shrunk by the coarse tolerance does not turn it
    assert r.settings["heading_step_deg"] == pytest.approx(COARSE_FACTOR * default_step(plan, vehicle))
    assert any("not even the vehicle shrunk" in n for n in r.notes)
    fine = find_route(plan, vehicle, START, GOAL, heading_step_deg=default_step(plan, vehicle))
    assert fine.status == "unreachable"


def test_an_explicit_step_skips_the_coarse_try():
    plan, vehicle = _corner(1.0)
    r = find_route(plan, vehicle, START, GOAL, heading_step_deg=2.0)
    assert r.status == "reachable"
    assert r.settings["heading_step_deg"] == 2.0
    assert not any("coarse" in n for n in r.notes)


def test_route_refuses_a_run_too_large_before_building_the_whole_drawing(tmp_path, monkeypatch, capsys):
    import re

    import floorfit.cspace.sizelimits as limits
    import floorfit.cspace.slices as slices_module
    from floorfit.cli import main
    from floorfit.demo import write_demo_site

    demo = write_demo_site(tmp_path / "plans")
    edges = ff.load_plan(demo["plan"]).edge_count()
    monkeypatch.setattr(limits, "MAX_EDGE_SLICES", edges * 60)     # about 60 slices allowed
    route = ["route", str(demo["plan"]), "--vehicle", str(demo["vehicle"]), "--start", "15,2.2,-90",
             "--goal", "6.5,11,90", "--quiet", "--no-cache", "--full-slices"]
    built = []
    real_build = slices_module.build_slices
    monkeypatch.setattr(slices_module, "build_slices", lambda *a, **k: built.append(1))
    code = main(route)
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2 and not built
    assert err[-1].startswith(f"floorfit route: {demo['plan']}: ") and f"above the limit of {edges * 60:,}" in err[-1]
    assert "Traceback" not in "\n".join(err)
    step = re.search(r"--heading-step \(e\.g\. ([0-9.]+)°\)", err[-1]).group(1)
    # followed, the advice is accepted and the route answered
    monkeypatch.setattr(slices_module, "build_slices", real_build)
    assert main(route + ["--heading-step", step]) == 0
