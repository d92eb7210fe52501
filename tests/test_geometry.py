"""Helicoid geometry against closed forms, scipy's integrator and trade rules."""
import math

import numpy as np
import pytest
from scipy import integrate

from helix.alignment import build_profile
from helix.geometry import gradient_at_radius, helix_length, pitch, radius_for_gradient


def test_gradient_one_in_n_needs_n_units_of_run_per_unit_of_rise():
    # Common practice, no single source: a gradient of 1 in n needs n units of
    # horizontal run per unit of rise.  One turn at radius r runs 2*pi*r in plan.
    for n in (6, 10, 12, 15):
        rise = 3.0
        r = radius_for_gradient(rise, 1.0 / n)
        run = 2 * math.pi * r
        assert run / rise == pytest.approx(n, rel=1e-12)
        assert gradient_at_radius(rise, r) == pytest.approx(1.0 / n, rel=1e-12)


def test_inner_to_outer_gradient_ratio_equals_radius_ratio():
    # Common practice, no single source: on a constant-pitch helicoid
    # g(Ri) / g(Ro) = Ro / Ri (the inner edge is steeper).
    p = 3.2
    for ri, ro in ((5.0, 8.65), (7.175, 10.825), (11.0, 14.5)):
        assert gradient_at_radius(p, ri) / gradient_at_radius(p, ro) == pytest.approx(ro / ri, rel=1e-12)


def test_helix_length_matches_scipy_quad():
    # Source: reference integrator scipy.integrate.quad on the arc-length integral
    # of (r cos t, r sin t, c t): |d/dt| = sqrt(r^2 + c^2).
    for r, p, theta in ((9.0, 3.0, 2 * math.pi), (4.5, 6.2, 3 * math.pi), (20.0, 2.5, 0.7)):
        c = p / (2 * math.pi)
        speed = lambda t: math.sqrt((r * math.sin(t)) ** 2 + (r * math.cos(t)) ** 2 + c * c)
        ref, _ = integrate.quad(speed, 0.0, theta, epsabs=1e-12, epsrel=1e-12)
        assert helix_length(theta, r, p) == pytest.approx(ref, rel=1e-10)


def test_profile_length_with_vertical_curves_matches_scipy_quad():
    # Source: reference integrator scipy.integrate.quad of sqrt(r^2 + z'(theta)^2)
    # against the closed form on parabolic (vertical-curve) segments.
    prof = build_profile([0.0, 4.2, 7.2], [math.pi, math.pi], [0.2, 0.2, 0.2], [0.25, 0.25], "curve",
                         landing_slope=0.1)
    for r in (11.0, 12.75, 14.5):
        ref = 0.0
        for a, b in zip(prof.t[:-1], prof.t[1:]):
            f = lambda th: math.hypot(r, float(prof.slope(th)))
            val, _ = integrate.quad(f, a + 1e-12, b - 1e-12, epsabs=1e-12, epsrel=1e-12)
            ref += val
        assert prof.length_at_radius(r) == pytest.approx(ref, rel=1e-9)


def test_pitch_and_turns():
    assert pitch(3.0, 1.0) == pytest.approx(3.0)
    assert pitch(3.0, 0.5) == pytest.approx(6.0)  # double helix thread: two storeys per turn
    assert np.allclose(pitch([3.6, 3.0], [1.0, 1.5]), [3.6, 2.0])


def test_twelve_to_one_is_8_33_percent_and_4_76_degrees():
    # Common practice, no single source: 1:12 = 8.33 % = 4.76 deg.
    g = 1 / 12
    assert 100 * g == pytest.approx(8.33, abs=0.005)
    assert math.degrees(math.atan(g)) == pytest.approx(4.76, abs=0.005)


def test_brent_root_and_minimum_match_scipy():
    # Source: reference root finder and minimiser scipy.optimize.brentq and
    # minimize_scalar(method="bounded") on the same functions.
    from scipy.optimize import brentq, minimize_scalar

    from helix.roots import RootError, brent_minimum, brent_root
    cases = [(lambda x: x ** 3 - 2 * x - 5, 2.0, 3.0), (lambda x: math.cos(x) - x, 0.0, 1.0),
             (lambda x: math.exp(x) - 7.5, -1.0, 4.0), (lambda x: 3.0 / (2 * math.pi * x) - 0.1, 1.0, 20.0)]
    for f, a, b in cases:
        assert brent_root(f, a, b, xtol=1e-13) == pytest.approx(brentq(f, a, b, xtol=1e-13), abs=1e-11)
    with pytest.raises(RootError):
        brent_root(lambda x: x * x + 1, -1.0, 1.0)
    for f, a, b in [(lambda x: (x - 1.3) ** 2 + 0.5, 0.0, 3.0), (lambda x: abs(x - 0.37), 0.0, 1.0),
                    (lambda x: math.sin(x), 3.0, 6.0)]:
        x, fx = brent_minimum(f, a, b, xtol=1e-9)
        ref = minimize_scalar(f, bounds=(a, b), method="bounded", options={"xatol": 1e-9})
        assert x == pytest.approx(ref.x, abs=1e-6) and fx == pytest.approx(ref.fun, abs=1e-9)
