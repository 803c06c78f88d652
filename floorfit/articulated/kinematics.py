"""Kinematics of a cart towed through a hitch: closed forms along straights and arcs.

Model (the standard kinematic trailer model). The cart's axle does not slip sideways, so
the velocity of the axle centre C points along the cart's axis. With the hitch point H,
the cart heading ψ and the tongue L (C = H − L·e(ψ), e(ψ) = (cos ψ, sin ψ)), the no-slip
condition gives

    dψ/dt = (dH/dt · e⊥(ψ)) / L,        e⊥(ψ) = (−sin ψ, cos ψ),

for *any* motion of the hitch point: the hitch's velocity drives the cart. For an on-axle
hitch (H = the tractor's reference point, driven at speed v along its heading θ) this is
dψ/dt = (v / L)·sin(θ − ψ), LaValle, *Planning Algorithms* (2006), §13.1.2.4 "A car pulling
trailers", eq. (13.19) with one trailer. For an off-axle hitch a distance M behind the
reference point (hitch velocity v·e(θ) − M·ω·e⊥(θ), ω = dθ/dt) it becomes
dψ/dt = (v·sin(θ − ψ) − M·ω·cos(θ − ψ)) / L, the "general" (kingpin-hitched) trailer of
C. Altafini, "Some properties of the general n-trailer", Int. J. Control 74(4), 2001
(derived here from the no-slip condition above; its on-axle special case is LaValle's).

Arc-length form. Let the hitch point travel a distance s along its own path, whose direction
is α(s), and let γ = α − ψ (the angle between the hitch's direction of travel and the cart's
axis). Then dγ/ds = κ(s) − sin(γ)/L with κ = dα/ds the curvature of the hitch's path.

Every rigid motion of the tractor that floorfit uses (straight drive, circular arc, rotation
in place) moves the hitch along a straight line (κ = 0) or a circle about the same centre
(κ = ±1/ρ, ρ the hitch's distance from the centre). For constant κ the equation is a Riccati
equation in u = tan(γ/2) with constant coefficients, du/ds = (κ/2)u² − u/L + κ/2, whose
solution is a linear fractional map of u: u(s) = y₁/y₂ with y = exp(s·A)·y(0),
A = [[−1/(2L), κ/2], [−κ/2, 1/(2L)]] and y(0) = (sin(γ₀/2), cos(γ₀/2)). A² = μ·I with
μ = (1/L² − κ²)/4, so exp(s·A) = c(s)·I + s·S(s)·A with c = cosh(s√μ), S = sinh(s√μ)/(s√μ)
(cos / sin when μ < 0). This is exact; nothing is integrated numerically.

Special cases used as checks:

* straight (κ = 0): tan(γ/2) = tan(γ₀/2)·e^(−s/L), the tractrix;
* circle of radius R > L: γ tends to asin(L/R) and the cart axle runs on the circle of radius
  √(R² − L²) about the same centre (the classic off-tracking of a steady turn);
* R ≤ L: no steady state; the cart keeps swinging in until the hitch angle limit stops it.

Poses inside this module are (x m, y m, heading rad), as in :mod:`floorfit.motion`.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from floorfit.errors import InputError
from floorfit.motion.segments import Segment, poses_along
from floorfit.vehicles.train import Train

__all__ = [
    "DEFAULT_TOLERANCE_M",
    "SteadyTurn",
    "TrainMotion",
    "follow",
    "hitch_relaxation",
    "jack_knife_radius",
    "steady_trailer_radius",
    "steady_turn",
    "tractrix_angle",
]

#: Default interpolation tolerance of sampled train motions, metres: no point of the tractor or the
#: cart moves more than twice this between two samples (so the sampled bodies grown by it cover the
#: continuous motion).
DEFAULT_TOLERANCE_M = 0.02
#: Largest |s·√μ| evaluated in one step of :func:`hitch_relaxation` (keeps cosh finite).
_MAX_EXPONENT = 30.0


def _wrap(a):
    return np.remainder(np.asarray(a, dtype=float) + math.pi, 2.0 * math.pi) - math.pi


def _propagate(y1, y2, curvature: float, tongue: float, s):
    """exp(s·A)·(y1, y2) for the Riccati matrix A of the hitch equation; s ≥ 0 (array)."""
    a = -0.5 / tongue
    b = 0.5 * curvature
    mu = 0.25 * (1.0 / tongue ** 2 - curvature ** 2)
    s = np.asarray(s, dtype=float)
    if mu > 0:
        r = math.sqrt(mu) * s
        c = np.cosh(r)
        with np.errstate(invalid="ignore", divide="ignore"):
            S = np.where(r > 1e-8, np.sinh(r) / np.where(r > 1e-8, r, 1.0), 1.0 + r * r / 6.0)
    elif mu < 0:
        r = math.sqrt(-mu) * s
        c = np.cos(r)
        with np.errstate(invalid="ignore", divide="ignore"):
            S = np.where(r > 1e-8, np.sin(r) / np.where(r > 1e-8, r, 1.0), 1.0 - r * r / 6.0)
    else:
        c = np.ones_like(s)
        S = np.ones_like(s)
    z1 = c * y1 + s * S * (a * y1 + b * y2)
    z2 = c * y2 + s * S * (-b * y1 - a * y2)
    return z1, z2


def hitch_relaxation(gamma0: float, curvature: float, tongue: float, s) -> np.ndarray:
    """Angle γ(s) (rad) between the hitch's direction of travel and the cart axis after the hitch has
    travelled ``s`` metres (array, ≥ 0, increasing) on a path of constant ``curvature`` (1/m, + = left).

    Exact solution of dγ/ds = κ − sin(γ)/L (see the module docstring); ``tongue`` is L (m).
    Long stretches are evaluated in steps with renormalisation so that nothing overflows.
    """
    s = np.asarray(s, dtype=float)
    if np.any(s < 0):
        raise InputError("distances along the hitch path must be ≥ 0", where="s")
    mu = 0.25 * (1.0 / tongue ** 2 - curvature ** 2)
    y1, y2 = math.sin(0.5 * gamma0), math.cos(0.5 * gamma0)
    out = np.empty(s.shape)
    flat = s.reshape(-1)
    res = out.reshape(-1)
    if mu <= 0:
        z1, z2 = _propagate(y1, y2, curvature, tongue, flat)
        res[:] = 2.0 * np.arctan2(z1, z2)
        return out
    chunk = _MAX_EXPONENT / math.sqrt(mu)
    group = np.floor(flat / chunk).astype(np.int64)
    base_index = 0
    for g in np.unique(group):
        while base_index < g:                      # advance the start vector to the chunk's base
            z1, z2 = _propagate(y1, y2, curvature, tongue, np.array(chunk))
            n = math.hypot(float(z1), float(z2))
            y1, y2 = float(z1) / n, float(z2) / n
            base_index += 1
        sel = group == g
        z1, z2 = _propagate(y1, y2, curvature, tongue, flat[sel] - g * chunk)
        res[sel] = 2.0 * np.arctan2(z1, z2)
    return out


def tractrix_angle(gamma0: float, s, tongue: float) -> np.ndarray:
    """Straight hitch path: γ(s) = 2·atan(tan(γ₀/2)·e^(−s/L)) (rad), the tractrix (|γ₀| < π)."""
    return 2.0 * np.arctan(math.tan(0.5 * gamma0) * np.exp(-np.asarray(s, dtype=float) / tongue))


def steady_trailer_radius(hitch_radius_m: float, tongue_m: float) -> float:
    """Radius (m) of the circle the cart axle runs on when the hitch runs steadily on a circle of
    ``hitch_radius_m``: √(R² − L²) (classic off-tracking; needs R > L)."""
    if not hitch_radius_m > tongue_m:
        raise InputError(f"no steady turn: hitch radius {hitch_radius_m:g} m is not more than the tongue "
                         f"{tongue_m:g} m", where="radius")
    return math.sqrt(hitch_radius_m ** 2 - tongue_m ** 2)


@dataclass(frozen=True)
class SteadyTurn:
    """A train turning steadily: the tractor's reference point on a circle of ``radius_m`` about the
    turn centre, the cart settled. Metres and degrees; ``side`` +1 = left turn, −1 = right turn.

    ``cart_pose``: the cart axle centre and heading (x, y, heading rad) in the tractor frame.
    ``inner_m`` / ``outer_m``: smallest and largest distance from the turn centre to the tractor and
    cart footprints (with margins) in that configuration.
    """

    radius_m: float
    side: int
    hitch_radius_m: float
    cart_axle_radius_m: float
    hitch_angle_deg: float
    cart_pose: tuple[float, float, float]
    inner_m: float
    outer_m: float


def steady_turn(train: Train, radius_m: float, side: int = 1) -> SteadyTurn | None:
    """The steady-state configuration of ``train`` turning with its tractor reference point on a
    circle of ``radius_m`` (m); None when there is none (the hitch's circle is not larger than the
    tongue, so the cart keeps swinging in)."""
    import shapely
    from shapely.geometry import Point

    R = float(radius_m)
    side = 1 if side >= 0 else -1
    L = train.tongue_m
    hx, hy = train.hitch
    ox, oy = 0.0, side * R                       # turn centre in the tractor frame
    vx, vy = hx - ox, hy - oy
    rho = math.hypot(vx, vy)
    if rho <= L:
        return None
    # direction of travel of the hitch (rotation about the centre, sense = side)
    alpha = math.atan2(vy, vx) + side * 0.5 * math.pi
    gamma = side * math.asin(L / rho)
    psi = alpha - gamma
    cx, cy = hx - L * math.cos(psi), hy - L * math.sin(psi)
    phi = math.degrees(float(_wrap(-psi)))
    cart = _placed(train.cart_footprint, (cx, cy, psi))
    tractor = train.tractor.footprint
    both = shapely.union_all([cart, tractor])
    centre = Point(ox, oy)
    inner = float(both.distance(centre)) if not both.covers(centre) else 0.0
    xy = shapely.get_coordinates(both)
    outer = float(np.max(np.hypot(xy[:, 0] - ox, xy[:, 1] - oy)))
    return SteadyTurn(radius_m=R, side=side, hitch_radius_m=rho, cart_axle_radius_m=math.hypot(cx - ox, cy - oy),
                      hitch_angle_deg=phi, cart_pose=(cx, cy, psi), inner_m=inner, outer_m=outer)


def _placed(poly, pose):
    import shapely
    x, y, h = pose
    c, s = math.cos(h), math.sin(h)
    return shapely.affinity.affine_transform(poly, [c, -s, s, c, x, y])


def jack_knife_radius(train: Train, *, precision_m: float = 1e-4) -> float:
    """Smallest radius (m) of a steady turn of the tractor's reference point, left and right, at
    which the settled hitch angle stays within ``max_hitch_deg``.

    On-axle: L / sin(φ_max) exactly. Otherwise found by bisection (the settled hitch angle falls as
    the radius grows), to ``precision_m``, rounded up.
    """
    limit = train.max_hitch_deg
    L = train.tongue_m
    if train.on_axle:
        return L / math.sin(math.radians(limit))

    def ok(R: float) -> bool:
        for side in (1, -1):
            st = steady_turn(train, R, side)
            if st is None or abs(st.hitch_angle_deg) > limit:
                return False
        return True

    hi = max(1.0, 2.0 * (L + train.hitch_offset_m))
    while not ok(hi):
        hi *= 2.0
        if hi > 1e4:
            raise InputError("no steady turn keeps the hitch angle within its limit", where="max_hitch_angle")
    lo = 0.0
    while hi - lo > precision_m:
        mid = 0.5 * (lo + hi)
        if ok(mid):
            hi = mid
        else:
            lo = mid
    return hi


@dataclass
class TrainMotion:
    """A sampled forward motion of a train (local frame of whatever the segments were given in).

    ``tractor``: (N, 3) reference-point poses (x m, y m, heading rad). ``cart``: (N, 3) cart axle
    centre and cart heading. ``hitch``: (N, 2) hitch positions. ``hitch_angle``: (N,) tractor heading
    minus cart heading, wrapped to [−π, π). ``pushing``: (N,) True where the hitch moves backwards
    relative to the cart (the cart would be reversed: not supported). ``segment``: (N,) index of the
    segment each sample belongs to. ``travel_m``: (N,) distance driven by the reference point.
    ``tolerance_m``: no point of either body moves more than 2·tolerance between two samples.
    ``angle_step_rad``: the hitch angle changes by at most this between two samples.
    """

    tractor: np.ndarray
    cart: np.ndarray
    hitch: np.ndarray
    hitch_angle: np.ndarray
    pushing: np.ndarray
    segment: np.ndarray
    travel_m: np.ndarray
    tolerance_m: float
    angle_step_rad: float
    segments: list = field(default_factory=list)

    def __len__(self) -> int:
        return len(self.tractor)

    def tractor_deg(self) -> np.ndarray:
        """Tractor poses with heading in degrees (for floorfit.cspace.collision)."""
        out = self.tractor.copy()
        out[:, 2] = np.degrees(_wrap(out[:, 2]))
        return out

    def cart_deg(self) -> np.ndarray:
        """Cart poses (axle centre, heading in degrees)."""
        out = self.cart.copy()
        out[:, 2] = np.degrees(_wrap(out[:, 2]))
        return out

    def end_cart_heading(self) -> float:
        """Cart heading at the end (rad, unwrapped as integrated)."""
        return float(self.cart[-1, 2])


def _hitch_path(seg: Segment, hitch) -> tuple[float, float, float, float]:
    """(distance the hitch travels m, curvature of its path 1/m, initial direction rad, rotation rad)."""
    x0, y0, h0 = seg.start
    hx, hy = hitch
    c, s = math.cos(h0), math.sin(h0)
    Hx, Hy = x0 + c * hx - s * hy, y0 + s * hx + c * hy
    if seg.kind == "straight":
        return seg.length_m, 0.0, h0, 0.0
    dth = math.radians(seg.angle_deg)
    if seg.kind == "arc":
        k = seg.steer * seg.radius_m
        ox, oy = x0 - k * math.sin(h0), y0 + k * math.cos(h0)
    else:
        ox, oy = x0, y0
    vx, vy = Hx - ox, Hy - oy
    rho = math.hypot(vx, vy)
    if rho < 1e-12 or dth == 0.0:
        return 0.0, 0.0, h0, dth
    sense = 1.0 if dth > 0 else -1.0
    return rho * abs(dth), sense / rho, math.atan2(vy, vx) + sense * 0.5 * math.pi, dth


def follow(segments: Sequence[Segment], train: Train, *, cart_heading: float | None = None,
           tolerance_m: float = DEFAULT_TOLERANCE_M) -> TrainMotion:
    """Drive ``train`` forward along the tractor path ``segments`` and sample the whole train.

    ``segments``: floorfit.motion segments of the tractor's reference point (straight, arc, rotate;
    forward only: a reverse segment raises :class:`InputError`, reversing with a cart is not
    supported). ``cart_heading``: cart heading at the start (rad); default the tractor's start
    heading (the cart straight behind). Samples are placed so that no point of the tractor or of
    the cart moves more than ``2·tolerance_m`` between two samples (bounds in the module docstring
    of :mod:`floorfit.articulated.sweep`); the cart heading is exact at every sample.
    """
    if not segments:
        raise InputError("empty tractor path", where="route")
    if not tolerance_m > 0:
        raise InputError(f"tolerance must be > 0, got {tolerance_m!r}", where="tolerance")
    L = train.tongue_m
    reach_t = train.tractor_reach_m
    reach_c = train.cart_reach_m
    psi = float(segments[0].start[2]) if cart_heading is None else float(cart_heading)
    hx, hy = train.hitch
    parts = {k: [] for k in ("P", "psi", "gamma_ok", "seg", "travel")}
    travelled = 0.0
    angle_step = 0.0
    for i, seg in enumerate(segments):
        if seg.direction == "reverse":
            raise InputError("reversing with a cart is not supported: every tractor segment must drive forward",
                             where=f"segment {i + 1}")
        s_h, k_h, alpha0, dth = _hitch_path(seg, train.hitch)
        span_t = seg.length_m + reach_t * abs(dth)
        span_c = s_h * (1.0 + reach_c / L)
        n = max(1, int(math.ceil(max(span_t, span_c) / (2.0 * tolerance_m) - 1e-9)))
        t = np.arange(0 if i == 0 else 1, n + 1) / n
        P = poses_along(seg, t)
        if s_h > 0:
            gamma0 = float(_wrap(alpha0 - psi))
            gam = hitch_relaxation(gamma0, k_h, L, s_h * t)
            ps = alpha0 + k_h * s_h * t - gam
            # keep ψ continuous with the incoming value (γ is known modulo 2π)
            d = ps - psi
            d -= 2.0 * math.pi * round(float(d[0]) / (2.0 * math.pi))
            if len(d) > 1 and np.any(np.abs(np.diff(d)) > math.pi):
                d = np.unwrap(d)
            ps = psi + d
            pulling = np.cos(gam) >= -1e-9
        else:
            ps = np.full(len(t), psi)
            pulling = np.ones(len(t), dtype=bool)
        angle_step = max(angle_step, (abs(dth) + s_h / L) / n)
        parts["P"].append(P)
        parts["psi"].append(ps)
        parts["gamma_ok"].append(pulling)
        parts["seg"].append(np.full(len(t), i))
        parts["travel"].append(travelled + seg.length_m * t)
        travelled += seg.length_m
        psi = float(ps[-1])
    P = np.concatenate(parts["P"])
    psi_all = np.concatenate(parts["psi"])
    c, s = np.cos(P[:, 2]), np.sin(P[:, 2])
    H = np.column_stack([P[:, 0] + c * hx - s * hy, P[:, 1] + s * hx + c * hy])
    C = np.column_stack([H[:, 0] - L * np.cos(psi_all), H[:, 1] - L * np.sin(psi_all), psi_all])
    return TrainMotion(tractor=P, cart=C, hitch=H, hitch_angle=_wrap(P[:, 2] - psi_all),
                       pushing=~np.concatenate(parts["gamma_ok"]), segment=np.concatenate(parts["seg"]),
                       travel_m=np.concatenate(parts["travel"]), tolerance_m=float(tolerance_m),
                       angle_step_rad=float(angle_step), segments=list(segments))
