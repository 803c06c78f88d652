"""Pinch points of a route: where a route on optimistic slices leaves the sound free space.

A coarse heading step errs towards "does not fit" by more than a fine one. When the coarse
sound slices find no route but the coarse optimistic ones do, the two bounds part only where
the optimistic route leaves the sound free space: :func:`pinch_headings` finds the headings
of those poses, around which :func:`floorfit.motion.coarse_route.settle_coarse` refines the
heading step. Local frame, metres; headings in degrees.
"""

from __future__ import annotations

import numpy as np

from floorfit.cspace.collision import sample_motion
from floorfit.cspace.headings import format_heading_ranges, wrap_deg
from floorfit.cspace.slices import SliceSet

__all__ = ["pinch_headings", "format_ranges", "COARSE_FINAL", "REFINE_HALF_WIDTH_STEPS", "PINCH_SAMPLE_M",
           "PINCH_SAMPLE_DEG"]

#: Answers the coarse slices settle: a route on sound slices holds at every finer step.
COARSE_FINAL = ("reachable", "start-blocked", "goal-blocked")

#: Around each heading at which the coarse optimistic route leaves the coarse sound free space,
#: headings are refined this many coarse steps either side (room to turn into the pinch).
REFINE_HALF_WIDTH_STEPS = 2.0
#: The optimistic route is sampled this densely to find where it leaves the sound free space
#: (metres of travel, degrees of rotation between samples).
PINCH_SAMPLE_M = 0.05
PINCH_SAMPLE_DEG = 0.5


def pinch_headings(sound: SliceSet, path_local: np.ndarray) -> np.ndarray:
    """Headings (degrees) of the poses along ``path_local`` ((N, 3) local frame, linear
    interpolation between waypoints, the shorter arc for the heading) that lie outside the
    ``sound`` slices' free space: where the sound and optimistic answers part, the pinch points.
    The motion is sampled with :func:`floorfit.cspace.collision.sample_motion` every
    :data:`PINCH_SAMPLE_M` / :data:`PINCH_SAMPLE_DEG`."""
    p = np.asarray(path_local, dtype=float).reshape(-1, 3)
    if len(p) < 2:
        return np.zeros(0)
    poses = sample_motion(p, step_m=PINCH_SAMPLE_M, step_deg=PINCH_SAMPLE_DEG, radius_m=sound.vehicle.radius_m)
    return poses[~sound.are_free(poses), 2]


def format_ranges(headings, half_width_deg: float) -> str:
    """The arcs within ``half_width_deg`` of ``headings`` (degrees), merged, as text."""
    hs = np.sort(np.unique(np.round(wrap_deg(np.asarray(headings, dtype=float)), 1)))
    arcs: list[list[float]] = []
    for h in hs:
        if arcs and h - half_width_deg <= arcs[-1][1]:
            arcs[-1][1] = h + half_width_deg
        else:
            arcs.append([h - half_width_deg, h + half_width_deg])
    return format_heading_ranges(arcs)
