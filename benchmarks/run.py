"""Benchmark suite: ``python -m benchmarks.run [--sizes small,medium,large] [--json benchmarks/results/latest.json]``.

For every site size (synthetic warehouses of about 200, 2,000 and 20,000 obstacle edges,
see :mod:`benchmarks.warehouse`) and footprint (``rect``, ``tugcart``, ``round16``) it
runs, each in a fresh process:

``case``   in-process timings on the 72-heading grid (slices on one process and on
           ``--workers`` processes, roadmap, layout comparison with one rack row moved,
           the brute-force baseline's time per pose), see :mod:`benchmarks.case`;
``route``  one route query from scratch (interpreter start, import, reading the DXF,
           72-heading slices, roadmap, path), timed from outside;
``check``  ``python -m floorfit check`` with the report, timed from outside, stage by
           stage from its progress lines.

Peak memory is the largest summed proportional set size (PSS) of the process tree,
sampled every 50 ms, so pool workers count and pages they share with their parent count
once; the summed RSS is kept in the JSON too. Ratios are formed within one run. The table is printed
and everything is written as JSON (``benchmarks/results/`` is not version-controlled).
"""

from __future__ import annotations

import argparse
import json
import math
import os
import platform
import resource
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

import numpy as np

from .warehouse import FOOTPRINTS, SIZES, moved_row, warehouse, write_dxf, write_site, write_vehicle

ROOT = Path(__file__).resolve().parents[1]
RESULTS = ROOT / "benchmarks" / "results"
STEP_DEG = 5.0      # the 72-heading grid

TARGETS = {
    "per_heading_large_s": 0.1,
    "slices72_large_s": 5.0,
    "slices72_large_stretch_s": 3.0,
    "slices72_medium_s": 1.0,
    "route_ratio_large": 300.0,
    "route_large_s": 8.0,
    "route_peak_mb": 500.0,
    "peak_mb": 1024.0,
    "check_large_s": 60.0,
    "check_large_stretch_s": 20.0,
    "incremental_speedup": 10.0,
}


# --- running and watching child processes ---------------------------------------------
def _tree_memory(pid: int) -> tuple[int, int]:
    """Summed RSS and summed PSS (bytes) of a process and its descendants.

    PSS (proportional set size) shares pages that forked pool workers have in common
    with their parent, so its sum is the memory the tree really holds; the RSS sum counts
    shared pages once per process. Without psutil: the process's own RSS for both.
    """
    try:
        import psutil
    except ImportError:
        try:
            with open(f"/proc/{pid}/statm") as fh:
                rss = int(fh.read().split()[1]) * os.sysconf("SC_PAGE_SIZE")
            return rss, rss
        except OSError:
            return 0, 0
    try:
        p = psutil.Process(pid)
        procs = [p] + p.children(recursive=True)
    except psutil.Error:
        return 0, 0
    rss = pss = 0
    for q in procs:
        try:
            info = q.memory_full_info()
            rss += info.rss
            pss += getattr(info, "pss", info.rss)
        except psutil.Error:
            pass
    return rss, pss


#: Seconds between two samples of the process tree's memory. Each sample makes the kernel walk
#: the page tables of every process (PSS): about 15 ms for the warehouse check's tree of about
#: 800 MB, so sampling every 0.05 s took a quarter of a core from the measured run (the
#: default-step check: 20.8 s sampled against 19.2 s unsampled). The peaks last seconds.
SAMPLE_EVERY_S = 0.25


def run_process(cmd: list[str], *, env=None) -> dict:
    """Run ``cmd``; wall time, exit code, stdout, stderr lines with their times, peak tree RSS (MB)."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, cwd=ROOT, env=env)
    peak = [0, 0]
    lines: list[tuple[float, str]] = []
    done = threading.Event()

    def sample():
        while not done.is_set():
            rss, pss = _tree_memory(proc.pid)
            peak[0], peak[1] = max(peak[0], rss), max(peak[1], pss)
            done.wait(SAMPLE_EVERY_S)

    def read_err():
        for line in proc.stderr:
            lines.append((time.perf_counter() - start, line.rstrip("\n")))

    watchers = [threading.Thread(target=sample, daemon=True), threading.Thread(target=read_err, daemon=True)]
    for w in watchers:
        w.start()
    out = proc.stdout.read()
    proc.wait()
    wall = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    done.set()
    for w in watchers:
        w.join(timeout=5)
    return {"wall_s": wall, "cpu_s": cpu, "returncode": proc.returncode, "stdout": out, "stderr": lines,
            "peak_tree_mb": peak[1] / 2 ** 20, "peak_tree_rss_sum_mb": peak[0] / 2 ** 20}


def _python() -> str:
    return sys.executable


# --- the three kinds of measurement ----------------------------------------------------
def prepare_site(size: str, folder: Path) -> dict:
    folder.mkdir(parents=True, exist_ok=True)
    w, h = SIZES[size]
    site = warehouse(w, h)
    moved, window = moved_row(site)
    paths = {"plan": write_dxf(site, folder / "plan.dxf"), "moved_plan": write_dxf(moved, folder / "moved.dxf"),
             "site": write_site(site, folder / "site.toml")}
    for name in FOOTPRINTS:
        paths[f"vehicle_{name}"] = write_vehicle(name, folder / f"{name}.toml")
    return {"paths": {k: str(v) for k, v in paths.items()}, "route": site.route, "moved_window": window,
            "stations": len(site.stations)}


def measure_case(info: dict, fp: str, workers: int, samples: int, tmp: Path) -> dict:
    spec = {"plan": info["paths"]["plan"], "moved_plan": info["paths"]["moved_plan"], "site": info["paths"]["site"],
            "vehicle": info["paths"][f"vehicle_{fp}"], "workers": workers, "baseline_samples": samples}
    spec_path, out_path = tmp / f"case-{fp}.json", tmp / f"case-{fp}.out.json"
    spec_path.write_text(json.dumps(spec))
    r = run_process([_python(), "-m", "benchmarks.case", str(spec_path), str(out_path)])
    if r["returncode"] != 0:
        raise RuntimeError("case failed:\n" + "\n".join(t for _, t in r["stderr"][-30:]))
    res = json.loads(out_path.read_text())
    res["case_peak_tree_mb"] = r["peak_tree_mb"]
    res["case_peak_tree_rss_sum_mb"] = r["peak_tree_rss_sum_mb"]
    return res


def measure_route(info: dict, fp: str, workers: int, tmp: Path, step: float | None = None) -> dict:
    """One route query from scratch in a new process, at the default settings (``step`` None) or a
    uniform heading step (degrees)."""
    start, goal = info["route"]
    spec = {"plan": info["paths"]["plan"], "site": info["paths"]["site"], "vehicle": info["paths"][f"vehicle_{fp}"],
            "start": list(start), "goal": list(goal), "heading_step": step, "workers": workers}
    spec_path = tmp / f"route-{fp}.json"
    spec_path.write_text(json.dumps(spec))
    r = run_process([_python(), "-m", "benchmarks.route_case", str(spec_path)])
    if r["returncode"] != 0:
        raise RuntimeError("route failed:\n" + "\n".join(t for _, t in r["stderr"][-30:]))
    res = json.loads(r["stdout"].strip().splitlines()[-1])
    res.update({"wall_s": r["wall_s"], "cpu_s": r["cpu_s"], "peak_tree_mb": r["peak_tree_mb"],
                "peak_tree_rss_sum_mb": r["peak_tree_rss_sum_mb"]})
    return res


def measure_check(info: dict, fp: str, workers: int, tmp: Path, step: float | None) -> dict:
    out = tmp / f"report-{fp}-{step or 'default'}"
    cmd = [_python(), "-m", "floorfit", "check", info["paths"]["plan"], "--vehicle", info["paths"][f"vehicle_{fp}"],
           "--site", info["paths"]["site"], "--out", str(out), "--force", "--workers", str(workers)]
    if step:
        cmd += ["--heading-step", str(step)]
    r = run_process(cmd)
    if r["returncode"] not in (0, 1):
        raise RuntimeError("check failed:\n" + "\n".join(t for _, t in r["stderr"][-30:]))
    stages = []
    prev_t, prev_name = 0.0, "start (interpreter, import)"
    for t, line in r["stderr"]:
        if line.startswith("floorfit: "):
            stages.append((prev_name, t - prev_t))
            prev_t, prev_name = t, line[len("floorfit: "):]
    stages.append((prev_name, r["wall_s"] - prev_t))
    summary = r["stdout"].strip().splitlines()
    return {"wall_s": r["wall_s"], "cpu_s": r["cpu_s"], "peak_tree_mb": r["peak_tree_mb"],
            "peak_tree_rss_sum_mb": r["peak_tree_rss_sum_mb"], "exit": r["returncode"],
            "stages": [[n, round(s, 3)] for n, s in stages], "summary": summary[0] if summary else "",
            "findings": max(0, len([ln for ln in summary if ln.startswith("  F")]))}


# --- reporting --------------------------------------------------------------------------
def _fit_exponent(xs, ys) -> float | None:
    pts = [(math.log(x), math.log(y)) for x, y in zip(xs, ys) if x and y and x > 0 and y > 0]
    if len(pts) < 2:
        return None
    a = np.asarray(pts)
    return float(np.polyfit(a[:, 0], a[:, 1], 1)[0])


def _fmt(v, spec=".2f") -> str:
    return "-" if v is None else format(v, spec)


def _pair(wall, cpu, spec=".2f") -> str:
    return f"{_fmt(wall, spec)} ({_fmt(cpu, spec)})"


def table(rows: list[dict]) -> str:
    """Markdown table: wall-clock seconds, CPU seconds of the whole process tree in brackets."""
    head = ["size", "edges", "footprint", "s/heading", "72 h, 1 proc", "72 h, 2 proc", "roadmap", "route",
            "baseline grid", "ratio", "check", "check, default step", "peak MB", "moved: full", "update", "speed-up"]
    lines = ["| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
    for r in rows:
        c, q, k = r["case"], r.get("route") or {}, r.get("check") or {}
        kd = r.get("check_default_step") or {}
        peak = max(c.get("case_peak_tree_mb", 0), q.get("peak_tree_mb", 0), k.get("peak_tree_mb", 0))
        ratio = c["baseline_grid_s"] / q["wall_s"] if q.get("wall_s") else None
        ratio_cpu = c["baseline_grid_cpu_s"] / q["cpu_s"] if q.get("cpu_s") else None
        lines.append("| " + " | ".join([
            r["size"], str(c["edges"]), r["footprint"],
            _pair(c["per_heading_s"], c["slices72_1proc_cpu_s"] / 72.0, ".3f"),
            _pair(c["slices72_1proc_s"], c["slices72_1proc_cpu_s"]),
            _pair(c["slices72_workers_s"], c.get("slices72_workers_cpu_s")),
            _pair(c["roadmap_s"], c.get("roadmap_cpu_s")),
            _pair(q.get("wall_s"), q.get("cpu_s"), ".1f"),
            f"{_fmt(c['baseline_grid_s'] / 60.0, '.0f')} ({_fmt(c['baseline_grid_cpu_s'] / 60.0, '.0f')}) min",
            f"{_fmt(ratio, '.0f')}× ({_fmt(ratio_cpu, '.0f')}×)",
            _pair(k.get("wall_s"), k.get("cpu_s"), ".1f"), _pair(kd.get("wall_s"), kd.get("cpu_s"), ".1f"),
            _fmt(peak, ".0f"),
            _pair(c["moved_full_s"], c.get("moved_full_cpu_s")),
            _pair(c["moved_incremental_s"], c.get("moved_incremental_cpu_s")),
            _fmt(c["incremental_speedup"], ".1f") + "×"]) + " |")
    return "\n".join(lines)


def targets(rows: list[dict]) -> list[str]:
    out = []
    by = {(r["size"], r["footprint"]): r for r in rows}
    for fp in FOOTPRINTS:
        big = by.get(("large", fp))
        mid = by.get(("medium", fp))
        if big:
            c, q, k = big["case"], big.get("route") or {}, big.get("check") or {}
            out.append(_target(f"[{fp}] exact slice, 20k-edge site, one process", c["per_heading_s"], "s",
                               TARGETS["per_heading_large_s"]))
            out.append(_target(f"[{fp}] 72 headings, 20k-edge site, {c['workers']} processes", c["slices72_workers_s"],
                               "s", TARGETS["slices72_large_s"], TARGETS["slices72_large_stretch_s"]))
            if q.get("wall_s"):
                ratio = c["baseline_grid_s"] / q["wall_s"]
                out.append(_target(f"[{fp}] route from scratch, default settings, vs brute force (ratio)", ratio, "×",
                                   TARGETS["route_ratio_large"], higher=True))
                out.append(_target(f"[{fp}] route from scratch, default settings", q["wall_s"], "s",
                                   TARGETS["route_large_s"]))
                out.append(_target(f"[{fp}] route peak memory (process tree)", q["peak_tree_mb"], "MB",
                                   TARGETS["route_peak_mb"]))
            kd = big.get("check_default_step") or {}
            if kd.get("wall_s"):
                out.append(_target(f"[{fp}] full check with report, default step, 20k-edge site", kd["wall_s"], "s",
                                   TARGETS["check_large_stretch_s"]))
            peak = max(c.get("case_peak_tree_mb", 0), q.get("peak_tree_mb", 0), k.get("peak_tree_mb", 0))
            out.append(_target(f"[{fp}] peak memory (process tree)", peak, "MB", TARGETS["peak_mb"]))
            if k.get("wall_s"):
                out.append(_target(f"[{fp}] full check with report, 20k-edge site", k["wall_s"], "s",
                                   TARGETS["check_large_s"], TARGETS["check_large_stretch_s"]))
            out.append(_target(f"[{fp}] one rack row moved: speed-up of the update", c["incremental_speedup"], "×",
                               TARGETS["incremental_speedup"], higher=True))
        if mid:
            out.append(_target(f"[{fp}] 72 headings, 2k-edge site, {mid['case']['workers']} processes",
                               mid["case"]["slices72_workers_s"], "s", TARGETS["slices72_medium_s"]))
    return out


def _target(what: str, value: float, unit: str, target: float, stretch: float | None = None, higher=False) -> str:
    ok = value >= target if higher else value <= target
    word = "met" if ok else "MISSED"
    if ok and stretch is not None:
        word += " (stretch met)" if value <= stretch else " (stretch missed)"
    rel = value / target if higher else target / value
    sign = "≥" if higher else "≤"
    return f"{word:22s} {what}: {value:.3g} {unit} (target {sign} {target:g} {unit}; {rel:.2f}× of target)"


# the benchmark script end to end (arguments, measurement loop, scaling fit, report text), read top to bottom
def main(argv: list[str] | None = None) -> int:  # noqa: C901
    ap = argparse.ArgumentParser(prog="python -m benchmarks.run", description=__doc__.split("\n\n")[0])
    ap.add_argument("--sizes", default="small,medium,large", help="comma-separated: small, medium, large")
    ap.add_argument("--footprints", default=",".join(FOOTPRINTS), help="comma-separated: " + ", ".join(FOOTPRINTS))
    ap.add_argument("--json", default=str(RESULTS / "latest.json"), help="where to write the results")
    ap.add_argument("--workers", type=int, default=2, help="processes for the parallel runs (default 2)")
    ap.add_argument("--baseline-samples", type=int, default=200_000, help="poses the brute-force baseline tests")
    ap.add_argument("--skip", default="", help="comma-separated parts to skip: route, check")
    ap.add_argument("--default-step-check", action="store_true",
                    help="also run the check at the default heading step (slow on the large site)")
    args = ap.parse_args(argv)
    sizes = [s for s in args.sizes.split(",") if s]
    fps = [f for f in args.footprints.split(",") if f]
    for s in sizes:
        if s not in SIZES:
            ap.error(f"unknown size {s!r}")
    for f in fps:
        if f not in FOOTPRINTS:
            ap.error(f"unknown footprint {f!r}")
    skip = set(filter(None, args.skip.split(",")))
    RESULTS.mkdir(parents=True, exist_ok=True)
    env = {"python": platform.python_version(), "machine": platform.machine(), "cpus": os.cpu_count(),
           "load_before": os.getloadavg(), "started": time.strftime("%Y-%m-%d %H:%M:%S")}
    try:
        import shapely
        env["shapely"], env["geos"] = shapely.__version__, ".".join(map(str, shapely.geos_version))
    except ImportError:
        pass
    rows = []
    with tempfile.TemporaryDirectory(prefix="floorfit-bench-") as td:
        tmp = Path(td)
        for size in sizes:
            info = prepare_site(size, RESULTS / "sites" / size)
            for fp in fps:
                print(f"-- {size} / {fp}", file=sys.stderr, flush=True)
                row = {"size": size, "footprint": fp, "case": measure_case(info, fp, args.workers,
                                                                            args.baseline_samples, tmp)}
                if "route" not in skip:
                    row["route"] = measure_route(info, fp, args.workers, tmp)
                if "check" not in skip:
                    row["check"] = measure_check(info, fp, args.workers, tmp, STEP_DEG)
                    if args.default_step_check:
                        row["check_default_step"] = measure_check(info, fp, args.workers, tmp, None)
                rows.append(row)
                print(table([row]).splitlines()[-1], file=sys.stderr, flush=True)
    env["load_after"] = os.getloadavg()
    scaling = {}
    for fp in fps:
        rs = [r for r in rows if r["footprint"] == fp]
        if len(rs) >= 2:
            edges = [r["case"]["edges"] for r in rs]
            scaling[fp] = {
                "slices72_1proc": _fit_exponent(edges, [r["case"]["slices72_1proc_s"] for r in rs]),
                "prepare": _fit_exponent(edges, [r["case"]["prepare_s"] for r in rs]),
                "roadmap": _fit_exponent(edges, [r["case"]["roadmap_s"] for r in rs]),
                "route": _fit_exponent(edges, [r["route"]["wall_s"] for r in rs]) if "route" not in skip else None,
                "check": _fit_exponent(edges, [r["check"]["wall_s"] for r in rs]) if "check" not in skip else None,
            }
    text = [table(rows), ""]
    text.append("Seconds of wall-clock time, CPU seconds of the process tree in brackets. s/heading = one exact "
                "slice on one process (72-heading total / 72); 72 h = all 72 slices (5° step) on 1 / "
                f"{args.workers} processes; route = query from scratch in a new process (interpreter, import, DXF, "
                "slices, roadmap, path) at the default settings (coarse first try, then the default heading step); "
                "baseline grid = brute-force STRtree pose tests extrapolated to a 5 cm × "
                "72-heading grid; ratio = baseline / route; check = `floorfit check` with the report at a 5° step "
                "(and at the default step with --default-step-check); "
                "peak = largest summed PSS of a process tree; moved = one rack row moved: full rebuild vs "
                "update_slices (one process each).")
    if scaling:
        text.append("")
        text.append("Scaling exponent (log-log fit of time against edge count over the sizes run):")
        for fp, d in scaling.items():
            text.append(f"  {fp}: " + ", ".join(f"{k} {v:.2f}" for k, v in d.items() if v is not None))
    text.append("")
    text.extend(targets(rows))
    text.append("")
    text.append(f"load average before {tuple(round(x, 2) for x in env['load_before'])}, "
                f"after {tuple(round(x, 2) for x in env['load_after'])} on {env['cpus']} CPUs")
    print("\n".join(text))
    Path(args.json).parent.mkdir(parents=True, exist_ok=True)
    Path(args.json).write_text(json.dumps({"environment": env, "rows": rows, "scaling": scaling,
                                           "targets": targets(rows), "table": table(rows)}, indent=1))
    print(f"\nwritten: {args.json}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
