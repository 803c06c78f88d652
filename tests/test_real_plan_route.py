"""A route query on a real third-party drawing, through real doorways (read in place from ../shared)."""

import math

import numpy as np

import floorfit as ff
from floorfit.testing import assert_path_clear


def test_route_out_of_the_pavilion_office_through_its_doors(plans_real):
    # Barcelona Pavilion plan (plans-real #1, metres, MIT): the small office block at the top left
    # has swing doors at about (4.16, 18.66) and (6.66, 16.16) m.
    plan = ff.load_plan(plans_real / "yorikvanhavre__barcelona-pavillion__plan.dxf")
    robot = ff.rectangle_vehicle(0.9, 0.6, margin=0.05, name="tote robot")
    r = ff.find_route(plan, robot, (2.0, 18.0, 0.0), (10.0, 10.0, 0.0), heading_step_deg=5.0)
    assert r.status == "reachable", (r.notes, r.stuck)
    assert_path_clear(plan, robot, r.path)
    # the motion passes both doorways: some segment comes within 0.5 m of each door centre
    for door in ((4.16, 18.66), (6.66, 16.16)):
        pts = np.vstack([np.linspace(a[:2], b[:2], 50) for a, b in zip(r.path[:-1], r.path[1:])])
        assert np.min(np.hypot(pts[:, 0] - door[0], pts[:, 1] - door[1])) < 0.5, door
    # a 1.2 m square cart does not get out: the door leaves are about 1.0 m
    wide = ff.rectangle_vehicle(1.2, 1.2, name="square cart")
    r = ff.find_route(plan, wide, (2.5, 19.0, 90.0), (10.0, 10.0, 0.0), heading_step_deg=5.0)
    assert r.status == "unreachable"
    assert r.stuck is not None and r.stuck["distance_to_goal_m"] > 5.0
    assert math.hypot(r.stuck["x"] - 10.0, r.stuck["y"] - 10.0) > 5.0
