"""Shortest forward-only paths of a car (Dubins).

L. E. Dubins, "On curves of minimal length with a constraint on average curvature,
and with prescribed initial and terminal positions and tangents", Amer. J. Math.
79, 1957: the shortest path of bounded curvature 1/R between two poses is CSC or
CCC, i.e. one of LSL, RSR, LSR, RSL, RLR, LRL, every piece driven forward.

Closed forms for a goal (x, y, phi) in the start frame with R = 1 follow from the
turning-circle centres, as for Reeds-Shepp (docs/motion.md); the R-first words come
from the reflection (x, y, phi) -> (x, -y, -phi) that swaps L and R. Arc lengths
lie in [0, 2 pi). Poses are (x m, y m, heading rad); lengths are in metres.
"""

from __future__ import annotations

import math

import numpy as np

from floorfit.motion._words import Word, check_radius, normalised_goal, word_segments
from floorfit.motion.poses import as_pose
from floorfit.motion.segments import Segment

__all__ = ["dubins_length", "dubins_words", "dubins_path"]

_TWO_PI = 2.0 * math.pi


def _turn(a):
    """Angle into [0, 2 pi): a left or right arc driven forward.

    Angles within 1e-12 rad below 2 pi are rounding noise of a zero turn and map to 0,
    so that no word gains a spurious full circle.
    """
    r = np.remainder(a, _TWO_PI)
    return np.where(r > _TWO_PI - 1e-12, 0.0, r)


def _lsl(x, y, phi):
    xi, eta = x - np.sin(phi), y + np.cos(phi) - 1.0
    t = _turn(np.arctan2(eta, xi))
    return [((t, np.hypot(xi, eta), _turn(phi - t)), np.ones_like(x, dtype=bool))]


def _lsr(x, y, phi):
    xi, eta = x + np.sin(phi), y - np.cos(phi) - 1.0
    rho2 = xi * xi + eta * eta
    u = np.sqrt(np.maximum(rho2 - 4.0, 0.0))
    t = _turn(np.arctan2(eta, xi) + np.arctan2(2.0, u))
    return [((t, u, _turn(t - phi)), rho2 >= 4.0)]


def _lrl(x, y, phi):
    """Both middle-arc solutions: |centre offset| = 4 sin(u / 2), u in (0, 2 pi)."""
    xi, eta = x - np.sin(phi), y + np.cos(phi) - 1.0
    rho = np.hypot(xi, eta)
    half = np.arcsin(np.minimum(rho / 4.0, 1.0))
    out = []
    for u in (_TWO_PI - 2.0 * half, 2.0 * half):
        t = _turn(np.arctan2(eta, xi) + 0.5 * u)
        out.append(((t, u, _turn(phi - t + u)), rho <= 4.0))
    return out


_BASES = (("LSL", _lsl), ("LSR", _lsr), ("LRL", _lrl))
_SWAP = str.maketrans("LR", "RL")


def _candidates(x, y, phi):
    for letters, formula in _BASES:
        for reflect in (False, True):
            word = letters.translate(_SWAP) if reflect else letters
            for lengths, valid in formula(x, -y if reflect else y, -phi if reflect else phi):
                yield word, lengths, valid


def _totals(lengths, valid):
    total = lengths[0] + lengths[1] + lengths[2]
    return np.where(valid & np.isfinite(total), total, np.inf)


def dubins_length(start, goal, radius: float):
    """Length (m) of the shortest forward-only path from ``start`` to ``goal``.

    ``start`` and ``goal`` are poses (x m, y m, heading rad), each (3,) or (N, 3)
    (broadcast); ``radius`` is the minimum turning radius (m). Returns a float for
    one pair, else an (N,) array.
    """
    r = check_radius(radius)
    rel = normalised_goal(start, goal, r)
    x, y, phi = np.atleast_1d(rel[..., 0]), np.atleast_1d(rel[..., 1]), np.atleast_1d(rel[..., 2])
    best = np.full(x.shape, np.inf)
    for _word, lengths, valid in _candidates(x, y, phi):
        np.minimum(best, _totals(lengths, valid), out=best)
    best *= r
    return float(best[0]) if rel.ndim == 1 else best


def dubins_words(start, goal, radius: float) -> list[Word]:
    """Every valid Dubins word between two poses, shortest first (lengths in turning radii)."""
    r = check_radius(radius)
    rel = normalised_goal(as_pose(start, "start"), as_pose(goal, "goal"), r)
    x, y, phi = (np.array([v]) for v in rel)
    words = []
    for letters, lengths, valid in _candidates(x, y, phi):
        total = float(_totals(lengths, valid)[0])
        if math.isfinite(total):
            words.append(Word(letters, tuple(float(v[0]) for v in lengths), total * r))
    words.sort(key=lambda w: w.length_m)
    return words


def dubins_path(start, goal, radius: float) -> list[Segment]:
    """Shortest forward-only path from ``start`` to ``goal`` as segments.

    Poses are (x m, y m, heading rad); ``radius`` (m) is the minimum turning
    radius and the radius of every arc; every segment is driven forward.
    """
    r = check_radius(radius)
    best = dubins_words(start, goal, r)[0]
    return word_segments(as_pose(start, "start"), best, r)
