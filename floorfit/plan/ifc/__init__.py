"""Building models (IFC, ISO 16739): one storey as a plan with heights from the model.

    >>> from floorfit.plan.ifc import load_ifc                        # doctest: +SKIP
    >>> plan = load_ifc("house.ifc", storey="Level 1")                # doctest: +SKIP

Modules, one job each: :mod:`.reading` (open, schema, unit, storeys), :mod:`.meshing`
(ifcopenshell's geometry iterator on all cores), :mod:`.sections` (an element's plan pieces by
height), :mod:`.doors` (clear widths), :mod:`.importer` (the pipeline), :mod:`.report` (the
``inspect`` summary). See ``docs/import.md``.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

from floorfit.plan.ifc.importer import DEFAULT_BAND_TOP_M, OVERHEAD_ALLOWANCE_M, IfcImport, import_model
from floorfit.plan.model import ImportIssue, Plan

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

    When :func:`floorfit.plan.ifc.cache.use_import_cache` turned the import cache on (the
    commands do, unless ``--no-cache`` or ``FLOORFIT_CACHE=off``), a storey imported before
    with the same file, storey and band is read from it; an import note says so.

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
    from floorfit.plan.ifc.cache import cache_key, cached_plan, import_cache_dir, store_plan

    folder = import_cache_dir()
    key = cache_key(path, storey, band_top_m) if folder is not None and Path(path).is_file() else None
    if key is not None:
        plan = cached_plan(key)
        if plan is not None:
            note = ImportIssue("cache", f"storey read from the import cache in {folder} (same file, storey and "
                                        f"band); --no-cache or FLOORFIT_CACHE=off imports it again")
            return replace(plan, source=str(path), issues=[*plan.issues, note])
    plan = import_model(path, storey=storey, band_top_m=band_top_m, workers=workers).plan
    if key is not None and store_plan(key, plan):
        plan.issues.append(ImportIssue("cache", f"storey imported and stored in the import cache in {folder}"))
    return plan


def inspect_ifc(path, *, storey: str | float | None = None, band_top_m: float | None = None) -> dict:
    """The ``floorfit inspect`` report of an IFC model (JSON-ready)."""
    from floorfit.plan.ifc.report import report_from_import

    return report_from_import(import_model(path, storey=storey, band_top_m=band_top_m))
