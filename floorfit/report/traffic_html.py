"""The fleet traffic section of report.html: passing places, single-lane stretches and widening.

Present only when the check looked at fleet traffic (``result.traffic``). Every text from the
user's files (vehicle and station names, drawing labels, references) is HTML-escaped.
"""

from __future__ import annotations

import html
from collections.abc import Callable
from typing import Any

from floorfit.report.tables import traffic_data

__all__ = ["traffic_section", "TRAFFIC_CAUTIONS"]

#: Cautions printed with the traffic section.
TRAFFIC_CAUTIONS = (
    "Passing is checked for two vehicles exactly abreast, each on its own side, kept the set gap "
    "apart, with the floor between them clear. Real vehicles deviate from their paths and slow "
    "down or stop near each other; fleet managers' traffic rules, people and pedestrian "
    "walkways in the aisle, and loads wider than the outline are not in this check.",
    "The gap between passing vehicles is a setting chosen by the user; the references it can be "
    "taken from are starting points, not law (see Cautions).",
    "A single-lane stretch is not a fault in itself: it asks for a traffic rule (one way, a "
    "waiting place, a reservation of the stretch by the fleet manager) or a wider aisle.",
)


def _e(value: Any) -> str:
    return html.escape("" if value is None else str(value), quote=True)


def _m(value: Any) -> str:
    return "—" if value is None else f"{float(value):.2f} m"


def _pairs(pairs: list) -> str:
    text = ", ".join("–".join(str(n) for n in p) for p in pairs[:4])
    return text + (f" and {len(pairs) - 4} more" if len(pairs) > 4 else "")


def _ends(s: dict, places: dict) -> str:
    items = []
    for e in s["ends"]:
        pl = places.get(e["passing_place"])
        if pl is None:
            items.append("no passing place")
        else:
            where = f" ({pl['label']})" if pl["label"] else ""
            items.append(f"{pl['id']}{where}, {e['distance_m'] or 0:.1f} m away")
    if s["dead_end"]:
        inside = f"; {', '.join(s['stations_inside'])} in it" if s["stations_inside"] else ""
        items.append(f"dead end{inside}")
    return "; ".join(items) or "—"


def traffic_section(result: Any, numbers: dict[str, int], figure_html: str,
                    badge: Callable[[int, str], str]) -> tuple[str, str, str] | None:
    """(anchor, title, inner HTML) of the fleet traffic section, or None without traffic."""
    if getattr(result, "traffic", None) is None:
        return None
    data = traffic_data(result)
    st = data["settings"]
    places = {p["id"]: p for p in data["passing_places"]}
    meets = ", ".join(st["meets"])
    intro = (
        f"<p>Where {_e(st['vehicle'])} can pass another vehicle ({_e(meets)}) along the routes between "
        f"the stations: the two side by side, facing opposite ways, {_m(st['gap_m'])} apart "
        f"(gap: {_e(st['gap_reference'])}), form one outline {_m(st['pair_width_m'])} wide and "
        f"{_m(st['pair_length_m'])} long, checked like a vehicle of its own "
        f"(within {st['tolerance_m'] * 1000:.0f} mm; lengths within {st['sample_step_m']:.2f} m). "
        f"{st['station_pairs_routed']} station pair routes, {st['route_length_m']:.1f} m in all, were "
        f"looked at. Aisles {'may' if st['one_way'] else 'may not'} be run one way"
        f"{': stretches on a loop are listed but are no finding' if st['one_way'] else ''}.</p>")
    rows = []
    for s in data["stretches"]:
        num = s.get("finding_number")
        mark = badge(num, "single-lane") if num else '<span class="muted">one-way</span>'
        widen = _m(s["widening_m"]) if s["widening_m"] > 0 else "— (not the width: a bend or obstacles)"
        rows.append(
            f"<tr><td>{mark}</td><td class=\"id\">{_e(s['id'])}</td><td>{_e(s['label']) or '—'}</td>"
            f"<td class=\"num\">{s['length_m']:.1f}</td><td class=\"num\">{s['clear_width_m']:.2f}</td>"
            f"<td class=\"num\">{s['needed_width_m']:.2f}</td><td>{_e(widen)}</td>"
            f"<td>{_e(_pairs(s['pairs']))}</td><td>{_e(_ends(s, places))}</td></tr>")
    if rows:
        table = ('<div class="scroll"><table class="findings"><thead><tr><th>#</th><th>stretch</th>'
                 '<th>where</th><th class="num">length (m)</th><th class="num">width it has (m)</th>'
                 '<th class="num">passing needs (m)</th><th>widen by</th><th>station pairs</th>'
                 "<th>ends</th></tr></thead><tbody>" + "".join(rows) + "</tbody></table></div>")
    else:
        table = '<p class="muted">No single-lane stretch: two vehicles can pass each other all along the routes.</p>'
    prow = "".join(
        f"<tr><td class=\"id\">{_e(p['id'])}</td><td>{_e(p['label']) or '—'}</td>"
        f"<td class=\"num\">{p['x']:.2f}</td><td class=\"num\">{p['y']:.2f}</td>"
        f"<td class=\"num\">{p['length_m']:.1f}</td><td>{_e(_pairs(p['pairs']))}</td></tr>"
        for p in data["passing_places"])
    ptable = ('<div class="scroll"><table><thead><tr><th>place</th><th>where</th><th class="num">x (m)</th>'
              '<th class="num">y (m)</th><th class="num">along the route (m)</th><th>station pairs</th></tr>'
              "</thead><tbody>" + prow + "</tbody></table></div>") if prow else \
        '<p class="muted">No passing place along the routes.</p>'
    cautions = "".join(f"<li>{_e(c)}</li>" for c in TRAFFIC_CAUTIONS)
    inner = (intro + figure_html
             + "<h3>Single-lane stretches and the widening that makes them two-way</h3>"
             + "<p>Widening is the width passing needs less the narrowest clear width across the "
               "stretch, for a straight stretch; add the stated tolerance when checking a design.</p>"
             + table + "<h3>Passing places</h3>" + ptable
             + f'<div class="caution"><ul>{cautions}</ul></div>'
             + '<p class="muted">The same tables are in traffic.csv and findings.json; overlay.dxf holds '
               "them on the FF-TRAF-* layers.</p>")
    return "traffic", "Fleet traffic", inner
