"""Real-world DXF import: obstacles in metres from floor plans as they come.

    >>> from floorfit.plan.dxf import load_plan          # doctest: +SKIP
    >>> plan = load_plan("plan.dxf", units="m")            # doctest: +SKIP

Modules, one job each: :mod:`.reading` (open, recover), :mod:`.limits` (hostile input),
:mod:`.units` (unit table and plausibility), :mod:`.roles` (layer / block roles),
:mod:`.walker` (block expansion, transforms, OCS), :mod:`.curves` (flattening by chord
tolerance), :mod:`.hatches`, :mod:`.doors`, :mod:`.labels`, :mod:`.importer` (the
pipeline), :mod:`.report` (the ``inspect`` summary), :mod:`.outline` (vehicle outlines).
See ``docs/import.md``.
"""

from __future__ import annotations

from floorfit.errors import InputError
from floorfit.plan.dxf.importer import DEFAULT_CURVE_TOLERANCE_M, import_drawing
from floorfit.plan.dxf.limits import ImportLimits
from floorfit.plan.dxf.outline import outline_from_dxf
from floorfit.plan.dxf.report import inspect_plan
from floorfit.plan.dxf.roles import read_roles, roles_from_site_table
from floorfit.plan.model import Plan

__all__ = ["load_plan", "inspect_plan", "outline_from_dxf", "ImportLimits", "read_roles",
           "roles_from_site_table", "DEFAULT_CURVE_TOLERANCE_M"]


def load_plan(path, *, units: str | None = None, roles: dict | None = None,
              window: tuple[float, float, float, float] | None = None, layers: list[str] | None = None,
              keep_door_leaves: bool = False, limits: ImportLimits | None = None,
              storey: str | float | None = None, band_top_m: float | None = None) -> Plan:
    """Read a DXF floor plan into a :class:`~floorfit.plan.model.Plan` (local frame, metres).

    A path ending in ``.ifc`` is read as a building model instead
    (:func:`floorfit.plan.ifc.load_ifc` with ``storey`` and ``band_top_m``; the DXF options
    ``units``, ``window`` and ``layers`` do not apply to it).

    Parameters
    ----------
    path : str or Path
        The DXF file (ASCII or binary; damaged ASCII files are recovered when possible).
    units : str, optional
        Drawing unit overriding the header: ``"mm"``, ``"cm"``, ``"m"``, ``"in"``, ``"ft"``
        (case-insensitive). Without it the header ($INSUNITS) is used, or, when the
        header has no unit, the most plausible unit from door sizes and extent.
    roles : dict, optional
        Layer-name pattern -> role (``wall``, ``solid``, ``door``, ``opening``, ``label``,
        ``ignore``, ``furniture``), overriding the defaults; key ``"blocks"`` maps block-name
        patterns to roles. Patterns are case-insensitive shell patterns.
    window : (xmin, ymin, xmax, ymax), optional
        Crop window in drawing units; geometry is clipped to it.
    layers : list of str, optional
        Only entities on layers matching these patterns are read.
    keep_door_leaves : bool
        Keep door leaves (drawn open) as obstacles; swing arcs never are.
    limits : ImportLimits, optional
        Safety limits; defaults documented on :class:`ImportLimits`.

    Returns
    -------
    Plan
        walls (LineStrings) and solids (Polygons) in the local frame (metres, shifted by
        ``origin``), doors, labels, layers with roles, import issues, the unit used and
        why, and ``curve_tolerance_m`` (the chord tolerance curves were flattened with).

    Raises
    ------
    PlanImportError
        missing file, not a DXF, damaged beyond recovery, empty model space, nothing
        usable, absurd size, non-finite coordinates.
    LimitExceeded
        self-referencing blocks, nesting, expansion, vertex or coordinate limits.
    InputError
        malformed ``units``, ``window``, ``layers`` or ``roles``.
    """
    from floorfit.plan.ifc import is_ifc_path, load_ifc

    if is_ifc_path(path):
        for name, value in (("--units", units), ("--window", window), ("--layers", layers)):
            if value:
                raise InputError(f"{name} applies to DXF drawings only; an IFC model states its own unit "
                                 f"and is read whole", str(path), name)
        return load_ifc(path, storey=storey, band_top_m=band_top_m)
    if storey is not None:
        raise InputError("--storey applies to IFC models only", str(path), "--storey")
    return import_drawing(path, units=units, roles=roles, window=window, layers=layers,
                          keep_door_leaves=keep_door_leaves, limits=limits).plan
