"""Dense sampling of paths for collision checks, with its error bounds.

Samples are placed at most ``step_m`` apart along the reference point's track and
at most ``step_deg`` apart in heading, on every segment, and every segment's
start and end pose is a sample.

Error bounds (radius R in m, step s in m along an arc, heading step d in rad):

- Linear interpolation between two samples of an arc leaves the true track of the
  reference point by at most the sagitta ``R (1 - cos(s / 2R))``
  (:func:`chord_deviation`); headings vary linearly along arcs, straights and
  rotations, so interpolating the heading is exact.
- Between two consecutive samples any point of the vehicle within ``reach_m`` of
  the reference point travels at most ``s + reach_m * d`` (on an arc of radius R
  that point is at most R + reach from the centre and turns by s / R <= d). Every
  pose of the true motion is therefore within ``(s + reach_m * d) / 2`` of a
  sampled pose, for every point of the body (:func:`motion_check_margin`): checking
  the sampled footprints grown by that margin is conservative.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from floorfit.motion._checks import positive_number
from floorfit.motion.segments import Segment, poses_along

__all__ = ["sample", "sample_counts", "chord_deviation", "motion_check_margin"]


def _check_steps(step_m: float, step_deg: float) -> None:
    positive_number(step_m, "step_m")
    positive_number(step_deg, "step_deg")


def sample_counts(segments: Sequence[Segment], step_m: float, step_deg: float) -> list[int]:
    """Number of sample intervals used for each segment (>= 1)."""
    _check_steps(step_m, step_deg)
    return [max(1, math.ceil(s.length_m / step_m - 1e-9),
                math.ceil(abs(s.angle_deg) / step_deg - 1e-9)) for s in segments]


def sample(segments: Sequence[Segment], step_m: float = 0.05, step_deg: float = 2.0) -> np.ndarray:
    """Poses along a path, ``(N, 3)`` array of (x m, y m, heading rad).

    Consecutive samples are at most ``step_m`` (m) apart along the track and at
    most ``step_deg`` (deg) apart in heading. The first row is the path's start
    and the last row its end; an empty path gives an empty ``(0, 3)`` array.
    See the module docstring for the interpolation error bounds.
    """
    if not segments:
        return np.empty((0, 3))
    parts = [np.asarray([segments[0].start], dtype=float)]
    for seg, n in zip(segments, sample_counts(segments, step_m, step_deg)):
        parts.append(poses_along(seg, np.arange(1, n + 1) / n))
    return np.concatenate(parts)


def chord_deviation(radius_m: float, step_m: float) -> float:
    """Largest distance (m) between an arc of radius ``radius_m`` and the chord
    joining two points ``step_m`` apart along it: ``R (1 - cos(s / 2R))``."""
    return radius_m * (1.0 - math.cos(step_m / (2.0 * radius_m)))


def motion_check_margin(step_m: float, step_deg: float, reach_m: float) -> float:
    """Margin (m) that makes sampled checks conservative: ``(s + reach * d) / 2``.

    ``reach_m`` is the largest distance from the reference point to any point of
    the vehicle outline (m); ``d`` is ``step_deg`` in radians. A footprint grown by
    this margin and found free at every sample of :func:`sample` guarantees the
    ungrown footprint is free along the whole continuous motion.
    """
    return 0.5 * (step_m + reach_m * math.radians(step_deg))
