"""Limits on the size of one analysis, so that a huge site gets advice instead of thrashing.

The work of building the slices grows with (obstacle edges × heading slices); memory grows
with the free-space vertices kept per slice. Beyond :data:`MAX_EDGE_SLICES` floorfit stops
before starting and says what to do: crop the drawing with ``--window``, pick layers, or
use a coarser ``--heading-step``.
"""

from __future__ import annotations

from floorfit.errors import LimitExceeded

__all__ = ["MAX_EDGE_SLICES", "MAX_EDGES", "check_problem_size"]

#: Largest (obstacle edges × heading slices) for one run: 20,000 edges × 720 slices.
MAX_EDGE_SLICES = 20_000 * 720
#: Largest number of obstacle edges in one run.
MAX_EDGES = 400_000


def check_problem_size(plan, n_slices: int) -> None:
    """Raise :class:`LimitExceeded` with advice when the run would be too large."""
    edges = plan.edge_count()
    if edges > MAX_EDGES:
        raise LimitExceeded(f"the plan has {edges:,} obstacle edges, above the limit of {MAX_EDGES:,} for one run; "
                            f"crop it with --window or keep only the plan layers (--layers)", plan.source)
    if edges * n_slices > MAX_EDGE_SLICES:
        raise LimitExceeded(f"{edges:,} obstacle edges × {n_slices} heading slices is above the limit of "
                            f"{MAX_EDGE_SLICES:,} for one run; use a coarser --heading-step "
                            f"(e.g. {max(1, int(360 * edges / MAX_EDGE_SLICES) + 1)}°) or crop with --window",
                            plan.source)
