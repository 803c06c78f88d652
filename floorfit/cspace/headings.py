"""The heading circle: wrapping, shorter-arc differences and the choice of heading slices.

Headings are in degrees, counter-clockwise from the drawing's +x axis, wrapped to
[-180, 180). The configuration space is the plane times this circle; it is cut into
*heading cells*, each represented by one slice heading. A cell runs from the midpoint
to the previous slice heading to the midpoint to the next one, so the cells cover the
whole circle and the last cell is adjacent to the first.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from floorfit.plan.directions import dominant_directions_deg

__all__ = ["wrap_deg", "arc_deg", "interpolate_heading", "default_step_deg", "rotation_displacement_m",
           "dominant_directions_deg", "HeadingCells", "make_heading_cells", "STEP_CHOICES_DEG",
           "TARGET_ROTATION_ERROR_M", "GUARD_DEG", "refine_cells", "format_heading_ranges"]

#: Candidate uniform steps, degrees (each divides 360).
STEP_CHOICES_DEG = (5.0, 4.0, 3.0, 2.5, 2.0, 1.5, 1.25, 1.0)
#: The default step is the coarsest candidate whose rotation error stays below this, metres.
TARGET_ROTATION_ERROR_M = 0.01
#: Two slice headings closer than this (degrees) are merged.
MERGE_DEG = 1e-6
#: Special headings (wall directions, start/goal, docking) get guard slices this far on
#: each side, degrees, so that their own cell is narrow and nearly exact: a vehicle that
#: fits a tight aisle only when aligned with it is not misjudged.
GUARD_DEG = 0.1
#: :meth:`HeadingCells.indices_of` searches headings up to this size (degrees); larger ones
#: (and non-finite ones) are measured against every slice, as rounding there is coarse.
SEARCH_MAX_DEG = 1e5


def wrap_deg(h):
    """Wrap heading(s) in degrees to [-180, 180)."""
    return (np.asarray(h, dtype=float) + 180.0) % 360.0 - 180.0


def arc_deg(a, b):
    """Signed shorter arc from heading ``a`` to heading ``b``, degrees in [-180, 180)."""
    return wrap_deg(np.asarray(b, dtype=float) - np.asarray(a, dtype=float))


def interpolate_heading(a: float, b: float, t):
    """Heading at fraction ``t`` of the shorter-arc rotation from ``a`` to ``b`` (degrees)."""
    return wrap_deg(a + np.asarray(t, dtype=float) * arc_deg(a, b))


def rotation_displacement_m(radius_m: float, angle_deg: float) -> float:
    """Largest displacement of a point at ``radius_m`` rotated by ``angle_deg``: 2ρ·sin(Δθ/2)."""
    return 2.0 * radius_m * math.sin(math.radians(abs(angle_deg)) / 2.0)


def default_step_deg(radius_m: float, target_m: float = TARGET_ROTATION_ERROR_M) -> float:
    """Coarsest step in :data:`STEP_CHOICES_DEG` whose half-cell rotation moves no point more than ``target_m``.

    Falls back to the finest candidate (1°) for very large vehicles; the tolerance then
    reported is correspondingly larger.
    """
    for step in STEP_CHOICES_DEG:
        if rotation_displacement_m(radius_m, step / 2.0) <= target_m:
            return step
    return STEP_CHOICES_DEG[-1]


@dataclass(frozen=True)
class HeadingCells:
    """Slice headings and their cells on the circle, degrees.

    ``headings[k]`` is slice k's heading; its cell spans ``[headings[k] - below[k],
    headings[k] + above[k]]``. ``max_turn[k] = max(below, above)`` is the largest rotation
    from the slice heading that stays in the cell.
    """

    headings: np.ndarray
    below: np.ndarray
    above: np.ndarray
    step_deg: float

    def __len__(self) -> int:
        return len(self.headings)

    @property
    def max_turn(self) -> np.ndarray:
        return np.maximum(self.below, self.above)

    def index_of(self, heading_deg: float) -> int:
        """Index of the cell containing ``heading_deg`` (ties go to the nearer slice heading)."""
        d = np.abs(arc_deg(self.headings, heading_deg))
        return int(np.argmin(d))

    def indices_of(self, headings_deg) -> np.ndarray:
        """Vectorised :meth:`index_of`: for a 1-D array of headings (degrees), the same indices.

        The nearest slice heading on the circle is one of the two around the wrapped heading,
        found by binary search (``np.searchsorted``) instead of measuring every slice; the two
        arcs are measured as :meth:`index_of` does, and a tie goes to the lower index, as
        ``argmin`` does. Non-finite headings and those beyond ±:data:`SEARCH_MAX_DEG` are
        measured against every slice.
        """
        h = np.asarray(headings_deg, dtype=float)
        hs = self.headings
        n = len(hs)
        j = np.searchsorted(hs, wrap_deg(h))
        below, above = (j - 1) % n, j % n
        d_below = np.abs(arc_deg(hs[below], h))
        d_above = np.abs(arc_deg(hs[above], h))
        out = np.where((d_above < d_below) | ((d_above == d_below) & (above < below)), above, below)
        odd = ~(np.abs(h) <= SEARCH_MAX_DEG)
        if odd.any():
            out[odd] = self._indices_by_scan(h[odd])
        return out

    def _indices_by_scan(self, h: np.ndarray) -> np.ndarray:
        """Index of the nearest slice heading to each of ``h`` (degrees), measuring every slice."""
        d = np.abs(arc_deg(self.headings[None, :], h[:, None]))
        return np.argmin(d, axis=1)


def make_heading_cells(step_deg: float, extra_deg=(), *, only=None, guard_deg: float = GUARD_DEG) -> HeadingCells:
    """Uniform headings every ``step_deg`` plus ``extra_deg`` (wall directions, start/goal).

    Each extra heading h also gets guard headings h ± ``guard_deg``, so its cell spans only
    ±``guard_deg``/2 and its slice is within ``2ρ·sin(guard_deg/4)`` of exact.

    With ``only`` (a list of headings) the set is exactly those headings; a single heading
    gives a cell of zero width (a vehicle that never rotates).
    """
    if only is not None:
        hs = np.unique(np.round(wrap_deg(np.asarray(list(only), dtype=float)), 9))
    else:
        base = _uniform_grid(step_deg)
        extra = np.asarray(list(extra_deg), dtype=float)
        if guard_deg > 0 and len(extra):
            extra = np.concatenate([extra, extra - guard_deg, extra + guard_deg])
        hs = _merged(np.concatenate([base, wrap_deg(extra)]))
    if len(hs) == 1:
        z = np.zeros(1)
        return HeadingCells(hs, z, z, 0.0)
    return _nearest_arcs(hs, step_deg)


def _uniform_grid(step_deg: float) -> np.ndarray:
    """Headings every ``step_deg`` (degrees, the nearest step dividing 360°) from −180°."""
    if not (0 < step_deg <= 90):
        raise ValueError("heading step must be in (0, 90] degrees")
    n = int(round(360.0 / step_deg))
    return -180.0 + np.arange(n) * (360.0 / n)


def _merged(hs: np.ndarray) -> np.ndarray:
    """Headings (degrees, within ±180°) rounded to 1e-9°, sorted, those within :data:`MERGE_DEG`
    of the previous one (across the ±180° seam too) dropped."""
    hs = np.sort(np.round(hs, 9))
    keep = np.concatenate([[True], np.diff(hs) > MERGE_DEG])
    hs = hs[keep]
    if len(hs) > 1 and (hs[0] + 360.0 - hs[-1]) <= MERGE_DEG:
        hs = hs[:-1]
    return hs


def _nearest_arcs(hs: np.ndarray, step_deg: float) -> HeadingCells:
    """Cells of sorted headings ``hs`` (at least two): each the arc of the circle nearest its heading."""
    gaps_next = np.diff(np.concatenate([hs, [hs[0] + 360.0]]))      # to next slice
    gaps_prev = np.roll(gaps_next, 1)
    return HeadingCells(hs, gaps_prev / 2.0, gaps_next / 2.0, float(step_deg))


def refine_cells(cells: HeadingCells, step_deg: float, around_deg, half_width_deg: float) -> HeadingCells:
    """``cells`` with headings added every ``step_deg`` within ``half_width_deg`` of each of ``around_deg``.

    The added headings lie on the uniform grid of ``step_deg`` from −180° (the grid of
    :func:`make_heading_cells`), so refinements agree wherever they overlap. Every heading
    of ``cells`` is kept, so its slices can be reused where their cells did not narrow. Cells
    are the arcs nearest each heading, as in :func:`make_heading_cells`; ``step_deg`` of the
    result stays that of ``cells`` (the coarsest step in the set). Degrees throughout.
    """
    grid = _uniform_grid(step_deg)
    around = np.asarray(list(around_deg), dtype=float).reshape(-1)
    if not len(around) or len(cells) < 2:
        return cells
    near = np.min(np.abs(arc_deg(grid[:, None], around[None, :])), axis=1) <= half_width_deg + 1e-9
    return _nearest_arcs(_merged(wrap_deg(np.concatenate([cells.headings, grid[near]]))), cells.step_deg)


def format_heading_ranges(ranges) -> str:
    """``"-99.5° to -81.5°, 90° (aligned only)"``: heading ranges in words (a single heading when from = to)."""
    return ", ".join(f"{a:g}° (aligned only)" if a == b else f"{a:g}° to {b:g}°" for a, b in ranges)
