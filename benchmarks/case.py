"""In-process measurements for one site and one footprint: ``python -m benchmarks.case ARGS.json OUT.json``.

Run in its own process so that its peak memory is its own. Measures, on the
72-heading grid (5° step, exactly 72 slices):

* obstacle preparation (heading-independent work), seconds;
* all 72 exact slices on one process and on ``workers`` processes; the time per
  heading is the one-process total divided by 72;
* the roadmap build, and the prototype of a roadmap without overlap geometries
  (:mod:`benchmarks.prototypes`);
* a layout comparison: one rack row moved; :func:`floorfit.cspace.incremental.update_slices`
  against a full rebuild of the moved plan (one process each), and the largest
  symmetric difference of their free space over all slices (m²);
* the brute-force baseline's time per pose on a random sample of poses.
"""

from __future__ import annotations

import json
import resource
import sys
import time


def _rss_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def main(argv: list[str]) -> int:
    args = json.loads(open(argv[0], encoding="utf-8").read())
    import numpy as np
    import shapely

    import floorfit
    from floorfit.cspace.headings import make_heading_cells
    from floorfit.cspace.incremental import update_slices
    from floorfit.cspace.roadmap import build_roadmap
    from floorfit.cspace.slices import build_slices, obstacles_for
    from floorfit.plan.site import read_site

    from .baseline import brute_force_seconds_per_pose, grid_pose_count
    from .prototypes import roadmap_edges_fast

    out: dict = {}
    site = read_site(args["site"])
    t = time.perf_counter()
    plan = floorfit.load_plan(args["plan"], roles=site.roles)
    out["import_plan_s"] = time.perf_counter() - t
    moved = floorfit.load_plan(args["moved_plan"], roles=site.roles)
    vehicle = floorfit.load_vehicle(args["vehicle"])
    out["edges"] = _edges(plan)
    out["plan_edge_count"] = plan.edge_count()
    out["area_m2"] = float(np.prod(np.subtract(plan.local_bounds()[2:], plan.local_bounds()[:2])))
    cells = make_heading_cells(5.0)
    assert len(cells) == 72
    workers = int(args.get("workers", 2))

    t = time.perf_counter()
    obstacles = obstacles_for(plan, vehicle)
    out["prepare_s"] = time.perf_counter() - t
    out["pieces"] = obstacles.piece_count

    t = time.perf_counter()
    c0 = time.process_time()
    one = build_slices(plan, vehicle, cells=cells, workers=1, obstacles=obstacles)
    out["slices72_1proc_s"] = time.perf_counter() - t
    out["slices72_1proc_cpu_s"] = time.process_time() - c0
    out["per_heading_s"] = out["slices72_1proc_s"] / 72.0
    out["components"] = int(sum(len(c) for c in one.components))
    out["free_area_m2"] = float(sum(shapely.area(c).sum() for c in one.components))

    t = time.perf_counter()
    c0, k0 = time.process_time(), _children_cpu()
    two = build_slices(plan, vehicle, cells=cells, workers=workers, obstacles=obstacles)
    out["slices72_workers_s"] = time.perf_counter() - t
    out["slices72_workers_cpu_s"] = time.process_time() - c0 + _children_cpu() - k0
    out["workers"] = workers
    out["pool_agrees"] = bool(all(abs(float(shapely.area(a).sum()) - float(shapely.area(b).sum())) < 1e-9
                                  for a, b in zip(one.components, two.components)))
    del two

    t = time.perf_counter()
    c0 = time.process_time()
    G = build_roadmap(one)
    out["roadmap_s"] = time.perf_counter() - t
    out["roadmap_cpu_s"] = time.process_time() - c0
    out["roadmap_nodes"] = G.number_of_nodes()
    out["roadmap_edges"] = G.number_of_edges()
    # prototype for roadmap.py: the same edges without the overlap geometries
    t = time.perf_counter()
    c0 = time.process_time()
    fast = roadmap_edges_fast(one)
    out["roadmap_fast_edges_s"] = time.perf_counter() - t
    out["roadmap_fast_edges_cpu_s"] = time.process_time() - c0
    out["roadmap_fast_edges_agree"] = {tuple(sorted(e)) for e in fast} == {tuple(sorted(e)) for e in G.edges}
    del G

    # layout comparison: one rack row moved
    t = time.perf_counter()
    c0 = time.process_time()
    full = build_slices(moved, vehicle, cells=cells, workers=1)
    out["moved_full_s"] = time.perf_counter() - t
    out["moved_full_cpu_s"] = time.process_time() - c0
    t = time.perf_counter()
    c0 = time.process_time()
    inc = update_slices(one, moved)
    out["moved_incremental_s"] = time.perf_counter() - t
    out["moved_incremental_cpu_s"] = time.process_time() - c0
    out["incremental_speedup"] = out["moved_full_s"] / out["moved_incremental_s"]
    worst = 0.0
    for k in range(len(cells)):
        worst = max(worst, float(shapely.symmetric_difference(full.free(k), inc.free(k)).area))
    out["incremental_max_symdiff_m2"] = worst
    del full, inc, one

    # the brute-force baseline
    geoms = np.concatenate([plan.walls, plan.solids])
    bounds = plan.local_bounds()
    c0 = time.process_time()
    samples = int(args.get("baseline_samples", 200_000))
    per_pose, hit_rate = brute_force_seconds_per_pose(geoms, vehicle.footprint, bounds, samples=samples)
    out["baseline_cpu_s_per_pose"] = (time.process_time() - c0) / samples
    out["baseline_s_per_pose"] = per_pose
    out["baseline_hit_rate"] = hit_rate
    out["baseline_grid_poses"] = grid_pose_count(bounds, 0.05, 72)
    out["baseline_grid_s"] = per_pose * out["baseline_grid_poses"]
    out["baseline_grid_cpu_s"] = out["baseline_cpu_s_per_pose"] * out["baseline_grid_poses"]
    out["peak_rss_mb"] = _rss_mb()
    with open(argv[1], "w", encoding="utf-8") as fh:
        json.dump(out, fh, indent=1)
    return 0


def _children_cpu() -> float:
    r = resource.getrusage(resource.RUSAGE_CHILDREN)
    return r.ru_utime + r.ru_stime


def _edges(plan) -> int:
    """Straight obstacle edges: linework segments plus polygon ring edges (holes included)."""
    import numpy as np
    import shapely
    n = int(np.sum(shapely.get_num_coordinates(plan.walls) - 1)) if len(plan.walls) else 0
    if len(plan.solids):
        rings = shapely.get_rings(plan.solids)
        n += int(np.sum(shapely.get_num_coordinates(rings) - 1))
    return n


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
