"""Annulus swept by a car turning at its minimum radius (floorfit.motion.swept)."""

import math

import numpy as np
import pytest
from shapely.geometry import Point, Polygon

from floorfit.errors import InputError
from floorfit.motion import arc, sample, swept_annulus


@pytest.mark.parametrize("radius, width, front, inner, outer", [
    # FIELD-NOTES.md, car turning at minimum radius (common practice, vehicle turning
    # geometry): inner R - w/2, outer sqrt((R + w/2)^2 + d^2)
    (2.0, 0.8, 1.5, 1.6, 2.830194),
    (1.5, 1.0, 1.45, 1.0, 2.470324),
])
def test_closed_form_values(radius, width, front, inner, outer):
    got = swept_annulus(radius, width, front)
    assert got == pytest.approx((inner, outer), abs=1e-6)


def _outline(width, front, rear, spacing=0.01):
    """Points on the body outline (m, rear-axle frame), including x = 0 and the corners."""
    xs = np.union1d(np.linspace(-rear, front, int((front + rear) / spacing) + 2), [0.0])
    ys = np.linspace(-width / 2, width / 2, int(width / spacing) + 2)
    return np.concatenate([np.c_[xs, np.full_like(xs, -width / 2)],
                           np.c_[xs, np.full_like(xs, width / 2)],
                           np.c_[np.full_like(ys, -rear), ys],
                           np.c_[np.full_like(ys, front), ys]])


@pytest.mark.parametrize("radius, width, front, rear, steer", [
    (2.0, 0.8, 1.5, 0.0, 1),
    (1.5, 1.0, 1.45, 0.3, -1),
    (0.9, 0.7, 0.4, 1.2, 1),   # rear overhang longer than the front: the rear corner is outermost
    (0.3, 0.8, 1.0, 0.2, -1),  # turn centre inside the body: inner radius 0
])
def test_against_brute_force_full_circle(radius, width, front, rear, steer):
    # brute force: drive a full circle, place the outline at every sample and measure
    # the distances of all its points from the turn centre
    circle = arc((0.0, 0.0, 0.0), 2 * math.pi * radius, steer, radius)
    poses = sample([circle], step_m=0.05, step_deg=2.0)
    body = _outline(width, front, rear)
    c, s = np.cos(poses[:, 2])[:, None], np.sin(poses[:, 2])[:, None]
    x = poses[:, 0:1] + c * body[:, 0] - s * body[:, 1]
    y = poses[:, 1:2] + s * body[:, 0] + c * body[:, 1]
    centre = (0.0, steer * radius)
    dist = np.hypot(x - centre[0], y - centre[1])
    inner, outer = swept_annulus(radius, width, front, rear_length=rear)
    assert dist.max() == pytest.approx(outer, abs=1e-9)
    if radius > width / 2:
        assert dist.min() == pytest.approx(inner, abs=1e-9)
    # the filled body's distance from the centre (GEOS) is the inner radius at every
    # pose of the circle; 0 when the centre lies inside the body
    for pose in poses[::20]:
        cx, sx = math.cos(pose[2]), math.sin(pose[2])
        corners = [(pose[0] + cx * u - sx * v, pose[1] + sx * u + cx * v)
                   for u, v in ((-rear, -width / 2), (front, -width / 2),
                                (front, width / 2), (-rear, width / 2))]
        assert Point(centre).distance(Polygon(corners)) == pytest.approx(inner, abs=1e-9)


def test_bad_dimensions_raise_input_error():
    with pytest.raises(InputError, match="radius"):
        swept_annulus(0.0, 1.0, 1.0)
    with pytest.raises(InputError, match="width"):
        swept_annulus(1.0, -1.0, 1.0)
    with pytest.raises(InputError, match="front_length"):
        swept_annulus(1.0, 1.0, float("nan"))
