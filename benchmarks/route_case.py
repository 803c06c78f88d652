"""One route query from scratch, run as its own process: ``python -m benchmarks.route_case ARGS.json``.

Import of floorfit, reading the drawing, the heading slices, the roadmap and the path
search all count; the benchmark runner times the whole process from the outside. The
answer (status, path length, slice count) is printed as one JSON line.
"""

from __future__ import annotations

import json
import sys
import time


def main(argv: list[str]) -> int:
    t0 = time.perf_counter()
    args = json.loads(open(argv[0], encoding="utf-8").read())
    import floorfit
    from floorfit.plan.site import read_site
    t_import = time.perf_counter()
    site = read_site(args["site"])
    plan = floorfit.load_plan(args["plan"], roles=site.roles)
    vehicle = floorfit.load_vehicle(args["vehicle"])
    t_read = time.perf_counter()
    result = floorfit.find_route(plan, vehicle, tuple(args["start"]), tuple(args["goal"]),
                                 heading_step_deg=args.get("heading_step"), workers=args.get("workers", 1))
    t_done = time.perf_counter()
    print(json.dumps({"status": result.status, "length_m": result.length_m, "headings": result.settings["headings"],
                      "tolerance_m": result.tolerance_m, "import_s": t_import - t0, "read_s": t_read - t_import,
                      "query_s": t_done - t_read}))
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
