"""Helpers for users' own tests: re-check a returned path against the obstacles directly."""

from __future__ import annotations

import numpy as np

from floorfit.cspace.collision import PoseChecker, sample_motion

__all__ = ["path_clearance", "assert_path_clear"]


def path_clearance(plan, vehicle, path_drawing, *, step_m: float = 0.005, step_deg: float = 0.25) -> float:
    """Smallest clearance (metres) of the footprint along the interpolated motion through ``path_drawing``.

    The motion is sampled densely (no footprint point moves more than about ``step_m``
    between samples); clearance is measured directly against the plan's obstacles.
    Returns 0.0 where the footprint touches or overlaps an obstacle.
    """
    path = np.asarray(path_drawing, dtype=float).reshape(-1, 3).copy()
    path[:, 0] -= plan.origin[0]
    path[:, 1] -= plan.origin[1]
    poses = sample_motion(path, step_m=step_m, step_deg=step_deg, radius_m=vehicle.radius_m)
    checker = PoseChecker(plan, vehicle.footprint)
    if checker.collides(poses).any():
        return 0.0
    return float(checker.clearance(poses).min())


def assert_path_clear(plan, vehicle, path_drawing, *, step_m: float = 0.005, step_deg: float = 0.25) -> float:
    """Raise AssertionError unless the whole interpolated motion is clear; return its clearance, metres."""
    c = path_clearance(plan, vehicle, path_drawing, step_m=step_m, step_deg=step_deg)
    if c <= 0.0:
        raise AssertionError("the path's footprint touches or overlaps an obstacle")
    return c
