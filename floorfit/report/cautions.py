"""The fixed wording of the report: what the check is not, and clearance references.

Kept in one module so the HTML report and docs/report.md say the same thing. The
clearance references are options a user may pick from, each with its source; they are
references, not law, and their adoption differs from place to place.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["CAUTIONS", "ClearanceReference", "CLEARANCE_REFERENCES", "tolerance_statement"]

CAUTIONS: tuple[str, ...] = (
    "This is a geometric check of the drawing, not a risk assessment. It says where the "
    "outline of the vehicle, grown by its safety margin, can and cannot go among the "
    "obstacles found in the drawing. It knows nothing about people, traffic, floor "
    "condition, slopes, doors that are closed, or objects that are not in the drawing.",
    "The required clearance is a setting chosen by the user. Which clearance applies "
    "depends on the standards, codes and site rules that govern this building and this "
    "vehicle; the references listed below are common starting points, not law, and "
    "editions and local adoption differ.",
    "Real vehicles deviate from their planned paths: localisation error, control error, "
    "wheel slip, a load that overhangs or swings. Allow for it in the margin and the "
    "clearance; a place that fits only just on paper may not fit in service.",
    "The result is only as good as the drawing: an out-of-date plan, a wrong unit, or a "
    "layer read with the wrong role gives a wrong answer. Check the plan figure against "
    "the building.",
    "Defer to the applicable standards, local codes, the vehicle maker's instructions "
    "and licensed professional practice. This report supports that work; it does not "
    "replace it.",
)


@dataclass(frozen=True)
class ClearanceReference:
    """One published clearance figure a user may choose as a setting."""

    topic: str
    value: str
    source: str


CLEARANCE_REFERENCES: tuple[ClearanceReference, ...] = (
    ClearanceReference(
        "Driverless industrial truck: clearance to obstructions",
        "450 mm (1.5 ft) between obstructions and the vehicle with its load; where less, "
        "the area is to be marked as restricted",
        "ANSI/ITSDF B56.5 (2004 text), §4.7.4"),
    ClearanceReference(
        "Accessible route: clear width",
        "36 in (915 mm); 32 in (815 mm) for a length of up to 24 in",
        "2010 ADA Standards for Accessible Design, §403.5.1"),
    ClearanceReference(
        "Accessible turning space",
        "60 in (1525 mm) diameter circle, or a T-shaped space within a 60 in square",
        "2010 ADA Standards for Accessible Design, §304.3"),
    ClearanceReference(
        "Aisles and passageways",
        "\"sufficient safe clearances\" at aisles, loading docks, doorways and turns "
        "(no number given)",
        "OSHA 29 CFR 1910.176(a)"),
)


def tolerance_statement(settings: dict) -> str:
    """Plain words on what the numbers in a report mean, from the check's settings.

    Uses ``tolerance_m`` (metres) and ``heading_step_deg`` (degrees); missing values are
    named as not stated rather than guessed.
    """
    tol = settings.get("tolerance_m")
    step = settings.get("heading_step_deg")
    tol_text = f"{float(tol) * 1000:g} mm" if isinstance(tol, (int, float)) else "a tolerance not stated"
    step_text = f"every {float(step):g}°" if isinstance(step, (int, float)) else "at headings not stated"
    return (
        f"All results are geometric and hold within {tol_text}: a width or clearance "
        f"reported here may differ from the exact value by up to that much. Headings are "
        f"checked {step_text}, and the motion between two checked headings is checked "
        f"too. Where the discretisation has to round, it rounds against the vehicle: a "
        f"place may be reported as blocked or tight that a real vehicle could just "
        f"manage, but nothing is reported as passable that the outline with its margin "
        f"does not fit through."
    )
