"""Manoeuvre budgets: station pairs judged by what differential and car-like vehicles can drive.

A differential base or a car that may reverse can follow any route the holonomic analysis
finds (small-time local controllability, Laumond et al., IEEE T-RA 10(5), 1994), but perhaps
only by manoeuvring back and forth: a robot wider than a doorway passes it *sideways*, with
dozens of direction changes, which no site would accept. So the site check, sizing, the layout
comparison and batch judge these vehicles by the drivable path floorfit finds between two
stations (:func:`floorfit.analysis.maneuvers.station_pair_drive`, on the slices and roadmap
already built) and its number of forward/reverse changes against a *budget* (site file
``[motion] max_direction_changes``, command option ``--max-direction-changes``, default 2).

A pair the holonomic analysis connects is

* **within the budget** when the path found changes direction at most ``budget`` times;
* **over the budget** when it changes direction more often: a ``maneuver`` finding with cause
  ``over-budget`` at the place where most of its direction changes happen, with the count;
* **not shown within the budget** when no drivable path was found within the search limits:
  a ``maneuver`` finding with cause ``not-found-within-limits``.

Either finding cuts the pair (``CheckResult.reachable`` is False both ways for vehicles that
may reverse, one way for forward-only ones), so the check fails, as for a ``blocked`` place.
The count is that of the path floorfit found (shortened, and for a differential base compared
with a car-like path of small radius): a better planner might need fewer, so the judgement errs
towards "over the budget", like the sound slices err towards "does not fit".

Vehicles that may reverse are judged once per unordered station pair (a drivable path driven
backwards is a drivable path with as many direction changes); forward-only vehicles per ordered
pair. Omni and fixed vehicles have no budget: they are judged by the holonomic analysis alone.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import networkx as nx
import numpy as np
import shapely

from floorfit.analysis.findings import Finding, Station
from floorfit.analysis.maneuvers import (
    MANEUVER_LIMITS,
    DriveContext,
    PairDrive,
    _maneuver_span,
    station_pair_drive,
)
from floorfit.analysis.naming import place_name
from floorfit.cspace.slices import SliceSet
from floorfit.motion.drivable import FOUND, DriveLimits
from floorfit.plan.model import Plan
from floorfit.plan.site import DEFAULT_MAX_DIRECTION_CHANGES
from floorfit.vehicles.rigid import Vehicle

__all__ = ["BUDGET_LIMITS", "BUDGET_MODES", "PairVerdict", "budget_applies", "budget_findings", "judge_pair",
           "first_pair_over_budget", "budget_text", "DEFAULT_MAX_DIRECTION_CHANGES"]

#: Motion modes judged by a manoeuvre budget.
BUDGET_MODES = ("differential", "car")
#: Search limits of one station pair's drive: counts only (car expansions, steering checks, split
#: depth), no wall-clock limit, so that a verdict does not depend on the machine or its load. A limit
#: reached errs towards "not shown within the budget" (a finding), never towards "served".
BUDGET_LIMITS = MANEUVER_LIMITS


def budget_applies(vehicle: Vehicle, budget: int | None) -> bool:
    """True when ``vehicle`` is judged by drivable paths within ``budget`` direction changes."""
    return budget is not None and vehicle.mode in BUDGET_MODES


def budget_text(budget: int) -> str:
    """``"2 direction changes"``: the words the outputs use for a budget."""
    return f"{budget} direction change{'s' if budget != 1 else ''}"


@dataclass
class PairVerdict:
    """How the drive between stations ``a`` and ``b`` fares against the budget (local frame, metres).

    ``status``: ``"within"``, ``"over-budget"``, ``"not-found-within-limits"`` or ``"not-judged"``
    (the holonomic analysis does not connect them, or a station does not fit: other findings say
    why). ``changes``: direction changes of the path found; ``here``: how many of them lie within
    ``near_m`` of ``(x, y)``, the place the finding names; ``both_ways``: the verdict holds for
    ``b`` → ``a`` too (vehicles that may reverse).
    """

    a: str
    b: str
    status: str
    changes: int | None = None
    x: float = 0.0
    y: float = 0.0
    here: int = 0
    near_m: float = 0.0
    extent: tuple[float, float, float, float] | None = None
    geometry: Any = None
    reason: str = ""
    both_ways: bool = True

    @property
    def ok(self) -> bool:
        return self.status in ("within", "not-judged")


def _near_m(vehicle: Vehicle) -> float:
    return max(vehicle.length_m, 1.0)


def _place_of_changes(pd: PairDrive, near: float) -> tuple[float, float, int, tuple]:
    """The point with most direction changes within ``near`` metres: their mean, count and bounds."""
    cusps = np.array([(c[0], c[1]) for c in pd.drive.cusps()], dtype=float)
    d = np.hypot(cusps[:, None, 0] - cusps[None, :, 0], cusps[:, None, 1] - cusps[None, :, 1])
    members = d[int(np.argmax((d <= near).sum(axis=1)))] <= near
    pts = cusps[members]
    x0, y0 = pts.min(axis=0)
    x1, y1 = pts.max(axis=0)
    return float(pts[:, 0].mean()), float(pts[:, 1].mean()), int(members.sum()), (x0, y0, x1, y1)


def judge_pair(ctx: DriveContext, a: Station, b: Station, budget: int, pair_drives: dict | None = None
               ) -> PairVerdict:
    """Judge the drive between ``a`` and ``b`` (see :class:`PairVerdict`).

    Drives already planned (``pair_drives``, ``(a, b) -> PairDrive``, for example by
    :func:`floorfit.analysis.maneuvers.maneuver_findings`) are reused; for a vehicle that may
    reverse the better of the two directions counts. Otherwise one drive is planned and added.
    """
    vehicle = ctx.vehicle
    both = bool(vehicle.reverse)
    known = pair_drives if pair_drives is not None else {}
    pds = [known[k] for k in ((a.name, b.name), (b.name, a.name))[:2 if both else 1] if k in known]
    if not pds:
        pd = station_pair_drive(ctx, a, b)
        known[(a.name, b.name)] = pd
        pds = [pd]
    found = [p for p in pds if p.status == FOUND]
    if not found:
        judged = [p for p in pds if p.status not in ("not-connected", "station-blocked")]
        if not judged:
            return PairVerdict(a.name, b.name, "not-judged", both_ways=both)
        pd = judged[0]
        step = getattr(pd.drive, "failed_step", None) if pd.drive is not None else None
        if step is not None:
            x, y = 0.5 * (step[0][0] + step[1][0]), 0.5 * (step[0][1] + step[1][1])
        elif pd.holonomic is not None and len(pd.holonomic):
            x, y = (float(v) for v in pd.holonomic[len(pd.holonomic) // 2, :2])
        else:
            x, y = ctx.local(b)
        return PairVerdict(a.name, b.name, "not-found-within-limits", x=x, y=y, near_m=_near_m(vehicle),
                           reason=pd.reasons[-1] if pd.reasons else "", both_ways=both)
    pd = min(found, key=lambda p: p.direction_changes)
    n = pd.direction_changes
    if n <= budget:
        return PairVerdict(a.name, b.name, "within", changes=n, both_ways=both)
    near = _near_m(vehicle)
    x, y, here, extent = _place_of_changes(pd, near)
    geometry, _turn = _maneuver_span(pd.drive)
    return PairVerdict(pd.a, pd.b, "over-budget", changes=n, x=x, y=y, here=here, near_m=near, extent=extent,
                       geometry=geometry, both_ways=both)


def _pairs(stations: list[Station], both_ways: bool) -> list[tuple[Station, Station]]:
    if both_ways:
        return [(a, b) for i, a in enumerate(stations) for b in stations[i + 1:]]
    return [(a, b) for a in stations for b in stations if a is not b]


def budget_findings(plan: Plan, vehicle: Vehicle, slices: SliceSet, stations: list[Station], *, budget: int,
                    reach: dict, roadmap: nx.Graph | None = None, cuts: dict | None = None,
                    notes: list[str] | None = None, pair_drives: dict | None = None,
                    limits: DriveLimits = BUDGET_LIMITS, progress=None) -> list[Finding]:
    """``maneuver`` findings for station pairs driven over the budget or not found; updates ``reach``.

    Every pair that ``reach`` (the holonomic answer, ``reach[a][b]``) connects is judged
    (:func:`judge_pair`); a pair over the budget or without a path found is set unreachable in
    ``reach`` and, in ``cuts`` (keyed as the check keys it: the pair in station order), gets the
    finding that explains it. Verdicts at the same place (within a vehicle length) share one
    finding. ``pair_drives`` is filled with the drives planned (``(a, b) -> PairDrive``).
    Vehicles without a budget (omni, fixed): [] and nothing changes.
    """
    if not budget_applies(vehicle, budget) or len(stations) < 2:
        return []
    notes = notes if notes is not None else []
    pair_drives = pair_drives if pair_drives is not None else {}
    ctx = DriveContext(plan, vehicle, slices, roadmap, limits)
    ctx.accept_changes = budget
    order = {s.name: i for i, s in enumerate(stations)}
    failed: list[PairVerdict] = []
    for a, b in _pairs(stations, bool(vehicle.reverse)):
        if not (reach[a.name][b.name] and (reach[b.name][a.name] or not vehicle.reverse)):
            continue
        if progress is not None:
            progress(f"manoeuvre budget: {a.name} → {b.name}")
        v = judge_pair(ctx, a, b, budget, pair_drives)
        if v.ok:
            continue
        failed.append(v)
        reach[a.name][b.name] = False
        if v.both_ways:
            reach[b.name][a.name] = False
    findings = _findings(plan, vehicle, failed, budget, reach, order)
    if cuts is not None:
        for f, verdicts in findings:
            for v in verdicts:
                key = (v.a, v.b) if order[v.a] < order[v.b] else (v.b, v.a)
                cuts.setdefault(key, [])
                if f not in cuts[key]:
                    cuts[key].append(f)
    if failed:
        notes.append(f"{vehicle.mode} vehicle judged by drivable paths within {budget_text(budget)} per drive "
                     f"between two stations ([motion] max_direction_changes / --max-direction-changes): "
                     f"{len(failed)} station pair{'s' if len(failed) != 1 else ''} not served within it")
    return [f for f, _ in findings]


def _cut_off(names: list[str], reach: dict, verdicts: list[PairVerdict]) -> list[str]:
    """Stations of these pairs outside the largest group still served within the budget."""
    G = nx.Graph()
    G.add_nodes_from(names)
    G.add_edges_from((a, b) for a in names for b in names if a < b and reach[a][b] and reach[b][a])
    main = max(nx.connected_components(G), key=lambda c: (len(c), sorted(c)))
    involved = {n for v in verdicts for n in (v.a, v.b)}
    return sorted(involved - main)


def _findings(plan: Plan, vehicle: Vehicle, failed: list[PairVerdict], budget: int, reach: dict, order: dict
              ) -> list[tuple[Finding, list[PairVerdict]]]:
    groups: list[list[PairVerdict]] = []
    for v in failed:
        for g in groups:
            if g[0].status == v.status and math.hypot(g[0].x - v.x, g[0].y - v.y) <= v.near_m:
                g.append(v)
                break
        else:
            groups.append([v])
    names = sorted(order, key=order.get)
    out = []
    for g in groups:
        arrow = " ⇄ " if g[0].both_ways else " → "
        dx, dy = plan.to_drawing(g[0].x, g[0].y)
        if g[0].status == "over-budget":
            most = max(v.changes for v in g)
            parts = [f"{v.a}{arrow}{v.b}: {v.changes} ({v.here} of them within {v.near_m:.1f} m of here)" for v in g]
            summary = (f"the vehicle gets through here only by manoeuvring: the drivable path found changes direction "
                       f"{most} times, more than the budget of {budget_text(budget)}; " + "; ".join(parts))
            boxes = [v.extent for v in g if v.extent is not None]
            x0, y0 = min(b[0] for b in boxes), min(b[1] for b in boxes)
            x1, y1 = max(b[2] for b in boxes), max(b[3] for b in boxes)
            extent = (*plan.to_drawing(x0, y0), *plan.to_drawing(x1, y1))
            geoms = [v.geometry for v in g if v.geometry is not None]
            geometry = shapely.union_all(geoms) if geoms else None
        else:
            most, extent, geometry = None, None, None
            parts = [f"{v.a}{arrow}{v.b}" for v in g]
            exists = ("a path exists (the vehicle may reverse and the holonomic analysis connects them) but "
                      if vehicle.reverse else "")
            summary = (f"no drivable path found within the search limits: {exists}it is not shown to stay within "
                       f"{budget_text(budget)}: " + ", ".join(parts))
        f = Finding(kind="maneuver", cause=g[0].status, x=dx, y=dy, label=place_name(plan, g[0].x, g[0].y),
                    summary=summary, extent=extent, cuts_off=_cut_off(names, reach, g), geometry=geometry,
                    direction_changes=most)
        out.append((f, g))
    return out


def first_pair_over_budget(plan: Plan, vehicle: Vehicle, slices: SliceSet, stations: list[Station], budget: int,
                           *, roadmap: nx.Graph | None = None, first: tuple[str, str] | None = None,
                           limits: DriveLimits = BUDGET_LIMITS) -> dict | None:
    """For sizing: None when every station pair is driven within the budget, else the first pair
    that is not, as a binding-place dict (drawing frame; keys as the sizing's blocked places plus
    ``direction_changes`` and ``pair``). ``first``: the pair to judge first (the one that failed
    last time: in a bisection one drive usually decides). Pairs the roadmap does not connect are
    not judged here (the caller tests connectivity first)."""
    if not budget_applies(vehicle, budget) or len(stations) < 2:
        return None
    ctx = DriveContext(plan, vehicle, slices, roadmap, limits)
    ctx.accept_changes = budget
    pairs = _pairs(stations, bool(vehicle.reverse))
    if first is not None:
        pairs.sort(key=lambda p: (p[0].name, p[1].name) not in (first, first[::-1]))
    for a, b in pairs:
        v = judge_pair(ctx, a, b, budget)
        if v.ok:
            continue
        reach = {s.name: {t.name: True for t in stations} for s in stations}
        reach[v.a][v.b] = reach[v.b][v.a] = False
        order = {s.name: i for i, s in enumerate(stations)}
        f, _ = _findings(plan, vehicle, [v], budget, reach, order)[0]
        return {"id": None, "kind": "maneuver", "cause": f.cause, "x": round(float(f.x), 4),
                "y": round(float(f.y), 4), "label": f.label, "clear_width_m": None, "needed_width_m": None,
                "cuts_off": [v.a, v.b], "summary": f.summary, "direction_changes": v.changes,
                "pair": [v.a, v.b]}
    return None
