"""Sizing: the largest vehicle a layout still serves, and the place that limits it.

``size_vehicle(plan, vehicle, stations, vary="width")`` varies one dimension of the
vehicle outline, keeps the others fixed, and finds by bisection the largest value for
which every pair of stations stays connected in the vehicle's roadmap (at each station's
docking heading where one is given). All lengths in metres, headings in degrees.

Families of outlines (the ``vary`` values)
------------------------------------------
``width``
    The outline stretched along the vehicle's +y axis about the centre line of its
    bounds (:meth:`floorfit.vehicles.rigid.Vehicle.with_width`); the value is the outline width.
``length``
    The outline stretched along +x about the reference point
    (:meth:`~floorfit.vehicles.rigid.Vehicle.with_length`); the value is the outline length.
``scale``
    The outline scaled about the reference point (:meth:`~floorfit.vehicles.rigid.Vehicle.scaled`);
    the value is the outline's larger extent (length or width), the factor is reported too.

The safety margin is never varied: it is added to every outline of the family, and the
answer gives the largest outline dimension both without and with it.

Why bisection is right (monotonicity)
-------------------------------------
If footprint A ⊆ footprint B, every pose where B is clear of the obstacles leaves A clear,
so B's free configuration space lies inside A's and any route for B is a route for A:
feasibility is monotone along any family of *nested* footprints. The family is proved
nested for an axis-aligned rectangle (stretching either side, or scaling about a
reference point inside it: the mitred margin of a rectangle is the rectangle grown by the
margin) and for scaling a convex outline about a reference point inside it (each support
line and each mitre line moves outwards). For any other outline the nesting is checked
with shapely (``covers``) between every pair of neighbouring values the search evaluated,
and the answer says which (``monotone``: ``"proved nested"``, ``"checked"`` or
``"not nested"``).

Which way the answer errs
-------------------------
Every step of the search uses the sound bound of :mod:`floorfit.cspace.slices` (errs towards
"does not fit"), so ``largest_m`` is a value at which the stations were shown to be
connected: a safe lower bound (``errs: "low"``), found to ``precision_m``. Just above it
(``checked_above_m``, at most ``precision_m`` higher) the sound bound separates the
stations; a full site check there names the *binding place*, the pinch point to widen.
A second search with the optimistic bound (errs towards "fits") gives ``upper_m``, a value
at which even the optimistic bound separates the stations, so the true limit lies in
``[largest_m, upper_m)``; the gap is the price of the heading discretisation. All
evaluations of one search share one set of heading cells (one step throughout).

Shared work
-----------
The obstacles are prepared once; each value is evaluated once per bound; the slice sets of the
search stay in memory (:mod:`floorfit.cspace.slicememo`), so the check that names the binding
place reuses the sound slices of its value, and within :func:`floorfit.analysis.compare.compare_layouts`
the search on AFTER derives its sets from BEFORE's where it tries the same values.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from itertools import pairwise
from typing import Any

import networkx as nx
import shapely

from floorfit.analysis.budget import budget_applies, budget_text, first_pair_over_budget
from floorfit.analysis.findings import Station
from floorfit.cspace.roadmap import build_roadmap
from floorfit.cspace.sizelimits import check_problem_size
from floorfit.cspace.slicememo import active_memo, sharing
from floorfit.cspace.slices import build_slices, choose_headings, obstacles_for
from floorfit.errors import InputError
from floorfit.plan.model import Plan
from floorfit.plan.site import Site
from floorfit.vehicles.rigid import PLAUSIBLE_SIZE_M, Vehicle

__all__ = ["SizingResult", "Connectivity", "size_vehicle", "stations_connected", "vehicle_family",
           "family_is_nested", "VARY_CHOICES", "DEFAULT_PRECISION_M", "DEFAULT_SIZING_STEP_DEG",
           "SIZING_FORMAT"]

#: The dimensions that can be varied.
VARY_CHOICES = ("width", "length", "scale")
#: Default bisection precision, metres.
DEFAULT_PRECISION_M = 0.01
#: Heading step used when neither the caller nor the site file gives one, degrees. Coarser
#: than the site check's default to keep the ~10 evaluations of a search quick; the
#: resulting tolerance is reported (``tolerance_m``), and wall directions and docking
#: headings still get their own narrow cells.
DEFAULT_SIZING_STEP_DEG = 3.0
#: ``format`` value of the sizing JSON.
SIZING_FORMAT = "floorfit-sizing"
#: Nesting is checked with this slack, metres (floating-point noise on shared edges).
_NEST_SLACK_M = 1e-9


def _noop(_msg: str) -> None:
    pass


# -- the family of outlines -------------------------------------------------------------
def vehicle_family(vehicle: Vehicle, vary: str) -> tuple[float, Callable[[float], Vehicle]]:
    """The current value of the varied dimension (metres) and a function value → vehicle.

    For ``scale`` the value is the outline's larger extent, metres.
    """
    if vary == "width":
        return vehicle.width_m, vehicle.with_width
    if vary == "length":
        return vehicle.length_m, vehicle.with_length
    if vary == "scale":
        extent = max(vehicle.length_m, vehicle.width_m)
        return extent, lambda value: vehicle.scaled(value / extent)
    raise InputError(f"cannot vary '{vary}' (one of {', '.join(VARY_CHOICES)})", None, "--vary")


def _is_axis_rectangle(poly: shapely.Polygon) -> bool:
    x0, y0, x1, y1 = poly.bounds
    return abs(poly.area - (x1 - x0) * (y1 - y0)) <= 1e-9 * max(1.0, (x1 - x0) * (y1 - y0))


def family_is_nested(vehicle: Vehicle, vary: str) -> bool:
    """True when the family is nested by construction (see the module docstring)."""
    outline = vehicle.outline
    origin = shapely.Point(0.0, 0.0)
    if _is_axis_rectangle(outline):
        if vary == "width":
            return True
        return bool(outline.covers(origin))     # length / scale: about the reference point
    if vary == "scale":
        return bool(outline.equals(outline.convex_hull) and outline.covers(origin))
    return False


def _nested(small: Vehicle, large: Vehicle) -> bool:
    return bool(large.footprint.buffer(_NEST_SLACK_M, join_style="mitre").covers(small.footprint))


# -- one evaluation ------------------------------------------------------------------------
@dataclass
class Connectivity:
    """Whether a vehicle connects the stations. ``separated``: pairs (a, b) not connected;
    ``unplaced``: stations where the vehicle does not fit at an allowed heading."""

    connected: bool
    separated: list[tuple[str, str]]
    unplaced: list[str]
    tolerance_m: float
    bound: str
    #: with a manoeuvre budget: the first station pair not driven within it (a binding-place dict,
    #: :func:`floorfit.analysis.budget.first_pair_over_budget`), None when every pair is
    over_budget: dict | None = None


def stations_connected(plan: Plan, vehicle: Vehicle, stations: list[Station], cells, *,
                       bound: str = "sound", obstacles=None, workers: int | None = 1,
                       max_direction_changes: int | None = None, first_pair: tuple[str, str] | None = None
                       ) -> Connectivity:
    """Does every station pair share a connected region of the vehicle's roadmap?

    ``cells``: the heading cells to use (:func:`floorfit.cspace.slices.choose_headings`). The
    same test as the site check's reachability (``CheckResult.reachable``), without the
    findings; stations in the drawing frame, metres. With ``max_direction_changes`` (differential
    and car-like vehicles, sound bound) a connected layout is then judged by drivable paths within
    that many direction changes (:func:`floorfit.analysis.budget.first_pair_over_budget`, on the
    same slices and roadmap; ``first_pair`` is judged first).
    """
    from floorfit.cspace.roadmap import station_nodes

    slices = build_slices(plan, vehicle, cells=cells, bound=bound, obstacles=obstacles, workers=workers)
    G = build_roadmap(slices)
    comp_of: dict[Any, int] = {}
    for cid, comp in enumerate(nx.connected_components(G)):
        for n in comp:
            comp_of[n] = cid
    regions = {}
    for s in stations:
        nodes = station_nodes(slices, plan.to_local(s.x, s.y), s.heading_deg, s.heading_tolerance_deg)
        regions[s.name] = {comp_of[n] for n in nodes}
    names = [s.name for s in stations]
    separated = [(a, b) for i, a in enumerate(names) for b in names[i + 1:] if not regions[a] & regions[b]]
    unplaced = [n for n in names if not regions[n]]
    over = None
    if not separated and not unplaced and bound == "sound" and budget_applies(vehicle, max_direction_changes):
        over = first_pair_over_budget(plan, vehicle, slices, stations, max_direction_changes, roadmap=G,
                                      first=first_pair)
    return Connectivity(connected=not separated and not unplaced and over is None, separated=separated,
                        unplaced=unplaced, tolerance_m=float(slices.tolerance_m), bound=bound, over_budget=over)


# -- the result ----------------------------------------------------------------------------
@dataclass
class SizingResult:
    """The answer of :func:`size_vehicle`. Lengths in metres, headings in degrees.

    ``status``: ``"limited"`` (a largest value was found), ``"none-fits"`` (not even the
    smallest value tried connects the stations), ``"not-limited"`` (still connected at the
    largest value tried, ``largest_tried_m``).

    ``largest_m`` fits (sound bound); ``checked_above_m`` (at most ``precision_m`` above it)
    was found not to fit by the sound bound, and the binding place comes from a full check
    there; ``upper_m`` does not fit even by the optimistic bound, so the true limit lies in
    ``[largest_m, upper_m)``.
    """

    vary: str
    status: str
    current_m: float
    largest_m: float | None
    checked_above_m: float | None
    upper_m: float | None
    precision_m: float
    margin_m: float
    monotone: str
    heading_step_deg: float
    tolerance_m: float
    evaluations: int
    vehicle_name: str
    plan_source: str
    stations: list[Station]
    largest_factor: float | None = None
    binding: dict[str, Any] | None = None
    blocked: list[dict[str, Any]] = field(default_factory=list)
    largest_tried_m: float | None = None
    notes: list[str] = field(default_factory=list)
    #: the manoeuvre budget the stations were judged by (differential and car-like vehicles), else None
    max_direction_changes: int | None = None

    @property
    def fits_now(self) -> bool:
        """True when the current vehicle is within the largest value found."""
        return self.largest_m is not None and self.largest_m >= _floor_to(self.current_m) - 1e-9

    @property
    def sizing_margin_m(self) -> float | None:
        """Room to grow: largest − current (negative when the current vehicle does not fit)."""
        return None if self.largest_m is None else self.largest_m - self.current_m

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready and stable (rounded to 0.1 mm, no timestamps)."""
        def r(v, nd=4):
            return None if v is None else round(float(v), nd)

        def with_margin(v):
            return None if v is None else r(v + 2 * self.margin_m)

        return {
            "format": SIZING_FORMAT, "version": 1,
            "plan": str(self.plan_source), "vehicle": self.vehicle_name,
            "vary": self.vary, "dimension": DIMENSION_TEXT[self.vary], "status": self.status,
            "current_m": r(self.current_m), "current_with_margin_m": with_margin(self.current_m),
            "largest_m": r(self.largest_m), "largest_with_margin_m": with_margin(self.largest_m),
            "largest_factor": r(self.largest_factor, 6),
            "sizing_margin_m": r(self.sizing_margin_m), "fits_now": self.fits_now,
            "checked_above_m": r(self.checked_above_m), "upper_m": r(self.upper_m),
            "largest_tried_m": r(self.largest_tried_m),
            "precision_m": self.precision_m, "margin_m": self.margin_m,
            "errs": "low", "bound": "sound", "monotone": self.monotone,
            "heading_step_deg": self.heading_step_deg, "tolerance_m": r(self.tolerance_m, 6),
            "evaluations": self.evaluations,
            "max_direction_changes": self.max_direction_changes,
            "judged_by": ("holonomic" if self.max_direction_changes is None
                          else f"drivable paths within {budget_text(self.max_direction_changes)}"),
            "binding": self.binding, "blocked": list(self.blocked),
            "stations": [s.to_dict() for s in self.stations],
            "notes": list(self.notes),
        }

    def summary(self) -> str:
        """One plain line with the answer."""
        dim = {"width": "width", "length": "length", "scale": "size (larger extent)"}[self.vary]
        if self.status == "none-fits":
            return f"no {dim} down to {self.checked_above_m:.3f} m connects the stations"
        if self.status == "not-limited":
            return (f"the stations stay connected up to the largest {dim} tried, {self.largest_tried_m:.2f} m "
                    f"(outline), {self.largest_tried_m + 2 * self.margin_m:.2f} m with the margin")
        text = (f"largest {dim}: {self.largest_m:.3f} m outline, {self.largest_m + 2 * self.margin_m:.3f} m "
                f"with the {self.margin_m:g} m margin (now {self.current_m:.3f} m, "
                f"{'room to grow' if self.fits_now else 'too large by'} {abs(self.sizing_margin_m):.3f} m)")
        if self.binding:
            where = f" [{self.binding['label']}]" if self.binding.get("label") else ""
            cw = self.binding.get("clear_width_m")
            cw_text = f", clear width {cw:.2f} m" if cw is not None else ""
            cause = self.binding["cause"]
            if self.binding.get("direction_changes") is not None and self.max_direction_changes is not None:
                cause += (f": {self.binding['direction_changes']} direction changes, budget "
                          f"{self.max_direction_changes}")
            text += (f"; binding place at ({self.binding['x']:.2f}, {self.binding['y']:.2f}) m{where}"
                     f"{cw_text} ({cause})")
        return text


#: What the value of each family measures.
DIMENSION_TEXT = {"width": "outline width (along +y)", "length": "outline length (along +x)",
                  "scale": "outline's larger extent, scaled about the reference point"}


# -- the search -------------------------------------------------------------------------------
def _floor_to(value: float, step: float = 1e-4) -> float:
    return math.floor(value / step + 1e-6) * step


def _bisect(fits: Callable[[float], bool], lo: float, hi: float, precision: float) -> tuple[float, float]:
    """Shrink [lo, hi] (lo fits, hi does not) to at most ``precision`` wide."""
    while hi - lo > precision:
        mid = 0.5 * (lo + hi)
        if fits(mid):
            lo = mid
        else:
            hi = mid
    return lo, hi


def _bracket(fits: Callable[[float], bool], start: float, floor: float, cap: float
             ) -> tuple[float | None, float | None]:
    """(lo, hi) with lo fitting and hi not, searching up (doubling steps) or down (halving)."""
    if fits(start):
        lo, step = start, max(0.25 * start, 0.1)
        while lo < cap:
            candidate = min(lo + step, cap)
            if not fits(candidate):
                return lo, candidate
            lo, step = candidate, 2 * step
        return lo, None
    hi = start
    while hi > floor:
        candidate = max(hi / 2, floor)
        if fits(candidate):
            return candidate, hi
        hi = candidate
    return None, hi


def _binding_place(plan, vehicle, stations, site, step, workers) -> tuple[dict | None, list[dict], list[str]]:
    """Blocked findings of a full site check for ``vehicle`` (the one just above the limit)."""
    from floorfit.analysis.check import run_check

    plain = replace(site, required_clearance_m=0.0)        # tight spots do not matter here
    result = run_check(plan, vehicle, stations, site=plain, heading_step_deg=step, workers=workers, quick=True)
    keys = ("id", "kind", "cause", "x", "y", "label", "clear_width_m", "needed_width_m", "cuts_off", "summary")
    blocked = []
    for f in result.findings:
        if f.kind == "blocked":
            d = f.to_dict()
            item = {k: d[k] for k in keys}
            item["x"], item["y"] = round(float(f.x), 4), round(float(f.y), 4)
            blocked.append(item)
    cutting = [b for b in blocked if b["cuts_off"]]
    binding = cutting[0] if cutting else (blocked[0] if blocked else None)
    return binding, blocked, list(result.notes)


# validate, bracket and bisect, check monotonicity, find the binding place: the steps share the evaluation cache;
# the slice sets of the search are shared in memory (the binding place's check reuses those of its value)
@sharing()
def size_vehicle(plan: Plan, vehicle: Vehicle, stations: list[Station], *, vary: str = "width",  # noqa: C901
                 site: Site | None = None, heading_step_deg: float | None = None,
                 precision_m: float = DEFAULT_PRECISION_M, max_m: float | None = None,
                 find_binding: bool = True, upper_bound: bool = True, workers: int | None = 1,
                 progress: Callable[[str], None] | None = None,
                 max_direction_changes: int | None = None) -> SizingResult:
    """The largest value of one outline dimension for which every station pair stays connected.

    Parameters
    ----------
    plan, vehicle, stations
        As for :func:`floorfit.analysis.check.run_check` (stations in the drawing frame, metres).
    vary : ``"width"``, ``"length"`` or ``"scale"``
        The dimension to vary (see the module docstring); the margin stays as it is.
    site : Site, optional
        Heading step and station source path for messages (clearance is not used).
    heading_step_deg : float, optional
        Uniform heading step, degrees; default the site's, else 3°.
    precision_m : float
        Bisection stops when the bracket is this narrow, metres (default 0.01).
    max_m : float, optional
        Largest value tried, metres (default: the drawing's diagonal, at most 30 m).
    find_binding : bool
        Run a full site check just above the limit to name the pinch point that binds.
    upper_bound : bool
        Also search with the optimistic bound for ``upper_m`` (about five more evaluations).
    workers : int or None
        Processes for the slices of each evaluation.
    max_direction_changes : int, optional
        Manoeuvre budget (default: the site's, 2): differential and car-like vehicles fit only
        when every station pair is driven within this many direction changes
        (:mod:`floorfit.analysis.budget`; one drive per evaluation decides when it fails, the pair
        that failed last being judged first). A limit set by the budget is the binding place
        (kind ``maneuver``, cause ``over-budget`` with the count), without an optimistic ``upper_m``.
    """
    from floorfit.plan.stations import validate_stations

    site = site or Site()
    progress = progress or _noop
    if vary not in VARY_CHOICES:
        raise InputError(f"cannot vary '{vary}' (one of {', '.join(VARY_CHOICES)})", None, "--vary")
    if not (isinstance(precision_m, (int, float)) and math.isfinite(precision_m) and 1e-4 <= precision_m <= 1.0):
        raise InputError(f"precision must be between 0.0001 and 1 m, got {precision_m}", None, "--precision")
    if not stations:
        raise InputError("sizing needs at least one station (site file or --station)", site.path, "stations")
    validate_stations(plan, stations, site.path)

    current, make = vehicle_family(vehicle, vary)
    step = next((v for v in (heading_step_deg, site.heading_step_deg) if v is not None), DEFAULT_SIZING_STEP_DEG)
    extra = [s.heading_deg for s in stations if s.heading_deg is not None]
    cells = choose_headings(plan, vehicle, heading_step_deg=step, extra_headings=extra)
    # every evaluation builds this many slices: a huge site gets advice before the first one
    check_problem_size(plan, len(cells), slices_for_step=lambda s: len(choose_headings(
        plan, vehicle, heading_step_deg=s, extra_headings=extra)), keep=[plan.to_local(s.x, s.y) for s in stations])
    obstacles = obstacles_for(plan, vehicle)
    x0, y0, x1, y1 = plan.extent_m
    cap = max_m if max_m is not None else min(max(math.hypot(x1 - x0, y1 - y0), 2 * current), PLAUSIBLE_SIZE_M[1])
    cap = max(cap, 2 * precision_m)
    floor = precision_m
    tried: dict[tuple[str, float], Connectivity] = {}
    budget = site.max_direction_changes if max_direction_changes is None else max_direction_changes
    budget = budget if budget_applies(vehicle, budget) else None
    binding_pair: list[tuple[str, str]] = []        # the pair that failed the budget last

    memo = active_memo()
    unfit: list[float] = []      # the last value the sound bound rejected: the binding check reuses its slices

    def evaluate(value: float, bound: str) -> Connectivity:
        if (bound, value) not in tried:
            progress(f"{vary} {value:.3f} m ({bound} bound)")
            c = stations_connected(plan, make(value), stations, cells, bound=bound, obstacles=obstacles,
                                   workers=workers, max_direction_changes=budget,
                                   first_pair=binding_pair[-1] if binding_pair else None)
            if c.over_budget is not None:
                binding_pair.append(tuple(c.over_budget["pair"]))
            tried[(bound, value)] = c
            # memory: keep only the slices a later step can reuse
            done = value if bound != "sound" or c.connected else (unfit.pop() if unfit else None)
            if bound == "sound" and not c.connected:
                unfit.append(value)
            if done is not None and memo is not None:
                memo.release(plan, make(done), cells, bound)
        return tried[(bound, value)]

    def fits(value: float) -> bool:
        return evaluate(value, "sound").connected

    def might_fit(value: float) -> bool:
        return evaluate(value, "optimistic").connected

    notes: list[str] = []
    lo, hi = _bracket(fits, min(max(current, floor), cap), floor, cap)
    upper = None
    if lo is None:
        status = "none-fits"
        notes.append(f"the stations are not connected even at {vary} {hi:.3f} m")
    elif hi is None:
        status = "not-limited"
        notes.append(f"the stations stay connected up to the largest {vary} tried ({cap:.2f} m)")
    else:
        status = "limited"
        lo, hi = _bisect(fits, lo, hi, precision_m)
        # the true limit from above: the optimistic bound (errs towards "fits") says "separated"
        if tried[("sound", hi)].over_budget is not None:
            upper_bound = False      # the budget binds: the holonomic bounds say nothing about it
        if upper_bound and not might_fit(hi):
            upper = hi
        elif upper_bound:
            olo, ohi = _bracket(might_fit, hi, floor, cap)
            if ohi is not None:
                upper = _bisect(might_fit, olo, ohi, precision_m)[1]
        if upper_bound and (upper is None or upper - lo > 2 * precision_m):
            notes.append("the sound and optimistic bounds differ by more than the precision here; a finer "
                         "heading step narrows the gap")

    # monotonicity: proved for nested families, else checked between neighbouring values
    if family_is_nested(vehicle, vary):
        monotone = "proved nested"
    else:
        values = sorted({v for _, v in tried})
        ok = all(_nested(make(a), make(b)) for a, b in pairwise(values))
        monotone = "checked" if ok else "not nested"
        if not ok:
            notes.append("the outlines of this family are not nested, so feasibility need not be monotone "
                         "in the varied dimension; the value found fits, a smaller one might not")

    binding, blocked = None, []
    over = tried[("sound", hi)].over_budget if hi is not None and ("sound", hi) in tried else None
    if budget is not None:
        notes.append(f"{vehicle.mode} vehicle: the stations count as connected only by drivable paths within "
                     f"{budget_text(budget)} per pair (--max-direction-changes); these counts are the planner's "
                     f"and need not be monotone in the {vary}: the value found was shown to fit")
    if over is not None and find_binding:
        binding = over
        notes.append(f"the manoeuvre budget binds: just above the limit {over['pair'][0]} ⇄ {over['pair'][1]} "
                     + (f"needs {over['direction_changes']} direction changes"
                        if over["direction_changes"] is not None else "has no drivable path found within the limits"))
    elif find_binding and hi is not None:
        progress("binding place")
        binding, blocked, check_notes = _binding_place(plan, make(hi), stations, site, step, workers)
        notes.extend(check_notes)

    largest = None if lo is None else _floor_to(lo)
    tol = (tried[("sound", lo)] if lo is not None else tried[("sound", hi)]).tolerance_m
    return SizingResult(
        vary=vary, status=status, current_m=current, largest_m=largest,
        checked_above_m=None if hi is None else float(hi), upper_m=upper,
        precision_m=precision_m, margin_m=vehicle.margin_m, monotone=monotone, heading_step_deg=float(step),
        tolerance_m=tol, evaluations=len(tried), vehicle_name=vehicle.name, plan_source=str(plan.source),
        stations=list(stations), largest_factor=largest / current if vary == "scale" and largest else None,
        binding=binding, blocked=blocked, largest_tried_m=cap if status == "not-limited" else None,
        notes=notes, max_direction_changes=budget)
