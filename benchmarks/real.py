"""Real drawings at default settings: ``python -m benchmarks.real [--plans 1,5,6,7] [--json OUT.json]``.

The drawings are read in place from ``../shared/plans-real`` (their licences differ from
ours; nothing is copied). For each plan, with the 0.6 × 0.8 m differential robot that
``../shared/tools/real-plans`` uses and floorfit's default settings (default heading step,
all cores, no disk cache unless stated):

``check``        ``floorfit check`` with the report, timed from outside, stage by stage;
``route``        ``floorfit route`` between two poses far apart in one room-sized free
                 region (found from one slice at heading 0), from scratch, no cache;
``route, warm``  the same route right after the check, with the check's slices in a
                 fresh disk cache (what a planner's second command costs);
``baseline``     the brute-force pose test (:mod:`benchmarks.baseline`) timed in this run
                 on this plan and extrapolated to a 5 cm × 72-heading grid; the ratios are
                 baseline / route and baseline / check.

Wall-clock seconds with the CPU seconds of the process tree in brackets; peak memory is
the largest summed PSS of the process tree. The machine is shared: the load average
before and after is printed with the table.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import shapely

from .baseline import brute_force_seconds_per_pose, grid_pose_count
from .run import RESULTS, ROOT, _python, run_process

PLANS_REAL = ROOT.parent / "shared" / "plans-real"
#: The numbering of ../shared/tools/real-plans.
PLANS = {1: "yorikvanhavre__barcelona-pavillion__plan.dxf", 5: "arbaev__dxf-vuer__floorplan.dxf",
         6: "egghunters__dxf-viewer-examples__dxf_4.dxf", 7: "dotoritos-kim__dxf-json__A_000217.dxf",
         9: "PedestrianDynamics__jupedsim__Gallery.dxf", 10: "JuPedSim__jpseditor__mixedusage.dxf"}
ROBOT = 'name = "0.6 x 0.8 differential"\n[footprint]\nwidth = 0.6\nlength = 0.8\n[motion]\nmode = "differential"\n'


def route_poses(plan_path: Path, vehicle_path: Path) -> tuple[tuple, tuple] | None:
    """Two poses (drawing frame, heading 0) far apart in the largest free region at heading 0 within the
    obstacles' extent (a room, a hall or a corridor system, not the space around the building)."""
    from floorfit import load_plan, load_vehicle
    from floorfit.cspace.headings import make_heading_cells
    from floorfit.cspace.slices import build_slices

    plan = load_plan(plan_path)
    veh = load_vehicle(vehicle_path)
    sl = build_slices(plan, veh, cells=make_heading_cells(0.0, only=[0.0]))
    inside = shapely.box(*plan.local_bounds())
    parts = [p for c in sl.components[0] for p in shapely.get_parts(shapely.intersection(c, inside).buffer(-0.2))
             if shapely.get_type_id(p) == 3 and not p.is_empty]
    if not parts:
        return None
    best = max(parts, key=lambda g: g.area)
    pts = shapely.get_coordinates(best.exterior)
    a, b = pts[np.argmin(pts[:, 0] + pts[:, 1])], pts[np.argmax(pts[:, 0] + pts[:, 1])]
    ax, ay = plan.to_drawing(*a)
    bx, by = plan.to_drawing(*b)
    return (round(float(ax), 3), round(float(ay), 3), 0.0), (round(float(bx), 3), round(float(by), 3), 0.0)


def baseline(plan_path: Path, vehicle_path: Path, samples: int) -> dict:
    from floorfit import load_plan, load_vehicle

    plan = load_plan(plan_path)
    veh = load_vehicle(vehicle_path)
    obstacles = np.concatenate([plan.walls, plan.solids]) if len(plan.solids) else plan.walls
    bounds = plan.local_bounds()
    per_pose, hit = brute_force_seconds_per_pose(obstacles, veh.footprint, bounds, samples=samples)
    poses = grid_pose_count(bounds)
    return {"per_pose_s": per_pose, "grid_poses": poses, "grid_s": per_pose * poses, "hit_fraction": hit,
            "edges": plan.edge_count()}


def _stages(r: dict) -> list:
    out, prev_t, prev = [], 0.0, "start (interpreter, import)"
    for t, line in r["stderr"]:
        if line.startswith("floorfit: "):
            out.append([prev, round(t - prev_t, 2)])
            prev_t, prev = t, line[len("floorfit: "):]
    out.append([prev, round(r["wall_s"] - prev_t, 2)])
    return out


def _ff(*args) -> list[str]:
    return [_python(), "-m", "floorfit", *map(str, args)]


def measure(n: int, tmp: Path, samples: int, env_off: dict, env_cache: dict) -> dict:
    plan = PLANS_REAL / PLANS[n]
    veh = tmp / "robot.toml"
    row: dict = {"plan": n, "file": PLANS[n]}
    poses = route_poses(plan, veh)
    row["baseline"] = baseline(plan, veh, samples)
    check = run_process(_ff("check", plan, "--vehicle", veh, "--out", tmp / f"p{n}", "--force"), env=env_off)
    row["check"] = {k: check[k] for k in ("wall_s", "cpu_s", "peak_tree_mb", "returncode")}
    row["check"]["stages"] = _stages(check)
    row["check"]["summary"] = check["stdout"].splitlines()[0] if check["stdout"] else ""
    if poses:
        start, goal = (",".join(f"{v:g}" for v in p) for p in poses)
        row["route_poses"] = [start, goal]
        # "--start=…": a pose with a negative x is not taken for an option
        r = run_process(_ff("route", plan, "--vehicle", veh, f"--start={start}", f"--goal={goal}"), env=env_off)
        row["route"] = {k: r[k] for k in ("wall_s", "cpu_s", "peak_tree_mb", "returncode")}
        row["route"]["answer"] = r["stdout"].splitlines()[0] if r["stdout"] else ""
        # warm: the check fills a fresh cache, then the route reuses what it can
        run_process(_ff("check", plan, "--vehicle", veh, "--out", tmp / f"p{n}w", "--force", "--quiet"),
                    env=env_cache)
        w = run_process(_ff("route", plan, "--vehicle", veh, f"--start={start}", f"--goal={goal}"), env=env_cache)
        row["route_warm"] = {k: w[k] for k in ("wall_s", "cpu_s", "returncode")}
        row["route_warm"]["slices"] = next((ln.strip() for ln in w["stdout"].splitlines()
                                            if ln.strip().startswith("slices:")), "")
    return row


def table(rows: list[dict]) -> str:
    head = ["plan", "edges", "check", "route", "route, warm cache", "baseline grid", "baseline / route",
            "baseline / check", "peak MB"]
    lines = ["| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
    for r in rows:
        b, c, q, w = r["baseline"], r["check"], r.get("route") or {}, r.get("route_warm") or {}

        def pair(d):
            return f"{d['wall_s']:.1f} ({d['cpu_s']:.1f})" if d else "-"

        lines.append("| " + " | ".join([
            f"#{r['plan']}", str(b["edges"]), pair(c), pair(q), pair(w), f"{b['grid_s'] / 60:.0f} min",
            f"{b['grid_s'] / q['wall_s']:.0f}×" if q else "-", f"{b['grid_s'] / c['wall_s']:.0f}×",
            f"{max(c['peak_tree_mb'], q.get('peak_tree_mb', 0)):.0f}"]) + " |")
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m benchmarks.real", description=__doc__.split("\n\n")[0])
    ap.add_argument("--plans", default="1,5,6,7", help="comma-separated plan numbers (" +
                    ", ".join(str(k) for k in PLANS) + ")")
    ap.add_argument("--baseline-samples", type=int, default=50_000, help="poses the brute-force baseline tests")
    ap.add_argument("--json", default=str(RESULTS / "real.json"), help="where to write the results")
    args = ap.parse_args(argv)
    if not PLANS_REAL.is_dir():
        print(f"real drawings not found at {PLANS_REAL}", file=sys.stderr)
        return 2
    load_before = os.getloadavg()
    rows = []
    with tempfile.TemporaryDirectory(prefix="floorfit-real-") as td:
        tmp = Path(td)
        (tmp / "robot.toml").write_text(ROBOT)
        env_off = dict(os.environ, FLOORFIT_CACHE="off")
        for n in (int(x) for x in args.plans.split(",") if x):
            env_cache = dict(os.environ, FLOORFIT_CACHE=str(tmp / f"cache{n}"))
            print(f"-- plan #{n}", file=sys.stderr, flush=True)
            rows.append(measure(n, tmp, args.baseline_samples, env_off, env_cache))
            print(table(rows[-1:]).splitlines()[-1], file=sys.stderr, flush=True)
    text = [table(rows), "",
            "Seconds of wall-clock time, CPU seconds of the process tree in brackets; default settings, all cores, "
            "no disk cache (warm: after a check filled one). Baseline: brute-force pose tests on the same plan in "
            "this run, extrapolated to a 5 cm × 72-heading grid.",
            f"load average before {tuple(round(x, 2) for x in load_before)}, after "
            f"{tuple(round(x, 2) for x in os.getloadavg())} on {os.cpu_count()} CPUs, "
            f"{time.strftime('%Y-%m-%d %H:%M')}"]
    print("\n".join(text))
    Path(args.json).parent.mkdir(parents=True, exist_ok=True)
    Path(args.json).write_text(json.dumps({"rows": rows, "table": table(rows)}, indent=1))
    print(f"\nwritten: {args.json}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
