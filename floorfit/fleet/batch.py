"""Checking a fleet against many sites: the (site × vehicle) matrix.

``read_manifest(path)`` reads a batch manifest (TOML, see docs/sizing-compare-batch.md);
``run_batch(manifest, out_dir)`` runs one *cell* per (site, vehicle): the site check with
its report in ``OUT/<site>__<vehicle>/`` and, if the manifest asks, the sizing margin
(largest value of the varied dimension minus the vehicle's own). Cells are independent:
they run in parallel in local processes (``concurrent.futures.ProcessPoolExecutor``) or,
with a scheduler address or a client, on a Dask distributed cluster. A failure in one
cell (a drawing that cannot be read, a malformed vehicle file, even an unexpected error)
is recorded in that cell as ``status: "error"`` with a one-line message; the other cells
go on. Both engines run the same function on the same inputs, so their results are
identical (the cell records hold no timings).

Manifest (TOML, paths relative to the manifest's folder)::

    [analysis]                 # optional, for every cell
    heading_step = 5.0         # degrees (default: each site file's, else the check's default)
    max_direction_changes = 2  # manoeuvre budget of differential and car-like vehicles (default:
                               # each site file's [motion] value, else 2)

    [size]                     # optional: the sizing margin of each cell
    vary = "width"             # "width", "length" or "scale"
    precision = 0.01           # metres (default 0.01)

    [report]                   # optional: which files each cell's report folder gets
    formats = ["html", "json", "csv", "dxf"]   # the default; findings.json is always written

    [[site]]
    name = "north-dc"          # letters, digits, '.', '_', '-' (used in folder names)
    plan = "plans/north.dxf"
    site = "plans/north.site.toml"   # optional: stations, layer roles, clearance
    units = "mm"               # optional: overrides the drawing's unit
    storey = "Level 1"         # optional, building models (.ifc): storey name or elevation in metres

    [[vehicle]]
    name = "tote"
    file = "vehicles/tote.toml"
"""

from __future__ import annotations

import csv
import io
import multiprocessing
import re
from collections.abc import Callable
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from floorfit.analysis.findings import FINDING_KINDS
from floorfit.errors import FloorfitError, InputError
from floorfit.tomlcheck import check_keys, get_number, get_string, read_toml

__all__ = ["Manifest", "SiteEntry", "VehicleEntry", "CellSpec", "BatchResult", "read_manifest", "run_cell",
           "run_batch", "batch_csv", "BATCH_FORMAT", "CSV_COLUMNS", "DEFAULT_WORKERS"]

#: ``format`` value of batch.json.
BATCH_FORMAT = "floorfit-batch"
#: Local processes by default.
DEFAULT_WORKERS = 2
#: Column order of batch.csv.
CSV_COLUMNS = ("site", "vehicle", "status", "stations", "unreachable_pairs", "blocked", "no_turn", "tight",
               "maneuver", "vary", "current_m", "largest_m", "sizing_margin_m", "binding", "report", "error")

_NAME_RE = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._-]{0,63}$")
_TOP = ("analysis", "size", "report", "site", "vehicle")
_SITE = ("name", "plan", "site", "units", "storey")
_VEHICLE = ("name", "file")
_ANALYSIS = ("heading_step", "max_direction_changes")
_SIZE = ("vary", "precision")
_REPORT = ("formats",)
_FORMATS = ("html", "json", "csv", "dxf")


@dataclass(frozen=True)
class SiteEntry:
    """One site of a manifest: its name, drawing and optional site file (absolute paths)."""

    name: str
    plan: str
    site: str | None = None
    units: str | None = None
    storey: str | None = None       # building models: storey name or elevation (m); None = the default


@dataclass(frozen=True)
class VehicleEntry:
    """One vehicle of a manifest: its name and vehicle file (absolute path)."""

    name: str
    file: str


@dataclass(frozen=True)
class CellSpec:
    """Everything one cell needs (plain data, so it travels to another process or machine).

    ``out_dir``: the cell's report folder, or None for no report files.
    """

    site: SiteEntry
    vehicle: VehicleEntry
    out_dir: str | None = None
    heading_step_deg: float | None = None
    size_vary: str | None = None
    size_precision_m: float = 0.01
    formats: tuple[str, ...] = _FORMATS
    #: manoeuvre budget for every cell (None: each site file's [motion] max_direction_changes)
    max_direction_changes: int | None = None

    @property
    def key(self) -> str:
        return f"{self.site.name}__{self.vehicle.name}"


@dataclass(frozen=True)
class Manifest:
    """A batch: sites, vehicles and the settings shared by every cell."""

    path: str
    sites: tuple[SiteEntry, ...]
    vehicles: tuple[VehicleEntry, ...]
    heading_step_deg: float | None = None
    size_vary: str | None = None
    size_precision_m: float = 0.01
    formats: tuple[str, ...] = _FORMATS
    #: manoeuvre budget for every cell (None: each site file's [motion] max_direction_changes)
    max_direction_changes: int | None = None

    def cells(self, out_dir: str | Path | None = None) -> list[CellSpec]:
        """One spec per (site, vehicle), sites in manifest order, then vehicles."""
        out = None if out_dir is None else Path(out_dir).resolve()
        return [CellSpec(s, v, None if out is None else str(out / f"{s.name}__{v.name}"),
                         self.heading_step_deg, self.size_vary, self.size_precision_m, self.formats,
                         self.max_direction_changes)
                for s in self.sites for v in self.vehicles]


# -- the manifest -------------------------------------------------------------------------------
def _file(table: dict, key: str, base: Path, src: str, where: str, required: bool = True) -> str | None:
    value = get_string(table, key, src, where, InputError)
    if value is None:
        if required:
            raise InputError("missing required key", src, f"{where}{key}")
        return None
    p = (base / value).resolve()
    if not p.is_file():
        raise InputError(f"file not found: {p}", src, f"{where}{key}")
    return str(p)


def _entries(data: dict, key: str, src: str) -> list[dict]:
    items = data.get(key, [])
    if not isinstance(items, list) or not all(isinstance(t, dict) for t in items):
        raise InputError(f"[[{key}]] must be an array of tables", src, key)
    if not items:
        raise InputError(f"the manifest needs at least one [[{key}]] table", src, key)
    return items


def _name(table: dict, src: str, where: str, seen: set) -> str:
    name = get_string(table, "name", src, where, InputError)
    if name is None:
        raise InputError("missing required key", src, f"{where}name")
    if not _NAME_RE.match(name):
        raise InputError(f"name '{name}' must start with a letter or digit and use only letters, digits, "
                         f"'.', '_' and '-' (at most 64 characters)", src, f"{where}name")
    if name in seen:
        raise InputError(f"name '{name}' is used twice", src, f"{where}name")
    seen.add(name)
    return name


def _units(table: dict, src: str, where: str) -> str | None:
    from floorfit.plan.dxf.units import parse_units

    units = get_string(table, "units", src, where, InputError)
    if units is None:
        return None
    try:
        return parse_units(units)[0]
    except InputError as exc:
        raise InputError(exc.message, src, f"{where}units") from None


def read_manifest(path: str | Path) -> Manifest:
    """Read and validate a batch manifest. Raises :class:`InputError` naming the file and key.

    Every file it names must exist (a missing file is a manifest error); whether each
    drawing, site and vehicle file can be *read* is found out in the cells.
    """
    src = str(path)
    data = read_toml(path, InputError)
    base = Path(path).resolve().parent
    check_keys(data, _TOP, src, "", InputError)
    analysis = data.get("analysis", {})
    if not isinstance(analysis, dict):
        raise InputError("[analysis] must be a table", src, "analysis")
    check_keys(analysis, _ANALYSIS, src, "analysis.", InputError)
    step = get_number(analysis, "heading_step", src, "analysis.", InputError, minimum=0.1, maximum=90.0)
    budget = None
    if "max_direction_changes" in analysis:
        from floorfit.plan.site import check_direction_changes

        budget = check_direction_changes(analysis["max_direction_changes"], src, "analysis.max_direction_changes")
    size = data.get("size", {})
    if not isinstance(size, dict):
        raise InputError("[size] must be a table", src, "size")
    check_keys(size, _SIZE, src, "size.", InputError)
    vary = get_string(size, "vary", src, "size.", InputError, choices=("width", "length", "scale"))
    if size and vary is None:
        raise InputError("missing required key (width, length or scale)", src, "size.vary")
    precision = get_number(size, "precision", src, "size.", InputError, default=0.01, minimum=1e-4, maximum=1.0)
    report = data.get("report", {})
    if not isinstance(report, dict):
        raise InputError("[report] must be a table", src, "report")
    check_keys(report, _REPORT, src, "report.", InputError)
    formats = report.get("formats", list(_FORMATS))
    if not isinstance(formats, list) or not formats or not all(f in _FORMATS for f in formats):
        raise InputError(f"expected a list of formats from {', '.join(_FORMATS)}, got {formats!r}", src,
                         "report.formats")
    sites, seen = [], set()
    for i, t in enumerate(_entries(data, "site", src)):
        where = f"site[{i + 1}]."
        check_keys(t, _SITE, src, where, InputError)
        name = _name(t, src, where, seen)
        units = _units(t, src, where)
        storey = t.get("storey")
        if storey is not None and (isinstance(storey, bool) or not isinstance(storey, (str, int, float))):
            raise InputError(f"expected a storey name or elevation in metres, got {storey!r}", src, f"{where}storey")
        sites.append(SiteEntry(name, _file(t, "plan", base, src, where), _file(t, "site", base, src, where, False),
                               units, None if storey is None else str(storey)))
    vehicles, seen = [], set()
    for i, t in enumerate(_entries(data, "vehicle", src)):
        where = f"vehicle[{i + 1}]."
        check_keys(t, _VEHICLE, src, where, InputError)
        name = _name(t, src, where, seen)
        vehicles.append(VehicleEntry(name, _file(t, "file", base, src, where)))
    return Manifest(path=str(Path(path).resolve()), sites=tuple(sites), vehicles=tuple(vehicles),
                    heading_step_deg=step, size_vary=vary, size_precision_m=float(precision),
                    formats=tuple(f for f in _FORMATS if f in formats or f == "json"), max_direction_changes=budget)


# -- one cell ------------------------------------------------------------------------------------
def _blank(spec: CellSpec) -> dict[str, Any]:
    return {"site": spec.site.name, "vehicle": spec.vehicle.name, "status": "error", "passed": None,
            "stations": None, "unreachable_pairs": None, "findings": None, "sizing": None,
            "report": None, "error": None, "tolerance_m": None, "heading_step_deg": None,
            "max_direction_changes": None}


def _one_line(exc: BaseException) -> str:
    if isinstance(exc, FloorfitError):
        return str(exc)
    text = " ".join(str(exc).split())
    return f"unexpected {type(exc).__name__}: {text}" if text else f"unexpected {type(exc).__name__}"


def run_cell(spec: CellSpec) -> dict[str, Any]:
    """Run one (site, vehicle) cell and return its record (plain data). Never raises:
    any failure becomes ``status: "error"`` with a one-line ``error``."""
    record = _blank(spec)
    try:
        _fill_cell(spec, record)
    except Exception as exc:           # one cell must never stop the others
        record["status"] = "error"
        record["error"] = _one_line(exc)
    return record


def _fill_cell(spec: CellSpec, record: dict[str, Any]) -> None:
    from floorfit.analysis.check import run_check
    from floorfit.plan.dxf import load_plan
    from floorfit.plan.ifc import band_for_height
    from floorfit.plan.site import Site, read_site, stations_from_drawing
    from floorfit.vehicles.rigid import load_vehicle

    site = read_site(spec.site.site) if spec.site.site else Site()
    if spec.max_direction_changes is not None:
        from dataclasses import replace

        site = replace(site, max_direction_changes=spec.max_direction_changes)
    vehicle = load_vehicle(spec.vehicle.file)
    plan = load_plan(spec.site.plan, units=spec.site.units, roles=site.roles, storey=spec.site.storey,
                     band_top_m=band_for_height(vehicle.height_m))
    stations = list(site.stations)
    if site.station_layer:
        stations += stations_from_drawing(spec.site.plan, site.station_layer, plan.metres_per_unit)
    result = run_check(plan, vehicle, stations, site=site, heading_step_deg=spec.heading_step_deg, workers=1)
    record.update({
        "status": "pass" if result.passed else "fail", "passed": bool(result.passed),
        "stations": len(stations),
        "unreachable_pairs": len(result.station_pairs()[0]),      # station pairs not connected
        "findings": {k: sum(1 for f in result.findings if f.kind == k) for k in FINDING_KINDS},
        "tolerance_m": round(float(result.settings.get("tolerance_m", 0.0)), 6),
        "heading_step_deg": result.settings.get("heading_step_deg"),
        "max_direction_changes": result.settings.get("max_direction_changes"),
    })
    if spec.out_dir is not None:
        from floorfit.report import write_report

        written = write_report(result, spec.out_dir, formats=spec.formats, quiet=True)
        main = written.get("html", written["json"])
        record["report"] = f"{Path(spec.out_dir).name}/{Path(main).name}"
    if spec.size_vary:
        record["sizing"] = _cell_sizing(spec, plan, vehicle, stations, site)


def _cell_sizing(spec, plan, vehicle, stations, site) -> dict[str, Any]:
    from floorfit.analysis.sizing import size_vehicle

    if not stations:
        return {"vary": spec.size_vary, "status": "no-stations", "current_m": None, "largest_m": None,
                "sizing_margin_m": None, "precision_m": spec.size_precision_m, "binding": None}
    s = size_vehicle(plan, vehicle, stations, vary=spec.size_vary, site=site, heading_step_deg=spec.heading_step_deg,
                     precision_m=spec.size_precision_m, upper_bound=False, workers=1).to_dict()
    b = s["binding"]
    binding = None if b is None else {"x": b["x"], "y": b["y"], "label": b["label"],
                                      "clear_width_m": b["clear_width_m"], "cause": b["cause"]}
    return {"vary": s["vary"], "status": s["status"], "current_m": s["current_m"], "largest_m": s["largest_m"],
            "sizing_margin_m": s["sizing_margin_m"], "precision_m": s["precision_m"],
            "binding": binding}


# -- the batch -----------------------------------------------------------------------------------
@dataclass
class BatchResult:
    """All cell records, in manifest order (sites, then vehicles within a site)."""

    manifest: Manifest
    cells: list[dict[str, Any]] = field(default_factory=list)

    @property
    def failed(self) -> bool:
        """True when any cell fails its site or ended in an error."""
        return any(c["status"] != "pass" for c in self.cells)

    def counts(self) -> dict[str, int]:
        return {k: sum(1 for c in self.cells if c["status"] == k) for k in ("pass", "fail", "error")}

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready and stable (no timings, no engine, no absolute output paths)."""
        size = None if not self.manifest.size_vary else {"vary": self.manifest.size_vary,
                                                         "precision_m": self.manifest.size_precision_m}
        return {"format": BATCH_FORMAT, "version": 1, "manifest": Path(self.manifest.path).name,
                "sites": [s.name for s in self.manifest.sites],
                "vehicles": [v.name for v in self.manifest.vehicles],
                "heading_step_deg": self.manifest.heading_step_deg, "size": size,
                "counts": self.counts(), "cells": self.cells}

    def cell(self, site: str, vehicle: str) -> dict[str, Any]:
        return next(c for c in self.cells if c["site"] == site and c["vehicle"] == vehicle)


def batch_csv(result: BatchResult) -> bytes:
    """batch.csv: UTF-8 with a byte-order mark, CRLF line ends, one row per cell."""
    from floorfit.report.tables import escape_csv_cell

    buf = io.StringIO(newline="")
    writer = csv.writer(buf, lineterminator="\r\n")
    writer.writerow(CSV_COLUMNS)
    for c in result.cells:
        f = c["findings"] or {}
        s = c["sizing"] or {}
        b = s.get("binding") or {}
        row = {"site": c["site"], "vehicle": c["vehicle"], "status": c["status"],
               "stations": c["stations"], "unreachable_pairs": c["unreachable_pairs"],
               "blocked": f.get("blocked"), "no_turn": f.get("no-turn"), "tight": f.get("tight"),
               "maneuver": f.get("maneuver"), "vary": s.get("vary"), "current_m": s.get("current_m"),
               "largest_m": s.get("largest_m"), "sizing_margin_m": s.get("sizing_margin_m"),
               "binding": b.get("label") or (f"({b['x']:.2f}, {b['y']:.2f})" if b else None),
               "report": c["report"], "error": c["error"]}
        cells = []
        for col in CSV_COLUMNS:
            v = row[col]
            if v is None:
                cells.append("")
            elif isinstance(v, (int, float)) and not isinstance(v, bool):
                cells.append(repr(v))            # made from a number: never a formula
            else:
                cells.append(escape_csv_cell(str(v)))
        writer.writerow(cells)
    return buf.getvalue().encode("utf-8-sig")


def _error_record(spec: CellSpec, exc: BaseException) -> dict[str, Any]:
    record = _blank(spec)
    record["error"] = _one_line(exc)
    return record


def _run_local(specs: list[CellSpec], workers: int, report: Callable[[int, dict], None]) -> list[dict]:
    results: list[dict | None] = [None] * len(specs)
    if workers <= 1:
        for i, spec in enumerate(specs):
            results[i] = run_cell(spec)
            report(i, results[i])
        return results
    # "spawn": fresh interpreters, safe even when the caller runs threads (a Dask client, a GUI)
    context = multiprocessing.get_context("spawn")
    with ProcessPoolExecutor(max_workers=workers, mp_context=context) as pool:
        futures = {pool.submit(run_cell, spec): i for i, spec in enumerate(specs)}
        for fut, i in futures.items():
            try:
                results[i] = fut.result()
            except Exception as exc:          # a worker that died takes only its cell
                results[i] = _error_record(specs[i], exc)
            report(i, results[i])
    return results


def _run_dask(specs: list[CellSpec], scheduler: str | None, client: Any,
              report: Callable[[int, dict], None]) -> list[dict]:
    own = client is None
    if own:
        try:
            from dask.distributed import Client
        except ImportError:
            raise InputError("running on a Dask cluster needs the optional dependency: "
                             "pip install 'floorfit[dask]'", None, "--scheduler") from None
        try:
            client = Client(scheduler, timeout="20s")
        except (OSError, TimeoutError, ValueError) as exc:
            raise InputError(f"cannot reach the Dask scheduler at {scheduler}: {_one_line(exc)}",
                             None, "--scheduler") from None
    results: list[dict | None] = [None] * len(specs)
    try:
        futures = [client.submit(run_cell, spec, pure=False) for spec in specs]
        for i, fut in enumerate(futures):
            try:
                results[i] = fut.result()
            except Exception as exc:          # a lost worker takes only its cell
                results[i] = _error_record(specs[i], exc)
            report(i, results[i])
    finally:
        if own:
            client.close()
    return results


def run_batch(manifest: Manifest, out_dir: str | Path | None, *, workers: int = DEFAULT_WORKERS,
              scheduler: str | None = None, client: Any = None,
              progress: Callable[[str], None] | None = None) -> BatchResult:
    """Run every cell of ``manifest``; reports go to ``out_dir/<site>__<vehicle>/`` (None: none).

    Engine: local processes (``workers``, default 2; 1 runs in this process), or a Dask
    distributed cluster given by ``scheduler`` (address, e.g. ``"tcp://10.0.0.5:8786"``)
    or an existing ``client``. On a cluster, every worker must see the input files and
    the output folder at the same paths (a shared file system) and have floorfit installed.
    """
    if not isinstance(workers, int) or workers < 1:
        raise InputError(f"workers must be a whole number ≥ 1, got {workers!r}", None, "--workers")
    if out_dir is not None:
        out = Path(out_dir)
        if out.exists() and not out.is_dir():
            raise InputError("the output path exists and is not a folder", str(out))
        try:
            out.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise InputError(f"cannot create the folder: {exc.strerror or exc}", str(out)) from exc
    specs = manifest.cells(out_dir)
    done = [0]

    def report(i: int, record: dict) -> None:
        done[0] += 1
        if progress is not None:
            word = record["status"].upper()
            extra = f": {record['error']}" if record["error"] else ""
            progress(f"[{done[0]}/{len(specs)}] {specs[i].site.name} × {specs[i].vehicle.name}: {word}{extra}")

    if scheduler is not None or client is not None:
        cells = _run_dask(specs, scheduler, client, report)
    else:
        cells = _run_local(specs, workers, report)
    return BatchResult(manifest=manifest, cells=cells)
