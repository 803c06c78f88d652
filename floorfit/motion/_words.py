"""Turning words (letters L, R, S with signed lengths) turned into segments.

Shared by the Reeds-Shepp and Dubins modules. In a word, ``L`` turns with the
centre on the vehicle's left, ``R`` on its right, ``S`` goes straight; each length
is in units of the turning radius (radians for arcs) and negative means reverse.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from floorfit.errors import InputError
from floorfit.motion._checks import positive_number
from floorfit.motion.poses import Pose, as_pose, relative_pose
from floorfit.motion.segments import Segment, arc, straight

# Pieces shorter than this (in turning radii) are dropped from a word's segments.
_EMPTY = 1e-10


@dataclass(frozen=True)
class Word:
    """A candidate path: letters, signed lengths (in turning radii) and total length (m)."""

    letters: str
    lengths: tuple[float, ...]
    length_m: float


def check_radius(radius) -> float:
    """The turning radius (m) as a positive float."""
    return positive_number(radius, "radius")


def normalised_goal(start, goal, radius: float) -> np.ndarray:
    """Goal poses ((3,) or (N, 3)) in the start frame, positions divided by ``radius``."""
    start_arr = np.asarray(start, dtype=float)
    goal_arr = np.asarray(goal, dtype=float)
    if start_arr.shape[-1:] != (3,) or goal_arr.shape[-1:] != (3,):
        raise InputError("poses must have three values (x m, y m, heading rad)",
                         where="start/goal")
    if not (np.all(np.isfinite(start_arr)) and np.all(np.isfinite(goal_arr))):
        raise InputError("pose values must be finite", where="start/goal")
    rel = relative_pose(start_arr, goal_arr)
    rel[..., :2] /= radius
    return rel


def word_segments(start: Pose, word: Word, radius: float) -> list[Segment]:
    """Segments of ``word`` driven from ``start`` with turning radius ``radius`` (m)."""
    pose = as_pose(start, "start")
    out: list[Segment] = []
    for letter, length in zip(word.letters, word.lengths):
        if abs(length) < _EMPTY:
            continue
        if letter == "S":
            seg = straight(pose, length * radius)
        else:
            seg = arc(pose, length * radius, 1 if letter == "L" else -1, radius)
        out.append(seg)
        pose = seg.end
    return out


def word_cost(word: Word, radius: float, reverse_factor: float, change_cost: float, arriving_sign: int = 0) -> float:
    """Search cost (m) of driving ``word``: its length, reverse length times ``reverse_factor``, and
    ``change_cost`` per change of direction, counting one with the direction ``arriving_sign`` (+1
    forward, -1 reverse, 0 none) it is driven after. Pieces :func:`word_segments` drops are ignored."""
    cost, last = 0.0, arriving_sign
    for length in word.lengths:
        if abs(length) < _EMPTY:
            continue
        sign = 1 if length > 0 else -1
        cost += abs(length) * radius * (reverse_factor if sign < 0 else 1.0)
        if last and sign != last:
            cost += change_cost
        last = sign
    return cost
