"""Articulated vehicles: a tractor (tug, robot) towing one cart through a hitch.

The configuration of a train is (x, y, heading, hitch angle): the plane times the tractor's
heading circle times the hitch-angle circle. Trains drive forward only (reversing with a cart
is not supported). Lengths in metres, angles in degrees at this interface (radians inside the
motion segments, as in :mod:`floorfit.motion`). See docs/articulated.md.

Modules: :mod:`.train` (train files), :mod:`.kinematics` (the trailer model in closed form),
:mod:`.sweep` (collisions, jack-knife, swept path), :mod:`.search` (forward motion search),
:mod:`.routes` (forward curves through poses), :mod:`.turnaround` (full forward loops),
:mod:`.sizing` (longest cart for a route), :mod:`.sitecheck` (findings for ``floorfit check``).
"""

from .kinematics import (
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
from .routes import default_turn_radius, path_through
from .search import SearchSettings, TrainPlanResult, cart_pose, plan_forward
from .sitecheck import (
    TrainCheck,
    articulated_check,
    articulated_findings,
    explain_blocked,
    merge_into_result,
    train_route_sweep,
)
from .sizing import CartLengthResult, largest_cart_length
from .sweep import MotionVerdict, TrainChecker, judge_motion, off_tracking_m, swept_geometry
from .train import Train, is_train_file, load_train, make_train, train_from_table
from .turnaround import TurnCircle, turn_circle, turnaround_region

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
    "split_vehicle_file",
    "steady_trailer_radius",
    "steady_turn",
    "swept_geometry",
    "tractrix_angle",
    "train_from_table",
    "train_route_sweep",
    "turn_circle",
    "turnaround_region",
]


def split_vehicle_file(path):
    """Read a vehicle or train file: ``(vehicle for the rigid check, Train or None)``.

    A file with a ``[cart]`` table is a train: the rigid check runs with its tractor. Anything
    else is read by :func:`floorfit.vehicle.load_vehicle`. Raises VehicleError on bad input.
    """
    from ..errors import VehicleError
    from ..tomlcheck import read_toml
    from ..vehicle import load_vehicle

    data = read_toml(path, VehicleError)
    if is_train_file(data):
        train = train_from_table(data, str(path))
        return train.tractor, train
    return load_vehicle(path), None
