"""floorfit: will this vehicle fit this floor plan?

The library mirrors the command line::

    import floorfit
    plan = floorfit.load_plan("site.dxf")                 # obstacles in metres
    vehicle = floorfit.load_vehicle("robot.toml")         # footprint, margin, motion
    slices = floorfit.build_slices(plan, vehicle)         # C-free per heading slice
    roadmap = floorfit.build_roadmap(slices)              # networkx graph of cells
    result = floorfit.find_route(plan, vehicle, (x, y, h), (x, y, h))

Heavy modules are imported on first use so that ``floorfit --version`` stays instant.
"""

from __future__ import annotations

import importlib

__version__ = "0.1.0"

_LAZY = {
    "Plan": "floorfit.plan.model",
    "load_plan": "floorfit.plan.dxf",
    "Vehicle": "floorfit.vehicles.rigid",
    "load_vehicle": "floorfit.vehicles.rigid",
    "rectangle_vehicle": "floorfit.vehicles.rigid",
    "vehicle_from_outline": "floorfit.vehicles.rigid",
    "SliceSet": "floorfit.cspace.slices",
    "build_slices": "floorfit.cspace.slices",
    "build_roadmap": "floorfit.cspace.roadmap",
    "find_route": "floorfit.motion.route_query",
    "RouteResult": "floorfit.motion.route_query",
    "run_check": "floorfit.analysis.check",
    "FloorfitError": "floorfit.errors",
    "DriveLimits": "floorfit.motion.drivable",
    "size_vehicle": "floorfit.analysis.sizing",
    "compare_layouts": "floorfit.analysis.compare",
}

__all__ = sorted(_LAZY) + ["__version__"]


def __getattr__(name: str):
    if name in _LAZY:
        return getattr(importlib.import_module(_LAZY[name]), name)
    raise AttributeError(f"module 'floorfit' has no attribute {name!r}")
