"""Complete drivable paths by subdivision of a holonomic path, then shortcuts.

Laumond, Jacobs, Taïx and Murray, "A motion planner for nonholonomic mobile robots",
IEEE Trans. Robotics and Automation 10(5), 1994: a vehicle that is small-time locally
controllable can follow any collision-free holonomic path that keeps some clearance,
given a *steering method with the topological property* (the steered path between two
configurations stays in any neighbourhood of the first once the second is close enough).
Replace each step of the holonomic path by the steered path; where that collides, split
the step in halves and steer each half; the splitting ends because the holonomic path
has clearance.

Steering methods here (poses (x m, y m, heading rad)):

``differential_steer``
    Rotations in place and straight drives. First rotate–drive–rotate (rotate to face
    the target, drive, rotate to its heading; backwards too with ``reverse``), then, for
    a translation at a fixed heading h, the two-drive manoeuvres with headings h ± β
    (and h): the target offset is written as ``c1·u(h+β1) + c2·u(h+β2)``. These stay
    within ``|c1| + |c2|``, proportional to the step, of the step's start and within β of
    its heading: the topological property once β lies inside the heading range the free
    space allows there. ``tilts`` lists the β to try (largest first; the caller passes the
    half-widths of its heading cells so that the narrowest cell keeps a manoeuvre of
    its own).
``reeds_shepp_steer``
    The cheapest Reeds–Shepp curves (shortest paths with reversing, which have the
    topological property, Laumond et al. 1994).

:func:`subdivide` applies a steering method along a holonomic path with a limit on the
split depth and on the number of checks; :func:`shortcut_differential` and
:func:`shortcut_car` then replace runs of the result by single hops (fewer rotations,
fewer changes of direction). Every piece is checked with the caller's
``free(segments) -> bool``.
"""

from __future__ import annotations

import itertools
import math
import time
from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass

import numpy as np

from floorfit.motion._words import Word, word_cost, word_segments
from floorfit.motion.dubins import dubins_length, dubins_words
from floorfit.motion.poses import relative_pose, wrap_angle
from floorfit.motion.reeds_shepp import reeds_shepp_cheapest, reeds_shepp_length, reeds_shepp_words
from floorfit.motion.segments import (
    Segment,
    arc,
    direction_changes,
    merge_segments,
    poses_along,
    rotate,
    straight,
    turned_heading,
)

__all__ = [
    "SubdivisionResult",
    "arcs_as_turns",
    "differential_steer",
    "redo",
    "reeds_shepp_steer",
    "shortcut_car",
    "shortcut_differential",
    "subdivide",
]

_SAME = 1e-9
Free = Callable[[list[Segment]], bool]
Steer = Callable[[tuple, tuple], Iterable[list[Segment]]]
FirstFree = Callable[[list[list[Segment]]], "int | None"]
MaybeFree = Callable[[np.ndarray, np.ndarray, int], np.ndarray]
#: Sample spacing (m, degrees) of the candidates' pre-test in :func:`shortcut_car`.
_PRETEST_STEP_M = 0.1
_PRETEST_STEP_DEG = 5.0


@dataclass
class SubdivisionResult:
    """Outcome of :func:`subdivide`: ``segments`` (None when a limit stopped it), the limit
    reached (``"max_depth"``, ``"max_checks"``, ``"time_limit_s"``, or ``""``), a reason,
    the number of checks and the deepest split used."""

    segments: list[Segment] | None
    limit: str
    reason: str
    checks: int
    depth: int
    #: the step (start pose, goal pose) being followed when a limit stopped it
    failed_step: tuple | None = None


class _Limit(Exception):
    def __init__(self, which: str):
        self.which = which


# --- steering methods -------------------------------------------------------------------

def _rotation_cost(segs: list[Segment]) -> float:
    return sum(abs(math.radians(s.angle_deg)) for s in segs if s.kind == "rotate")


def _rtr_options(a, b, reverse: bool) -> list[tuple[float, float, float, float]]:
    """Rotate to face ``b`` (or away from it, driving backwards), drive, rotate to b's heading, without
    making the segments: (cost, first turn rad, signed drive m, last turn rad) of each way. The cost
    is the turning (rad), plus π for driving backwards."""
    dx, dy = b[0] - a[0], b[1] - a[1]
    dist = math.hypot(dx, dy)
    towards = math.atan2(dy, dx)
    out = []
    for heading, drive, penalty in [(towards, dist, 0.0)] + ([(towards + math.pi, -dist, math.pi)] if reverse else []):
        first = float(wrap_angle(heading - a[2]))
        for t1 in (first, first - math.copysign(2 * math.pi, first)) if first else (0.0,):
            faced = turned_heading(a[2], t1)                                # where rotate() ends
            last = float(wrap_angle(b[2] - faced))
            out.append((abs(t1) + abs(last) + penalty, t1, drive, last))
    return out


def _rtr_segments(a, t1: float, drive: float, last: float) -> list[Segment]:
    """The rotation by ``t1``, the drive and the rotation by ``last`` (radians, metres) from ``a``."""
    spin = rotate(a, t1)
    go = straight(spin.end, drive)
    return [spin, go, rotate(go.end, last)]


def _two_drives(a, b, reverse: bool, tilts: Sequence[float]) -> Iterator[list[Segment]]:
    """Manoeuvres for a translation at a's heading: drive at h+β1, then at h+β2 (β from ``tilts``),
    made one at a time as they are asked for."""
    h = a[2]
    dx, dy = b[0] - a[0], b[1] - a[1]
    for beta in tilts:
        for b1, b2 in ((beta, -beta), (-beta, beta), (beta, 0.0), (0.0, beta), (-beta, 0.0), (0.0, -beta)):
            u1 = (math.cos(h + b1), math.sin(h + b1))
            u2 = (math.cos(h + b2), math.sin(h + b2))
            det = u1[0] * u2[1] - u1[1] * u2[0]
            if abs(det) < 1e-12:
                continue
            c1 = (dx * u2[1] - dy * u2[0]) / det
            c2 = (u1[0] * dy - u1[1] * dx) / det
            if not reverse and (c1 < -_SAME or c2 < -_SAME):
                continue
            segs = [rotate(a, b1)]
            segs.append(straight(segs[-1].end, c1))
            segs.append(rotate(segs[-1].end, b2 - b1))
            segs.append(straight(segs[-1].end, c2))
            segs.append(rotate(segs[-1].end, -b2))
            yield segs


def differential_steer(reverse: bool, tilts: Sequence[float]) -> Steer:
    """Steering method of a differential base (see the module docstring); ``tilts`` in radians. The
    candidates come as an iterator, the two-drive manoeuvres made only when the earlier ones failed."""
    tilts = sorted({float(t) for t in tilts if t > 0}, reverse=True)

    def steer(a, b) -> Iterator[list[Segment]]:
        dx, dy = b[0] - a[0], b[1] - a[1]
        dist = math.hypot(dx, dy)
        dh = b[2] - a[2]
        if dist <= _SAME:
            other = dh - math.copysign(2 * math.pi, dh) if dh else 0.0
            yield from ([[rotate(a, dh)], [rotate(a, other)]] if dh else [[rotate(a, 0.0)]])
            return
        c, s = math.cos(a[2]), math.sin(a[2])
        along, side = c * dx + s * dy, -s * dx + c * dy
        if abs(dh) <= _SAME and abs(side) <= _SAME * (1 + abs(along)) and (along > 0 or reverse):
            yield [straight(a, along)]
        ways = sorted(_rtr_options(a, b, reverse), key=lambda item: item[0])
        yield from (_rtr_segments(a, t1, drive, last) for _, t1, drive, last in ways)
        if abs(dh) <= _SAME:
            yield from _two_drives(a, b, reverse, tilts)
        else:   # a turn and a translation at once: turn first, or translate first
            spin = rotate(a, dh)
            yield from ([spin] + rest for rest in _two_drives(spin.end, (b[0], b[1], spin.end[2]), reverse, tilts))

    return steer


def reeds_shepp_steer(radius_m: float, words: int = 3) -> Steer:
    """The ``words`` shortest Reeds–Shepp curves of radius ``radius_m`` (m).

    The words depend only on the goal seen from the start; they are kept per relative pose
    (rounded to 1e-9 m and rad), since a subdivision halves many steps alike (every half of a
    turn in place is the same turn)."""
    known: dict[tuple, list] = {}

    def steer(a, b) -> list[list[Segment]]:
        key = tuple(np.round(relative_pose(a, b), 9).tolist())
        if key not in known:
            known[key] = reeds_shepp_words(a, b, radius_m)[:words]
        out = []
        for word in known[key]:
            segs = word_segments(a, word, radius_m)
            out.append(segs if segs else [straight(a, 0.0)])
        return out

    return steer


# --- subdivision ------------------------------------------------------------------------

def subdivide(waypoints, *, steer: Steer, free: Free, max_depth: int = 16, max_checks: int = 100_000,
              deadline: float | None = None, first_free: FirstFree | None = None) -> SubdivisionResult:
    """Steer along a holonomic path, splitting steps in halves where the steered path collides.

    ``waypoints``: (N, 3) poses (x m, y m, heading rad) of a collision-free holonomic path
    (linear in x, y and heading between waypoints, heading the shorter way round).
    ``deadline``: a :func:`time.perf_counter` value after which it stops. ``first_free``: the index
    of the first free one of several candidates (as ``free`` would find it, in one batch; for
    example :meth:`floorfit.motion.slice_checks.ExactSliceCheck.first_free`). Every candidate tried
    counts as one of ``max_checks``.
    """
    pts = np.array(waypoints, dtype=float).reshape(-1, 3)
    pts[1:, 2] = pts[0, 2] + np.cumsum(wrap_angle(np.diff(pts[:, 2])))
    state = {"checks": 0, "depth": 0}

    def first_of(cands: Iterator[list[Segment]]) -> list[Segment] | None:
        if deadline is not None and time.perf_counter() > deadline:
            raise _Limit("time_limit_s")
        room = max(0, max_checks - state["checks"])
        if first_free is not None:
            listed = list(itertools.islice(cands, room))
            i = first_free(listed) if listed else None
            tried = len(listed) if i is None else i + 1
            found = None if i is None else listed[i]
        else:       # made and checked one at a time: the same order, the same count
            tried, found = 0, None
            for c in itertools.islice(cands, room):
                tried += 1
                if free(c):
                    found = c
                    break
        state["checks"] += tried
        if found is None and state["checks"] >= max_checks:
            raise _Limit("max_checks")
        return found

    def follow(a, b, depth) -> list[Segment]:
        cands = (c for c in steer(a, b)
                 if math.hypot(c[-1].end[0] - b[0], c[-1].end[1] - b[1]) <= 1e-6 and abs(c[-1].end[2] - b[2]) <= 1e-6)
        found = first_of(cands)
        if found is not None:
            return found
        if depth >= max_depth:
            raise _Limit("max_depth")
        state["depth"] = max(state["depth"], depth + 1)
        mid = tuple(0.5 * (p + q) for p, q in zip(a, b))
        first = follow(a, mid, depth + 1)
        end = first[-1].end
        return first + follow(end, (b[0], b[1], end[2] + (b[2] - mid[2])), depth + 1)

    out: list[Segment] = []
    pose = tuple(float(v) for v in pts[0])
    target = pose
    try:
        for q in pts[1:]:
            target = (float(q[0]), float(q[1]), pose[2] + float(wrap_angle(q[2] - pose[2])))
            piece = follow(pose, target, 0)
            out += piece
            pose = piece[-1].end
    except _Limit as lim:
        what = {"max_depth": f"a step of the holonomic path still collided after {max_depth} halvings",
                "max_checks": f"{max_checks} steering checks were used",
                "time_limit_s": "the time limit was reached"}[lim.which]
        return SubdivisionResult(None, lim.which, what, state["checks"], state["depth"], (pose, target))
    return SubdivisionResult(merge_segments(out), "", "", state["checks"], state["depth"])


# --- shortcuts ------------------------------------------------------------------------

def redo(seg: Segment, pose) -> Segment:
    """The same motion as ``seg`` driven from ``pose``."""
    if seg.kind == "rotate":
        return rotate(pose, math.radians(seg.angle_deg))
    if seg.kind == "straight":
        return straight(pose, seg.sign * seg.length_m)
    return arc(pose, seg.sign * seg.length_m, seg.steer, seg.radius_m)


def _targets(i: int, n: int) -> list[int]:
    """Later boundaries to try from boundary ``i`` (of ``n``), farthest first: the next few, then doubling."""
    js = set(range(i + 1, min(n, i + 8) + 1))
    step = 8
    while i + step < n:
        js.add(i + step)
        step *= 2
    js.add(n)
    return sorted(js, reverse=True)


def shortcut_differential(segments: list[Segment], *, free: Free, reverse: bool,
                          deadline: float | None = None) -> list[Segment]:
    """Fewer rotations and changes of direction: from each pose, hop to the farthest later pose of
    the path reachable by (rotate,) drive, where the base can also turn to that pose's heading.

    A hop is kept only with that final turn free, so the original path can always be resumed
    from its end; the result is never worse in segments than the input.
    """
    segs = merge_segments(segments)
    if len(segs) < 2:
        return segs
    poses = [segs[0].start] + [s.end for s in segs]
    n = len(segs)
    out: list[Segment] = []
    pose = poses[0]
    last_dir = None
    pending: list[Segment] = []      # turn from the arrival heading to the path's heading at poses[i]
    i = 0
    while i < n:
        hop = None
        if deadline is None or time.perf_counter() < deadline:
            for j in _targets(i, n):
                q = poses[j]
                if math.hypot(q[0] - pose[0], q[1] - pose[1]) <= 1e-6:
                    continue
                options = []
                for cost, t1, drive, last in _rtr_options(pose, q, reverse):
                    direction = "forward" if drive >= 0 else "reverse"          # as straight() names it
                    changes = 1.0 if last_dir is not None and direction != last_dir else 0.0
                    options.append((cost + 2.0 * math.pi * changes, t1, drive, last))
                for _, t1, drive, last in sorted(options, key=lambda item: item[0]):   # made when tried
                    spin, go, sync = _rtr_segments(pose, t1, drive, last)
                    if free([spin, go]) and free([sync]):
                        hop = (j, [spin, go], sync)
                        break
                if hop is not None:
                    break
        if hop is not None:
            j, drive, sync = hop
            out += drive
            last_dir = drive[1].direction if drive[1].length_m > 0 else last_dir
            pose = drive[-1].end
            pending = [sync]
            i = j
            continue
        out += pending
        pending = []
        new = redo(segs[i], pose)      # resume the original path (pose is its start up to rounding)
        out.append(new)
        if new.kind != "rotate" and new.length_m > 0:
            last_dir = new.direction
        pose = new.end
        i += 1
    out += pending
    result = merge_segments(out)
    before = (direction_changes(segs), _rotation_cost(segs), len(segs))
    after = (direction_changes(result), _rotation_cost(result), len(result))
    return result if after <= before or len(result) < len(segs) else segs


def arcs_as_turns(segments: list[Segment], *, free: Free, max_halvings: int = 6) -> list[Segment] | None:
    """A car path for a differential base: each arc becomes equal chords with a rotation in place at
    every joint (the rotation by the arc's angle share, then the chord), halving the chords until
    they pass ``free`` (the chords and joints converge to the arc as they shorten). None when an arc
    still collides after ``max_halvings`` halvings."""
    out: list[Segment] = []
    pose = segments[0].start if segments else None
    for seg in segments:
        if seg.kind != "arc":
            piece = [redo(seg, pose)]
            if not free(piece):
                return None
            out += piece
            pose = piece[-1].end
            continue
        done = False
        for level in range(max_halvings + 1):
            m = max(1, math.ceil(abs(seg.angle_deg) / 30.0)) * 2 ** level
            fracs = np.arange(m + 1) / m
            pts = poses_along(redo(seg, pose), fracs)
            piece, p = [], pose
            for q in pts[1:]:
                dx, dy = q[0] - p[0], q[1] - p[1]
                face = math.atan2(dy, dx) if seg.direction == "forward" else math.atan2(-dy, -dx)
                spin = rotate(p, float(wrap_angle(face - p[2])))
                go = straight(spin.end, math.copysign(math.hypot(dx, dy), seg.sign))
                piece += [spin, go]
                p = go.end
            piece.append(rotate(p, float(wrap_angle(pts[-1][2] - p[2]))))
            if free(piece):
                out += piece
                pose = piece[-1].end
                done = True
                break
        if not done:
            return None
    return merge_segments(out)


def car_cost(segments: Sequence[Segment], reverse_factor: float, change_cost: float) -> float:
    """Length (m), reverse distance times ``reverse_factor``, plus ``change_cost`` per change of direction."""
    length = sum(s.length_m * (reverse_factor if s.direction == "reverse" else 1.0) for s in segments)
    return length + change_cost * direction_changes(segments)


class _RunCosts:
    """:func:`car_cost` of every run ``segs[i:j]`` in constant time (prefix sums)."""

    def __init__(self, segs: Sequence[Segment], reverse_factor: float, change: float):
        n = len(segs)
        self.change = change
        self.length = np.concatenate([[0.0], np.cumsum(
            [s.length_m * (reverse_factor if s.direction == "reverse" else 1.0) for s in segs])])
        moving = [s.kind != "rotate" and s.length_m > 0 for s in segs]
        flip = np.zeros(n)
        last = None
        for k, s in enumerate(segs):
            if moving[k]:
                flip[k] = 1.0 if last is not None and s.direction != last else 0.0
                last = s.direction
        self.flips = np.concatenate([[0.0], np.cumsum(flip)])
        # first moving segment at or after each index (n when none)
        self.next_moving = np.full(n + 1, n)
        for k in range(n - 1, -1, -1):
            self.next_moving[k] = k if moving[k] else self.next_moving[k + 1]
        self.flip = flip

    def __call__(self, i: int, j: int) -> float:
        changes = self.flips[j] - self.flips[i]
        first = self.next_moving[i]
        if first < j:
            changes -= self.flip[first]        # its change is with a segment before the run
        return float(self.length[j] - self.length[i] + self.change * changes)


def _cheaper_words(start, goals, olds, radius_m: float, reverse_factor: float, change: float, reverse: bool,
                   words: int) -> list[list[Word]]:
    """For each goal, at most ``words`` Reeds–Shepp (``reverse``) or Dubins words from ``start`` that cost
    less (:func:`car_cost`) than its ``olds`` entry, cheapest first."""
    below = np.asarray(olds, dtype=float) - 1e-9
    if reverse:
        rows = reeds_shepp_cheapest(start, goals, radius_m, reverse_factor=reverse_factor, change_cost=change,
                                    count=words, below=below)
        return [[w for _, w in row] for row in rows]
    out = []
    for g, limit in zip(goals, below):
        costs = sorted(((word_cost(w, radius_m, reverse_factor, change), w) for w in dubins_words(start, g, radius_m)),
                       key=lambda item: item[0])
        out.append([w for c, w in costs if c < limit][:words])
    return out


def word_poses(start, words: Sequence[Word], radius_m: float, step_m: float, step_deg: float
               ) -> tuple[np.ndarray, np.ndarray]:
    """Poses (x m, y m, heading rad) along each of several turning words driven from ``start``, at
    most ``step_m`` / ``step_deg`` apart within each piece (and at every piece's end), without building
    segments; and for each pose the index of its word. Vectorised over words and pieces."""
    c = len(words)
    lens = np.zeros((c, 5))
    steer = np.zeros((c, 5))
    for w, word in enumerate(words):
        lens[w, :len(word.lengths)] = word.lengths
        steer[w, :len(word.letters)] = [{"L": 1.0, "R": -1.0, "S": 0.0}[ch] for ch in word.letters]
    lens[np.abs(lens) < 1e-10] = 0.0                      # the pieces word_segments drops
    d = lens * radius_m                                   # signed distance (m)
    turn = steer * lens                                   # heading change (rad)
    # start pose of every piece
    x0 = np.empty((c, 5))
    y0 = np.empty((c, 5))
    h0 = np.empty((c, 5))
    x, y, h = (np.full(c, float(v)) for v in start)
    for k in range(5):
        x0[:, k], y0[:, k], h0[:, k] = x, y, h
        arc_ = steer[:, k] != 0
        k_r = steer[:, k] * radius_m
        h1 = h + turn[:, k]
        x = np.where(arc_, x + k_r * (np.sin(h1) - np.sin(h)), x + d[:, k] * np.cos(h))
        y = np.where(arc_, y - k_r * (np.cos(h1) - np.cos(h)), y + d[:, k] * np.sin(h))
        h = h1
    n = np.where(d != 0, np.maximum(np.maximum(np.ceil(np.abs(d) / step_m - 1e-9),
                                                np.ceil(np.degrees(np.abs(turn)) / step_deg - 1e-9)), 1), 0)
    n = n.astype(int).ravel()
    piece = np.repeat(np.arange(c * 5), n)
    t = (np.arange(n.sum()) - np.repeat(np.cumsum(n) - n, n) + 1) / np.repeat(np.maximum(n, 1), n)
    px, py, ph = x0.ravel()[piece], y0.ravel()[piece], h0.ravel()[piece]
    ps, pd, pt = steer.ravel()[piece], d.ravel()[piece], turn.ravel()[piece]
    hh = ph + pt * t
    k_r = ps * radius_m
    out = np.column_stack([
        np.where(ps != 0, px + k_r * (np.sin(hh) - np.sin(ph)), px + pd * t * np.cos(ph)),
        np.where(ps != 0, py - k_r * (np.cos(hh) - np.cos(ph)), py + pd * t * np.sin(ph)),
        hh])
    return np.vstack([np.tile(np.asarray(start, dtype=float), (c, 1)), out]), \
        np.concatenate([np.arange(c), piece // 5])


def _car_hops(segs, poses, i, run_cost, *, radius_m, reverse_factor, change, words, reverse):
    """Candidate hops from ``poses[i]``, in the order to try them: (j, word) for the farthest boundaries
    j > i + 1 first (:func:`_targets`), at each the ``words`` cheapest Reeds–Shepp (``reverse``) or
    Dubins words that cost less than the run ``segs[i:j]`` they would replace."""
    js = [j for j in _targets(i, len(segs)) if j > i + 1]
    if not js:
        return []
    olds = [run_cost(i, j) for j in js]
    # no curve costs less than the shortest one's length: only the targets it leaves open
    ends = np.array([poses[j] for j in js], dtype=float)
    shortest = np.atleast_1d((reeds_shepp_length if reverse else dubins_length)(poses[i], ends, radius_m))
    open_ = [k for k, (low, old) in enumerate(zip(shortest, olds)) if low < old - 1e-9]
    if not open_:
        return []
    table = _cheaper_words(poses[i], ends[open_], [olds[k] for k in open_], radius_m, reverse_factor, change,
                           reverse, words)
    return [(js[k], word) for k, row in zip(open_, table) for word in row]


def shortcut_car(segments: list[Segment], *, free: Free, radius_m: float, reverse_factor: float = 2.0,
                 change_cost: float | None = None, words: int = 3, passes: int = 2,
                 deadline: float | None = None, maybe_free: MaybeFree | None = None,
                 reverse: bool = True) -> list[Segment]:
    """Replace runs of a car path by one of the ``words`` cheapest Reeds–Shepp (``reverse``) or
    Dubins curves between their end poses when that costs less (:func:`car_cost`) and is free.

    Greedy farthest hops: from each boundary the farthest later one that such a curve reaches
    (the next eight boundaries, then every doubling, :func:`_targets`), ``passes`` times; the
    work per boundary is logarithmic in the path's length, so long paths are shortened too.
    ``maybe_free(poses, owner, count) -> bool array``: a cheap necessary condition of ``free`` for
    ``count`` candidates sampled at ``poses`` (``owner``: each pose's candidate), such as
    :meth:`floorfit.motion.slice_checks.ExactSliceCheck.maybe_free`; the candidates of one boundary are
    sampled and pre-tested with it at once, ``free`` decides.
    """
    change = 2.0 * radius_m if change_cost is None else float(change_cost)
    segs = merge_segments(segments)
    for _ in range(passes):
        if len(segs) < 2:
            break
        poses = [segs[0].start] + [s.end for s in segs]
        run_cost = _RunCosts(segs, reverse_factor, change)
        out: list[Segment] = []
        i = 0
        improved = False
        while i < len(segs):
            hop = None
            if deadline is None or time.perf_counter() < deadline:
                hop = _first_hop(segs, poses, i, run_cost, free=free, maybe_free=maybe_free, radius_m=radius_m,
                                 reverse_factor=reverse_factor, change=change, words=words, reverse=reverse)
            if hop is not None:
                i, new = hop
                out += new
                improved = True
            else:
                out.append(redo(segs[i], out[-1].end if out else segs[i].start))
                i += 1
        segs = merge_segments(out)
        if not improved:
            break
    return segs


def _first_hop(segs, poses, i, run_cost, *, free, maybe_free, radius_m, reverse_factor, change, words, reverse):
    """The first free hop (j, segments) of :func:`_car_hops`, None when none is free."""
    cands = _car_hops(segs, poses, i, run_cost, radius_m=radius_m, reverse_factor=reverse_factor,
                      change=change, words=words, reverse=reverse)
    if not cands:
        return None
    ok = np.ones(len(cands), dtype=bool)
    if maybe_free is not None:
        pts, owner = word_poses(poses[i], [w for _, w in cands], radius_m, _PRETEST_STEP_M, _PRETEST_STEP_DEG)
        ok = maybe_free(pts, owner, len(cands))
    for k, (j, word) in enumerate(cands):
        if not ok[k]:
            continue
        new = word_segments(poses[i], word, radius_m)
        end = new[-1].end if new else None
        if end is None or math.hypot(end[0] - poses[j][0], end[1] - poses[j][1]) > 1e-6 or \
                abs(float(wrap_angle(end[2] - poses[j][2]))) > 1e-6:
            continue
        if free(new):
            return j, new
    return None
