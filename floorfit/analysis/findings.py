"""What a site check reports: stations, findings and the result of a whole check.

All coordinates here are in the **drawing frame**, metres (what the user sees), except
the ``geometry`` fields, which are shapely geometries in the plan's *local* frame (use
``plan.geometry_to_drawing``) and are never written to JSON.

Finding kinds (the JSON ``kind`` values):

``blocked``
    Floor a person could walk through that this vehicle cannot pass at any heading
    (a doorway or aisle too narrow, a corner it cannot make).
``no-turn``
    A stretch the vehicle can drive along but where it can never reverse its heading.
``tight``
    Passable, but with less clearance than the site asks for.
``maneuver``
    A car-like vehicle can serve the stations only with reversing (a multi-point turn), or
    not at all forward within the search limits.
``single-lane``
    (only when fleet traffic is checked, see :mod:`floorfit.analysis.traffic`) A stretch of
    the routes between stations where two vehicles cannot pass each other: one must wait at
    a passing place or back out.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from floorfit.plan.stations import Station

__all__ = ["Station", "Finding", "CheckResult", "FINDING_KINDS", "FLEET_KINDS", "rank_findings"]

FINDING_KINDS = ("blocked", "no-turn", "single-lane", "tight", "maneuver")
#: Kinds that only a fleet traffic check reports (counted in a report only when traffic was checked).
FLEET_KINDS = ("single-lane",)


@dataclass
class Finding:
    """One located, explained problem. Positions in the drawing frame, metres."""

    kind: str
    x: float
    y: float
    summary: str                                   # one plain line with the numbers
    label: str | None = None                       # nearest room / doorway label
    cause: str = "width"                           # "width", "height", "corner", "maneuver", ...
    clear_width_m: float | None = None             # narrowest clear width found there
    needed_width_m: float | None = None            # width the vehicle needs there
    clearance_m: float | None = None               # clearance found (tight)
    clear_height_m: float | None = None            # lowest overhead obstacle there (height blocks)
    needed_height_m: float | None = None           # the vehicle's height
    direction_changes: int | None = None           # forward/reverse changes a manoeuvre needs
    required_clearance_m: float | None = None      # clearance the site asks for (tight)
    heading_ranges_deg: list[tuple[float, float]] = field(default_factory=list)
    extent: tuple[float, float, float, float] | None = None   # xmin, ymin, xmax, ymax
    cuts_off: list[str] = field(default_factory=list)         # station names it separates
    id: str = ""
    geometry: Any = None                           # local-frame shapely geometry, for drawing only

    def to_dict(self) -> dict[str, Any]:
        return {
            "id": self.id, "kind": self.kind, "cause": self.cause,
            "x": round(self.x, 4), "y": round(self.y, 4),
            "label": self.label, "summary": self.summary,
            "clear_width_m": _r(self.clear_width_m), "needed_width_m": _r(self.needed_width_m),
            "clearance_m": _r(self.clearance_m), "required_clearance_m": _r(self.required_clearance_m),
            "clear_height_m": _r(self.clear_height_m), "needed_height_m": _r(self.needed_height_m),
            "direction_changes": self.direction_changes,
            "heading_ranges_deg": [[round(a, 2), round(b, 2)] for a, b in self.heading_ranges_deg],
            "extent": None if self.extent is None else [round(v, 4) for v in self.extent],
            "cuts_off": list(self.cuts_off),
        }


def _r(v: float | None, nd: int = 4) -> float | None:
    return None if v is None else round(float(v), nd)


@dataclass
class CheckResult:
    """Everything one ``floorfit check`` found.

    ``reachable[a][b]`` is True when station ``b`` can be reached from station ``a``.
    ``cuts[(a, b)]`` names the finding ids that explain why a pair is not connected.
    ``turnability`` holds local-frame shapely geometries for the map:
    ``"fits"`` (the vehicle fits at some heading), ``"turns_around"`` (it can reverse its
    heading there), ``"rotates"`` (it can spin a full turn in place), plus
    ``"heading_count"`` as a dict with a raster of how many heading slices are free.
    """

    plan: Any
    vehicle: Any
    settings: dict[str, Any]
    stations: list[Station]
    reachable: dict[str, dict[str, bool]]
    findings: list[Finding]
    cuts: dict[tuple[str, str], list[str]] = field(default_factory=dict)
    turnability: dict[str, Any] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    routes: list[dict[str, Any]] = field(default_factory=list)
    #: fleet traffic (passing places, single-lane stretches; see floorfit.analysis.traffic), None when not checked
    traffic: dict[str, Any] | None = None

    @property
    def passed(self) -> bool:
        """True when every station reaches every other and no ``blocked`` finding stands."""
        all_ok = all(v for row in self.reachable.values() for v in row.values())
        return all_ok and not any(f.kind == "blocked" for f in self.findings)

    def station_pairs(self) -> tuple[list[tuple[str, str]], int]:
        """Station pairs not connected and the number of pairs (:func:`unconnected_station_pairs`)."""
        return unconnected_station_pairs(self.reachable)


def unconnected_station_pairs(reachable: dict[str, dict[str, Any]]) -> tuple[list[tuple[str, str]], int]:
    """``(pairs not connected, number of pairs)``: the one way station pairs are counted everywhere.

    A station pair is two different stations, counted once whichever comes first (sorted by
    name); it is *not connected* when the vehicle cannot drive between them in at least one
    direction (a forward-only train may manage one way only). Console, report, CSV/JSON
    verdict, batch and compare all state "N of M station pairs not connected" from this.
    """
    names = sorted(reachable)
    total, bad = 0, []
    for i, a in enumerate(names):
        for b in names[i + 1:]:
            total += 1
            if not (reachable[a].get(b, False) and reachable.get(b, {}).get(a, False)):
                bad.append((a, b))
    return bad, total


def pairs_text(bad: int, total: int) -> str:
    """``"3 of 10 station pairs not connected"``, the words every output uses."""
    return f"{bad} of {total} station pair{'s' if total != 1 else ''} not connected"


__all__ += ["unconnected_station_pairs", "pairs_text"]


def rank_findings(findings: list[Finding]) -> list[Finding]:
    """Order findings and number them F1, F2, …: by kind (the order of ``FINDING_KINDS``), within a
    kind what cuts off stations first (most stations first), then by place.

    This is the report order too (:func:`floorfit.report.kinds.numbered_findings`), so the console's
    F-numbers, the report's marker numbers, the CSV and the overlay all agree: Fn is number n.
    """
    order = {kind: i for i, kind in enumerate(FINDING_KINDS)}

    def key(f: Finding):
        return (order.get(f.kind, len(order)), 0 if f.cuts_off else 1, -len(f.cuts_off), round(f.x, 3), round(f.y, 3))

    ranked = sorted(findings, key=key)
    for i, f in enumerate(ranked, 1):
        f.id = f"F{i}"
    return ranked
