"""Do the fast and the plain paths give the same answers on the benchmark sites?

``python -m benchmarks.agreement [--sizes small,medium] [--footprints rect,tugcart,round16] [--check-sizes medium]``

For every site and footprint, on the 72-heading grid (5° step):

* free space of the integer-clipping path (``freespace.UNION_BACKEND = "clipper"``, the default
  when pyclipper is installed) against the GEOS path (shapely unions by cluster), and
  against the reference construction of ``tests/test_perf_agreement.py`` (convex hulls
  of pairwise vertex sums, obstacle by obstacle, one ``union_all``) on a subset of
  headings: largest symmetric difference per slice (m²), component counts;
* reachability between the site's stations in the roadmap (same pairs connected);
* for ``--check-sizes``: the whole site check with either path: the same station pairs
  connected and findings of the same kind at the same places (within the location
  tolerance the check states).

Prints a summary and writes ``benchmarks/results/agreement.json``.
"""

from __future__ import annotations

import argparse
import json
import sys
import time
from pathlib import Path

import networkx as nx
import numpy as np
import shapely

ROOT = Path(__file__).resolve().parents[1]
RESULTS = ROOT / "benchmarks" / "results"


def _reach(slices, stations_local: dict) -> dict:
    from floorfit.cspace.roadmap import build_roadmap
    G = build_roadmap(slices)
    comp = {n: i for i, c in enumerate(nx.connected_components(G)) for n in c}
    where = {}
    for name, (x, y) in stations_local.items():
        where[name] = {comp[(k, int(i))] for k in range(len(slices))
                       for i in slices.tree(k).query(shapely.Point(x, y), predicate="intersects")}
    names = sorted(stations_local)
    return {f"{a}|{b}": bool(where[a] & where[b]) for i, a in enumerate(names) for b in names[i + 1:]}


def _compare_slices(a, b) -> dict:
    worst = 0.0
    counts_equal = True
    for k in range(len(a)):
        worst = max(worst, float(shapely.symmetric_difference(a.free(k), b.free(k)).area))
        counts_equal &= len(a.components[k]) == len(b.components[k])
    return {"max_symdiff_m2": worst, "component_counts_equal": bool(counts_equal)}


def _match_findings(fa, fb, tol: float) -> dict:
    unmatched_a = []
    left = list(fb)
    for f in fa:
        hit = next((g for g in left if g.kind == f.kind and np.hypot(g.x - f.x, g.y - f.y) <= tol), None)
        if hit is None:
            unmatched_a.append((f.kind, round(f.x, 2), round(f.y, 2)))
        else:
            left.remove(hit)
    return {"findings": [len(fa), len(fb)], "unmatched_fast": unmatched_a,
            "unmatched_plain": [(g.kind, round(g.x, 2), round(g.y, 2)) for g in left]}


def run_case(size: str, fp: str, check: bool) -> dict:
    import floorfit
    from floorfit.analysis.check import run_check
    from floorfit.cspace import freespace
    from floorfit.cspace import slices as cspace
    from floorfit.cspace.headings import HeadingCells, make_heading_cells
    from floorfit.plan.site import read_site

    sys.path.insert(0, str(ROOT / "tests"))
    from test_perf_agreement import reference_slices  # the plain construction kept in the tests

    folder = RESULTS / "sites" / size
    site = read_site(folder / "site.toml")
    plan = floorfit.load_plan(folder / "plan.dxf", roles=site.roles)
    vehicle = floorfit.load_vehicle(folder / f"{fp}.toml")
    stations = {s.name: plan.to_local(s.x, s.y) for s in site.stations}
    cells = make_heading_cells(5.0)
    out: dict = {"size": size, "footprint": fp}
    backend = freespace.UNION_BACKEND
    try:
        t = time.perf_counter()
        freespace.UNION_BACKEND = "clipper"
        fast = cspace.build_slices(plan, vehicle, cells=cells, workers=2)
        out["fast_s"] = time.perf_counter() - t
        t = time.perf_counter()
        freespace.UNION_BACKEND = "geos"
        plain = cspace.build_slices(plan, vehicle, cells=cells, workers=2)
        out["geos_s"] = time.perf_counter() - t
        out["fast_vs_geos"] = _compare_slices(fast, plain)
        rf, rp = _reach(fast, stations), _reach(plain, stations)
        out["reachability_equal"] = rf == rp
        out["reachable_pairs"] = sum(rf.values())
        # the reference construction on every 9th heading (it is slow)
        sub = np.arange(0, len(cells), 9)
        sub_cells = HeadingCells(cells.headings[sub], cells.below[sub], cells.above[sub], cells.step_deg)
        t = time.perf_counter()
        ref = reference_slices(plan, vehicle, sub_cells, "sound")
        out["reference_s"] = time.perf_counter() - t
        fast_sub = type(fast)(plan=plan, vehicle=vehicle, cells=sub_cells,
                              components=[fast.components[k] for k in sub], grow_m=fast.grow_m[sub],
                              bound="sound", tolerance_m=fast.tolerance_m, domain=fast.domain)
        out["fast_vs_reference"] = _compare_slices(fast_sub, ref)
        if check:
            results = {}
            for name in ("clipper", "geos"):
                freespace.UNION_BACKEND = name
                t = time.perf_counter()
                results[name] = run_check(plan, vehicle, list(site.stations), site=site, heading_step_deg=5.0,
                                          workers=2)
                out[f"check_{name}_s"] = time.perf_counter() - t
            a, b = results["clipper"], results["geos"]
            out["check_reachability_equal"] = a.reachable == b.reachable
            tol = float(a.settings.get("location_tolerance_m", 0.3))
            out["check_findings"] = _match_findings(a.findings, b.findings, tol)
            out["location_tolerance_m"] = tol
    finally:
        freespace.UNION_BACKEND = backend
    return out


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m benchmarks.agreement", description=__doc__.split("\n\n")[0])
    ap.add_argument("--sizes", default="small,medium")
    ap.add_argument("--footprints", default="rect,tugcart,round16")
    ap.add_argument("--check-sizes", default="small,medium", help="sizes on which the whole check is compared")
    ap.add_argument("--json", default=str(RESULTS / "agreement.json"))
    args = ap.parse_args(argv)
    from floorfit.cspace import freespace
    if freespace.pyclipper is None:
        print("pyclipper is not installed: there is only one path to compare")
        return 0
    check_sizes = set(filter(None, args.check_sizes.split(",")))
    rows = []
    for size in filter(None, args.sizes.split(",")):
        if not (RESULTS / "sites" / size / "plan.dxf").exists():
            from .run import prepare_site
            prepare_site(size, RESULTS / "sites" / size)
        for fp in filter(None, args.footprints.split(",")):
            r = run_case(size, fp, size in check_sizes)
            rows.append(r)
            line = (f"{size:6s} {fp:8s} fast vs GEOS: max Δ {r['fast_vs_geos']['max_symdiff_m2']:.1e} m², "
                    f"components equal {r['fast_vs_geos']['component_counts_equal']}, reachability equal "
                    f"{r['reachability_equal']} ({r['reachable_pairs']} pairs connected); vs reference: max Δ "
                    f"{r['fast_vs_reference']['max_symdiff_m2']:.1e} m², components equal "
                    f"{r['fast_vs_reference']['component_counts_equal']}")
            if "check_findings" in r:
                cf = r["check_findings"]
                line += (f"; check: reachability equal {r['check_reachability_equal']}, findings "
                         f"{cf['findings'][0]} / {cf['findings'][1]}, unmatched {len(cf['unmatched_fast'])} / "
                         f"{len(cf['unmatched_plain'])}")
            print(line, flush=True)
    Path(args.json).parent.mkdir(parents=True, exist_ok=True)
    Path(args.json).write_text(json.dumps(rows, indent=1))
    print(f"written: {args.json}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
