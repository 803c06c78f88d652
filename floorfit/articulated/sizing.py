"""The longest cart a route allows: bisection over the tongue length.

The cart is made longer or shorter with :meth:`Train.with_tongue`: the tongue (axle centre to
hitch) is set and the cart outline stretched along its axis about the axle centre by the same
factor (same width, same proportions). The tractor drives the same route each time.

Monotonicity. For an on-axle hitch the cart's sweep grows with its length: in a steady turn the
axle runs on √(R² − L²), further inside as L grows, and the settled hitch angle asin(L/R) grows
with L too (so the jack-knife limit is also met sooner). Along arbitrary routes this is not a
theorem (transients differ), so the answer is checked: after the bisection the route is re-run at
``checks`` lengths evenly spread below the answer; if one fails, the bisection is repeated below
it and a note says so. The answer is therefore a length at which the route passes and below
which every checked length passes, to ``precision_m``.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from floorfit.articulated.kinematics import DEFAULT_TOLERANCE_M, follow
from floorfit.articulated.sweep import MotionVerdict, TrainChecker, judge_motion
from floorfit.motion.segments import Segment
from floorfit.plan.model import Plan
from floorfit.vehicles.train import MIN_TONGUE_M, Train

__all__ = ["CartLengthResult", "largest_cart_length"]

#: Longest tongue tried, metres.
MAX_TONGUE_M = 30.0


@dataclass
class CartLengthResult:
    """Longest tongue (m) with which the route passes (0.0 when even the shortest cart fails),
    the tongue precision, what stops a longer cart (the verdict just above the answer), and notes."""

    tongue_m: float
    precision_m: float
    limited_by: MotionVerdict | None
    current_tongue_m: float
    current_passes: bool
    evaluations: int
    notes: list[str] = field(default_factory=list)

    @property
    def cart_length_m(self) -> float:
        """Length of the stretched cart outline at the answer, metres."""
        return self.tongue_m * self._outline_per_tongue

    _outline_per_tongue: float = 1.0

    def to_dict(self) -> dict:
        lim = self.limited_by
        return {"tongue_m": round(self.tongue_m, 4), "precision_m": self.precision_m,
                "cart_length_m": round(self.cart_length_m, 4),
                "current_tongue_m": round(self.current_tongue_m, 4), "current_passes": self.current_passes,
                "limited_by": None if lim is None else lim.problem,
                "limit_place": None if lim is None or lim.x is None else [round(lim.x, 4), round(lim.y, 4)],
                "evaluations": self.evaluations, "notes": list(self.notes)}


# bracket, bisection and monotonicity re-check of the tongue share one lo/hi bracket and evaluation counter
def largest_cart_length(plan: Plan, train: Train, segments: Sequence[Segment], *, precision_m: float = 0.01,  # noqa: C901
                        checks: int = 8, tolerance_m: float = DEFAULT_TOLERANCE_M,
                        checker: TrainChecker | None = None) -> CartLengthResult:
    """Longest tongue (m) for which ``train`` follows the tractor path ``segments`` (local frame)
    forward without collision, jack-knife or pushing; bisection to ``precision_m``."""
    base = checker.with_train(train) if checker is not None else TrainChecker(plan, train, tolerance_m)
    tol = base.tolerance_m
    count = 0

    def verdict(L: float) -> MotionVerdict:
        nonlocal count
        count += 1
        t = train.with_tongue(L)
        return judge_motion(base.with_train(t), follow(segments, t, tolerance_m=tol), locate=False)

    now = verdict(train.tongue_m)
    res = CartLengthResult(0.0, precision_m, None, train.tongue_m, now.passable, 0)
    res._outline_per_tongue = train.cart_length_m / train.tongue_m
    lo = MIN_TONGUE_M
    v_lo = verdict(lo)
    if not v_lo.passable:
        res.limited_by = v_lo
        res.notes.append(f"even a {lo:g} m tongue does not pass ({v_lo.problem})")
        res.evaluations = count
        return res
    if now.passable:
        lo, hi = train.tongue_m, None
        probe = 2.0 * train.tongue_m
        while probe <= MAX_TONGUE_M:
            v = verdict(probe)
            if not v.passable:
                hi, v_hi = probe, v
                break
            lo = probe
            probe *= 2.0
        if hi is None:
            hi = MAX_TONGUE_M
            v_hi = verdict(hi)
            if v_hi.passable:
                res.tongue_m = hi
                res.notes.append(f"passes with every tongue up to {MAX_TONGUE_M:g} m (not searched further)")
                res.evaluations = count
                return res
    else:
        hi, v_hi = train.tongue_m, now
    for _attempt in range(4):
        while hi - lo > precision_m:
            mid = 0.5 * (lo + hi)
            v = verdict(mid)
            if v.passable:
                lo = mid
            else:
                hi, v_hi = mid, v
        failed = None
        for L in np.linspace(MIN_TONGUE_M, lo, checks + 2)[1:-1]:
            v = verdict(float(L))
            if not v.passable:
                failed = (float(L), v)
                break
        if failed is None:
            break
        res.notes.append(f"not monotone: a {failed[0]:.3f} m tongue fails ({failed[1].problem}) although "
                         f"{lo:.3f} m passes; searched again below it")
        hi, v_hi = failed
        lo = MIN_TONGUE_M
    res.tongue_m = lo
    res.limited_by = v_hi
    res.evaluations = count
    return res
