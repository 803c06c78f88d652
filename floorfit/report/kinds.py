"""The finding kinds as the report shows them: order, names, colours, symbols, layer codes.

One place decides how a finding kind looks everywhere (HTML, figures, DXF), so the
numbered markers, the table and the overlay always agree.

Colours come from a colour-blind-safe set (distinct for the common red-green and
blue-yellow deficiencies, and distinct in lightness so they survive greyscale print);
every kind also has its own marker shape, so colour is never the only cue.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from typing import Any

from floorfit.analysis.findings import FINDING_KINDS

__all__ = ["KindStyle", "KIND_STYLES", "kind_style", "numbered_findings", "plain_text"]


@dataclass(frozen=True)
class KindStyle:
    """How one finding kind is shown.

    ``code``: four letters for DXF layer names; ``marker``: a matplotlib marker;
    ``colour``: hex RGB; ``aci``: AutoCAD colour index for the overlay layer.
    """

    kind: str
    title: str
    code: str
    colour: str
    marker: str
    aci: int
    definition: str


KIND_STYLES: dict[str, KindStyle] = {
    "blocked": KindStyle(
        "blocked", "Blocked", "BLKD", "#c8441c", "o", 1,
        "The vehicle cannot get through here at any heading, although the floor is open "
        "(for example to a person on foot): a doorway or aisle that is too narrow, or a "
        "corner it cannot make. Stations on the two sides are cut off from each other "
        "unless another way round exists."),
    "no-turn": KindStyle(
        "no-turn", "No turn", "NTRN", "#8a3d8f", "s", 6,
        "The vehicle can drive along this stretch but can never reverse its heading "
        "anywhere in it. It can leave only the way it is facing: entering a dead end "
        "forwards means backing all the way out."),
    "single-lane": KindStyle(
        "single-lane", "Single lane", "SNGL", "#009e73", "v", 130,
        "Two vehicles of the fleet cannot pass each other along this stretch of a route "
        "between stations: when they meet, one must wait at a passing place or back out. "
        "Shown only when fleet traffic was checked; the table of stretches gives the width "
        "the stretch has and the width passing needs."),
    "tight": KindStyle(
        "tight", "Tight", "TGHT", "#d99a00", "D", 2,
        "The vehicle gets through, but with less clearance to walls and obstacles than "
        "the clearance set for this site. Passable on paper; whether it is acceptable "
        "depends on the speed, the control accuracy and the rules that apply there."),
    "maneuver": KindStyle(
        "maneuver", "Manoeuvre", "MANV", "#1f6fb4", "^", 5,
        "The vehicle gets through only with a manoeuvre: it has to stop and change "
        "heading in place, or go back and forth (a multi-point turn), instead of "
        "driving through in one smooth motion."),
}

_OTHER = KindStyle("other", "Other", "OTHR", "#555555", "P", 8,
                   "A finding of a kind this version of the report does not describe.")


def kind_style(kind: str) -> KindStyle:
    """The style of ``kind``; unknown kinds share a neutral grey style titled by their name."""
    style = KIND_STYLES.get(kind)
    if style is not None:
        return style
    return KindStyle(kind, str(kind), _OTHER.code, _OTHER.colour, _OTHER.marker, _OTHER.aci,
                     _OTHER.definition)


def _kind_rank(kind: str) -> int:
    return FINDING_KINDS.index(kind) if kind in FINDING_KINDS else len(FINDING_KINDS)


def numbered_findings(findings: Iterable[Any]) -> list[tuple[int, Any]]:
    """Findings in report order with their marker numbers (1, 2, ...).

    Report order groups the kinds in the order of ``FINDING_KINDS`` (blocked, no-turn,
    tight, maneuver, then anything else) and keeps the engine's order within a kind, so
    the same input always gives the same numbers.
    """
    ordered = sorted(enumerate(findings), key=lambda item: (_kind_rank(item[1].kind), item[0]))
    return [(number, finding) for number, (_, finding) in enumerate(ordered, start=1)]


def plain_text(value: Any) -> str:
    """``value`` as one line of text: control characters (newlines, tabs) become spaces."""
    text = "" if value is None else str(value)
    return "".join(ch if ch.isprintable() else " " for ch in text)
