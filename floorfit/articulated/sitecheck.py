"""Train findings for a site check: station pairs the tractor reaches but the train does not.

For every ordered pair of stations (a, b) that the tractor alone connects (the rigid check's
``reachable``, or computed here from the tractor's heading slices), the train must drive from a
to b **forward** (reversing with a cart is not supported), starting with the cart in line behind
the tractor. The forward search of :mod:`floorfit.articulated.search` looks for such a motion.
When it finds none, the same search is run for the tractor alone (cart ignored, no turning on
the spot first), and the cart is made to follow that line: where the cart first hits, and how far
the obstacle reaches into it, is the finding ("off-tracking": the cart cuts inside a corner;
"cart-width": it hits while running straight; "jack-knife": the hitch angle passes its limit
first). A search that gives up is not a proof, so a finding here errs towards "does not pass";
each says so in its notes.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from typing import Any

import networkx as nx
import numpy as np

from floorfit.analysis.findings import Finding, Station
from floorfit.analysis.naming import place_name
from floorfit.articulated.kinematics import follow, jack_knife_radius
from floorfit.articulated.search import SearchSettings, TrainPlanResult, cart_pose, plan_forward
from floorfit.articulated.sweep import MotionVerdict, TrainChecker, judge_motion, off_tracking_m, swept_geometry
from floorfit.articulated.turnaround import TurnCircle, turn_circle, turnaround_region
from floorfit.errors import FloorfitError
from floorfit.plan.model import Plan
from floorfit.vehicles.train import Train

__all__ = [
    "START_HEADINGS_DEG",
    "Explanation",
    "TrainCheck",
    "articulated_check",
    "articulated_findings",
    "explain_blocked",
    "merge_into_result",
    "train_route_sweep",
]

#: Start headings tried at a station without a heading, degrees.
START_HEADINGS_DEG = tuple(range(-180, 180, 15))


@dataclass
class Explanation:
    """Why the train does not get through where the tractor alone does (local frame, metres)."""

    cause: str                       # "off-tracking", "cart-width", "jack-knife", "forward"
    x: float
    y: float
    depth_m: float = 0.0
    clearance_m: float | None = None
    hitch_angle_deg: float = 0.0
    verdict: MotionVerdict | None = None
    tractor_line: TrainPlanResult | None = None
    passes: bool = False             # the cart follows the tractor's line after all (then it is a route)
    geometry: Any = None


@dataclass
class TrainCheck:
    """Result of :func:`articulated_check`. ``reachable[a][b]``: the train drives forward from a to b.
    ``routes``: report-ready sweeps of the routes found (see :func:`train_route_sweep`).
    ``turnaround``: local-frame turn centres of full forward loops; ``circle`` its loop."""

    findings: list[Finding]
    reachable: dict[str, dict[str, bool]]
    routes: list[dict[str, Any]] = field(default_factory=list)
    turnaround: Any = None
    circle: TurnCircle | None = None
    notes: list[str] = field(default_factory=list)
    settings: dict[str, Any] = field(default_factory=dict)
    pairs: dict[tuple[str, str], Finding] = field(default_factory=dict)   # (from, to) -> its finding


def _noop(_msg: str) -> None:
    pass


def _starts(train: Train, checker: TrainChecker, st_local, heading_deg: float | None) -> list[tuple]:
    x, y = st_local
    heads = [heading_deg] if heading_deg is not None else list(START_HEADINGS_DEG)
    poses = [(x, y, math.radians(h)) for h in heads]
    tr = np.array(poses)
    carts = np.array([cart_pose(train, p) for p in poses])
    t_deg, c_deg = tr.copy(), carts.copy()
    t_deg[:, 2] = np.degrees(t_deg[:, 2])
    c_deg[:, 2] = np.degrees(c_deg[:, 2])
    t_hit, c_hit = checker.hits(t_deg, c_deg)
    return [p for p, bad in zip(poses, t_hit | c_hit) if not bad]


def _tractor_reach(plan: Plan, train: Train, stations: list[Station]) -> dict[str, dict[str, bool]]:
    from floorfit.cspace.roadmap import build_roadmap, station_nodes
    from floorfit.cspace.slices import build_slices, choose_headings

    extra = [s.heading_deg for s in stations if s.heading_deg is not None]
    slices = build_slices(plan, train.tractor, cells=choose_headings(plan, train.tractor, extra_headings=extra))
    G = build_roadmap(slices)
    comp = {}
    for cid, c in enumerate(nx.connected_components(G)):
        for n in c:
            comp[n] = cid
    regions = {s.name: {comp[n] for n in station_nodes(slices, plan.to_local(s.x, s.y), s.heading_deg,
                                                      s.heading_tolerance_deg)} for s in stations}
    return {a.name: {b.name: bool(regions[a.name] & regions[b.name]) for b in stations} for a in stations}


def explain_blocked(checker: TrainChecker, starts, goal, *, goal_heading_tol_deg: float = 5.0,
                    settings: SearchSettings | None = None, heuristics: dict | None = None) -> Explanation:
    """Follow the tractor's own forward line with the cart and say where and why the train fails.

    The tractor's line: the forward search for the tractor alone, tried in this order until one is
    found: (1) arcs no tighter than the radius at which the train's settled hitch angle reaches its
    limit, no turning on the spot: along such a line the hitch angle never passes its limit (on
    each arc it moves monotonically from its entry value towards the settled value, on straights
    towards 0), so a failure there is the cart's sweep (off-tracking, or its width); (2) any arcs;
    (3) with turning on the spot. Local frame throughout.
    """
    cfg = settings or SearchSettings()
    alone = None
    holdable = jack_knife_radius(checker.train) * (1.0 + 1e-6)
    for floor_m, spin in ((holdable, False), (None, False), (None, True)):
        alone = plan_forward(checker, starts, goal, goal_heading_tol_deg=goal_heading_tol_deg, with_cart=False,
                             settings=replace(cfg, rotate_in_place=spin, min_radius_m=floor_m), heuristics=heuristics)
        if alone.found:
            break
    if alone is None or not alone.found:
        gx, gy = goal[0], goal[1]
        return Explanation(cause="forward", x=float(gx), y=float(gy), tractor_line=alone)
    train = checker.train
    m = follow(alone.segments, train, cart_heading=starts[alone.start_index][2], tolerance_m=checker.tolerance_m)
    v = judge_motion(checker, m, hitch_limit=False)
    if v.passable:
        return Explanation(cause="none", x=float(m.tractor[-1, 0]), y=float(m.tractor[-1, 1]), verdict=v,
                           tractor_line=alone, passes=True, hitch_angle_deg=v.hitch_angle_deg)
    geom = None
    if v.index is not None:
        from floorfit.cspace.collision import place_footprint
        cart = m.cart_deg()[v.index]
        geom = place_footprint(train.cart_footprint, cart[None, :])[0]
    if v.problem == "cart":
        cause = "cart-width" if v.aligned else "off-tracking"
    elif v.problem in ("jack-knife", "pushing"):
        cause = "jack-knife"
    else:
        cause = "tractor"
    return Explanation(cause=cause, x=float(v.x), y=float(v.y), depth_m=v.depth_m, clearance_m=v.clearance_m,
                       hitch_angle_deg=float(np.degrees(np.max(np.abs(m.hitch_angle[: (v.index or 0) + 1])))),
                       verdict=v, tractor_line=alone, geometry=geom)


def _summary(ex: Explanation, train: Train, a: str, b: str, tol: float) -> str:
    pair = f"({a} → {b}, forward)"
    jk = (ex.verdict.details.get("jack_knife_index") if ex.verdict is not None else None)
    jk_first = jk is not None and ex.verdict is not None and ex.verdict.index is not None and jk < ex.verdict.index
    if ex.cause in ("off-tracking", "cart-width"):
        where = "cuts inside the corner" if ex.cause == "off-tracking" else "does not fit the passage"
        if ex.depth_m > 0:
            s = f"the cart {where} by {ex.depth_m:.2f} m: the tractor alone passes, the train does not {pair}"
        else:
            s = (f"the cart passes within {ex.clearance_m or 0.0:.3f} m of an obstruction, less than the "
                 f"{tol:.3f} m tolerance: the tractor alone passes, the train does not {pair}")
        if jk_first:
            s += f"; on that line the hitch angle also passes its {train.max_hitch_deg:g}° limit first"
        return s
    if ex.cause == "jack-knife":
        return (f"following the tractor's line the hitch angle reaches {ex.hitch_angle_deg:.0f}° "
                f"(limit {train.max_hitch_deg:g}°): the tractor alone passes, the train does not {pair}")
    if ex.cause == "forward":
        return (f"the tractor reaches {b} only with reversing or manoeuvres a train cannot make; "
                f"reversing with a cart is not supported {pair}")
    return f"the train does not get through here although the tractor alone does {pair}"


def _route_dict(plan: Plan, train: Train, motion, a: str, b: str, *, max_points: int = 400) -> dict[str, Any]:
    idx = np.unique(np.linspace(0, len(motion) - 1, min(len(motion), max_points)).round().astype(int))
    ox, oy = plan.origin
    path = motion.tractor_deg()[idx]
    path[:, 0] += ox
    path[:, 1] += oy
    cart = motion.cart_deg()[idx]
    cart[:, 0] += ox
    cart[:, 1] += oy
    return {"from": a, "to": b, "path": path, "cart_path": cart, "swept": swept_geometry(train, motion),
            "passable": True, "length_m": float(motion.travel_m[-1]),
            "max_hitch_angle_deg": float(np.degrees(np.max(np.abs(motion.hitch_angle)))),
            "off_tracking_m": off_tracking_m(motion)}


def train_route_sweep(plan: Plan, train: Train, start, goal, *, from_name: str = "start", to_name: str = "goal",
                      settings: SearchSettings | None = None, checker: TrainChecker | None = None,
                      goal_heading_tol_deg: float = 5.0) -> dict[str, Any] | None:
    """Forward route of the train between two drawing-frame poses (x, y, heading_deg; the goal's
    heading may be None) in the shape the report draws: ``{"from", "to", "path": (N, 3) drawing
    frame [x, y, heading_deg] of the tractor's reference point, "swept": LOCAL-frame geometry of
    tractor and cart, "cart_path": (N, 3) drawing frame cart axle and heading, "passable": True,
    "length_m", "max_hitch_angle_deg", "off_tracking_m"}``; None when no forward route is found."""
    cfg = settings or SearchSettings()
    checker = checker or TrainChecker(plan, train, cfg.tolerance_m)
    sx, sy = plan.to_local(float(start[0]), float(start[1]))
    gx, gy = plan.to_local(float(goal[0]), float(goal[1]))
    gh = None if goal[2] is None else math.radians(float(goal[2]))
    res = plan_forward(checker, [(sx, sy, math.radians(float(start[2])))], (gx, gy, gh),
                       goal_heading_tol_deg=goal_heading_tol_deg, settings=cfg)
    if not res.found or res.motion is None:
        return None
    return _route_dict(plan, train, res.motion, from_name, to_name)


# each station, then each ordered station pair, then the turn-around, all filling one findings list and reach table
def articulated_check(plan: Plan, train: Train, stations: list[Station], site=None, *,  # noqa: C901
                      reachable: dict[str, dict[str, bool]] | None = None, settings: SearchSettings | None = None,
                      progress: Callable[[str], None] | None = None, turnaround: bool = True,
                      floor=None) -> TrainCheck:
    """The train part of a site check. Stations in the drawing frame (metres, degrees).

    ``reachable``: the rigid check's reachability for the tractor (``CheckResult.reachable`` of
    ``run_check(plan, train.tractor, ...)``); computed here when None. ``site`` is accepted for
    symmetry with the rigid check (its clearance is not applied to the train; see docs).
    ``floor``: optional local geometry to clip the turn-around region (the check's ``fits`` map).
    """
    del site  # the site's required clearance is not applied to the train here (documented)
    progress = progress or _noop
    cfg = settings or SearchSettings(time_limit_s=None)     # counts only: the same verdict on any machine
    checker = TrainChecker(plan, train, cfg.tolerance_m)
    names = [s.name for s in stations]
    if reachable is None:
        progress("train: tractor reachability")
        reachable = _tractor_reach(plan, train, stations)
    heur: dict = {}
    local = {s.name: plan.to_local(s.x, s.y) for s in stations}
    starts = {s.name: _starts(train, checker, local[s.name], s.heading_deg) for s in stations}
    reach = {a: {b: a == b and bool(starts[a]) for b in names} for a in names}
    findings: list[Finding] = []
    notes: list[str] = []
    routes: list[dict[str, Any]] = []
    pairs: dict[tuple[str, str], Finding] = {}
    by_name = {s.name: s for s in stations}
    for s in stations:
        tractor_ok = any(reachable.get(s.name, {}).values())
        if not starts[s.name] and tractor_ok:
            lx, ly = local[s.name]
            hd = f" at heading {s.heading_deg:g}°" if s.heading_deg is not None else " at any heading"
            findings.append(Finding(kind="blocked", cause="station", x=s.x, y=s.y, label=place_name(plan, lx, ly),
                                    summary=f"the train (cart in line behind the tractor) does not fit at station "
                                            f"{s.name}{hd}; the tractor alone does", cuts_off=[s.name]))
    for a in names:
        for b in names:
            if a == b or not reachable.get(a, {}).get(b, False) or not starts[a]:
                continue
            sb = by_name[b]
            gh = None if sb.heading_deg is None else math.radians(sb.heading_deg)
            goal = (*local[b], gh)
            progress(f"train: {a} → {b}")
            res = plan_forward(checker, starts[a], goal, goal_heading_tol_deg=sb.heading_tolerance_deg,
                               settings=cfg, heuristics=heur)
            motion = res.motion if res.found else None
            ex = None
            if not res.found and res.status == "not-found-within-limits":
                ex = explain_blocked(checker, starts[a], goal, goal_heading_tol_deg=sb.heading_tolerance_deg,
                                     settings=cfg, heuristics=heur)
                if ex.passes and ex.tractor_line is not None and ex.tractor_line.found:
                    s0 = starts[a][ex.tractor_line.start_index]
                    motion = follow(ex.tractor_line.segments, train, cart_heading=s0[2],
                                    tolerance_m=checker.tolerance_m)
            if motion is not None:
                reach[a][b] = True
                if names.index(a) < names.index(b) or not reach[b][a]:
                    if not any(r["from"] == b and r["to"] == a for r in routes):
                        routes.append(_route_dict(plan, train, motion, a, b))
                continue
            if ex is None:
                continue      # goal pose blocked for the tractor: the rigid check reports that
            dx, dy = plan.to_drawing(ex.x, ex.y)
            summary = _summary(ex, train, a, b, checker.grow_m)
            if res.reason.startswith("stopped"):
                summary += " (the train's search stopped at its limit: another line might still pass)"
            f = Finding(kind="blocked", cause=ex.cause, x=dx, y=dy, label=place_name(plan, ex.x, ex.y),
                        summary=summary, cuts_off=[b], geometry=ex.geometry, clearance_m=ex.clearance_m)
            pairs[(a, b)] = _merge(findings, f)
            notes.append(f"{a} → {b}: no forward path for the train found ({res.reason}); "
                         f"{res.expansions} states searched")
    circle = None
    region = None
    if turnaround:
        progress("train: turn-around")
        try:
            circle = turn_circle(train, tolerance_m=cfg.tolerance_m)
            region = turnaround_region(plan, train, floor=floor, circle=circle)
            notes.append(f"the train turns round forward on a clear circle of radius {circle.outer_m:.2f} m "
                         f"(tractor reference on radius {circle.radius_m:.2f} m)")
        except FloorfitError as exc:          # a train that cannot loop at all: say so, do not fail
            notes.append(f"no forward loop found for the train: {exc.message}")
    settings_out = {"train": train.name, "tolerance_m": round(checker.grow_m, 4), "search": {
        "time_limit_s": cfg.time_limit_s, "max_expansions": cfg.max_expansions, "weight": cfg.weight}}
    return TrainCheck(findings=findings, reachable=reach, routes=routes, turnaround=region, circle=circle,
                      notes=notes, settings=settings_out, pairs=pairs)


def _merge(findings: list[Finding], f: Finding, radius_m: float = 0.5) -> Finding:
    """Join a finding with one of the same cause within ``radius_m`` (its stations added); the one kept."""
    for g in findings:
        if g.cause == f.cause and g.kind == f.kind and math.hypot(g.x - f.x, g.y - f.y) <= radius_m:
            g.cuts_off = sorted(set(g.cuts_off) | set(f.cuts_off))
            return g
    findings.append(f)
    return f


def merge_into_result(result, tc: TrainCheck) -> None:
    """Fold a train check into the rigid check's :class:`~floorfit.analysis.findings.CheckResult` (in place).

    Adds the train's findings and ranks all of them again (ids renumbered), makes
    ``reachable[a][b]`` False where the train cannot drive from a to b forward, adds the train
    findings' ids to ``cuts`` for those pairs, appends the notes, sets ``result.routes`` (the swept
    routes) and ``turnability["train_turns_around"]`` (local turn centres), and records the train
    and its forward reachability in ``settings``.
    """
    from floorfit.analysis.findings import rank_findings

    before = {f.id: f for f in result.findings}
    result.findings = rank_findings(list(result.findings) + list(tc.findings))
    # the ids were renumbered: the cuts name the same findings by their new ids
    result.cuts = {k: [before[i].id if i in before else i for i in ids] for k, ids in result.cuts.items()}
    names = list(result.reachable)
    for a in names:
        for b in names:
            if a != b and not tc.reachable.get(a, {}).get(b, True):
                result.reachable[a][b] = False
    for i, a in enumerate(names):
        for b in names[i + 1:]:
            ids = [tc.pairs[p].id for p in ((a, b), (b, a)) if p in tc.pairs]
            if ids:
                key = (a, b)
                result.cuts[key] = list(dict.fromkeys(list(result.cuts.get(key, [])) + ids))
    result.notes.extend(tc.notes)
    result.routes = list(getattr(result, "routes", None) or []) + list(tc.routes)
    if tc.turnaround is not None:
        result.turnability["train_turns_around"] = tc.turnaround
    result.settings["train"] = tc.settings.get("train")
    result.settings["train_tolerance_m"] = tc.settings.get("tolerance_m")
    result.settings["train_forward_reachable"] = tc.reachable
    if tc.circle is not None:
        result.settings["train_turn_circle"] = tc.circle.to_dict()


def articulated_findings(plan: Plan, train: Train, stations: list[Station], site=None, **kw) -> list[Finding]:
    """The train's findings only (see :func:`articulated_check`); positions in the drawing frame."""
    return articulated_check(plan, train, stations, site, turnaround=False, **kw).findings
