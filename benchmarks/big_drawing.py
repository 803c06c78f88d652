"""A big invented office floor as DXF (about 47 MB, 360,000 LINE entities at the default size).

A stand-in for the heavy drawings planners export from CAD: rows of cellular offices on
both sides of corridors, each office with double-line partition walls split at the door
opening (LINE entities on A-WALL), a door INSERT of a block (mirrored for the rooms below a
corridor, on A-DOOR), a pattern HATCH over the partition (A-WALL-PATT, ANSI31), desks drawn
as exploded lines with rounded corners and a bookshelf (loose LINEs on A-FURN), a cabinet
INSERT, exploded task chairs (A-FURN-CHAIR), exploded carpet-tile and ceiling grids
(A-FLOR-PATT, A-CLNG-GRID), socket symbols (E-POWR-DEVC), a room number TEXT and a room name
MTEXT (A-ANNO-TEXT), and square columns (solid HATCH and LWPOLYLINE outline on A-COLS) along
the corridors. Everything is invented here; millimetres ($INSUNITS = 4).

The small entities (blocks, INSERTs, hatches, texts, outlines) are made with ezdxf; the bulk
of LINE entities is written straight into the ENTITIES section as text (ezdxf would hold
every one of them in memory), with handles above the document's own and $HANDSEED past
them. The output is the same for the same arguments.

    python -m benchmarks.big_drawing benchmarks/results/big/office.dxf          # default: ~47 MB
    python -m benchmarks.big_drawing /tmp/small.dxf --columns 6 --modules 1     # a few rooms
    python -m benchmarks.big_drawing benchmarks/results/big --measure           # readfile, inspect, check timed
"""

from __future__ import annotations

import argparse
import io
import json
import math
import os
import re
from dataclasses import dataclass, field
from pathlib import Path

import ezdxf
import numpy as np

from .warehouse import fixed_dxf_metadata

__all__ = ["OfficeFloor", "office_floor", "write_office_dxf", "DEFAULT_COLUMNS", "DEFAULT_MODULES"]

MM = 1000.0
ROOM_W = 4.0          # office width along the corridor (partition centre to centre), m
ROOM_D = 5.0          # office depth, m
CORRIDOR = 2.0        # corridor clear width, m
PART_T = 0.1          # partition thickness, m
OUTER_T = 0.3         # outer wall thickness, m
END_ZONE = 3.0        # cross corridor at each end of the office rows, m
DOOR_W = 0.9          # door leaf (block DOOR-0900), m
MODULE = 2 * ROOM_D + CORRIDOR + 2 * PART_T   # two office rows and their corridor, m
#: Default size: offices per row and corridor modules (two office rows each): about 47 MB.
DEFAULT_COLUMNS = 78
DEFAULT_MODULES = 14

_LAYERS = (("A-WALL", 7), ("A-WALL-PATT", 8), ("A-DOOR", 3), ("A-COLS", 1), ("A-FURN", 4),
           ("A-FURN-CHAIR", 4), ("A-FLOR-PATT", 9), ("A-CLNG-GRID", 9), ("E-POWR-DEVC", 6),
           ("A-ANNO-TEXT", 2), ("A-GLAZ", 5))


@dataclass
class OfficeFloor:
    """The invented floor in metres: LINE segments per layer (x0, y0, x1, y1) and the other entities."""

    width: float
    height: float
    lines: dict[str, list[tuple[float, float, float, float]]] = field(default_factory=dict)
    doors: list[tuple[float, float, bool]] = field(default_factory=list)        # hinge x, y, mirrored
    cabinets: list[tuple[float, float, float]] = field(default_factory=list)    # x, y, rotation degrees
    poche: list[tuple[float, float, float, float]] = field(default_factory=list)  # partition boxes
    columns: list[tuple[float, float]] = field(default_factory=list)            # centres (0.4 m square)
    texts: list[tuple[str, str, float, float]] = field(default_factory=list)    # number, name, x, y

    def add(self, layer: str, segs) -> None:
        self.lines.setdefault(layer, []).extend(segs)

    @property
    def line_count(self) -> int:
        return sum(len(v) for v in self.lines.values())


def _rect_segs(x0, y0, x1, y1):
    return [(x0, y0, x1, y0), (x1, y0, x1, y1), (x1, y1, x0, y1), (x0, y1, x0, y0)]


def _ring_segs(pts):
    return [(*pts[i], *pts[(i + 1) % len(pts)]) for i in range(len(pts))]


def _polygon(cx, cy, r, n, phase=0.0):
    t = phase + 2 * math.pi * np.arange(n) / n
    return [(cx + r * math.cos(a), cy + r * math.sin(a)) for a in t]


def _rounded_rect(x0, y0, x1, y1, r=0.05, steps=4):
    """Outline of a desk top with rounded corners as points (counter-clockwise)."""
    pts = []
    for cx, cy, a0 in ((x1 - r, y0 + r, -90), (x1 - r, y1 - r, 0), (x0 + r, y1 - r, 90), (x0 + r, y0 + r, 180)):
        for k in range(steps + 1):
            a = math.radians(a0 + 90 * k / steps)
            pts.append((cx + r * math.cos(a), cy + r * math.sin(a)))
    return pts


def _grid(x0, y0, x1, y1, step_x, step_y):
    """Lines of a grid (tiles, ceiling) strictly inside a room."""
    segs = [(x, y0, x, y1) for x in np.arange(x0 + step_x, x1 - 1e-9, step_x)]
    return segs + [(x0, y, x1, y) for y in np.arange(y0 + step_y, y1 - 1e-9, step_y)]


def _office_contents(f: OfficeFloor, x0, y0, x1, y1, below: bool, n: int, rng) -> None:
    """Furniture, grids, sockets and texts of one office (interior x0..x1, y0..y1; corridor above if ``below``)."""
    back = y0 if below else y1                # the wall away from the corridor
    sign = 1.0 if below else -1.0
    for dx0, dx1 in ((x0 + 0.05, x0 + 0.85), (x1 - 0.85, x1 - 0.05)):
        dy0 = back + sign * 0.3
        dy1 = dy0 + sign * 1.6
        desk = _rounded_rect(dx0, min(dy0, dy1), dx1, max(dy0, dy1))
        f.add("A-FURN", _ring_segs(desk))
        cx = dx1 + 0.4 if dx0 < (x0 + x1) / 2 else dx0 - 0.4
        f.add("A-FURN-CHAIR", _ring_segs(_polygon(cx, (dy0 + dy1) / 2, 0.28, 32, rng.uniform(0, 0.2))))
    sx = (x0 + x1) / 2 - 0.6
    sy = back + sign * 0.05
    shelf = _rect_segs(sx, min(sy, sy + sign * 0.4), sx + 1.2, max(sy, sy + sign * 0.4))
    f.add("A-FURN", shelf + [(sx + k * 0.3, min(sy, sy + sign * 0.4), sx + k * 0.3, max(sy, sy + sign * 0.4))
                             for k in (1, 2, 3)])
    f.cabinets.append(((x0 + x1) / 2 + 0.9, back + sign * 1.2, 0.0 if below else 180.0))
    f.add("A-FLOR-PATT", _grid(x0, y0, x1, y1, 0.5, 0.5))
    f.add("A-CLNG-GRID", _grid(x0, y0, x1, y1, 0.6, 1.2))
    for k in range(4):
        px = x0 + 0.3 + k * (x1 - x0 - 0.7) / 3
        f.add("E-POWR-DEVC", _rect_segs(px, back + sign * 0.02, px + 0.1, back + sign * 0.12))
    f.texts.append((f"{n:04d}", f"Office {n}", (x0 + x1) / 2 - 0.4, (y0 + y1) / 2))


def _office_row(f: OfficeFloor, y_back: float, y_corr: float, columns: int, first: int, rng) -> None:
    """One row of offices between the back line ``y_back`` and the corridor wall face ``y_corr``."""
    below = y_back < y_corr
    lo, hi = min(y_back, y_corr), max(y_back, y_corr)
    wall_y = (y_corr, y_corr + PART_T) if below else (y_corr - PART_T, y_corr)
    for c in range(columns + 1):                            # partitions (double lines), poché hatch
        x = OUTER_T + END_ZONE + c * ROOM_W
        f.add("A-WALL", [(x, lo, x, hi), (x + PART_T, lo, x + PART_T, hi)])
        f.poche.append((x, lo, x + PART_T, hi))
        if c % 2 == 0:
            f.columns.append((x + PART_T / 2, wall_y[0] + PART_T / 2))
    for c in range(columns):                                # corridor wall split at the door, jambs
        xa = OUTER_T + END_ZONE + c * ROOM_W + PART_T
        xb = xa + ROOM_W - PART_T
        hinge = xa + 0.3
        for y in wall_y:
            f.add("A-WALL", [(xa, y, hinge, y), (hinge + DOOR_W, y, xb, y)])
        f.add("A-WALL", [(hinge, wall_y[0], hinge, wall_y[1]), (hinge + DOOR_W, wall_y[0], hinge + DOOR_W, wall_y[1])])
        f.doors.append((hinge, wall_y[0] if below else wall_y[1], below))
        _office_contents(f, xa, lo, xb, hi, below, first + c, rng)


def office_floor(columns: int = DEFAULT_COLUMNS, modules: int = DEFAULT_MODULES, seed: int = 7) -> OfficeFloor:
    """The floor: ``modules`` corridors with a row of ``columns`` offices on each side (metres)."""
    if columns < 1 or modules < 1:
        raise ValueError("columns and modules must be at least 1")
    rng = np.random.default_rng(seed)
    width = 2 * (OUTER_T + END_ZONE) + columns * ROOM_W + PART_T
    height = 2 * OUTER_T + modules * MODULE
    f = OfficeFloor(width=width, height=height)
    f.add("A-WALL", _rect_segs(0, 0, width, height) + _rect_segs(OUTER_T, OUTER_T, width - OUTER_T, height - OUTER_T))
    for k in np.arange(1.35, width - 0.1, 1.35):            # mullions of the glazed long sides
        for y in (0.0, height - OUTER_T):
            f.add("A-GLAZ", [(k, y, k, y + OUTER_T), (k + 0.05, y, k + 0.05, y + OUTER_T)])
    n = 1
    for m in range(modules):
        y0 = OUTER_T + m * MODULE
        corr_lo = y0 + ROOM_D + PART_T
        _office_row(f, y0, corr_lo, columns, n, rng)
        n += columns
        _office_row(f, y0 + MODULE, corr_lo + CORRIDOR, columns, n, rng)
        n += columns
    return f


def _blocks(doc) -> None:
    door = doc.blocks.new("DOOR-0900")
    door.add_arc((0, 0), DOOR_W * MM, 0, 90)
    door.add_line((0, 0), (0, DOOR_W * MM))
    cab = doc.blocks.new("CABINET-800")
    cab.add_lwpolyline([(-400, 0), (400, 0), (400, 450), (-400, 450)], close=True)
    cab.add_line((0, 0), (0, 450))


def _small_entities(doc, f: OfficeFloor) -> None:
    msp = doc.modelspace()
    for x, y, mirrored in f.doors:
        msp.add_blockref("DOOR-0900", (x * MM, y * MM), dxfattribs={"layer": "A-DOOR", "yscale": -1.0 if mirrored
                                                                     else 1.0})
    for x, y, rot in f.cabinets:
        msp.add_blockref("CABINET-800", (x * MM, y * MM), dxfattribs={"layer": "A-FURN", "rotation": rot})
    for x0, y0, x1, y1 in f.poche:
        h = msp.add_hatch(dxfattribs={"layer": "A-WALL-PATT"})
        h.set_pattern_fill("ANSI31", scale=10.0)
        h.paths.add_polyline_path([(x0 * MM, y0 * MM), (x1 * MM, y0 * MM), (x1 * MM, y1 * MM), (x0 * MM, y1 * MM)])
    for cx, cy in f.columns:
        pts = [((cx + dx) * MM, (cy + dy) * MM) for dx, dy in ((-.2, -.2), (.2, -.2), (.2, .2), (-.2, .2))]
        msp.add_lwpolyline(pts, close=True, dxfattribs={"layer": "A-COLS"})
        h = msp.add_hatch(dxfattribs={"layer": "A-COLS"})
        h.paths.add_polyline_path(pts)
    for number, name, x, y in f.texts:
        msp.add_text(number, height=200, dxfattribs={"layer": "A-ANNO-TEXT", "insert": (x * MM, y * MM)})
        msp.add_mtext(name, dxfattribs={"layer": "A-ANNO-TEXT", "insert": (x * MM, (y - 0.4) * MM),
                                        "char_height": 150})


def _line_records(f: OfficeFloor, first_handle: int, owner: str):
    """DXF text of every LINE (chunks per layer), handles counting up from ``first_handle``."""
    h = first_handle
    for layer, segs in f.lines.items():
        arr = np.round(np.asarray(segs, dtype=float) * MM, 3)
        out = io.StringIO()
        for x0, y0, x1, y1 in arr.tolist():
            out.write(f"  0\nLINE\n  5\n{h:X}\n330\n{owner}\n100\nAcDbEntity\n  8\n{layer}\n100\nAcDbLine\n"
                      f" 10\n{x0:.3f}\n 20\n{y0:.3f}\n 11\n{x1:.3f}\n 21\n{y1:.3f}\n")
            h += 1
        yield out.getvalue()


def write_office_dxf(path: str | Path, columns: int = DEFAULT_COLUMNS, modules: int = DEFAULT_MODULES,
                     seed: int = 7) -> dict:
    """Write the floor to ``path``; returns its size in bytes, LINE count, entity count and extent (m)."""
    f = office_floor(columns, modules, seed)
    doc = ezdxf.new("R2010", setup=False)
    doc.header["$INSUNITS"] = 4
    for name, colour in _LAYERS:
        doc.layers.add(name, color=colour)
    _blocks(doc)
    _small_entities(doc, f)
    first = int(doc.entitydb.handles.next(), 16)
    doc.entitydb.handles.reset(f"{first + f.line_count + 1:X}")   # $HANDSEED beyond the raw LINEs
    text = io.StringIO()
    with fixed_dxf_metadata():
        doc.write(text)
    body = text.getvalue()
    cut = body.index("  0\nENDSEC\n", body.index("\nENTITIES\n"))
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    with path.open("w", encoding="utf-8", newline="\n") as fh:
        fh.write(body[:cut])
        for chunk in _line_records(f, first, doc.modelspace().block_record_handle):
            fh.write(chunk)
        fh.write(body[cut:])
    small = len(doc.modelspace())
    return {"path": str(path), "bytes": path.stat().st_size, "lines": f.line_count,
            "entities": f.line_count + small, "size_m": [round(f.width, 2), round(f.height, 2)],
            "rooms": len(f.texts)}


#: The vehicle of ``../shared/tools/real-plans``: a 0.6 x 0.8 m differential robot.
ROBOT = 'name = "0.6 x 0.8 differential"\n[footprint]\nwidth = 0.6\nlength = 0.8\n[motion]\nmode = "differential"\n'
_ADVICE_RE = re.compile(r"--heading-step \(e\.g\. ([0-9.]+)°\)")


def _row(name: str, r: dict, base: dict) -> dict:
    last = r["stderr"][-1][1] if r["stderr"] else ""
    return {"run": name, "wall_s": round(r["wall_s"], 2), "cpu_s": round(r["cpu_s"], 2),
            "peak_mb": round(r["peak_tree_mb"]), "wall_vs_readfile": round(r["wall_s"] / base["wall_s"], 2),
            "cpu_vs_readfile": round(r["cpu_s"] / max(base["cpu_s"], 1e-9), 2), "exit": r["returncode"],
            "last_line": last}


def measure(folder: Path, *, run_advice: bool = False, workers: int = 2) -> dict:
    """Write the default floor into ``folder`` and time, in one run: ``ezdxf.readfile`` alone (the
    baseline), ``floorfit inspect``, ``floorfit check`` with the real-plans robot (refused at the
    edge limit at its default step) and, with ``run_advice``, the check at the step its refusal
    advises. Slice and import caches off. Wall and CPU seconds, peak memory (PSS of the process
    tree, sampled every 50 ms), ratios to the baseline; timings are reported, never asserted."""
    from benchmarks.run import _python, run_process

    folder.mkdir(parents=True, exist_ok=True)
    info = write_office_dxf(folder / "office.dxf")
    plan, vehicle = info["path"], folder / "robot.toml"
    vehicle.write_text(ROBOT, encoding="utf-8")
    env = {**os.environ, "FLOORFIT_CACHE": "off"}
    py = _python()
    base = run_process([py, "-c", "import sys, ezdxf; ezdxf.readfile(sys.argv[1])", plan], env=env)
    rows = [_row("ezdxf.readfile alone (baseline)", base, base)]
    rows.append(_row("floorfit inspect", run_process([py, "-m", "floorfit", "inspect", plan], env=env), base))
    check = [py, "-m", "floorfit", "check", plan, "--vehicle", str(vehicle), "--out", str(folder / "report"),
             "--force", "--workers", str(workers)]
    refused = run_process(check, env=env)
    rows.append(_row("floorfit check (default step)", refused, base))
    advice = _ADVICE_RE.search(refused["stderr"][-1][1]) if refused["stderr"] else None
    if run_advice and advice:
        advised = run_process(check + ["--heading-step", advice.group(1)], env=env)
        rows.append(_row(f"floorfit check --heading-step {advice.group(1)} (the advice)", advised, base))
    return {"drawing": info, "advised_step_deg": float(advice.group(1)) if advice else None, "runs": rows}


def _table(result: dict) -> str:
    d = result["drawing"]
    out = [f"{d['path']}: {d['bytes'] / 1e6:.1f} MB, {d['lines']:,} LINE entities, {d['entities']:,} entities",
           "", "| run | wall s | CPU s | peak MB | wall / readfile | CPU / readfile | exit |",
           "|---|---|---|---|---|---|---|"]
    for r in result["runs"]:
        out.append(f"| {r['run']} | {r['wall_s']:.1f} | {r['cpu_s']:.1f} | {r['peak_mb']} "
                   f"| {r['wall_vs_readfile']:.2f} | {r['cpu_vs_readfile']:.2f} | {r['exit']} |")
    for r in result["runs"]:
        if r["exit"] == 2:
            out.append(f"\n{r['run']}: {r['last_line']}")
    return "\n".join(out)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m benchmarks.big_drawing", description=__doc__.splitlines()[0])
    ap.add_argument("out", help="DXF file to write (its folder is created); with --measure: a folder")
    ap.add_argument("--columns", type=int, default=DEFAULT_COLUMNS, help="offices per row")
    ap.add_argument("--modules", type=int, default=DEFAULT_MODULES, help="corridors (two office rows each)")
    ap.add_argument("--seed", type=int, default=7)
    ap.add_argument("--measure", action="store_true", help="write the default floor into the folder OUT and time "
                    "readfile, inspect and check on it")
    ap.add_argument("--run-advice", action="store_true", help="with --measure: also run the check at the advised "
                    "heading step (minutes)")
    ap.add_argument("--json", metavar="PATH", help="with --measure: write the figures as JSON")
    args = ap.parse_args(argv)
    if args.measure:
        result = measure(Path(args.out), run_advice=args.run_advice)
        print(_table(result))
        if args.json:
            Path(args.json).write_text(json.dumps(result, indent=2) + "\n", encoding="utf-8")
        return 0
    info = write_office_dxf(args.out, args.columns, args.modules, args.seed)
    print(f"{info['path']}: {info['bytes'] / 1e6:.1f} MB, {info['lines']:,} LINE entities, "
          f"{info['entities']:,} entities in model space, {info['rooms']} offices, "
          f"{info['size_m'][0]:g} x {info['size_m'][1]:g} m")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
