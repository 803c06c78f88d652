"""Drawing units: the $INSUNITS table, the ``--units`` override and the plausibility check.

Units are converted to metres once, at the boundary. The header is often wrong in real
drawings (4 of the 11 reference plans lie), so the importer gathers evidence that does
not depend on the header and compares:

* door sizes: swing-arc radii and door-block widths, which measure 0.6-1.3 m in real
  buildings (measured across the reference drawings; common practice: 30-36 in doors);
* the overall extent of the obstacle geometry, between 2 m and 2 km for a floor plan;
* a note such as "Measurements in [m]" written in the drawing.

The header (or the caller's override) is always *used* when present; evidence only
produces a warning naming the likely unit. When the header has no unit (absent in R12,
or 0 = unitless) the most plausible unit is chosen and the reason is stated.
"""

from __future__ import annotations

import difflib
import re
from dataclasses import dataclass, field

import numpy as np

from floorfit.errors import InputError

__all__ = [
    "UNIT_METRES", "INSUNITS_NAMES", "CANDIDATE_UNITS", "DOOR_RANGE_M", "EXTENT_RANGE_M",
    "parse_units", "UnitEvidence", "UnitDecision", "decide_units", "unit_hint_from_text",
]

#: Metres per unit (exact definitions; 1 in = 0.0254 m by the 1959 international yard).
UNIT_METRES: dict[str, float] = {
    "mm": 0.001, "cm": 0.01, "dm": 0.1, "m": 1.0, "dam": 10.0, "hm": 100.0, "km": 1000.0,
    "um": 1e-6, "nm": 1e-9, "angstrom": 1e-10, "Gm": 1e9,
    "in": 0.0254, "ft": 0.3048, "yd": 0.9144, "mi": 1609.344,
    "mil": 2.54e-5, "uin": 2.54e-8,
    "us-ft": 1200.0 / 3937.0, "us-in": 100.0 / 3937.0, "us-yd": 3600.0 / 3937.0, "us-mi": 6336000.0 / 3937.0,
    "AU": 149597870700.0, "ly": 9460730472580800.0, "pc": 3.0856775814913673e16,
}

#: $INSUNITS code -> unit name (AutoCAD DXF Reference, HEADER section, $INSUNITS).
INSUNITS_NAMES: dict[int, str | None] = {
    0: None, 1: "in", 2: "ft", 3: "mi", 4: "mm", 5: "cm", 6: "m", 7: "km", 8: "uin", 9: "mil",
    10: "yd", 11: "angstrom", 12: "nm", 13: "um", 14: "dm", 15: "dam", 16: "hm", 17: "Gm",
    18: "AU", 19: "ly", 20: "pc", 21: "us-ft", 22: "us-in", 23: "us-yd", 24: "us-mi",
}

_ALIASES = {
    "millimetre": "mm", "millimeter": "mm", "millimetres": "mm", "millimeters": "mm",
    "centimetre": "cm", "centimeter": "cm", "centimetres": "cm", "centimeters": "cm",
    "metre": "m", "meter": "m", "metres": "m", "meters": "m",
    "kilometre": "km", "kilometer": "km", "decimetre": "dm", "decimeter": "dm",
    "inch": "in", "inches": "in", '"': "in", "foot": "ft", "feet": "ft", "'": "ft",
    "yard": "yd", "yards": "yd", "mile": "mi", "miles": "mi", "µm": "um",
}

#: Units tried by the plausibility check, in order of preference for metric drawings.
CANDIDATE_UNITS = ("mm", "m", "cm", "in", "ft")
_IMPERIAL_FIRST = ("in", "ft", "mm", "m", "cm")

#: Plausible door leaf width / swing radius, metres (measured 0.6-1.1 m on the reference
#: plans; ADA 2010 §404.2.3 asks 32 in = 0.815 m clear; double-leaf and wide doors to 1.3 m).
DOOR_RANGE_M = (0.6, 1.3)
#: Plausible overall extent (longest side) of a floor plan, metres.
EXTENT_RANGE_M = (2.0, 2000.0)


def parse_units(name: str) -> tuple[str, float]:
    """A unit name from the user (``"mm"``, ``"Inches"``, ``"m"`` ...) -> (canonical name, metres per unit)."""
    if not isinstance(name, str) or not name.strip():
        raise InputError(f"unit must be a name like mm, cm, m, in, ft; got {name!r}", None, "--units")
    key = name.strip()
    for cand in (key, key.lower()):
        if cand in UNIT_METRES:
            return cand, UNIT_METRES[cand]
        if cand in _ALIASES:
            canon = _ALIASES[cand]
            return canon, UNIT_METRES[canon]
    lowered = {k.lower(): k for k in UNIT_METRES}
    if key.lower() in lowered:
        canon = lowered[key.lower()]
        return canon, UNIT_METRES[canon]
    options = sorted(set(UNIT_METRES) | set(_ALIASES))
    hint = difflib.get_close_matches(key.lower(), options, n=1, cutoff=0.6)
    extra = f" (did you mean '{hint[0]}'?)" if hint else " (use mm, cm, m, in or ft)"
    raise InputError(f"unknown unit '{name}'{extra}", None, "--units")


_HINT_RE = re.compile(
    r"(?:measure(?:ment)?s?|dimensions?|units?|ma(?:ß|ss)e|angaben|cotes|medidas)\s*(?:are\s*)?"
    r"(?:in|:|=)?\s*[\[(]?\s*(millimet(?:er|re)s?|centimet(?:er|re)s?|met(?:er|re)s?|inch(?:es)?|feet|foot|mm|cm|m|in|ft)\s*[\])]?",
    re.IGNORECASE)


def unit_hint_from_text(text: str) -> str | None:
    """A unit stated in a drawing note ("Measurements in [m]"), or None."""
    m = _HINT_RE.search(text)
    if not m:
        return None
    word = m.group(1).lower()
    return word if word in UNIT_METRES else _ALIASES.get(word)


@dataclass
class UnitEvidence:
    """Header-independent hints about the drawing unit (all lengths in drawing units)."""

    header_code: int | None = None        # $INSUNITS, None when absent
    measurement: int | None = None        # $MEASUREMENT: 0 imperial, 1 metric
    door_sizes: list[float] = field(default_factory=list)
    extent: float | None = None           # longest side of the obstacle geometry
    text_hint: tuple[str, str] | None = None  # (unit, the note it came from)


@dataclass
class UnitDecision:
    """The unit used, why, and a warning when the evidence disagrees."""

    name: str
    metres_per_unit: float
    reason: str
    warning: str | None = None
    likely: str | None = None             # the unit the evidence points to, when it differs


def _door_fraction(sizes: np.ndarray, mpu: float) -> float:
    lo, hi = DOOR_RANGE_M
    metres = sizes * mpu
    return float(np.mean((metres >= lo) & (metres <= hi))) if len(sizes) else 0.0


def _extent_ok(extent: float | None, mpu: float) -> bool:
    return extent is not None and EXTENT_RANGE_M[0] <= extent * mpu <= EXTENT_RANGE_M[1]


def _fmt_len(v: float) -> str:
    return f"{v:.4g}"


def _door_summary(sizes: np.ndarray) -> str:
    return (f"{len(sizes)} door size{'s' if len(sizes) != 1 else ''} "
            f"(median {_fmt_len(float(np.median(sizes)))} drawing units)")


def _likely_from_evidence(ev: UnitEvidence) -> tuple[str | None, str]:
    """The unit the evidence favours and the sentence explaining it."""
    if ev.text_hint is not None:
        unit, note = ev.text_hint
        return unit, f"the drawing says \"{note}\""
    sizes = np.asarray(ev.door_sizes, dtype=float)
    if len(sizes):
        scores = {u: _door_fraction(sizes, UNIT_METRES[u]) for u in CANDIDATE_UNITS}
        best = max(scores, key=lambda u: scores[u])
        if scores[best] >= 0.5:
            lo, hi = DOOR_RANGE_M
            return best, (f"{_door_summary(sizes)} measure {lo}-{hi} m as {best} "
                          f"({scores[best]:.0%} of them)")
    if ev.extent is not None and ev.extent > 0:
        order = _IMPERIAL_FIRST if ev.measurement == 0 else CANDIDATE_UNITS
        fits = [u for u in order if _extent_ok(ev.extent, UNIT_METRES[u])]
        if fits:
            best = fits[0]
            others = f"; also plausible: {', '.join(fits[1:])}" if len(fits) > 1 else ""
            return best, (f"the extent of {_fmt_len(ev.extent)} units is "
                          f"{_fmt_len(ev.extent * UNIT_METRES[best])} m as {best}{others}")
    return None, "no door sizes, unit note or plausible extent found"


def _check_unit(ev: UnitEvidence, name: str, mpu: float) -> list[str]:
    """Reasons why ``name`` looks wrong for this drawing (empty when it looks right)."""
    problems = []
    sizes = np.asarray(ev.door_sizes, dtype=float)
    if len(sizes) and _door_fraction(sizes, mpu) < 0.5:
        med = float(np.median(sizes)) * mpu
        problems.append(f"doors would be {_fmt_len(med)} m wide (median of {len(sizes)})")
    if ev.extent is not None and ev.extent > 0 and not _extent_ok(ev.extent, mpu):
        problems.append(f"the plan would be {_fmt_len(ev.extent * mpu)} m across")
    if ev.text_hint is not None and ev.text_hint[0] != name:
        problems.append(f"the drawing says \"{ev.text_hint[1]}\"")
    return problems


def decide_units(ev: UnitEvidence, override: str | None = None) -> UnitDecision:
    """Choose the drawing unit: override, else header, else the most plausible one.

    Parameters
    ----------
    ev : UnitEvidence
        Header values and header-independent evidence.
    override : str or None
        A unit name given by the caller (``--units``); always used when given.
    """
    likely, why_likely = _likely_from_evidence(ev)
    if override is not None:
        name, mpu = parse_units(override)
        problems = _check_unit(ev, name, mpu)
        warning = None
        if problems and likely and likely != name:
            warning = (f"unit {name} given, but {'; '.join(problems)}; likely unit: {likely} "
                       f"({why_likely})")
        return UnitDecision(name, mpu, f"given by the caller ({name})", warning, likely if warning else None)

    header_name = INSUNITS_NAMES.get(ev.header_code) if ev.header_code is not None else None
    if header_name is not None:
        mpu = UNIT_METRES[header_name]
        reason = f"$INSUNITS = {ev.header_code} ({header_name})"
        problems = _check_unit(ev, header_name, mpu)
        warning = None
        if problems:
            if likely and likely != header_name:
                warning = (f"header says {header_name} ($INSUNITS = {ev.header_code}), but "
                           f"{'; '.join(problems)}; likely unit: {likely} ({why_likely}); "
                           f"using {header_name} as the header says; pass --units {likely} to override")
            else:
                warning = (f"header says {header_name} ($INSUNITS = {ev.header_code}), but "
                           f"{'; '.join(problems)}; no standard unit fits better; check the drawing scale")
        return UnitDecision(header_name, mpu, reason, warning, likely if warning and likely != header_name else None)

    if ev.header_code is None:
        head = "no $INSUNITS in the header"
    elif ev.header_code in INSUNITS_NAMES:
        head = f"$INSUNITS = {ev.header_code} (unitless)"
    else:
        head = f"$INSUNITS = {ev.header_code} (not a known unit code)"
    if likely is not None:
        return UnitDecision(likely, UNIT_METRES[likely], f"{head}; chose {likely}: {why_likely}")
    fallback = "in" if ev.measurement == 0 else "mm"
    return UnitDecision(fallback, UNIT_METRES[fallback],
                        f"{head}; {why_likely}; assumed {fallback}",
                        warning=f"{head} and {why_likely}; assumed {fallback}; pass --units to set the unit")
