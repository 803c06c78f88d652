"""Towed-cart kinematics against closed forms and an independent numerical integration."""

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from floorfit.articulated import (
    follow,
    hitch_relaxation,
    jack_knife_radius,
    make_train,
    off_tracking_m,
    steady_trailer_radius,
    steady_turn,
    tractrix_angle,
)
from floorfit.motion.segments import arc, rotate, straight
from floorfit.motion.swept import swept_annulus
from floorfit.vehicles.rigid import rectangle_vehicle

TRACTOR = rectangle_vehicle(0.8, 0.6, reference_to_front=0.5, mode="differential", name="tug")
CART = [(-0.45, -0.35), (0.75, -0.35), (0.75, 0.35), (-0.45, 0.35)]


def on_axle(tongue=1.5, limit=89.0):
    return make_train("on-axle", TRACTOR, CART, (0.0, 0.0), tongue, limit)


def test_steady_turn_cart_axle_runs_on_sqrt_r2_minus_l2():
    # Classic off-tracking of a steady turn, on-axle hitch (FIELD-NOTES: R 3, L 1.5 -> 2.598076);
    # model: LaValle, Planning Algorithms (2006), §13.1.2.4, eq. (13.19) with one trailer.
    train = on_axle(1.5)
    m = follow([arc((0.0, 0.0, 0.0), 60.0, 1, 3.0)], train)           # 60 m = 40 tongue lengths
    r = np.hypot(m.cart[:, 0], m.cart[:, 1] - 3.0)                     # turn centre at (0, 3)
    assert r[-1] == pytest.approx(2.598076, abs=1e-4)
    assert steady_trailer_radius(3.0, 1.5) == pytest.approx(2.598076, abs=1e-6)
    # settled hitch angle asin(L / R) = 30 degrees
    assert math.degrees(m.hitch_angle[-1]) == pytest.approx(30.0, abs=1e-4)
    # the cart never cuts further in than the steady circle when it starts in line (radius falls monotonically)
    assert r.min() >= 2.598076 - 1e-4 and np.all(np.diff(r) <= 1e-9)
    # off-tracking R - sqrt(R^2 - L^2) (the hitch track is sampled every <= 2 cm: chord error < 1e-4 m)
    assert off_tracking_m(m) == pytest.approx(3.0 - 2.598076, abs=2e-4)
    st = steady_turn(train, 3.0)
    assert st.cart_axle_radius_m == pytest.approx(2.598076, abs=1e-6)
    assert st.hitch_angle_deg == pytest.approx(30.0, abs=1e-9)


def test_steady_turn_annulus_of_the_whole_train():
    # inner: the cart's inner edge at its axle, sqrt(R^2 - L^2) - w_cart/2 (the centre's foot on the
    # cart axis is the axle, since the axle's velocity is along the axis);
    # outer: the tractor's outer front corner, sqrt((R + w/2)^2 + d^2) (common practice, vehicle turning
    # geometry; floorfit.motion.swept_annulus implements it independently).
    st = steady_turn(on_axle(1.5), 3.0)
    assert st.inner_m == pytest.approx(math.sqrt(9 - 2.25) - 0.35, abs=1e-9)
    assert st.outer_m == pytest.approx(swept_annulus(3.0, 0.6, 0.5)[1], abs=1e-9)
    assert steady_turn(on_axle(1.5), 1.4) is None                      # R < L: no steady state


def test_tractrix_along_a_straight():
    # The cart axle on a straight pull traces the tractrix of its tongue length L: with y its distance
    # from the hitch's line, the distance along the line grows by L·acosh(L/y) - sqrt(L^2 - y^2)
    # between two points (the classical tractrix, from memory).
    L = 1.5
    train = on_axle(L)
    psi0 = -math.radians(60.0)                                         # cart 60 degrees off the line
    m = follow([straight((0.0, 0.0, 0.0), 6.0)], train, cart_heading=psi0)
    y = m.cart[:, 1]
    x = m.cart[:, 0]

    def f(yy):
        return L * np.arccosh(L / yy) - np.sqrt(L * L - yy * yy)

    np.testing.assert_allclose(x - x[0], f(y) - f(y[0]), atol=1e-9)
    # and the angle: tan(gamma/2) = tan(gamma0/2)·exp(-s/L)
    s = m.travel_m
    np.testing.assert_allclose(-m.cart[:, 2], tractrix_angle(math.radians(60.0), s, L), atol=1e-12)


def _numerical_cart_heading(segments, train, psi0):
    """psi' = (dH/dt . e_perp(psi)) / L integrated with scipy (rtol 1e-11): the general trailer model,
    with the hitch velocity from the tractor's own velocity v·e(theta) + omega·J·R(theta)·h."""
    hx, hy = train.hitch
    psi = psi0
    for seg in segments:
        th0 = seg.start[2]
        v = seg.sign * seg.length_m if seg.kind != "rotate" else 0.0
        w = math.radians(seg.angle_deg)

        def rhs(t, y, th0=th0, v=v, w=w):
            th = th0 + w * t
            c, s = math.cos(th), math.sin(th)
            hdx = v * c + w * (-s * hx - c * hy)
            hdy = v * s + w * (c * hx - s * hy)
            return [(-hdx * math.sin(y[0]) + hdy * math.cos(y[0])) / train.tongue_m]

        psi = solve_ivp(rhs, (0.0, 1.0), [psi], rtol=1e-11, atol=1e-13).y[0, -1]
    return psi


@pytest.mark.parametrize("hitch,tongue", [((-0.35, 0.05), 1.2), ((0.0, 0.0), 1.6), ((-0.6, 0.0), 0.5)])
def test_closed_form_matches_numerical_integration(hitch, tongue):
    # Off-axle hitch: Altafini, "Some properties of the general n-trailer", Int. J. Control 74(4), 2001;
    # here integrated numerically from the no-slip condition, independent of the closed form.
    train = make_train("t", TRACTOR, CART, hitch, tongue, 89.0)
    segs = [straight((0.0, 0.0, 0.0), 1.0)]
    segs.append(arc(segs[-1].end, 2.0, 1, 1.1))                       # R 1.1 < L 1.2 / 1.6: no steady state
    segs.append(rotate(segs[-1].end, 0.7))
    segs.append(arc(segs[-1].end, 3.0, -1, 2.0))
    segs.append(straight(segs[-1].end, 2.0))
    m = follow(segs, train, cart_heading=0.3)
    expected = _numerical_cart_heading(segs, train, 0.3)
    assert math.remainder(m.cart[-1, 2] - expected, 2 * math.pi) == pytest.approx(0.0, abs=1e-7)


def test_hitch_relaxation_long_arc_does_not_overflow():
    g = hitch_relaxation(0.2, 1.0 / 3.0, 0.05, np.array([0.0, 10.0, 500.0]))
    assert np.all(np.isfinite(g))
    assert g[-1] == pytest.approx(math.asin(0.05 / 3.0), abs=1e-12)


def test_jack_knife_limit():
    # on-axle: settled hitch angle asin(L/R) (LaValle eq. 13.19 at equilibrium), so the smallest
    # steady radius within a limit phi is L / sin(phi)
    train = on_axle(1.5, limit=40.0)
    assert jack_knife_radius(train) == pytest.approx(1.5 / math.sin(math.radians(40.0)), abs=1e-12)
    from floorfit.articulated import TrainChecker, judge_motion
    from floorfit.plan.model import Plan
    empty = Plan.from_geometries()
    checker = TrainChecker(empty, train, 0.02)
    tight = judge_motion(checker, follow([arc((0, 0, 0), 30.0, 1, 2.0)], train))     # asin(1.5/2) = 48.6
    assert not tight.passable and tight.problem == "jack-knife"
    # the hitch angle is monotone along an arc and checked at samples no more than angle_step apart
    m = follow([arc((0, 0, 0), 30.0, 1, 2.0)], train)
    assert 40.0 < tight.details["hitch_angle_deg"] <= 40.0 + math.degrees(m.angle_step_rad)
    easy = judge_motion(checker, follow([arc((0, 0, 0), 30.0, 1, 2.4)], train))      # asin(1.5/2.4) = 38.7
    assert easy.passable and easy.hitch_angle_deg < 40.0
    assert easy.hitch_angle_deg == pytest.approx(math.degrees(math.asin(1.5 / 2.4)), abs=1e-3)
    # off-axle: found by bisection; at that radius the settled angle is the limit
    off = make_train("off", TRACTOR, CART, (-0.35, 0.0), 1.5, 40.0)
    r = jack_knife_radius(off)
    assert abs(steady_turn(off, r).hitch_angle_deg) == pytest.approx(40.0, abs=0.01)


def test_reversing_is_refused():
    from floorfit.errors import InputError
    with pytest.raises(InputError, match="reversing with a cart is not supported"):
        follow([straight((0, 0, 0), -1.0)], on_axle())
