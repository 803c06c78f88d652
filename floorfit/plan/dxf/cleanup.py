"""Linework clean-up before the Minkowski sums: the same points, fewer edges.

Drawings repeat themselves: a wall drawn twice, a line drawn over another on a second
layer, a long wall drawn as several pieces end to end, zero-length lines left by editing.
Every extra segment costs one more C-obstacle piece per heading slice, so the segments are
cleaned once, exactly:

* zero-length segments (repeated vertices) are dropped: inside a line of positive length
  their point is the endpoint of a neighbouring segment (the importer drops whole
  zero-length lines itself, with an import issue);
* identical segments (either direction) are kept once;
* segments that lie on exactly the same line and overlap or touch are merged into one
  segment from the lowest to the highest endpoint.

Exactness: collinearity is decided exactly (a float filter with a forward error bound,
confirmed in rational arithmetic), and a merged segment runs between two of the input
endpoints, so the cleaned set covers exactly the points the input covered. Nothing is
snapped or rounded.
"""

from __future__ import annotations

import numpy as np

__all__ = ["clean_segments", "segments_of_lines"]

#: Relative bound on the rounding error of the float orientation test (Shewchuk's
#: ``ccwerrboundA`` is (3 + 16ε)ε ≈ 3.3e-16; twice that keeps a margin).
_ORIENT_ERRBOUND = 7e-16


def segments_of_lines(coords: np.ndarray, index: np.ndarray) -> np.ndarray:
    """Segments (N, 2, 2) between consecutive vertices of each line (``coords`` with their line ``index``)."""
    same = index[1:] == index[:-1]
    return np.stack([coords[:-1][same], coords[1:][same]], axis=1)


def _canonical(seg: np.ndarray) -> np.ndarray:
    """Each segment with its lexicographically lower endpoint (x, then y) first."""
    swap = (seg[:, 0, 0] > seg[:, 1, 0]) | ((seg[:, 0, 0] == seg[:, 1, 0]) & (seg[:, 0, 1] > seg[:, 1, 1]))
    out = seg.copy()
    out[swap] = seg[swap, ::-1]
    return out


def _orient_exact(p, q, r) -> int:
    """Sign-exact orientation of r against the line p→q: floats are dyadic rationals, so all six
    coordinates are brought to one power-of-two denominator and the determinant is taken in
    Python integers (positive: left, 0: exactly on the line)."""
    ratios = [float(v).as_integer_ratio() for v in (p[0], p[1], q[0], q[1], r[0], r[1])]
    den = max(d for _, d in ratios)
    px, py, qx, qy, rx, ry = (n * (den // d) for n, d in ratios)
    return (qx - px) * (ry - py) - (qy - py) * (rx - px)


def _maybe_on_line(base: np.ndarray, pts: np.ndarray) -> np.ndarray:
    """False where a point certainly is not on the line through ``base`` (float test with an error bound)."""
    p, q = base
    left = (q[0] - p[0]) * (pts[:, 1] - p[1])
    right = (q[1] - p[1]) * (pts[:, 0] - p[0])
    return np.abs(left - right) <= _ORIENT_ERRBOUND * (np.abs(left) + np.abs(right))


def _merge_on_line(seg: np.ndarray) -> list[np.ndarray]:
    """Merge canonical segments that lie on one line: overlapping or touching runs become one segment."""
    order = np.lexsort((seg[:, 0, 1], seg[:, 0, 0]))
    out = []
    cur = seg[order[0]].copy()
    for i in order[1:]:
        lo, hi = seg[i]
        if (lo[0], lo[1]) <= (cur[1, 0], cur[1, 1]):          # starts before the run ends: one run
            if (hi[0], hi[1]) > (cur[1, 0], cur[1, 1]):
                cur[1] = hi
        else:
            out.append(cur)
            cur = seg[i].copy()
    out.append(cur)
    return out


def _collinear_classes(seg: np.ndarray, members: np.ndarray) -> list[np.ndarray]:
    """Split ``members`` (indices into ``seg``) into classes of segments on exactly the same line."""
    classes = []
    rest = members
    while len(rest) > 1:
        base = seg[rest[0]]
        near = _maybe_on_line(base, seg[rest, 0]) & _maybe_on_line(base, seg[rest, 1])
        near[0] = True
        same = [rest[0]]
        for i in rest[1:][near[1:]]:
            if _orient_exact(base[0], base[1], seg[i, 0]) == 0 and _orient_exact(base[0], base[1], seg[i, 1]) == 0:
                same.append(i)
        same = np.asarray(same)
        if len(same) > 1:
            classes.append(same)
        rest = np.setdiff1d(rest, same, assume_unique=True)
    return classes


def clean_segments(seg: np.ndarray) -> np.ndarray:
    """Cleaned segments (M, 2, 2) covering exactly the points of ``seg`` (N, 2, 2), M ≤ N.

    Zero-length segments are dropped, identical ones kept once, and segments on exactly the
    same line that overlap or touch are merged (see the module docstring). Segments come
    back with their lower endpoint first, in the order of their first appearance.
    """
    seg = np.asarray(seg, dtype=float).reshape(-1, 2, 2)
    seg = seg[np.any(seg[:, 0] != seg[:, 1], axis=1)]
    if not len(seg):
        return np.zeros((0, 2, 2))
    seg = _canonical(seg)
    _, first = np.unique(seg.reshape(len(seg), 4), axis=0, return_index=True)
    seg = seg[np.sort(first)]
    if len(seg) < 2:
        return seg
    # candidate lines: direction modulo π and offset, rounded (a coarse key; exactness comes later)
    d = seg[:, 1] - seg[:, 0]
    ang = np.mod(np.arctan2(d[:, 1], d[:, 0]), np.pi)
    ang[ang >= np.pi - 1e-9] = 0.0
    off = seg[:, 0, 1] * np.cos(ang) - seg[:, 0, 0] * np.sin(ang)
    scale = max(float(np.max(np.abs(seg))), 1.0)
    key = np.stack([np.round(ang * 1e7), np.round(off / scale * 1e7)], axis=1)
    _, inv, cnt = np.unique(key, axis=0, return_inverse=True, return_counts=True)
    inv = inv.reshape(-1)
    shared = np.flatnonzero(cnt > 1)
    if not len(shared):
        return seg
    keep = np.ones(len(seg), dtype=bool)
    replaced: dict[int, list[np.ndarray]] = {}
    order = np.argsort(inv, kind="stable")
    bounds = np.r_[0, np.cumsum(np.bincount(inv, minlength=len(cnt)))]
    for g in shared:
        members = order[bounds[g]:bounds[g + 1]]
        for cls in _collinear_classes(seg, members):
            merged = _merge_on_line(seg[cls])
            if len(merged) == len(cls):
                continue
            keep[cls] = False
            replaced[int(cls.min())] = merged
    if not replaced:
        return seg
    out = []
    for i in range(len(seg)):
        if keep[i]:
            out.append(seg[i][None])
        elif i in replaced:
            out.append(np.stack(replaced[i]))
    return np.concatenate(out)
