"""Poses and angles inside :mod:`floorfit.motion`.

A pose is ``(x, y, heading)``: x and y in metres, heading in **radians**,
counter-clockwise from +x. The rest of floorfit speaks degrees at its boundary;
:func:`pose_from_degrees` and :func:`pose_to_degrees` convert one pose or an
``(N, 3)`` array of poses. For car-like vehicles the reference point is the
centre of the rear axle.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from floorfit.errors import InputError

__all__ = [
    "Pose",
    "wrap_angle",
    "as_pose",
    "relative_pose",
    "from_local",
    "pose_from_degrees",
    "pose_to_degrees",
]

Pose = tuple[float, float, float]
"""(x m, y m, heading rad)."""

_TWO_PI = 2.0 * math.pi


def wrap_angle(angle_rad):
    """Wrap an angle (radians, scalar or array) into [-pi, pi)."""
    return np.remainder(np.asarray(angle_rad, dtype=float) + math.pi, _TWO_PI) - math.pi


def as_pose(value: Sequence[float], what: str = "pose") -> Pose:
    """Check and convert ``value`` to a pose ``(x m, y m, heading rad)``.

    Raises :class:`~floorfit.errors.InputError` naming ``what`` when the value is
    not three finite numbers.
    """
    try:
        x, y, h = (float(v) for v in value)
    except (TypeError, ValueError):
        raise InputError(
            f"expected three numbers (x m, y m, heading rad), got {value!r}", where=what
        ) from None
    if not all(math.isfinite(v) for v in (x, y, h)):
        raise InputError(f"pose values must be finite, got {value!r}", where=what)
    return (x, y, h)


def relative_pose(origin, target) -> np.ndarray:
    """Express ``target`` poses in the frame of ``origin`` poses.

    Both are (3,) or (N, 3) arrays of (x m, y m, heading rad) and broadcast against
    each other. Returns (x m, y m, heading rad) with the heading wrapped into [-pi, pi).
    """
    origin = np.asarray(origin, dtype=float)
    target = np.asarray(target, dtype=float)
    dx = target[..., 0] - origin[..., 0]
    dy = target[..., 1] - origin[..., 1]
    c, s = np.cos(origin[..., 2]), np.sin(origin[..., 2])
    return np.stack([c * dx + s * dy, -s * dx + c * dy,
                     wrap_angle(target[..., 2] - origin[..., 2])], axis=-1)


def from_local(origin: Pose, local: np.ndarray) -> np.ndarray:
    """Poses given in the frame of ``origin`` ((N, 3) array) expressed in the world frame.

    The inverse of :func:`relative_pose` for one origin; headings are not wrapped.
    """
    x, y, h = origin
    c, s = math.cos(h), math.sin(h)
    out = np.empty_like(local, dtype=float)
    out[:, 0] = x + c * local[:, 0] - s * local[:, 1]
    out[:, 1] = y + s * local[:, 0] + c * local[:, 1]
    out[:, 2] = h + local[:, 2]
    return out


def pose_from_degrees(pose_deg):
    """(x m, y m, heading deg) -> (x m, y m, heading rad); one pose or an (N, 3) array."""
    arr = np.array(pose_deg, dtype=float)
    arr[..., 2] = np.radians(arr[..., 2])
    return tuple(float(v) for v in arr) if arr.ndim == 1 else arr


def pose_to_degrees(pose_rad):
    """(x m, y m, heading rad) -> (x m, y m, heading deg); one pose or an (N, 3) array."""
    arr = np.array(pose_rad, dtype=float)
    arr[..., 2] = np.degrees(arr[..., 2])
    return tuple(float(v) for v in arr) if arr.ndim == 1 else arr
