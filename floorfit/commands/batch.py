"""``floorfit batch``: every vehicle of a fleet against every site of a manifest.

Exit 0 when every cell passes, 1 when any cell fails its site or ends in an error,
2 for a bad manifest.
"""

from __future__ import annotations

import time

NAME = "batch"
HELP = ("check every vehicle against every site of a manifest (in parallel, locally or on a Dask "
        "cluster); writes the matrix as HTML, CSV and JSON with a report per cell")
ORDER = 30

__all__ = ["NAME", "HELP", "ORDER", "add_arguments", "run"]


def add_arguments(p) -> None:
    p.add_argument("manifest", metavar="MANIFEST.toml", help="batch manifest: [[site]] and [[vehicle]] tables")
    p.add_argument("--workers", type=int, default=2, metavar="N",
                   help="local processes running cells at once (default 2; 1: in this process)")
    p.add_argument("--scheduler", metavar="ADDRESS",
                   help="run the cells on this Dask distributed scheduler instead (e.g. tcp://host:8786); "
                        "needs the optional extra floorfit[dask]")
    p.add_argument("--out", default="floorfit-batch", metavar="DIR", help="output folder (default ./floorfit-batch)")
    from floorfit.commands._common import add_budget_argument

    add_budget_argument(p)           # overrides the manifest's [analysis] value and the site files'
    p.add_argument("--quiet", action="store_true", help="no progress output")


def run(args) -> int:
    import sys

    from floorfit.errors import InputError
    from floorfit.fleet.batch import read_manifest, run_batch
    from floorfit.fleet.batch_html import write_batch

    if args.workers < 1:
        raise InputError(f"--workers must be at least 1, got {args.workers}", None, "--workers")
    manifest = read_manifest(args.manifest)
    if getattr(args, "max_direction_changes", None) is not None:
        from dataclasses import replace

        manifest = replace(manifest, max_direction_changes=args.max_direction_changes)

    def progress(msg: str) -> None:
        if not args.quiet:
            print(f"floorfit: {msg}", file=sys.stderr, flush=True)

    started = time.monotonic()
    engine = f"Dask scheduler {args.scheduler}" if args.scheduler else f"{args.workers} local process(es)"
    progress(f"{len(manifest.sites)} sites × {len(manifest.vehicles)} vehicles on {engine}")
    result = run_batch(manifest, args.out, workers=args.workers, scheduler=args.scheduler, progress=progress)
    written = write_batch(result, args.out)
    counts = result.counts()
    print(f"{'FAIL' if result.failed else 'PASS'}: {counts['pass']} pass, {counts['fail']} fail, "
          f"{counts['error']} error of {len(result.cells)} cells ({engine}, {time.monotonic() - started:.1f} s)")
    for c in result.cells:
        f = c["findings"] or {}
        detail = c["error"] or ", ".join(f"{n} {k}" for k, n in f.items() if n) or "no findings"
        s = c["sizing"] or {}
        if s.get("sizing_margin_m") is not None:
            detail += f"; {s['vary']} margin {s['sizing_margin_m']:+.3f} m"
        print(f"  {c['site']} × {c['vehicle']}: {c['status'].upper()} — {detail}")
    print(f"summary: {written['html']}")
    return 1 if result.failed else 0
