"""Articulated vehicles: a tractor (tug, robot) towing one cart through a hitch.

The configuration of a train is (x, y, heading, hitch angle): the plane times the tractor's
heading circle times the hitch-angle circle. Trains drive forward only (reversing with a cart
is not supported). Lengths in metres, angles in degrees at this interface (radians inside the
motion segments, as in :mod:`floorfit.motion`). See docs/articulated.md.

Train files are read by :mod:`floorfit.vehicles.train`. Modules: :mod:`.kinematics` (the trailer model in closed form),
:mod:`.sweep` (collisions, jack-knife, swept path), :mod:`.search` (forward motion search),
:mod:`.routes` (forward curves through poses), :mod:`.turnaround` (full forward loops),
:mod:`.sizing` (longest cart for a route), :mod:`.sitecheck` (findings for ``floorfit check``).

Stage 6 of the pipeline: it sits above :mod:`floorfit.analysis` because the train's site check
(:mod:`.sitecheck`) extends the rigid check's result and uses its clearance field and
turnability. May import: :mod:`floorfit.analysis`, :mod:`floorfit.motion`,
:mod:`floorfit.cspace`, :mod:`floorfit.vehicles` (train files), :mod:`floorfit.plan`,
:mod:`floorfit.errors`.
"""

from floorfit.articulated.kinematics import (
    DEFAULT_TOLERANCE_M,
    SteadyTurn,
    TrainMotion,
    follow,
    hitch_relaxation,
    jack_knife_radius,
    steady_trailer_radius,
    steady_turn,
    tractrix_angle,
)
from floorfit.articulated.routes import default_turn_radius, path_through
from floorfit.articulated.search import SearchSettings, TrainPlanResult, cart_pose, plan_forward
from floorfit.articulated.sitecheck import (
    TrainCheck,
    articulated_check,
    articulated_findings,
    explain_blocked,
    merge_into_result,
    train_route_sweep,
)
from floorfit.articulated.sizing import CartLengthResult, largest_cart_length
from floorfit.articulated.sweep import MotionVerdict, TrainChecker, judge_motion, off_tracking_m, swept_geometry
from floorfit.articulated.turnaround import TurnCircle, turn_circle, turnaround_region
from floorfit.vehicles.train import Train, is_train_file, load_train, make_train, train_from_table

__all__ = [
    "DEFAULT_TOLERANCE_M",
    "CartLengthResult",
    "MotionVerdict",
    "SearchSettings",
    "SteadyTurn",
    "Train",
    "TrainCheck",
    "TrainChecker",
    "TrainMotion",
    "TrainPlanResult",
    "TurnCircle",
    "articulated_check",
    "articulated_findings",
    "cart_pose",
    "default_turn_radius",
    "explain_blocked",
    "follow",
    "hitch_relaxation",
    "is_train_file",
    "jack_knife_radius",
    "judge_motion",
    "largest_cart_length",
    "load_train",
    "make_train",
    "merge_into_result",
    "off_tracking_m",
    "path_through",
    "plan_forward",
    "steady_trailer_radius",
    "steady_turn",
    "swept_geometry",
    "tractrix_angle",
    "train_from_table",
    "train_route_sweep",
    "turn_circle",
    "turnaround_region",
]

