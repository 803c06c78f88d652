"""Drivable paths for differential bases: rotations in place and straight drives.

The input is a holonomic path: waypoints (x m, y m, heading rad) between which the
vehicle is assumed to move by linear interpolation of x, y and heading (the heading
difference of each step is taken the shorter way round, i.e. wrapped into
[-pi, pi)). Such paths come from a configuration-space search and are free of
collisions; a differential base cannot follow them directly when they slide sideways.

:func:`rotate_and_drive` turns such a path into rotations in place and straight
drives along the current heading:

1. From the current waypoint it drives without rotating to the farthest later
   waypoint on its heading line, if any; otherwise it looks for the farthest
   later waypoint that it can reach by one rotation and one straight drive,
   forward or (when ``reverse``) backward, trying the option with the smaller
   rotations (before the drive and after it, to the waypoint's heading) first.
   A hop is accepted only if
   at its end the vehicle could also turn to the waypoint's own heading, so the
   fallback below is always available.
2. Where no hop works, it turns to the waypoint's heading and follows the holonomic
   step itself, split in halves as often as needed, each piece driven by
   turn-drive-turn or, with reverse, by a small lateral manoeuvre (turn by e,
   drive a, turn back, drive back: a sideways shift of a sin e while the heading stays
   within e of the path). Because a base that drives both ways is small-time
   locally controllable (Laumond, Jacobs, Taix, Murray, "A motion planner for
   nonholonomic mobile robots", IEEE T-RA 10(5), 1994), such pieces converge to the
   holonomic path, which has clearance, so the splitting ends. A forward-only base
   is not locally controllable and may fail.

Every rotation and drive is sampled every ``step_m`` / ``step_deg`` and checked with
the caller's ``is_free`` (see :mod:`floorfit.motion.sampling` for the margin).
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

from floorfit.errors import InputError
from floorfit.motion._checks import positive_number, whole_number
from floorfit.motion.poses import wrap_angle
from floorfit.motion.sampling import sample
from floorfit.motion.segments import Segment, merge_segments, rotate, straight

__all__ = ["rotate_and_drive"]

_SAME_POINT_M = 1e-9
_MAX_WIGGLE_RAD = math.pi / 8.0
_WIGGLE_SCALE_M = 1.0  # lateral shift s gets a turn of sqrt(s / scale) rad


class _Budget(Exception):
    """Raised inside the search when the pose-check budget is spent."""


class _Motion:
    """Builds rotate / drive pieces and checks them with the caller's ``is_free``."""

    def __init__(self, is_free: Callable[[np.ndarray], np.ndarray], step_m: float,
                 step_deg: float, max_checks: int):
        self.is_free = is_free
        self.step_m = step_m
        self.step_deg = step_deg
        self.left = max_checks

    def free(self, segments: list[Segment]) -> bool:
        if not segments:
            return True
        pts = sample(segments, self.step_m, self.step_deg)[1:]
        self.left -= len(pts)
        if self.left < 0:
            raise _Budget
        answer = np.asarray(self.is_free(pts))
        if answer.shape != (len(pts),):
            raise InputError(f"is_free returned shape {answer.shape} for {len(pts)} poses; "
                             "expected one bool per pose", where="is_free")
        return bool(answer.all())

    def turn_drive(self, pose, target, reverse: bool, *, long_way: bool = True):
        """Rotate towards ``target`` (or away from it, driving backwards) and drive there.

        Returns free segments or None. Tries the options in order of the rotation
        needed before the drive plus the one from the drive's heading to the target's.
        """
        target_xy, target_heading = target[:2], target[2]
        dx, dy = target_xy[0] - pose[0], target_xy[1] - pose[1]
        dist = math.hypot(dx, dy)
        towards = math.atan2(dy, dx)
        options = [(towards, dist)] + ([(towards + math.pi, -dist)] if reverse else [])
        tries = []
        for heading, drive in options:
            short = float(wrap_angle(heading - pose[2]))
            after = abs(float(wrap_angle(target_heading - heading)))
            tries.append((abs(short) + after, short, drive))
            if long_way and short != 0.0:
                tries.append((2 * math.pi - abs(short) + after,
                              short - math.copysign(2 * math.pi, short), drive))
        for _cost, turn, drive in sorted(tries, key=lambda t: t[0]):
            spin = rotate(pose, turn)
            segs = [spin, straight(spin.end, drive)]
            if self.free(segs):
                return segs
        return None

    def turn_to(self, pose, heading: float):
        """Rotation (shorter way first) from ``pose`` to ``heading``, if free."""
        short = float(wrap_angle(heading - pose[2]))
        for turn in (short, short - math.copysign(2 * math.pi, short)) if short else (0.0,):
            spin = rotate(pose, turn)
            if self.free([spin]):
                return [spin]
        return None


def _lateral_shift(start, target, turn_total: float, reverse: bool) -> list[Segment] | None:
    """Pieces from ``start`` to ``target`` keeping the heading near the holonomic one.

    Turns half of ``turn_total``, moves by a lateral manoeuvre (needs ``reverse``) and
    a straight drive, then turns the other half.
    """
    half = 0.5 * turn_total
    mid_heading = start[2] + half
    dx, dy = target[0] - start[0], target[1] - start[1]
    c, s = math.cos(mid_heading), math.sin(mid_heading)
    along, side = c * dx + s * dy, -s * dx + c * dy
    if not reverse and along < -_SAME_POINT_M:
        return None  # the remaining drive would be backwards
    segs = [rotate(start, half)]
    if abs(side) > _SAME_POINT_M:
        if not reverse:
            return None
        tilt = min(_MAX_WIGGLE_RAD, math.sqrt(abs(side) / _WIGGLE_SCALE_M))
        reach = abs(side) / math.sin(tilt)
        first = 1.0 if along >= 0 else -1.0
        turn = first * math.copysign(tilt, side)
        segs.append(rotate(segs[-1].end, turn))
        segs.append(straight(segs[-1].end, first * reach))
        segs.append(rotate(segs[-1].end, -turn))
        along -= first * reach * math.cos(tilt)
    segs.append(straight(segs[-1].end, along))
    segs.append(rotate(segs[-1].end, turn_total - half))
    return segs


def _on_heading_line(pose, target, reverse: bool) -> bool:
    """Whether ``target`` lies ahead of ``pose`` on its heading (or behind, with reverse)."""
    dx, dy = target[0] - pose[0], target[1] - pose[1]
    c, s = math.cos(pose[2]), math.sin(pose[2])
    along, side = c * dx + s * dy, -s * dx + c * dy
    return abs(side) <= _SAME_POINT_M * (1.0 + abs(along)) and (along > 0 or reverse)


def _drive_only(pose, target) -> list[Segment]:
    """Straight drive along the heading to the foot of ``target`` on the heading line."""
    c, s = math.cos(pose[2]), math.sin(pose[2])
    return [straight(pose, c * (target[0] - pose[0]) + s * (target[1] - pose[1]))]


def _follow(motion: _Motion, a, b, reverse: bool, depth: int) -> list[Segment] | None:
    """Follow the holonomic step a -> b (b's heading already unwrapped next to a's)."""
    if math.hypot(b[0] - a[0], b[1] - a[1]) <= _SAME_POINT_M:
        spin = [rotate(a, b[2] - a[2])]
        if motion.free(spin):
            return spin
    else:
        hop = motion.turn_drive(a, b, reverse, long_way=False)
        if hop is not None:
            end = hop[-1].end
            spin = rotate(end, float(wrap_angle(b[2] - end[2])))
            if motion.free([spin]):
                return hop + [spin]
        shift = _lateral_shift(a, b, b[2] - a[2], reverse)
        if shift is not None and motion.free(shift):
            return shift
    if depth == 0:
        return None
    mid = tuple(0.5 * (p + q) for p, q in zip(a, b))
    first = _follow(motion, a, mid, reverse, depth - 1)
    if first is None:
        return None
    # continue from where the pieces really ended (equal to mid up to rounding)
    end = first[-1].end
    second = _follow(motion, end, (b[0], b[1], end[2] + (b[2] - mid[2])), reverse, depth - 1)
    return None if second is None else first + second


def rotate_and_drive(
    waypoints,
    *,
    reverse: bool,
    is_free: Callable[[np.ndarray], np.ndarray],
    step_m: float = 0.05,
    step_deg: float = 2.0,
    max_lookahead: int = 64,
    max_depth: int = 10,
    max_checks: int = 2_000_000,
) -> list[Segment] | None:
    """Turn a holonomic waypoint path into rotations in place and straight drives.

    Parameters
    ----------
    waypoints : (N, 3) array
        Poses (x m, y m, heading rad) of a collision-free holonomic path.
    reverse : bool
        Whether the base may drive backwards.
    is_free : callable
        ``is_free(poses) -> bool array`` for an (N, 3) array of poses (heading rad).
    step_m, step_deg : float
        Sampling resolution of the checks (m, deg).
    max_lookahead : int
        How many waypoints ahead a single straight hop may reach.
    max_depth : int
        How often one holonomic step may be halved in the fallback.
    max_checks : int
        Budget of poses given to ``is_free``.

    Returns
    -------
    list[Segment] or None
        Segments of kinds "rotate" and "straight" from the first waypoint to the last
        (position and heading), or None when no such path was found within the
        limits (the first pose not free, a step that cannot be followed, or the
        budget spent).
    """
    pts = np.array(waypoints, dtype=float)
    if pts.ndim != 2 or pts.shape[1] != 3 or len(pts) == 0:
        raise InputError(f"waypoints must be an (N, 3) array of poses, got shape {pts.shape}",
                         where="waypoints")
    if not np.all(np.isfinite(pts)):
        raise InputError("waypoints must be finite numbers", where="waypoints")
    step_m = positive_number(step_m, "step_m")
    step_deg = positive_number(step_deg, "step_deg")
    max_lookahead = whole_number(max_lookahead, "max_lookahead", minimum=1)
    max_depth = whole_number(max_depth, "max_depth", minimum=0)
    max_checks = whole_number(max_checks, "max_checks", minimum=1)
    # heading steps taken the shorter way round
    pts[1:, 2] = pts[0, 2] + np.cumsum(wrap_angle(np.diff(pts[:, 2])))
    motion = _Motion(is_free, step_m, step_deg, max_checks)
    try:
        if not motion.free([rotate(tuple(pts[0]), 0.0)]):
            return None
        return _plan(motion, pts, reverse, max_lookahead, max_depth)
    except _Budget:
        return None


def _plan(motion: _Motion, pts: np.ndarray, reverse: bool, lookahead: int,
          depth: int) -> list[Segment] | None:
    last = len(pts) - 1
    path: list[Segment] = []
    pose = tuple(float(v) for v in pts[0])
    i = 0
    while i < last:
        hop_end = None
        ahead = [j for j in range(min(last, i + lookahead), i, -1)
                 if math.hypot(pts[j, 0] - pose[0], pts[j, 1] - pose[1]) > _SAME_POINT_M]
        # hops that need no rotation first (waypoints on the current heading line),
        # then the farthest hop with a rotation
        in_line = [j for j in ahead if _on_heading_line(pose, pts[j], reverse)]
        others = [j for j in ahead if j not in in_line]
        for j, turn in [(j, False) for j in in_line] + [(j, True) for j in others]:
            if turn:
                hop = motion.turn_drive(pose, pts[j], reverse)
            else:
                hop = _drive_only(pose, pts[j])
                hop = hop if motion.free(hop) else None
            if hop is None:
                continue
            sync = motion.turn_to(hop[-1].end, pts[j, 2])
            if sync is None:
                continue
            hop_end = j
            path += hop
            if j == last:
                path += sync
            pose = path[-1].end
            break
        if hop_end is not None:
            i = hop_end
            continue
        # fallback: back onto the holonomic path, then follow its next step
        sync = motion.turn_to(pose, pts[i, 2])
        if sync is None:
            return None
        path += sync
        pose = sync[-1].end
        nxt = (pts[i + 1, 0], pts[i + 1, 1], pose[2] + (pts[i + 1, 2] - pts[i, 2]))
        follow = _follow(motion, pose, nxt, reverse, depth)
        if follow is None:
            return None
        path += follow
        pose = path[-1].end
        i += 1
    return merge_segments(path)
