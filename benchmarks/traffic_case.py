"""Fleet traffic against the slice build it rides on: ``python -m benchmarks.traffic_case [SIZE] [FOOTPRINT]``.

Runs ``run_check`` on the synthetic warehouse (:mod:`benchmarks.warehouse`, default the large one,
the ``rect`` footprint, 5° heading step, one process) with a ``[traffic]`` table, and times in the
same run the check's slice build (its ``build_slices``), its slice stage (slices and roadmap), the
traffic stage (routes between stations, the pair's slices, stretches and passing places) and the
traffic routes alone. Prints one JSON line: the times, traffic against the slice build (the goal
of issue #17: traffic costs no more than one extra slice build), the routes and the stretches
found. Timing is reported, never asserted.
"""

from __future__ import annotations

import json
import sys
import tempfile
import time
from dataclasses import replace
from pathlib import Path

from benchmarks.warehouse import SIZES, warehouse, write_dxf, write_site, write_vehicle


def main(argv: list[str]) -> int:
    size = argv[0] if argv else "large"
    fp = argv[1] if len(argv) > 1 else "rect"
    import floorfit
    from floorfit.analysis import check, traffic
    from floorfit.plan.site import Traffic, read_site

    with tempfile.TemporaryDirectory(prefix="floorfit-traffic-") as td:
        tmp = Path(td)
        site_obj = warehouse(*SIZES[size])
        plan_path = write_dxf(site_obj, tmp / "plan.dxf")
        site = read_site(write_site(site_obj, tmp / "site.toml", heading_step=5.0))
        site = replace(site, traffic=Traffic())
        plan = floorfit.load_plan(plan_path, roles=site.roles)
        vehicle = floorfit.load_vehicle(write_vehicle(fp, tmp / "vehicle.toml"))
    times: dict = {}

    def timed(name, fn):
        def run(*a, **k):
            t = time.perf_counter()
            out = fn(*a, **k)
            times[name] = times.get(name, 0.0) + time.perf_counter() - t
            return out
        return run

    wrapped = [(check, "build_slices", "slice_build_s"), (check, "space_stages", "space_stages_s"),
               (check, "traffic_stage", "traffic_s"), (traffic, "station_routes", "traffic_routes_s")]
    kept = [getattr(mod, name) for mod, name, _ in wrapped]
    for mod, name, key in wrapped:
        setattr(mod, name, timed(key, getattr(mod, name)))
    try:
        t0 = time.perf_counter()
        result = check.run_check(plan, vehicle, list(site.stations), site=site, heading_step_deg=5.0, workers=1)
        times["check_s"] = time.perf_counter() - t0
    finally:
        for (mod, name, _), fn in zip(wrapped, kept):
            setattr(mod, name, fn)
    tr = result.traffic["settings"]
    print(json.dumps({"size": size, "footprint": fp, **{k: round(v, 3) for k, v in times.items()},
                      "traffic_per_slice_build": round(times["traffic_s"] / times["slice_build_s"], 3),
                      "station_pairs_routed": tr["station_pairs_routed"], "route_length_m": tr["route_length_m"],
                      "stretches": len(result.traffic["stretches"]),
                      "passing_places": len(result.traffic["passing_places"])}))
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
