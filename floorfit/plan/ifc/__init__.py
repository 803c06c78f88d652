"""Building models (IFC, ISO 16739): one storey as a plan with heights from the model.

    >>> from floorfit.plan.ifc import load_ifc                        # doctest: +SKIP
    >>> plan = load_ifc("house.ifc", storey="Level 1")                # doctest: +SKIP

Modules, one job each: :mod:`.reading` (open, schema, unit, storeys), :mod:`.meshing`
(ifcopenshell's geometry iterator on all cores), :mod:`.sections` (an element's plan pieces by
height), :mod:`.doors` (clear widths), :mod:`.importer` (the pipeline), :mod:`.report` (the
``inspect`` summary). See ``docs/import.md``.
"""

from __future__ import annotations

from floorfit.plan.ifc.importer import DEFAULT_BAND_TOP_M, OVERHEAD_ALLOWANCE_M, IfcImport, import_model
from floorfit.plan.model import Plan

__all__ = ["load_ifc", "inspect_ifc", "is_ifc_path", "band_for_height", "import_model", "IfcImport",
           "DEFAULT_BAND_TOP_M", "OVERHEAD_ALLOWANCE_M"]


def is_ifc_path(path) -> bool:
    """True when ``path`` names an IFC model (by its suffix, case-insensitive)."""
    return str(path).lower().endswith(".ifc")


def band_for_height(height_m: float | None) -> float | None:
    """Top of the usable height band for a vehicle of this height (None: the default band)."""
    return None if height_m is None else float(height_m) + OVERHEAD_ALLOWANCE_M


def load_ifc(path, *, storey: str | float | None = None, band_top_m: float | None = None,
             workers: int | None = None) -> Plan:
    """Read one storey of an IFC model into a :class:`~floorfit.plan.model.Plan`.

    Parameters
    ----------
    path : str or Path
        The IFC file (STEP physical file; IFC2X3, IFC4, IFC4X3).
    storey : str or float, optional
        The storey's name or its elevation in metres (within 5 cm). Default: the storey
        nearest 0 m that holds walls. A model without storeys is read at building level,
        with the floor at the wall base nearest z = 0, and a warning.
    band_top_m : float, optional
        Top of the usable height band above the floor, metres: the vehicle's height plus an
        allowance (:func:`band_for_height`). Default :data:`DEFAULT_BAND_TOP_M`.
    workers : int, optional
        Processes for meshing (default: the cores available).

    Returns
    -------
    Plan
        Every physical element in the band as obstacles with their own bottom and top above
        the floor (walls, columns, furniture, stairs, railings, windows, proxies, ducts);
        doors as doorways with the measured clear width; spaces as labels. The drawing frame
        is the model's world x, y in metres.

    Raises
    ------
    PlanImportError
        not an IFC file, unsupported schema, nothing to check on the storey.
    InputError
        a storey that does not exist (the message lists the storeys).
    """
    return import_model(path, storey=storey, band_top_m=band_top_m, workers=workers).plan


def inspect_ifc(path, *, storey: str | float | None = None, band_top_m: float | None = None) -> dict:
    """The ``floorfit inspect`` report of an IFC model (JSON-ready)."""
    from floorfit.plan.ifc.report import report_from_import

    return report_from_import(import_model(path, storey=storey, band_top_m=band_top_m))
