"""Settling a route on coarse slices: by the coarse optimistic bound, or by refining the heading
step near the pinch points only (:func:`settle_coarse`). Poses in the drawing frame (metres,
degrees); slices in the local frame.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from floorfit.cspace.headings import refine_cells
from floorfit.cspace.roadmap import build_roadmap
from floorfit.cspace.slices import SliceSet, build_slices, choose_headings, default_step
from floorfit.motion.cell_route import route_in_slices
from floorfit.motion.drivable import DriveLimits
from floorfit.motion.pinches import COARSE_FINAL, REFINE_HALF_WIDTH_STEPS, format_ranges, pinch_headings
from floorfit.plan.model import Plan
from floorfit.vehicles.rigid import Vehicle

__all__ = ["settle_coarse"]


def settle_coarse(plan: Plan, vehicle: Vehicle, start, goal, coarse: SliceSet, found: Any, *,
                  search: Callable[..., Any], workers: int | None = 1, limits: DriveLimits | None = None,
                  progress: Callable[[str], None] | None = None) -> tuple[Any, SliceSet] | None:
    """After a coarse sound try found no route (``found``, ``unreachable`` on the sound slices ``coarse``
    of :func:`~floorfit.motion.route_query.coarse_cells`): the answer settled on the coarse bounds
    and the sound slices it stands on, where they allow it; else None (the default step decides,
    as before).

    * The coarse **optimistic** slices (the vehicle shrunk by the coarse tolerance, which only
      grows with the step) do not connect the poses either: ``unreachable``, for every step.
    * They connect them: the headings at which their route leaves the sound free space are the
      pinch points. The heading step is refined to the default step within
      :data:`REFINE_HALF_WIDTH_STEPS` coarse steps of them only (:func:`refine_cells`; the other
      coarse slices are kept), and a route on those sound slices is a route. The stated
      tolerance stays the largest over all slices (the coarse one's).

    ``found`` is the :class:`~floorfit.motion.route_query.RouteResult` of the coarse try and ``search``
    :func:`~floorfit.motion.route_query.find_route` (passed in: it calls this function). ``progress(text)``
    announces the stages. Poses in the drawing frame (metres, degrees).
    """
    say = progress or (lambda _text: None)
    s_loc = (*plan.to_local(start[0], start[1]), float(start[2]))
    g_loc = (*plan.to_local(goal[0], goal[1]), float(goal[2]))
    say(f"optimistic slices at the coarse {coarse.cells.step_deg:g}° step: {len(coarse.cells)} headings")
    opt = build_slices(plan, vehicle, cells=coarse.cells, bound="optimistic", workers=workers)
    say("route search on the coarse optimistic slices")
    ostatus, opath, _ = route_in_slices(opt, build_roadmap(opt), s_loc, g_loc)
    if ostatus == "unreachable":
        found.notes.append(f"settled on coarse slices ({coarse.cells.step_deg:g}° heading step): not even the "
                           f"vehicle shrunk by their tolerance ({opt.tolerance_m:.3f} m) connects the poses, so no "
                           f"finer step could")
        return found, coarse
    if ostatus != "reachable":
        return None
    pinches = pinch_headings(coarse, opath)
    if not len(pinches):
        return None
    fine = default_step(plan, vehicle)
    cells = refine_cells(coarse.cells, fine, pinches, REFINE_HALF_WIDTH_STEPS * coarse.cells.step_deg)
    full = choose_headings(plan, vehicle, extra_headings=(start[2], goal[2]))
    if len(cells) >= len(full):
        return None                  # refining would cost as much as the default step everywhere
    say(f"slices refined to {fine:g}° near the pinch points: {len(cells)} headings")
    refined = build_slices(plan, vehicle, cells=cells, workers=workers, reuse=coarse)
    say("roadmap and route search on the refined slices")
    found = search(plan, vehicle, start, goal, slices=refined, check_optimistic=False, limits=limits)
    if found.status not in COARSE_FINAL:
        return None
    ranges = format_ranges(pinches, REFINE_HALF_WIDTH_STEPS * coarse.cells.step_deg)
    found.notes.append(f"settled on coarse slices ({coarse.cells.step_deg:g}° heading step) refined to {fine:g}° "
                       f"near the pinch points (headings {ranges}): {len(cells)} slices instead of {len(full)}; a "
                       f"route on sound slices holds at every finer step")
    return found, refined
