"""Train files: a tractor (any floorfit vehicle) towing one cart through a hitch.

Frames (metres, degrees):

* the **tractor frame** is the vehicle frame of :mod:`floorfit.vehicles.rigid`: +x forward, +y
  left, origin = the tractor's reference point (drive-axle midpoint of a differential
  base, rear-axle centre of a car-like tractor);
* the **cart frame** has +x pointing forward along the cart's axis (towards the hitch),
  +y left, origin = the centre of the cart's (single, unsteered) axle.

The hitch is a point of the tractor frame. The cart's axis runs from its axle centre to
the hitch; ``tongue`` is that distance (the cart length ``L`` of the trailer equations).
A hitch at the tractor's reference point is *on-axle*; anywhere else *off-axle*.

Train file (TOML)::

    name = "tug + cart"
    [footprint]              # the tractor, exactly as in a vehicle file
    outline = [[0.45, -0.3], [0.45, 0.3], [-0.35, 0.3], [-0.35, -0.3]]
    margin = 0.05
    [motion]                 # the tractor's motion: "differential" or "car" (+ min_turn_radius)
    mode = "differential"
    [cart]
    outline = [[0.6, -0.35], [0.6, 0.35], [-0.6, 0.35], [-0.6, -0.35]]   # cart frame
    # or: width = 0.7, length = 1.2, axle_to_front = 0.6
    hitch = [-0.45, 0.0]     # hitch point, tractor frame
    tongue = 1.5             # cart axle centre to hitch, metres
    max_hitch_angle = 70     # jack-knife limit, degrees (|tractor heading - cart heading|)
    margin = 0.05            # safety margin round the cart (default: the tractor's margin)

Reversing with a cart is not supported: a train only drives forward.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from functools import cached_property
from pathlib import Path
from typing import Any

import numpy as np
import shapely
from shapely.geometry import Point, Polygon

from floorfit.errors import VehicleError
from floorfit.tomlcheck import check_keys, get_number, get_points, get_string, read_toml
from floorfit.vehicles.rigid import PLAUSIBLE_SIZE_M, Vehicle, vehicle_from_outline, vehicle_from_table

__all__ = [
    "MIN_TONGUE_M",
    "TRACTOR_MODES",
    "Train",
    "is_train_file",
    "load_train",
    "make_train",
    "train_from_table",
]

#: Tractor motion modes a train accepts ("omni" is treated like "differential": it drives along its heading).
TRACTOR_MODES = ("differential", "car", "omni")
#: Shortest cart tongue accepted, metres (below this the trailer equations are meaningless in practice).
MIN_TONGUE_M = 0.05

_TOP_KEYS = ("name", "footprint", "motion", "cart")
_CART_KEYS = ("outline", "width", "length", "axle_to_front", "hitch", "tongue", "max_hitch_angle", "margin")


@dataclass(frozen=True)
class Train:
    """A tractor towing one cart. Lengths in metres, angles in degrees.

    ``tractor``: the tractor as a :class:`~floorfit.vehicles.rigid.Vehicle` (its outline, margin and
    motion mode). ``cart_outline``: Polygon in the cart frame (origin = axle centre, +x to the
    hitch), without margin. ``hitch``: (x, y) of the hitch in the tractor frame. ``tongue_m``:
    distance from the cart axle centre to the hitch. ``max_hitch_deg``: jack-knife limit on the
    hitch angle (tractor heading minus cart heading).
    """

    name: str
    tractor: Vehicle
    cart_outline: Polygon
    hitch: tuple[float, float]
    tongue_m: float
    max_hitch_deg: float
    cart_margin_m: float = 0.0
    source: str | None = None

    @cached_property
    def cart_footprint(self) -> Polygon:
        """Cart outline plus its margin (mitred, contains the round offset), cart frame, metres."""
        if self.cart_margin_m <= 0:
            return self.cart_outline
        return self.cart_outline.buffer(self.cart_margin_m, join_style="mitre", mitre_limit=10.0)

    @cached_property
    def tractor_reach_m(self) -> float:
        """Largest distance from the tractor's reference point to its footprint, metres."""
        return self.tractor.radius_m

    @cached_property
    def cart_reach_m(self) -> float:
        """Largest distance from the cart axle centre to the cart footprint, metres."""
        xy = shapely.get_coordinates(self.cart_footprint)
        return float(np.max(np.hypot(xy[:, 0], xy[:, 1])))

    @property
    def hitch_offset_m(self) -> float:
        """Distance from the tractor's reference point to the hitch, metres (0: on-axle)."""
        return float(math.hypot(*self.hitch))

    @property
    def on_axle(self) -> bool:
        """True when the hitch is at the tractor's reference point (within 1e-9 m)."""
        return self.hitch_offset_m < 1e-9

    @property
    def cart_width_m(self) -> float:
        """Extent of the cart outline across its axis (without margin), metres."""
        _, y0, _, y1 = self.cart_outline.bounds
        return y1 - y0

    @property
    def cart_length_m(self) -> float:
        """Extent of the cart outline along its axis (without margin), metres."""
        x0, _, x1, _ = self.cart_outline.bounds
        return x1 - x0

    def with_tongue(self, tongue_m: float) -> Train:
        """The same train with a longer or shorter cart: tongue set to ``tongue_m`` (m) and the
        cart outline stretched along its axis about the axle centre by the same factor (a cart of
        the same width and proportions)."""
        f = float(tongue_m) / self.tongue_m
        outline = shapely.affinity.scale(self.cart_outline, f, 1.0, origin=(0, 0))
        return replace(self, cart_outline=outline, tongue_m=float(tongue_m))

    def describe(self) -> dict[str, Any]:
        """A JSON-ready summary (metres, degrees)."""
        return {"name": self.name, "tractor": self.tractor.describe(),
                "cart_outline": [[round(x, 6), round(y, 6)] for x, y in self.cart_outline.exterior.coords[:-1]],
                "cart_margin_m": self.cart_margin_m, "hitch": [round(v, 6) for v in self.hitch],
                "hitch_type": "on-axle" if self.on_axle else "off-axle",
                "tongue_m": round(self.tongue_m, 6), "max_hitch_angle_deg": self.max_hitch_deg,
                "cart_width_m": round(self.cart_width_m, 4), "cart_length_m": round(self.cart_length_m, 4)}


def is_train_file(table: Any) -> bool:
    """True when a parsed vehicle TOML table describes a train (it has a ``[cart]`` table)."""
    return isinstance(table, dict) and isinstance(table.get("cart"), dict)


def load_train(path: str | Path) -> Train:
    """Read and validate a train file (TOML, metres, degrees). Raises :class:`VehicleError`."""
    src = str(path)
    data = read_toml(path, VehicleError)
    return train_from_table(data, src)


def train_from_table(data: dict[str, Any], source: str | None = None) -> Train:
    """Validate an already parsed train table (as :func:`tomllib.loads` returns it).

    Every problem raises :class:`VehicleError` naming ``source``, the dotted key and the
    problem (unknown keys with a "did you mean" hint).
    """
    src = source or "<train>"
    check_keys(data, _TOP_KEYS, src, "", VehicleError)
    name = get_string(data, "name", src, "", VehicleError, default=Path(src).stem)
    tractor = _tractor(data, src, name)
    cart = data.get("cart")
    if not isinstance(cart, dict):
        raise VehicleError("missing [cart] table (outline or width/length, hitch, tongue, max_hitch_angle)",
                           src, "cart")
    check_keys(cart, _CART_KEYS, src, "cart.", VehicleError)
    hitch = _pair(cart, "hitch", src)
    tongue = get_number(cart, "tongue", src, "cart.", VehicleError, required=True)
    max_angle = get_number(cart, "max_hitch_angle", src, "cart.", VehicleError, required=True)
    margin = get_number(cart, "margin", src, "cart.", VehicleError, default=tractor.margin_m, minimum=0.0)
    outline = _cart_outline(cart, src)
    return make_train(name, tractor, outline, hitch, tongue, max_angle, cart_margin=margin, source=src)


def make_train(name: str, tractor: Vehicle, cart_outline, hitch, tongue: float, max_hitch_angle: float, *,
               cart_margin: float | None = None, source: str | None = None) -> Train:
    """Validate the parts of a train and build it (metres, degrees).

    ``cart_outline``: a Polygon or a list of (x, y) points in the cart frame.
    """
    src = source
    if tractor.mode not in TRACTOR_MODES:
        raise VehicleError(f"a tractor must be able to turn while driving: motion mode '{tractor.mode}' "
                           f"cannot tow (use one of {', '.join(TRACTOR_MODES)})", src, "motion.mode")
    if tractor.mode == "car" and not (tractor.min_turn_radius_m and tractor.min_turn_radius_m > 0):
        raise VehicleError("a car-like tractor needs min_turn_radius (metres, at the reference point)",
                           src, "motion.min_turn_radius")
    tongue = float(tongue)
    hi = PLAUSIBLE_SIZE_M[1]
    if not math.isfinite(tongue) or tongue < MIN_TONGUE_M:
        raise VehicleError(f"tongue must be at least {MIN_TONGUE_M:g} m (distance from the cart axle centre "
                           f"to the hitch), got {tongue:g}", src, "cart.tongue")
    if tongue > hi:
        raise VehicleError(f"tongue {tongue:g} m is not a plausible cart length; train files are in metres",
                           src, "cart.tongue")
    max_hitch_angle = float(max_hitch_angle)
    if not (1.0 <= max_hitch_angle <= 90.0):
        raise VehicleError(f"max_hitch_angle must be between 1 and 90 degrees (beyond 90 the tractor would "
                           f"push the cart), got {max_hitch_angle:g}", src, "cart.max_hitch_angle")
    if isinstance(cart_outline, Polygon):
        pts = list(cart_outline.exterior.coords)
    else:
        pts = list(cart_outline)
    outline = vehicle_from_outline(pts, name="cart", source=src, where="cart.outline").outline
    margin = tractor.margin_m if cart_margin is None else float(cart_margin)
    if margin < 0 or not math.isfinite(margin):
        raise VehicleError(f"margin must be a finite number ≥ 0, got {margin}", src, "cart.margin")
    hx, hy = (float(v) for v in hitch)
    _check_hitch(tractor, (hx, hy), src)
    return Train(name=name, tractor=tractor, cart_outline=outline, hitch=(hx, hy), tongue_m=tongue,
                 max_hitch_deg=max_hitch_angle, cart_margin_m=margin, source=src)


def _check_hitch(tractor: Vehicle, hitch: tuple[float, float], src: str | None) -> None:
    """The hitch must sit on or near the tractor, not ahead of its front edge."""
    hx, hy = hitch
    if not (math.isfinite(hx) and math.isfinite(hy)):
        raise VehicleError("hitch has a non-finite coordinate", src, "cart.hitch")
    x0, y0, x1, y1 = tractor.outline.bounds
    size = max(x1 - x0, y1 - y0)
    reach = max(0.5, 0.5 * size)
    dist = tractor.outline.distance(Point(hx, hy))
    if dist > reach:
        raise VehicleError(f"the hitch ({hx:g}, {hy:g}) lies {dist:.3g} m from the tractor outline (at most "
                           f"{reach:.3g} m allowed); the hitch is given in the tractor frame, metres from its "
                           f"reference point", src, "cart.hitch")
    if hx >= x1:
        raise VehicleError(f"the hitch ({hx:g}, {hy:g}) lies at or ahead of the tractor's front edge "
                           f"(x = {x1:g}); the cart is towed behind the tractor", src, "cart.hitch")


def _pair(table: dict, key: str, src: str) -> tuple[float, float]:
    where = f"cart.{key}"
    if key not in table:
        raise VehicleError("missing required key (the hitch point [x, y] in the tractor frame, metres)", src, where)
    value = table[key]
    if (not isinstance(value, list) or len(value) != 2
            or any(isinstance(v, bool) or not isinstance(v, (int, float)) for v in value)):
        raise VehicleError(f"expected [x, y] with two numbers, got {value!r}", src, where)
    x, y = float(value[0]), float(value[1])
    if not (math.isfinite(x) and math.isfinite(y)):
        raise VehicleError(f"hitch has a non-finite coordinate {value!r}", src, where)
    return x, y


def _cart_outline(cart: dict, src: str) -> list[tuple[float, float]]:
    if "outline" in cart:
        for k in ("width", "length", "axle_to_front"):
            if k in cart:
                raise VehicleError(f"give either outline or the rectangle (width, length), not both ('{k}')",
                                   src, f"cart.{k}")
        return get_points(cart, "outline", src, "cart.", VehicleError)
    if "width" not in cart and "length" not in cart:
        raise VehicleError("the cart needs an outline, or width and length", src, "cart.outline")
    width = get_number(cart, "width", src, "cart.", VehicleError, required=True, minimum=0.0)
    length = get_number(cart, "length", src, "cart.", VehicleError, required=True, minimum=0.0)
    front = get_number(cart, "axle_to_front", src, "cart.", VehicleError, default=length / 2)
    return [(front, -width / 2), (front, width / 2), (front - length, width / 2), (front - length, -width / 2)]


def _tractor(data: dict, src: str, name: str) -> Vehicle:
    """The tractor from the [footprint] and [motion] tables (the same keys as a vehicle file)."""
    if not isinstance(data.get("footprint"), dict):
        raise VehicleError("missing [footprint] table for the tractor (outline, or width and length)",
                           src, "footprint")
    table = {k: v for k, v in data.items() if k != "cart"}
    table["name"] = name
    return vehicle_from_table(table, src, default_mode="differential")
