"""Comparing two layouts for one vehicle: what a change to the floor plan did.

``compare_layouts(before_plan, after_plan, vehicle, stations)`` runs the site check on
both plans (and, if asked, sizes the vehicle on both) and returns a
:class:`LayoutComparison`: findings that appeared, disappeared, got worse or better,
station pairs that lost or gained reachability, and the change in the largest vehicle.
``compare_results(before, after)`` does the same for two finished checks.

Matching findings
-----------------
Findings of the two checks are matched by kind and position (drawing frame, metres): the
closest pairs of the same kind within ``match_distance_m`` (default 1.0 m) are matched
first, each finding at most once, so a pinch point that moved a little between the two
drawings (a wall redrawn, a raster cell further) is the same place. Unmatched findings of
BEFORE *disappeared*, unmatched findings of AFTER *appeared*.

A matched finding got *worse* when, beyond the stated tolerances:

- ``blocked`` / ``tight``: its clear width is smaller (``WIDTH_TOLERANCE_M``), its
  clearance is smaller, or it cuts off more stations;
- ``no-turn``: its stretch is longer (by more than one turnability-map cell) or a
  stretch the vehicle could pass through became a dead end.

The opposite changes make it *better*; anything else is *unchanged*. The layout as a
whole is worse when any station pair that was reachable is not any more
(:attr:`LayoutComparison.after_worse`).

Shared slices
-------------
:func:`compare_layouts` checks BEFORE first and keeps its slice sets in memory
(:mod:`floorfit.cspace.slicememo`); each set AFTER's check (and sizing) asks for with the same
footprint, heading cells and bound is BEFORE's, recomputed only near the obstacles that differ
(:func:`floorfit.cspace.incremental.update_slices`). The answers are those of two separate
checks (the free space agrees up to overlay rounding).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from floorfit.analysis.findings import FINDING_KINDS, CheckResult, Finding, Station
from floorfit.plan.model import Plan
from floorfit.plan.site import Site
from floorfit.vehicles.rigid import Vehicle

__all__ = ["FindingChange", "LayoutComparison", "compare_results", "compare_layouts", "match_findings",
           "DEFAULT_MATCH_DISTANCE_M", "WIDTH_TOLERANCE_M", "CHANGE_KINDS", "COMPARISON_FORMAT"]

#: Findings of one kind closer than this in the two layouts are the same place, metres.
DEFAULT_MATCH_DISTANCE_M = 1.0
#: Widths and clearances that differ by less than this count as equal, metres.
WIDTH_TOLERANCE_M = 0.001
#: The kinds of change, in report order.
CHANGE_KINDS = ("appeared", "worse", "disappeared", "better", "unchanged")
#: ``format`` value of the comparison JSON.
COMPARISON_FORMAT = "floorfit-comparison"


@dataclass
class FindingChange:
    """One finding's fate between BEFORE and AFTER. ``distance_m``: how far the matched
    finding moved (drawing frame); ``what``: the changed numbers in words."""

    change: str
    kind: str
    before: Finding | None
    after: Finding | None
    distance_m: float | None = None
    what: list[str] = field(default_factory=list)

    @property
    def x(self) -> float:
        return (self.after or self.before).x

    @property
    def y(self) -> float:
        return (self.after or self.before).y

    def to_dict(self) -> dict[str, Any]:
        return {"change": self.change, "kind": self.kind,
                "x": round(float(self.x), 4), "y": round(float(self.y), 4),
                "distance_m": None if self.distance_m is None else round(float(self.distance_m), 4),
                "what": list(self.what),
                "before": None if self.before is None else _finding_dict(self.before),
                "after": None if self.after is None else _finding_dict(self.after)}


def _finding_dict(f: Finding) -> dict[str, Any]:
    d = f.to_dict()
    d["x"], d["y"] = round(float(f.x), 4), round(float(f.y), 4)
    return d


@dataclass
class LayoutComparison:
    """What changed from BEFORE to AFTER for one vehicle (drawing frames, metres)."""

    before: CheckResult
    after: CheckResult
    changes: list[FindingChange]
    pairs_lost: list[tuple[str, str]]
    pairs_gained: list[tuple[str, str]]
    pairs_still_cut: list[tuple[str, str]]
    stations_only_before: list[str]
    stations_only_after: list[str]
    match_distance_m: float = DEFAULT_MATCH_DISTANCE_M
    sizing_before: Any = None
    sizing_after: Any = None

    @property
    def after_worse(self) -> bool:
        """True when AFTER loses reachability for any station pair."""
        return bool(self.pairs_lost)

    @property
    def headline(self) -> str:
        """One honest word for the change: ``WORSE`` (a station pair lost), ``WORSE IN PLACES``
        (no pair lost, but findings appeared or got worse), ``BETTER`` (pairs gained or findings
        gone or better, nothing worse), else ``UNCHANGED``."""
        c = self.counts()
        if self.pairs_lost:
            return "WORSE"
        if c["appeared"] or c["worse"]:
            return "WORSE IN PLACES"
        if self.pairs_gained or c["disappeared"] or c["better"]:
            return "BETTER"
        return "UNCHANGED"

    def of(self, change: str) -> list[FindingChange]:
        """The changes of one kind (``"appeared"``, ``"disappeared"``, ...)."""
        return [c for c in self.changes if c.change == change]

    def counts(self) -> dict[str, int]:
        return {k: len(self.of(k)) for k in CHANGE_KINDS}

    def sizing_dict(self) -> dict[str, Any] | None:
        if self.sizing_before is None or self.sizing_after is None:
            return None
        b, a = self.sizing_before.to_dict(), self.sizing_after.to_dict()
        change = None if b["largest_m"] is None or a["largest_m"] is None else round(a["largest_m"] - b["largest_m"], 4)
        keep = ("status", "largest_m", "largest_with_margin_m", "upper_m", "binding", "monotone", "tolerance_m")
        return {"vary": b["vary"], "precision_m": b["precision_m"], "change_m": change,
                "before": {k: b[k] for k in keep}, "after": {k: a[k] for k in keep}}

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready and stable: sorted, rounded, no timestamps."""
        def side(r: CheckResult) -> dict[str, Any]:
            kinds = {k: sum(1 for f in r.findings if f.kind == k) for k in FINDING_KINDS}
            return {"plan": Path(str(r.plan.source)).name, "passed": r.passed, "findings": len(r.findings),
                    "findings_by_kind": kinds, "unreachable_pairs": [list(p) for p in _unreachable(r)],
                    "tolerance_m": r.settings.get("tolerance_m"),
                    "heading_step_deg": r.settings.get("heading_step_deg")}

        return {
            "format": COMPARISON_FORMAT, "version": 1,
            "vehicle": self.before.vehicle.describe(),
            "before": side(self.before), "after": side(self.after),
            "after_worse": self.after_worse, "headline": self.headline,
            "match_distance_m": self.match_distance_m, "width_tolerance_m": WIDTH_TOLERANCE_M,
            "pairs": {"lost": [list(p) for p in self.pairs_lost], "gained": [list(p) for p in self.pairs_gained],
                      "still_cut": [list(p) for p in self.pairs_still_cut]},
            "stations_only_before": list(self.stations_only_before),
            "stations_only_after": list(self.stations_only_after),
            "counts": self.counts(),
            "findings": {k: [c.to_dict() for c in self.of(k)] for k in CHANGE_KINDS},
            "sizing": self.sizing_dict(),
        }

    def summary_lines(self) -> list[str]:
        """Plain lines for the terminal."""
        c = self.counts()
        head = self.headline
        lines = [f"{head}: {Path(str(self.before.plan.source)).name} → {Path(str(self.after.plan.source)).name} "
                 f"for {self.before.vehicle.name} — {len(self.pairs_lost)} station pairs lost, "
                 f"{len(self.pairs_gained)} gained; findings: {c['appeared']} appeared, {c['worse']} worse, "
                 f"{c['disappeared']} disappeared, {c['better']} better, {c['unchanged']} unchanged"]
        for a, b in self.pairs_lost:
            lines.append(f"  lost: {a} ↔ {b}")
        for a, b in self.pairs_gained:
            lines.append(f"  gained: {a} ↔ {b}")
        for ch in self.changes:
            if ch.change == "unchanged":
                continue
            f = ch.after or ch.before
            where = f" [{f.label}]" if f.label else ""
            detail = f": {'; '.join(ch.what)}" if ch.what else f": {f.summary}"
            lines.append(f"  {ch.change:11s} {ch.kind:8s} at ({f.x:.2f}, {f.y:.2f}) m{where}{detail}")
        s = self.sizing_dict()
        if s is not None and s["change_m"] is not None:
            lines.append(f"  largest {s['vary']}: {s['before']['largest_m']:.3f} m → {s['after']['largest_m']:.3f} m "
                         f"({s['change_m']:+.3f} m, precision {s['precision_m']:g} m)")
        return lines


def _unreachable(r: CheckResult) -> list[tuple[str, str]]:
    return r.station_pairs()[0]          # counted as everywhere else (floorfit.analysis.findings)


def _stretch_m(f: Finding) -> float:
    if f.extent is None:
        return 0.0
    x0, y0, x1, y1 = f.extent
    return max(x1 - x0, y1 - y0)


# one worse/better test per field and finding kind, each pair side by side; splitting would part the pairs
def _differences(b: Finding, a: Finding, map_cell_m: float) -> tuple[int, list[str]]:  # noqa: C901
    """(+1 worse / −1 better / 0 same, words) for a matched pair of one kind."""
    worse, better, words = False, False, []

    def less(x, y, tol):        # x smaller than y by more than tol
        return x is not None and y is not None and x < y - tol

    if b.kind in ("blocked", "tight"):
        if less(a.clear_width_m, b.clear_width_m, WIDTH_TOLERANCE_M):
            worse = True
            words.append(f"clear width {b.clear_width_m:.3f} → {a.clear_width_m:.3f} m")
        elif less(b.clear_width_m, a.clear_width_m, WIDTH_TOLERANCE_M):
            better = True
            words.append(f"clear width {b.clear_width_m:.3f} → {a.clear_width_m:.3f} m")
        if less(a.clearance_m, b.clearance_m, WIDTH_TOLERANCE_M):
            worse = True
            words.append(f"clearance {b.clearance_m:.3f} → {a.clearance_m:.3f} m")
        elif less(b.clearance_m, a.clearance_m, WIDTH_TOLERANCE_M):
            better = True
            words.append(f"clearance {b.clearance_m:.3f} → {a.clearance_m:.3f} m")
        if set(a.cuts_off) - set(b.cuts_off):
            worse = True
            words.append(f"now also cuts off {', '.join(sorted(set(a.cuts_off) - set(b.cuts_off)))}")
        elif set(b.cuts_off) - set(a.cuts_off):
            better = True
            words.append(f"no longer cuts off {', '.join(sorted(set(b.cuts_off) - set(a.cuts_off)))}")
    elif b.kind == "no-turn":
        lb, la = _stretch_m(b), _stretch_m(a)
        if la > lb + map_cell_m:
            worse = True
            words.append(f"no-turn stretch {lb:.1f} → {la:.1f} m")
        elif lb > la + map_cell_m:
            better = True
            words.append(f"no-turn stretch {lb:.1f} → {la:.1f} m")
        if b.cause != a.cause:
            if a.cause == "dead-end":
                worse = True
            else:
                better = True
            words.append(f"{b.cause} → {a.cause}")
    if worse:                       # any loss counts, even with a gain elsewhere
        return 1, words
    return (-1 if better else 0), words


def match_findings(
    before: list[Finding], after: list[Finding], *, match_distance_m: float = DEFAULT_MATCH_DISTANCE_M
) -> list[tuple[int | None, int | None, float | None]]:
    """Pairs (index in before, index in after, distance m) of matched findings, then the
    unmatched ones as (i, None, None) and (None, j, None). Greedy by distance within a kind."""
    candidates = []
    for i, fb in enumerate(before):
        for j, fa in enumerate(after):
            if fb.kind != fa.kind:
                continue
            d = math.hypot(fa.x - fb.x, fa.y - fb.y)
            if d <= match_distance_m:
                candidates.append((d, i, j))
    candidates.sort()
    used_b, used_a, out = set(), set(), []
    for d, i, j in candidates:
        if i in used_b or j in used_a:
            continue
        used_b.add(i)
        used_a.add(j)
        out.append((i, j, d))
    out += [(i, None, None) for i in range(len(before)) if i not in used_b]
    out += [(None, j, None) for j in range(len(after)) if j not in used_a]
    return out


def _order_key(ch: FindingChange):
    rank = FINDING_KINDS.index(ch.kind) if ch.kind in FINDING_KINDS else len(FINDING_KINDS)
    return (CHANGE_KINDS.index(ch.change), rank, round(float(ch.x), 3), round(float(ch.y), 3))


def compare_results(before: CheckResult, after: CheckResult, *,
                    match_distance_m: float = DEFAULT_MATCH_DISTANCE_M) -> LayoutComparison:
    """Compare two finished site checks of the same vehicle (see the module docstring)."""
    map_cell = float(after.settings.get("map_cell_m", 0.1) or 0.1)
    changes = []
    for i, j, d in match_findings(before.findings, after.findings, match_distance_m=match_distance_m):
        fb = before.findings[i] if i is not None else None
        fa = after.findings[j] if j is not None else None
        if fb is None:
            changes.append(FindingChange("appeared", fa.kind, None, fa, None, []))
        elif fa is None:
            changes.append(FindingChange("disappeared", fb.kind, fb, None, None, []))
        else:
            sign, words = _differences(fb, fa, map_cell)
            change = {1: "worse", -1: "better", 0: "unchanged"}[sign]
            changes.append(FindingChange(change, fb.kind, fb, fa, d, words))
    changes.sort(key=_order_key)

    nb, na = set(before.reachable), set(after.reachable)
    common = sorted(nb & na)
    lost, gained, still = [], [], []
    for k, a in enumerate(common):
        for b in common[k + 1:]:
            rb = before.reachable[a].get(b, False)
            ra = after.reachable[a].get(b, False)
            if rb and not ra:
                lost.append((a, b))
            elif ra and not rb:
                gained.append((a, b))
            elif not ra and not rb:
                still.append((a, b))
    return LayoutComparison(before=before, after=after, changes=changes, pairs_lost=lost, pairs_gained=gained,
                            pairs_still_cut=still, stations_only_before=sorted(nb - na),
                            stations_only_after=sorted(na - nb), match_distance_m=match_distance_m)


def compare_layouts(before_plan: Plan, after_plan: Plan, vehicle: Vehicle, stations: list[Station],
                    after_stations: list[Station] | None = None, *, site: Site | None = None,
                    heading_step_deg: float | None = None, size: str | None = None,
                    match_distance_m: float = DEFAULT_MATCH_DISTANCE_M, workers: int | None = 1,
                    progress: Callable[[str], None] | None = None) -> LayoutComparison:
    """Check ``vehicle`` on both plans and compare (stations in each drawing frame, metres).

    ``after_stations`` defaults to ``stations``. ``size`` (``"width"``, ``"length"`` or
    ``"scale"``) also sizes the vehicle on both plans, with the site's heading step (or
    ``heading_step_deg``) so that the two answers are comparable.
    """
    from floorfit.analysis.check import run_check
    from floorfit.cspace.incremental import update_slices
    from floorfit.cspace.slicememo import sharing

    progress = progress or (lambda _m: None)
    after_stations = stations if after_stations is None else after_stations
    with sharing() as memo:
        # one slice set per vehicle and shape: AFTER's slices are BEFORE's, recomputed near the changed obstacles
        memo.relate(before_plan, after_plan, update_slices)
        progress("checking BEFORE")
        # a station that a layout covers with an obstacle is a station the vehicle cannot serve there
        # (a lost or gained station pair), not bad input
        before = run_check(before_plan, vehicle, stations, site=site, heading_step_deg=heading_step_deg,
                           workers=workers, stations_inside_ok=True)
        progress("checking AFTER")
        after = run_check(after_plan, vehicle, after_stations, site=site, heading_step_deg=heading_step_deg,
                          workers=workers, stations_inside_ok=True)
        comparison = compare_results(before, after, match_distance_m=match_distance_m)
        if size:
            from floorfit.analysis.sizing import size_vehicle

            progress(f"sizing ({size}) on BEFORE")
            comparison.sizing_before = size_vehicle(before_plan, vehicle, stations, vary=size, site=site,
                                                    heading_step_deg=heading_step_deg, workers=workers)
            progress(f"sizing ({size}) on AFTER")
            comparison.sizing_after = size_vehicle(after_plan, vehicle, after_stations, vary=size, site=site,
                                                   heading_step_deg=heading_step_deg, workers=workers)
    return comparison
