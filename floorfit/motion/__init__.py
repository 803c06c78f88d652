"""Vehicle motion: shortest car paths, path sampling and motion search.

Inside this package poses are ``(x m, y m, heading rad)``, heading counter-clockwise
from +x; :func:`pose_from_degrees` / :func:`pose_to_degrees` convert at the
boundary to the degrees used elsewhere in floorfit. For car-like vehicles the
reference point is the rear-axle centre. Segment angles (``angle_deg``) are in
degrees. Collision checks are the caller's: functions that search take
``is_free(poses) -> bool array`` for an (N, 3) array of poses.

Modules: :mod:`~floorfit.motion.segments` (path pieces), :mod:`~floorfit.motion.sampling`
(dense samples and their error bounds), :mod:`~floorfit.motion.reeds_shepp`,
:mod:`~floorfit.motion.dubins` (shortest car paths), :mod:`~floorfit.motion.hybrid_astar`
(search for cars), :mod:`~floorfit.motion.rotate_drive` (differential bases),
:mod:`~floorfit.motion.grid_heuristic`, :mod:`~floorfit.motion.swept`.
:mod:`~floorfit.motion.drivable` (turns the holonomic roadmap's answers into paths a
differential or car-like base can drive; the car search in :mod:`~floorfit.motion.drivable_car`,
the collision checks against the slices in :mod:`~floorfit.motion.slice_checks`) and
:mod:`~floorfit.motion.route_query` (route queries between two poses: the ``floorfit route`` answer; the
holonomic path through the roadmap's cells in :mod:`~floorfit.motion.cell_route`; a coarse try settled by
the coarse optimistic bound or by refining the heading step at its pinch points in
:mod:`~floorfit.motion.coarse_route` and :mod:`~floorfit.motion.pinches`).

Stage 4 of the pipeline. May import: :mod:`floorfit.cspace`, :mod:`floorfit.vehicles`,
:mod:`floorfit.plan`, :mod:`floorfit.errors`.
"""

from floorfit.motion.dubins import dubins_length, dubins_path, dubins_words
from floorfit.motion.grid_heuristic import OccupancyGrid, grid_distances, grid_heuristic
from floorfit.motion.hybrid_astar import CarPlanResult, plan_car_path
from floorfit.motion.poses import (
    Pose,
    from_local,
    pose_from_degrees,
    pose_to_degrees,
    relative_pose,
    wrap_angle,
)
from floorfit.motion.reeds_shepp import reeds_shepp_length, reeds_shepp_path, reeds_shepp_words
from floorfit.motion.rotate_drive import rotate_and_drive
from floorfit.motion.sampling import chord_deviation, motion_check_margin, sample
from floorfit.motion.segments import (
    Segment,
    arc,
    direction_changes,
    merge_segments,
    rotate,
    straight,
    total_length,
)
from floorfit.motion.swept import swept_annulus

__all__ = [
    "CarPlanResult",
    "OccupancyGrid",
    "Pose",
    "Segment",
    "arc",
    "chord_deviation",
    "direction_changes",
    "dubins_length",
    "dubins_path",
    "dubins_words",
    "from_local",
    "grid_distances",
    "grid_heuristic",
    "merge_segments",
    "motion_check_margin",
    "plan_car_path",
    "pose_from_degrees",
    "pose_to_degrees",
    "reeds_shepp_length",
    "reeds_shepp_path",
    "reeds_shepp_words",
    "relative_pose",
    "rotate",
    "rotate_and_drive",
    "sample",
    "straight",
    "swept_annulus",
    "total_length",
    "wrap_angle",
]
