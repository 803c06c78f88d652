"""Slices shared in memory within one run: ``size`` and ``compare`` ask for the same slice set more than once.

A sizing search checks the vehicle just above the limit again to name the binding place; a
layout comparison checks two drawings that share most of their obstacles. While a
:class:`SliceMemo` is active (:func:`sharing`), :func:`floorfit.cspace.slices.build_slices`
asks it first:

* the same plan (the same object), footprint, height, heading cells, bound and window as a
  set built before in this run: that very set is returned (the vehicle it carries is the one
  asked for);
* a plan declared a successor of another (:meth:`SliceMemo.relate`, e.g. AFTER of BEFORE) with
  the same footprint, cells and bound as a set of its predecessor: the caller's ``derive``
  (:func:`floorfit.cspace.incremental.update_slices`) turns that set into the successor's,
  recomputing only near the obstacles that changed.

Anything else is built as before and remembered. The prepared obstacles of a plan
(:func:`floorfit.cspace.slices.obstacles_for`) are kept too, one set per plan and vehicle
height. A base set is dropped once its successor's set is derived from it, and a caller that will
not ask for a set again may :meth:`SliceMemo.release` it. The memo keeps at most
:data:`MEMO_MAX_COORDINATES` vertices of free space (the least recently used sets go first, sets
a successor may be derived from last), so a long search cannot fill the memory. Outside
:func:`sharing` nothing is kept.
"""

from __future__ import annotations

from collections import OrderedDict
from collections.abc import Callable, Iterator
from contextlib import contextmanager

import numpy as np
import shapely

__all__ = ["SliceMemo", "sharing", "active_memo", "MEMO_MAX_COORDINATES"]

#: Vertices of free space (all slices of all sets) the memo keeps: 16 to 28 bytes each in memory
#: (measured on real plan #1 and the large synthetic warehouse, whose 368 slices at the default step
#: hold about 4 million), so at most about 350 MB.
MEMO_MAX_COORDINATES = 12_000_000
_ACTIVE: dict = {"memo": None}


def _cells_key(cells) -> bytes:
    parts = [np.ascontiguousarray(np.asarray(a, dtype=float)).tobytes()
             for a in (cells.headings, cells.below, cells.above)]
    return b"|".join(parts) + repr(float(cells.step_deg)).encode()


def _shape_key(vehicle, cells, bound: str, window) -> tuple:
    """Everything but the plan that decides a slice set (see :func:`floorfit.cspace.slices.slice_recipe`)."""
    height = getattr(vehicle, "height_m", None)
    win = None if window is None else tuple(float(v) for v in window)
    return (shapely.to_wkb(vehicle.footprint), height, _cells_key(cells), bound, win)


def _coordinates(slices) -> int:
    return int(sum(int(shapely.get_num_coordinates(c).sum()) for c in slices.components if len(c)))


class SliceMemo:
    """Slice sets of this run, by plan and shape (see the module docstring)."""

    def __init__(self, max_coordinates: int = MEMO_MAX_COORDINATES):
        self.max_coordinates = int(max_coordinates)
        self._sets: OrderedDict[tuple, tuple] = OrderedDict()      # key -> (slice set, coordinates)
        self._successors: list[tuple] = []                          # (old plan, new plan, derive)
        self._obstacles: dict[tuple, tuple] = {}                    # (plan id, height) -> (plan, obstacles)
        self._deriving = False
        self.hits = 0
        self.derived = 0
        self.stored = 0

    def _key(self, plan, vehicle, cells, bound, window) -> tuple:
        return (id(plan),) + _shape_key(vehicle, cells, bound, window)

    def relate(self, old_plan, new_plan, derive: Callable) -> None:
        """Declare ``new_plan`` a changed copy of ``old_plan``: its slices may be ``derive(old_slices,
        new_plan, workers=N)`` from a set of ``old_plan`` with the same shape."""
        self._successors.append((old_plan, new_plan, derive))

    def get(self, plan, vehicle, cells, bound: str, window=None, workers: int | None = 1):
        """The slice set for these arguments from this run, or None (then build it and :meth:`put` it)."""
        key = self._key(plan, vehicle, cells, bound, window)
        hit = self._sets.get(key)
        if hit is not None:
            self._sets.move_to_end(key)
            self.hits += 1
            return self._for(hit[0], vehicle)
        if window is not None or self._deriving:
            return None
        for old_plan, new_plan, derive in self._successors:
            if new_plan is not plan:
                continue
            base = self._sets.get(self._key(old_plan, vehicle, cells, bound, None))
            if base is None:
                continue
            self._deriving = True            # a full rebuild inside derive builds, never derives again
            try:
                made = derive(base[0], plan, workers=workers)
            finally:
                self._deriving = False
            self.derived += 1
            # the base has served: its successor's set is kept from now on
            self._sets.pop(self._key(old_plan, vehicle, cells, bound, None), None)
            self.put(made)
            return self._for(made, vehicle)
        return None

    def release(self, plan, vehicle, cells, bound: str, window=None) -> None:
        """Forget the set of these arguments (a caller that will not ask again), unless a successor of
        ``plan`` may still be derived from it."""
        if any(old is plan for old, _, _ in self._successors):
            return
        self._sets.pop(self._key(plan, vehicle, cells, bound, window), None)

    @staticmethod
    def _for(slices, vehicle):
        if slices.vehicle is vehicle:
            return slices
        from dataclasses import replace

        return replace(slices, vehicle=vehicle)

    def put(self, slices, window=None) -> None:
        """Remember ``slices`` (built for ``slices.plan`` and ``slices.vehicle``)."""
        key = self._key(slices.plan, slices.vehicle, slices.cells, slices.bound, window)
        n = _coordinates(slices)
        if n > self.max_coordinates:
            return
        self._sets[key] = (slices, n)
        self._sets.move_to_end(key)
        self.stored += 1
        total = sum(c for _, c in self._sets.values())
        bases = {id(old) for old, _, _ in self._successors}
        while total > self.max_coordinates and len(self._sets) > 1:
            # the least recently used set goes first; sets a successor may be derived from go last
            order = [k for k in self._sets if k != key]
            drop = next((k for k in order if k[0] not in bases), order[0])
            total -= self._sets.pop(drop)[1]

    def obstacles(self, plan, vehicle, prepare: Callable):
        """The prepared obstacles of ``plan`` for ``vehicle``'s height: ``prepare()`` once per plan and height."""
        key = (id(plan), getattr(vehicle, "height_m", None) if vehicle is not None else None)
        hit = self._obstacles.get(key)
        if hit is None or hit[0] is not plan:
            hit = self._obstacles[key] = (plan, prepare())
        return hit[1]

    def __len__(self) -> int:
        return len(self._sets)


def active_memo() -> SliceMemo | None:
    """The memo :func:`sharing` made active, or None."""
    return _ACTIVE["memo"]


@contextmanager
def sharing(memo: SliceMemo | None = None) -> Iterator[SliceMemo]:
    """Share slices within the ``with`` block; an outer block's memo stays in use (nested calls share it)."""
    outer = _ACTIVE["memo"]
    if outer is not None and memo is None:
        yield outer
        return
    use = memo if memo is not None else SliceMemo()
    _ACTIVE["memo"] = use
    try:
        yield use
    finally:
        _ACTIVE["memo"] = outer
