"""Collision checks of drive motions against the sound slices: sampled and exact.

This module owns the two tests that the drive searches of :mod:`floorfit.motion.drivable` and
:mod:`floorfit.motion.drivable_car` run against the configuration-space slices of
:mod:`floorfit.cspace.slices` (local frame, metres; segment poses in radians, sample poses in
degrees): :class:`SliceMotionCheck`, the sound sampled test the car search calls for every batch
of poses, and :class:`ExactSliceCheck`, the exact test of whole segments every returned path
passes; and :func:`chord_error_m`, the margin the sampled test adds for the chords between the
returned samples.

Why the sampled checks are sound (:class:`SliceMotionCheck`)
-----------------------------------------------------------
A point of slice k's free space F_k is clear for every heading of cell k. The searches
hand over poses sampled along each motion at most ``s`` metres (track of the reference
point) and ``d`` degrees apart. A pose is accepted when its position lies in F_k at a
distance of at least ``δ = s/2 + σ`` from the boundary of F_k, for **every** cell k
that meets a window of headings around its own: the half-way headings towards its
neighbouring samples, or ``±d/2`` where the neighbour is not in the same batch. Along
straights, arcs and rotations the heading is linear in the travelled distance, so every
pose between two samples lies within ``s/2`` (position) of the nearer sample and within
its heading window; it is therefore in F_k of its own cell with ``σ`` to spare. ``σ``
bounds how far a chord between two output samples ``path_step_m`` apart leaves the arc
(``l²/8R + l³/6R²``, R the turning radius; 0 for differential bases), so the linear
interpolation of the returned samples is collision-free as well as the true motion.

What the checks cost in precision (:func:`floorfit.motion.drivable.drive_tolerance_m`): the slice's own growth,
the rotation to a slice heading up to ``max_cell_turn + d/2`` away, and ``δ``; answers err
towards "not found", never towards "fits".
"""

from __future__ import annotations

import bisect
import math

import numpy as np
import shapely

from floorfit.cspace.headings import arc_deg
from floorfit.cspace.slices import SliceSet
from floorfit.motion import Segment, sample

__all__ = [
    "PRETEST_SLACK_M",
    "PRETEST_STEP_DEG",
    "PRETEST_STEP_M",
    "ExactSliceCheck",
    "SliceMotionCheck",
    "chord_error_m",
]

#: Sample spacing (m of track, degrees) of the exact check's cheap pre-test.
PRETEST_STEP_M = 0.1
PRETEST_STEP_DEG = 5.0
#: The pre-test accepts samples this far (m) outside the free space: rounding never makes it
#: reject a piece the exact test accepts.
PRETEST_SLACK_M = 1e-6


def chord_error_m(radius_m: float | None, step_m: float) -> float:
    """How far the chord between two samples ``step_m`` apart on an arc of ``radius_m`` can lie
    from the true pose at the same fraction of the way (m); 0 for straight-only paths.

    Leading terms of the difference of chord and arc point at fraction t, bounded over t:
    radial ``l²/8R`` (the sagitta) plus tangential ``l³/6R²``.
    """
    if radius_m is None:
        return 0.0
    r = float(radius_m)
    return step_m ** 2 / (8.0 * r) + step_m ** 3 / (6.0 * r * r)


class SliceMotionCheck:
    """Sound collision test of sampled motions against sound slices (local frame).

    ``is_free`` is the callback for :mod:`floorfit.motion` (poses in radians); see the
    module docstring for why a motion whose samples pass is collision-free.

    Implementation: each slice's free space is eroded by the margin (round joins, the
    erosion distance raised so that the flattened arcs stay outside the true erosion) and
    blocks of :data:`BLOCK` consecutive slices are laid side by side (shifted along x) in one
    STRtree, so that a batch of poses needs one query per block of headings it touches.
    Blocks are built on first use. One instance may serve many searches on the same slices.

    Parameters
    ----------
    slices : SliceSet
        Sound slices (``bound == "sound"``).
    step_m, step_deg : float
        Largest spacing of the samples that will be checked (m, degrees).
    extra_margin_m : float
        Added to the position margin ``step_m / 2`` (the chord error of the output path).
    clip_box : (xmin, ymin, xmax, ymax) or None
        Only the free space inside this box (local m) is used: positions farther than the
        erosion inside it answer as without it, positions nearer its edges or outside are
        refused (sound; for a search kept well inside the box).
    """

    #: Slices per stacked block.
    BLOCK = 48
    _QUAD_SEGS = 8

    def __init__(self, slices: SliceSet, step_m: float, step_deg: float, extra_margin_m: float = 0.0,
                 clip_box=None):
        if slices.bound != "sound":
            raise ValueError("drive checks need sound slices")
        self.slices = slices
        self.step_m = float(step_m)
        self.step_deg = float(step_deg)
        self.margin_m = 0.5 * self.step_m + float(extra_margin_m) + 1e-9
        # erosion distance: a chord of the flattened round join lies within e·cos(π/4q) of the vertex
        self._erode = self.margin_m / math.cos(math.pi / (4 * self._QUAD_SEGS))
        cells = slices.cells
        self._starts = cells.headings - cells.below          # cell lower ends, ascending
        x0, _, x1, _ = slices.domain.bounds
        self._shift = (x1 - x0) + 10.0
        self._blocks: dict[int, tuple | None] = {}
        self._clip = None if clip_box is None else tuple(float(v) for v in clip_box)
        self.poses_checked = 0

    # --- cells -------------------------------------------------------------------------
    def _cell_of(self, h_deg: np.ndarray) -> np.ndarray:
        s0 = self._starts[0]
        y = np.mod(h_deg - s0, 360.0) + s0
        idx = np.searchsorted(self._starts, y, side="right") - 1
        return np.clip(idx, 0, len(self._starts) - 1)

    def _block(self, b: int):
        """Stacked tree and prepared eroded free space of slices [b·BLOCK, (b+1)·BLOCK)."""
        if b not in self._blocks:
            parts = []
            for k in range(b * self.BLOCK, min((b + 1) * self.BLOCK, len(self.slices))):
                comps = self._clipped(k)
                if not len(comps):
                    continue
                eroded = shapely.buffer(comps, -self._erode, quad_segs=self._QUAD_SEGS)
                eroded = shapely.get_parts(eroded[~shapely.is_empty(eroded)])
                if len(eroded):
                    dx = (k - b * self.BLOCK) * self._shift
                    parts.append(shapely.transform(eroded, lambda c, dx=dx: c + np.array([dx, 0.0])))
            if parts:
                geoms = np.concatenate(parts)
                shapely.prepare(geoms)
                self._blocks[b] = (shapely.STRtree(geoms), geoms)
            else:
                self._blocks[b] = None
        return self._blocks[b]

    def _clipped(self, k: int) -> np.ndarray:
        """Free-space components of slice ``k`` (inside the clip box when there is one)."""
        comps = np.asarray(self.slices.components[k])
        if self._clip is None or not len(comps):
            return comps
        comps = comps[shapely.intersects(comps, shapely.box(*self._clip))]
        cut = shapely.clip_by_rect(comps, *self._clip)
        return cut[~shapely.is_empty(cut)]

    def free_in_windows(self, poses_deg, lo_deg, hi_deg) -> np.ndarray:
        """True where each pose's position lies at least ``margin_m`` inside the free space of
        every cell meeting the heading window [h + lo, h + hi] (degrees, lo ≤ 0 ≤ hi)."""
        p = np.asarray(poses_deg, dtype=float).reshape(-1, 3)
        n = len(self._starts)
        ia = self._cell_of(p[:, 2] + np.asarray(lo_deg, dtype=float))
        ib = self._cell_of(p[:, 2] + np.asarray(hi_deg, dtype=float))
        count = np.mod(ib - ia, n) + 1
        rows = np.repeat(np.arange(len(p)), count)
        offs = np.arange(count.sum()) - np.repeat(np.cumsum(count) - count, count)
        ks = np.mod(np.repeat(ia, count) + offs, n)
        blocks = ks // self.BLOCK
        ok = np.zeros(len(rows), dtype=bool)
        for b in np.unique(blocks):
            block = self._block(int(b))
            if block is None:
                continue
            tree, geoms = block
            sel = np.flatnonzero(blocks == b)
            xs = p[rows[sel], 0] + (ks[sel] - b * self.BLOCK) * self._shift
            ys = p[rows[sel], 1]
            # candidates by bounding box, then the prepared point-in-polygon test
            i_pt, i_geom = tree.query(shapely.points(xs, ys))
            inside = shapely.intersects_xy(geoms[i_geom], xs[i_pt], ys[i_pt])
            ok[sel[i_pt[inside]]] = True
        out = np.ones(len(p), dtype=bool)
        np.logical_and.at(out, rows, ok)
        self.poses_checked += len(p)
        return out

    # --- batches from floorfit.motion ---------------------------------------------------
    def windows(self, poses_deg: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Heading windows (lo, hi) in degrees for consecutive samples of one batch.

        Neighbours closer than the sample spacing are taken to be the same motion
        (half-way headings towards them); a side without such a neighbour gets ±step/2.
        """
        p = np.asarray(poses_deg, dtype=float).reshape(-1, 3)
        n = len(p)
        lo = np.zeros(n)
        hi = np.zeros(n)
        if n == 0:
            return lo, hi
        half = 0.5 * self.step_deg
        dxy = np.hypot(np.diff(p[:, 0]), np.diff(p[:, 1]))
        dh = arc_deg(p[:-1, 2], p[1:, 2]) if n > 1 else np.zeros(0)
        pair = (dxy <= self.step_m * (1 + 1e-9) + 1e-12) & (np.abs(dh) <= self.step_deg * (1 + 1e-9) + 1e-12)
        right = np.zeros(n, dtype=bool)
        left = np.zeros(n, dtype=bool)
        right[:-1] = pair
        left[1:] = pair
        d_next = np.zeros(n)
        d_prev = np.zeros(n)
        d_next[:-1] = dh
        d_prev[1:] = dh
        lo = np.where(right, np.minimum(lo, 0.5 * d_next), -half)
        hi = np.where(right, np.maximum(hi, 0.5 * d_next), half)
        lo = np.where(left, np.minimum(lo, -0.5 * d_prev), np.minimum(lo, -half))
        hi = np.where(left, np.maximum(hi, -0.5 * d_prev), np.maximum(hi, half))
        return lo, hi

    def is_free(self, poses_rad) -> np.ndarray:
        """Callback for :mod:`floorfit.motion`: (N, 3) local poses (x m, y m, heading rad)."""
        p = np.array(poses_rad, dtype=float).reshape(-1, 3)
        p[:, 2] = np.degrees(p[:, 2])
        lo, hi = self.windows(p)
        return self.free_in_windows(p, lo, hi)

    def samples_inside(self, poses_deg) -> np.ndarray:
        """True where each pose lies in its own slice's free space (no margin): a consistency check."""
        return self.slices.are_free(poses_deg)


class ExactSliceCheck:
    """Exact test of drive segments against sound slices (local frame; segment poses in radians).

    A motion is accepted when every pose of it lies in the free space of its own heading
    cell, the same guarantee as the holonomic roadmap's, so it adds nothing to the slices'
    tolerance:

    - a rotation in place: its position lies in the free space of every cell that meets
      the headings it sweeps (point in polygon);
    - a straight drive: the segment is covered by a free-space component of its heading's cell;
    - an arc: it is split at the cell boundaries and at the output samples (every
      ``path_step_m`` / ``path_step_deg``, as :func:`floorfit.motion.sample` places them); each
      piece must be covered by a free-space component of its cell as a polygon that contains
      both the arc piece (between its chord and its two tangents) and the chord between the
      output samples, so the linear interpolation of the returned samples is clear too.

    ``free(segments) -> bool`` is the callback of :mod:`floorfit.motion.subdivision`.
    """

    def __init__(self, slices: SliceSet, path_step_m: float = 0.05, path_step_deg: float = 2.0):
        if slices.bound != "sound":
            raise ValueError("drive checks need sound slices")
        self.slices = slices
        self.path_step_m = float(path_step_m)
        self.path_step_deg = float(path_step_deg)
        cells = slices.cells
        self._starts = cells.headings - cells.below
        self._prepared: set[int] = set()
        self._points: dict[tuple[float, float], np.ndarray] = {}
        self._start_list = self._starts.tolist()
        self.checks = 0
        #: structures derived from these slices that the searches sharing this check may share too
        #: (for example the sampled check and 2-D heuristic grid of a car of one turning radius)
        self.shared: dict = {}

    def _cell_of(self, h_deg) -> np.ndarray:
        s0 = self._starts[0]
        y = np.mod(np.asarray(h_deg, dtype=float) - s0, 360.0) + s0
        idx = np.searchsorted(self._starts, y, side="right") - 1
        return np.clip(idx, 0, len(self._starts) - 1)

    def _cell_of_one(self, h_deg: float) -> int:
        """:meth:`_cell_of` of one heading (degrees), without numpy's per-call cost (the same arithmetic)."""
        s0 = self._start_list[0]
        k = bisect.bisect_right(self._start_list, (float(h_deg) - s0) % 360.0 + s0) - 1
        return min(max(k, 0), len(self._start_list) - 1)

    def _comps(self, k: int):
        comps = self.slices.components[k]
        if k not in self._prepared:
            shapely.prepare(comps)
            self._prepared.add(k)
        return comps

    def _covered(self, k: int, geoms) -> bool:
        """Every geometry of ``geoms`` covered by some free-space component of slice ``k``."""
        geoms = np.atleast_1d(np.asarray(geoms, dtype=object))
        comps = self._comps(k)
        if not len(comps):
            return False
        i_g, i_c = self.slices.tree(k).query(geoms)
        ok = np.zeros(len(geoms), dtype=bool)
        if len(i_g):
            hit = shapely.covers(comps[i_c], geoms[i_g])
            ok[i_g[hit]] = True
        return bool(ok.all())

    #: Positions whose per-cell answers :meth:`rotation_free` keeps (then it starts afresh).
    POINT_MEMORY = 50_000

    def _point_in_cell(self, x: float, y: float, k: int) -> bool:
        """Position (x, y) in the free space of cell ``k`` (point in polygon, kept per position)."""
        row = self._points.get((x, y))
        if row is None:
            if len(self._points) >= self.POINT_MEMORY:
                self._points.clear()
            row = self._points[(x, y)] = np.full(len(self._starts), -1, dtype=np.int8)
        if row[k] < 0:
            comps = self._comps(k)
            inside = False
            if len(comps):
                idx = self.slices.tree(k).query(shapely.points(x, y))
                inside = bool(len(idx)) and bool(shapely.intersects_xy(comps[idx], x, y).any())
            row[k] = inside
        return bool(row[k])

    def rotation_free(self, x: float, y: float, h0_deg: float, dh_deg: float) -> bool:
        """The base turning in place at (x, y) m from ``h0_deg`` by ``dh_deg`` degrees stays in the free
        space of every cell it sweeps."""
        n = len(self._starts)
        if abs(dh_deg) >= 360.0 - 1e-9:
            ks = range(n)
        else:
            lo, hi = (h0_deg, h0_deg + dh_deg) if dh_deg >= 0 else (h0_deg + dh_deg, h0_deg)
            ia, ib = self._cell_of_one(lo), self._cell_of_one(hi)
            ks = [(ia + j) % n for j in range((ib - ia) % n + 1)]
        return all(self._point_in_cell(x, y, k) for k in ks)

    def _arc_pieces(self, seg: Segment) -> list[tuple[int, object]]:
        """(cell, polygon) pieces covering an arc and the chords between its output samples."""
        from floorfit.motion.segments import poses_along
        n = max(1, math.ceil(seg.length_m / self.path_step_m - 1e-9),
                math.ceil(abs(seg.angle_deg) / self.path_step_deg - 1e-9))
        h0 = math.degrees(seg.start[2])
        dh = seg.angle_deg
        # fractions where the heading crosses a cell boundary
        lo, hi = sorted((h0, h0 + dh))
        m_lo = np.floor((lo - self._starts) / 360.0)
        m_hi = np.ceil((hi - self._starts) / 360.0)
        m = m_lo[:, None] + np.arange(int((m_hi - m_lo).max()) + 1)[None, :]
        b = self._starts[:, None] + 360.0 * m                  # every turn of every cell boundary
        bounds = (b[(m <= m_hi[:, None]) & (lo < b) & (b < hi)] - h0) / dh
        cuts = np.unique(np.concatenate([np.arange(n + 1) / n, bounds]))
        cuts = cuts[(cuts >= 0) & (cuts <= 1)]
        pts = poses_along(seg, cuts)
        k_of = self._cell_of(np.degrees(poses_along(seg, 0.5 * (cuts[:-1] + cuts[1:]))[:, 2]))
        sample_t = np.arange(n + 1) / n
        samples = poses_along(seg, sample_t)
        sign = seg.steer * seg.radius_m
        x0, y0, hs = seg.start
        centre = np.array([x0 - sign * math.sin(hs), y0 + sign * math.cos(hs)])
        # all pieces at once, each value computed as the piece-by-piece formula computes it
        ta, tb = cuts[:-1], cuts[1:]
        j = np.minimum(np.searchsorted(sample_t, ta, side="right") - 1, n - 1)
        t_s, t_e = sample_t[j], sample_t[j + 1]
        pa, pb = samples[j, :2], samples[j + 1, :2]
        ca = pa + (pb - pa) * (ta - t_s)[:, None] / (t_e - t_s)[:, None]    # chord points at the same fractions
        cb = pa + (pb - pa) * (tb - t_s)[:, None] / (t_e - t_s)[:, None]
        A, B = pts[:-1, :2], pts[1:, :2]
        half = 0.5 * np.abs(math.radians(dh) * (tb - ta))
        # the tangents at A and B meet at T, outside the arc
        v = 0.5 * (A + B) - centre
        norm = np.hypot(v[:, 0], v[:, 1])
        tip = (half >= 1e-9) & (norm > 0)
        reach = np.array([seg.radius_m / math.cos(h) for h in half])
        T = centre + v / np.where(norm > 0, norm, 1.0)[:, None] * reach[:, None]
        corners = np.stack([ca, cb, B, A, T], axis=1)                      # (pieces, 5, 2)
        count = np.where(tip, 5, 4)
        keep = np.arange(5)[None, :] < count[:, None]
        # the convex hull contains the arc piece and the chord piece (a polygon, a line or a point)
        geoms = shapely.convex_hull(shapely.multipoints(corners[keep], indices=np.repeat(np.arange(len(count)), count)))
        out = list(zip(k_of.astype(int).tolist(), geoms))
        return out

    def segment_free(self, seg: Segment) -> bool:
        x, y, h = seg.start
        h_deg = math.degrees(h)
        if seg.kind == "rotate":
            return self.rotation_free(x, y, h_deg, seg.angle_deg)
        if seg.kind == "straight":
            k = self._cell_of_one(h_deg)
            if seg.length_m <= 1e-12:
                return self.rotation_free(x, y, h_deg, 0.0)
            return self._covered(k, shapely.linestrings([seg.start[:2], seg.end[:2]]))
        by_cell: dict[int, list] = {}
        for k, g in self._arc_pieces(seg):
            by_cell.setdefault(k, []).append(g)
        return all(self._covered(k, gs) for k, gs in by_cell.items())

    def maybe_free(self, poses_rad, owner, count: int) -> np.ndarray:
        """A cheap necessary condition of :meth:`free`, for ``count`` candidate paths at once.

        ``poses_rad`` (N, 3): local poses (x m, y m, heading rad) sampled along the candidates,
        ``owner`` (N,): the candidate of each pose. False for a candidate with a pose that lies
        outside its own cell's free space by more than :data:`PRETEST_SLACK_M` (every pose of a piece
        :meth:`free` accepts lies in it; the slack absorbs rounding where a path touches the
        boundary), True otherwise."""
        p = np.asarray(poses_rad, dtype=float).reshape(-1, 3)
        owner = np.asarray(owner, dtype=int)
        ok = np.ones(count, dtype=bool)
        if not len(p):
            return ok
        ks = self._cell_of(np.degrees(p[:, 2]))
        pts = shapely.points(p[:, :2])
        inside = np.zeros(len(p), dtype=bool)
        for k in np.unique(ks):
            sel = np.flatnonzero(ks == k)
            self._comps(int(k))                       # prepared
            hit = self.slices.tree(int(k)).query(pts[sel], predicate="intersects")[0]
            inside[sel[hit]] = True
        # each candidate with poses outside: is its first such pose farther than the slack?
        out = np.flatnonzero(~inside)
        firsts = out[np.unique(owner[out], return_index=True)[1]]
        for k in np.unique(ks[firsts]):
            sel = firsts[ks[firsts] == k]
            near = np.zeros(len(sel), dtype=bool)
            near[self.slices.tree(int(k)).query(pts[sel], predicate="dwithin", distance=PRETEST_SLACK_M)[0]] = True
            ok[owner[sel[~near]]] = False
        return ok

    def near_free(self, candidates) -> np.ndarray:
        """:meth:`maybe_free` of candidate paths (lists of segments), sampled every
        :data:`PRETEST_STEP_M` / :data:`PRETEST_STEP_DEG`."""
        parts = [sample(c, PRETEST_STEP_M, PRETEST_STEP_DEG) for c in candidates]
        sizes = [len(q) for q in parts]
        if not sum(sizes):
            return np.ones(len(parts), dtype=bool)
        return self.maybe_free(np.concatenate(parts), np.repeat(np.arange(len(parts)), sizes), len(parts))

    def free(self, segments) -> bool:
        """True when every segment (poses in radians, local frame) is clear (one check)."""
        self.checks += 1
        return all(self.segment_free(s) for s in segments)

    def first_free(self, candidates: list) -> int | None:
        """Index of the first free one of the candidate paths (lists of segments), None when none is
        (one check each): the batched pre-test :meth:`near_free` rejects most colliding ones, the exact
        test decides. Worth it where the exact test is dear and the pieces short (Reeds–Shepp curves);
        for long straights :meth:`free` alone is cheaper."""
        near = self.near_free(candidates) if candidates else []
        for i, segs in enumerate(candidates):
            self.checks += 1
            if near[i] and all(self.segment_free(s) for s in segs):
                return i
        return None

    def samples_inside(self, poses_deg) -> np.ndarray:
        """True where each pose lies in its own slice's free space: a consistency check."""
        return self.slices.are_free(poses_deg)
