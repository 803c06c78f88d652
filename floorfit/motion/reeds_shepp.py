"""Shortest paths of a car that drives forward and in reverse (Reeds-Shepp).

J. A. Reeds and L. A. Shepp, "Optimal paths for a car that goes both forwards and
backwards", Pacific J. Math. 145(2), 1990. The shortest path between two poses for
a car with minimum turning radius R and cusps allowed anywhere is one of 48 words
of at most five pieces, in the families CSC, C|C|C, C|CC, CC|C, CCu|CuC,
C|CuCu|C, C|C(pi/2)SC, CSC(pi/2)|C, C|C(pi/2)SC(pi/2)|C.

As in the paper (section 8), a few base formulas give the word in closed form for a
goal (x, y, phi) in the start frame with R = 1, and the other words follow from
three symmetries: time flip (x, y, phi) -> (-x, y, -phi) negates every length,
reflection (x, y, phi) -> (x, -y, -phi) swaps L and R, and reading the path
backwards (x, y, phi) -> (x cos phi + y sin phi, x sin phi - y cos phi, phi)
reverses the order of the pieces. Lengths are signed (negative = reverse); every
candidate found is a drivable path to the goal, and the answer is the shortest.

All functions here take poses (x m, y m, heading rad); lengths are in metres.
The closed forms below were derived by chaining the turning-circle centres
(see docs/motion.md); the formula numbers in the docstrings refer to the paper's
section 8 (numbering from memory). Lengths agree with OMPL and rsplan to 1e-14 m
(tests/test_motion_curves.py).
"""

from __future__ import annotations

import math

import numpy as np

from floorfit.motion._words import _EMPTY, Word, check_radius, normalised_goal, word_segments
from floorfit.motion.poses import as_pose
from floorfit.motion.segments import Segment

__all__ = [
    "reeds_shepp_cheapest",
    "reeds_shepp_length",
    "reeds_shepp_table",
    "reeds_shepp_words",
    "reeds_shepp_path",
]

_PI = math.pi
_HALF_PI = 0.5 * math.pi


def _wrap(a):
    return np.remainder(a + _PI, 2.0 * _PI) - _PI


def _angle(x, y):
    return np.arctan2(y, x)


def _left_centre_offset(x, y, phi):
    """Goal's left-turn centre minus the start's left-turn centre (0, 1)."""
    return x - np.sin(phi), y + np.cos(phi) - 1.0


def _right_centre_offset(x, y, phi):
    """Goal's right-turn centre minus the start's left-turn centre (0, 1)."""
    return x + np.sin(phi), y - np.cos(phi) - 1.0


def _lsl(x, y, phi):
    """L S L (paper 8.1): the straight joins two left circles, parallel to their centres."""
    xi, eta = _left_centre_offset(x, y, phi)
    u, t = np.hypot(xi, eta), _angle(xi, eta)
    return (t, u, _wrap(phi - t)), np.ones_like(x, dtype=bool)


def _lsr(x, y, phi):
    """L S R (paper 8.2): centre offset = u along the heading plus 2 to the right."""
    xi, eta = _right_centre_offset(x, y, phi)
    rho2 = xi * xi + eta * eta
    valid = rho2 >= 4.0
    u = np.sqrt(np.maximum(rho2 - 4.0, 0.0))
    t = _wrap(_angle(xi, eta) + np.arctan2(2.0, u))
    return (t, u, _wrap(t - phi)), valid


def _lrl(x, y, phi):
    """L R- L (paper 8.3/8.4): three tangent circles; |centre offset| = 4 |sin(u/2)|."""
    xi, eta = _left_centre_offset(x, y, phi)
    rho = np.hypot(xi, eta)
    valid = rho <= 4.0
    u = -2.0 * np.arcsin(np.minimum(rho / 4.0, 1.0))
    t = _wrap(_angle(xi, eta) + 0.5 * u + _PI)
    return (t, u, _wrap(phi - t + u)), valid


def _four_arc_start(xi, eta, a, b):
    """First arc t of L(t) R(a) L(b) R(.) meeting the centre offset (xi, eta).

    The offset is 2 e(t - pi/2) + 2 e(t - a + pi/2) + 2 e(t - a + b - pi/2), i.e.
    the vector 2 (1 - cos a + cos(b - a), sin a + sin(b - a)) turned by t - pi/2.
    """
    px = 1.0 - np.cos(a) + np.cos(b - a)
    py = np.sin(a) + np.sin(b - a)
    return _wrap(_angle(xi, eta) - _angle(px, py) + _HALF_PI)


def _lrlr_turn(x, y, phi):
    """L R+u L-u R (paper 8.7, CCu|CuC): |offset| = 2 (2 cos u - 1)."""
    xi, eta = _right_centre_offset(x, y, phi)
    c = (2.0 + np.hypot(xi, eta)) / 4.0
    valid = c <= 1.0
    u = np.arccos(np.minimum(c, 1.0))
    t = _four_arc_start(xi, eta, u, -u)
    return (t, u, -u, _wrap(t - 2.0 * u - phi)), valid


def _lrlr_cusp(x, y, phi):
    """L R-u L-u R (paper 8.8, C|CuCu|C): |offset|^2 = 4 (5 - 4 cos u)."""
    xi, eta = _right_centre_offset(x, y, phi)
    c = (20.0 - (xi * xi + eta * eta)) / 16.0
    valid = (c >= 0.0) & (c <= 1.0)
    u = -np.arccos(np.clip(c, -1.0, 1.0))
    t = _four_arc_start(xi, eta, u, u)
    return (t, u, u, _wrap(t - phi)), valid


def _lrsl(x, y, phi):
    """L R(-pi/2) S L (paper 8.9): offset = (-2, u - 2) turned by t."""
    xi, eta = _left_centre_offset(x, y, phi)
    rho2 = xi * xi + eta * eta
    valid = rho2 >= 4.0
    r = np.sqrt(np.maximum(rho2 - 4.0, 0.0))
    u = 2.0 - r
    t = _wrap(_angle(xi, eta) + np.arctan2(r, -2.0))
    return (t, np.full_like(t, -_HALF_PI), u, _wrap(phi - _HALF_PI - t)), valid


def _lrsr(x, y, phi):
    """L R(-pi/2) S R (paper 8.10): offset = (2 - u) e(t - pi/2)."""
    xi, eta = _right_centre_offset(x, y, phi)
    t = _wrap(_angle(xi, eta) + _HALF_PI)
    u = 2.0 - np.hypot(xi, eta)
    return (t, np.full_like(t, -_HALF_PI), u, _wrap(t + _HALF_PI - phi)), \
        np.ones_like(x, dtype=bool)


def _lrslr(x, y, phi):
    """L R(-pi/2) S L(-pi/2) R (paper 8.11): offset = (-2, u - 4) turned by t."""
    xi, eta = _right_centre_offset(x, y, phi)
    rho2 = xi * xi + eta * eta
    valid = rho2 >= 4.0
    u = 4.0 - np.sqrt(np.maximum(rho2 - 4.0, 0.0))
    t = _wrap(_angle(xi, eta) - np.arctan2(u - 4.0, -2.0))
    quarter = np.full_like(t, -_HALF_PI)
    return (t, quarter, u, quarter, _wrap(t - phi)), valid


# (letters, formula, whether the backwards reading gives new words)
_BASES = (
    ("LSL", _lsl, False),
    ("LSR", _lsr, False),
    ("LRL", _lrl, True),
    ("LRLR", _lrlr_turn, False),
    ("LRLR", _lrlr_cusp, False),
    ("LRSL", _lrsl, True),
    ("LRSR", _lrsr, True),
    ("LRSLR", _lrslr, False),
)
_SWAP = str.maketrans("LR", "RL")


# Symmetric variants (backwards, flip, reflect); the first four keep the reading order.
_VARIANTS = [(b, f, r) for b in (False, True) for f in (False, True) for r in (False, True)]
_BACKWARDS = np.array([b for b, f, r in _VARIANTS])[:, None]
_FLIP_SIGN = np.array([-1.0 if f else 1.0 for b, f, r in _VARIANTS])[:, None]
_REFLECT_SIGN = np.array([-1.0 if r else 1.0 for b, f, r in _VARIANTS])[:, None]
_PHI_SIGN = _FLIP_SIGN * _REFLECT_SIGN


def _variant_words(letters: str, count: int) -> list[str]:
    words = []
    for b, _f, r in _VARIANTS[:count]:
        word = letters.translate(_SWAP) if r else letters
        words.append(word[::-1] if b else word)
    return words


_WORDS = [_variant_words(letters, 8 if asymmetric else 4) for letters, _f, asymmetric in _BASES]


def _candidates(x, y, phi):
    """Yield (words, signed lengths, valid mask) per base formula, R = 1.

    The goal (x, y, phi) is in the start frame, each an (N,) array. Each base formula
    is evaluated once on all its symmetric variants stacked along a new first axis;
    ``words`` lists one word per variant, and lengths and masks are (variants, N)
    arrays already mapped back to the original goal.
    """
    cos_phi, sin_phi = np.cos(phi), np.sin(phi)
    back_x, back_y = x * cos_phi + y * sin_phi, x * sin_phi - y * cos_phi
    gx = _FLIP_SIGN * np.where(_BACKWARDS, back_x, x)
    gy = _REFLECT_SIGN * np.where(_BACKWARDS, back_y, y)
    gphi = _PHI_SIGN * phi
    for (_letters, formula, asymmetric), words in zip(_BASES, _WORDS):
        n = len(words)
        lengths, valid = formula(gx[:n], gy[:n], gphi[:n])
        lengths = [_FLIP_SIGN[:n] * v for v in lengths]
        if asymmetric:
            lengths = [np.where(_BACKWARDS, lengths[-1 - i], v) for i, v in enumerate(lengths)]
        yield words, lengths, valid


def _totals(lengths, valid):
    total = sum(np.abs(v) for v in lengths)
    return np.where(valid & np.isfinite(total), total, np.inf)


def reeds_shepp_length(start, goal, radius: float):
    """Length (m) of the shortest Reeds-Shepp path from ``start`` to ``goal``.

    ``start`` and ``goal`` are poses (x m, y m, heading rad), each (3,) or (N, 3)
    (broadcast); ``radius`` is the minimum turning radius (m). Returns a float for
    one pair, else an (N,) array.
    """
    r = check_radius(radius)
    rel = normalised_goal(start, goal, r)
    x, y, phi = np.atleast_1d(rel[..., 0]), np.atleast_1d(rel[..., 1]), np.atleast_1d(rel[..., 2])
    best = np.full(x.shape, np.inf)
    for _words, lengths, valid in _candidates(x, y, phi):
        np.minimum(best, _totals(lengths, valid).min(axis=0), out=best)
    best *= r
    return float(best[0]) if rel.ndim == 1 else best


def reeds_shepp_table(start, goals, radius: float) -> tuple[list[str], np.ndarray, np.ndarray]:
    """Every Reeds-Shepp candidate word from one start to many goals, as arrays (vectorised
    :func:`reeds_shepp_words`).

    ``start`` (3,) and ``goals`` (N, 3) are poses (x m, y m, heading rad). Returns
    ``(letters, lengths, valid)``: W words, their signed piece lengths in turning radii
    (W, N, 5), zero past a word's last piece, and (W, N) whether the word reaches that goal.
    A word may be listed more than once (symmetric formulas can give the same path).
    """
    r = check_radius(radius)
    rel = normalised_goal(as_pose(start, "start"), np.asarray(goals, dtype=float).reshape(-1, 3), r)
    letters: list[str] = []
    lengths, valid = [], []
    for words, pieces, ok in _candidates(rel[:, 0], rel[:, 1], rel[:, 2]):
        block = np.zeros((len(words), len(rel), 5))
        block[:, :, :len(pieces)] = np.stack(pieces, axis=-1)
        total = np.abs(block).sum(axis=-1)
        letters += words
        lengths.append(block)
        valid.append(ok & np.isfinite(total))
    return letters, np.concatenate(lengths), np.concatenate(valid)


def reeds_shepp_cheapest(start, goals, radius: float, *, reverse_factor: float = 1.0, change_cost: float = 0.0,
                         arriving_sign: int = 0, count: int = 3, below=None) -> list[list[tuple[float, Word]]]:
    """For each goal, the ``count`` cheapest distinct Reeds-Shepp words from ``start`` by a search cost,
    cheapest first, with their costs (m); all goals in one vectorised evaluation.

    The cost is :func:`floorfit.motion._words.word_cost`: length, reverse length times
    ``reverse_factor``, ``change_cost`` per change of direction (counting one with
    ``arriving_sign``). ``below``: per goal, only words costing less than this (m).
    With the defaults the first word is the shortest path.
    """
    r = check_radius(radius)
    goals = np.asarray(goals, dtype=float).reshape(-1, 3)
    letters, lengths, valid = reeds_shepp_table(start, goals, r)
    sign = np.where(np.abs(lengths) >= _EMPTY, np.sign(lengths), 0.0)
    cost = (np.abs(lengths) * r * np.where(sign < 0, reverse_factor, 1.0)).sum(axis=-1)
    last = np.full(sign.shape[:2], float(arriving_sign))
    for k in range(sign.shape[-1]):
        s = sign[..., k]
        cost += change_cost * ((s != 0) & (last != 0) & (s != last))
        last = np.where(s != 0, s, last)
    ok = valid & np.isfinite(cost)
    if below is not None:
        ok &= cost < np.broadcast_to(np.asarray(below, dtype=float), (len(goals),))[None, :]
    cost = np.where(ok, cost, np.inf)
    out = []
    for n in range(len(goals)):
        row: list[tuple[float, Word]] = []
        seen: set = set()
        total = np.abs(lengths[:, n]).sum(axis=-1)
        for w in np.lexsort((total, cost[:, n]))[:int(ok[:, n].sum())]:      # ties: shorter first
            lens = tuple(float(v) for v in lengths[w, n, :len(letters[w])])
            key = (letters[w], tuple(round(v, 9) for v in lens))
            if key not in seen:          # symmetric formulas may give the same word twice
                seen.add(key)
                row.append((float(cost[w, n]), Word(letters[w], lens, float(total[w]) * r)))
                if len(row) == count:
                    break
        out.append(row)
    return out


def reeds_shepp_words(start, goal, radius: float) -> list[Word]:
    """Every Reeds-Shepp candidate word between two poses, shortest first.

    Each :class:`Word` carries its letters, signed lengths (in turning radii,
    negative = reverse) and total length (m). Identical words are listed once.
    """
    r = check_radius(radius)
    rel = normalised_goal(as_pose(start, "start"), as_pose(goal, "goal"), r)
    x, y, phi = (np.array([v]) for v in rel)
    seen: set = set()
    words: list[Word] = []
    for letters, lengths, valid in _candidates(x, y, phi):
        totals = _totals(lengths, valid)[:, 0]
        for k, word in enumerate(letters):
            if not math.isfinite(totals[k]):
                continue
            lens = tuple(float(v[k, 0]) for v in lengths)
            key = (word, tuple(round(v, 9) for v in lens))
            if key not in seen:
                seen.add(key)
                words.append(Word(word, lens, float(totals[k]) * r))
    words.sort(key=lambda w: w.length_m)
    return words


def reeds_shepp_path(start, goal, radius: float) -> list[Segment]:
    """Shortest Reeds-Shepp path from ``start`` to ``goal`` as segments.

    Poses are (x m, y m, heading rad); ``radius`` (m) is the minimum turning
    radius and the radius of every arc. Arcs and straights carry their direction
    ("forward" or "reverse"). Returns [] when the poses coincide.
    """
    r = check_radius(radius)
    best = reeds_shepp_words(start, goal, r)[0]
    return word_segments(as_pose(start, "start"), best, r)
