"""Floor swept by a rectangular car turning at a fixed radius.

A car whose rear-axle centre drives a circle of radius R sweeps an annulus about
the turn centre (common practice, vehicle turning geometry). With width w, the
front edge ``front_length`` d ahead of the rear axle (wheelbase plus front
overhang) and the rear edge ``rear_length`` behind it:

- inner radius ``R - w/2``: the inner side of the body at the rear axle comes
  closest to the centre (0 when the centre lies inside the body, R < w/2);
- outer radius ``sqrt((R + w/2)^2 + max(d, rear)^2)``: the outer front corner
  (or the outer rear corner, if the rear overhang is longer) is farthest.
"""

from __future__ import annotations

import math

from floorfit.motion._checks import positive_number

__all__ = ["swept_annulus"]


def swept_annulus(radius: float, width: float, front_length: float,
                  rear_length: float = 0.0) -> tuple[float, float]:
    """Inner and outer radius (m) of the ring swept by a car turning at ``radius``.

    Parameters
    ----------
    radius : float
        Turning radius of the rear-axle centre (m, > 0).
    width : float
        Body width (m, > 0).
    front_length : float
        Distance from the rear axle to the front edge (m): wheelbase plus front overhang.
    rear_length : float
        Distance from the rear axle to the rear edge (m), default 0.

    Returns
    -------
    (inner, outer) : tuple[float, float]
        ``(max(R - w/2, 0), sqrt((R + w/2)^2 + max(front, rear)^2))`` in metres.
    """
    r = positive_number(radius, "radius")
    w = positive_number(width, "width")
    front = positive_number(front_length, "front_length", allow_zero=True)
    rear = positive_number(rear_length, "rear_length", allow_zero=True)
    return max(r - 0.5 * w, 0.0), math.hypot(r + 0.5 * w, max(front, rear))
