"""Velocity profiles: named profiles' beta and mean velocity, and the traverse integrator.

Sources beside each check: the laminar and power-law closed forms (F. M. White, *Fluid
Mechanics*, sec. 3.4 and 6.4-6.6, from memory) and scipy's adaptive quadrature ``quad`` (a
general-purpose library) for the integrals that define them.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad

import portflux.api as api
from portflux.core import InputError
from portflux.core.profiles import (named_profile, power_law_beta, power_law_mean_ratio,
                                    traverse)


def _round_port_integrals(u):
    """(mean / max, beta) of u(s), s = r / R, by scipy's quad over the unit disc."""
    q = 2 * quad(lambda s: u(s) * s, 0, 1, limit=200)[0]
    m = 2 * quad(lambda s: u(s) ** 2 * s, 0, 1, limit=200)[0]
    return q, m / (q * q)


def test_laminar_beta_is_four_thirds_by_quadrature():
    # White, sec. 3.4 (from memory): laminar pipe flow beta = 4/3, mean = max / 2
    mean, beta = _round_port_integrals(lambda s: 1 - s * s)
    assert beta == pytest.approx(4 / 3, rel=1e-12)
    assert mean == pytest.approx(0.5, rel=1e-12)
    p = named_profile("laminar")
    assert (p.beta, p.mean_ratio) == (pytest.approx(beta, rel=1e-12), pytest.approx(mean))


@pytest.mark.parametrize("n", [5.0, 6.0, 7.0, 8.5, 10.0])
def test_power_law_closed_forms_match_quadrature(n):
    # White, sec. 6.6 (from memory): u = U (1 - r/R)^(1/n); closed forms derived in the module
    mean, beta = _round_port_integrals(lambda s: (1 - s) ** (1 / n))
    assert power_law_mean_ratio(n) == pytest.approx(mean, rel=1e-9)
    assert power_law_beta(n) == pytest.approx(beta, rel=1e-9)


def test_seventh_power_law_numbers():
    # White, sec. 6.6 (from memory): n = 7 gives V/U = 0.817 and beta = 1.02
    assert power_law_beta(7) == pytest.approx(1.0204, abs=5e-5)
    assert power_law_mean_ratio(7) == pytest.approx(0.8167, abs=5e-5)
    assert named_profile("turbulent").beta == power_law_beta(7)
    assert named_profile("Power 1/7").beta == named_profile("power n=7").beta


def test_uniform_profile_is_one():
    assert named_profile("uniform").beta == 1.0
    assert api.profile_beta("uniform") == (1.0, 1.0)


@pytest.mark.parametrize("word", ["parabolic", "power 0.5", "power 40", ""])
def test_unknown_or_implausible_profile_is_refused(word):
    with pytest.raises(InputError, match="profile|power-law"):
        api.profile_beta(word)


def test_laminar_traverse_converges_at_second_order():
    # the closed form 4/3 (White, sec. 3.4, from memory) is the limit; piecewise-linear u
    # integrated exactly per annulus: the error falls as h^2
    errors = []
    for k in (6, 11, 21, 41, 81):
        r = np.linspace(0.0, 0.1, k)
        t = traverse(r, 3.0 * (1 - (r / 0.1) ** 2))
        errors.append(abs(t.beta - 4 / 3))
        assert t.mean_velocity == pytest.approx(1.5, rel=0.05)
    ratios = np.array(errors[:-1]) / np.array(errors[1:])
    assert np.all(ratios > 3.5), ratios          # halving h divides the error by ~4
    assert errors[-1] < 2e-4


def test_power_law_traverse_converges_to_closed_form():
    # White, sec. 6.6 (from memory): the synthetic 1/7 profile's traverse tends to 1.0204
    prev = None
    for k in (11, 41, 161, 641):
        r = np.linspace(0.0, 0.05, k)
        t = traverse(r, 4.0 * (1 - r / 0.05) ** (1 / 7))
        err = abs(t.beta - power_law_beta(7))
        merr = abs(t.mean_velocity / 4.0 - power_law_mean_ratio(7))
        if prev is not None:
            assert err < prev[0] and merr < prev[1]
        prev = (err, merr)
    assert prev[0] < 2e-3 and prev[1] < 1e-3


def test_flow_is_mean_times_area_and_unit_conversion():
    r = np.linspace(0.0, 2.0, 41)                       # inches
    t = api.velocity_traverse(r, 10.0 * (1 - (r / 2.0) ** 2), length_unit="in",
                                 velocity_unit="ft/s", flow_unit="ft^3/s")
    area_ft2 = math.pi * (2.0 / 12.0) ** 2
    assert t.flow == pytest.approx(t.mean_velocity * area_ft2, rel=1e-12)
    assert t.mean_velocity == pytest.approx(5.0, rel=2e-3)


def test_rectangular_laminar_channel_beta_six_fifths():
    # plane Poiseuille flow: u = U (1 - (2y/H - 1)^2), mean 2/3 U, beta 6/5 (White, sec. 3.4
    # and 6.4, from memory)
    y = np.linspace(0.0, 0.02, 201)
    t = traverse(y, 1.0 - (2 * y / 0.02 - 1) ** 2, shape="rectangular", width=0.5)
    assert t.beta == pytest.approx(1.2, rel=1e-4)
    assert t.mean_velocity == pytest.approx(2 / 3, rel=1e-4)
    assert t.flow == pytest.approx(2 / 3 * 0.02 * 0.5, rel=1e-4)


def test_missing_centre_and_wall_are_filled_as_documented():
    # uniform core measured from r = 0.01 to 0.04, port radius 0.05: the centre takes the
    # first velocity, the wall 0 (no slip); hand integral of the piecewise-linear profile
    t = traverse([0.01, 0.02, 0.03, 0.04], [2.0, 2.0, 2.0, 2.0], size=0.05)
    # int_0^0.04 2 pi r 2 dr + int_0.04^0.05 2 pi r u dr, u = 2 (1 - t), r = r0 + h t:
    # 2 pi h int_0^1 2 (1 - t)(r0 + h t) dt = 2 pi h (2 r0 + 2 h / 2 - 2 r0 / 2 - 2 h / 3)
    h, r0 = 0.01, 0.04
    ring = 2 * math.pi * h * (2.0 * r0 + h - r0 - 2.0 * h / 3)
    q = 2 * math.pi * 2.0 * 0.04 ** 2 / 2 + ring
    assert t.flow == pytest.approx(q, rel=1e-12)
    assert t.area == pytest.approx(math.pi * 0.05 ** 2)
    assert any("only 4 points" in w for w in t.warnings)


def test_reversing_profile_warns():
    r = np.linspace(0, 1, 9)
    t = traverse(r, 1.0 - 1.2 * r)
    assert any("reverses" in w for w in t.warnings)


@pytest.mark.parametrize("pos, vel, words", [
    ([0.0, 0.02, 0.01], [1, 1, 1], "point 3: position 0.01 m is below"),
    ([0.0, 0.01, 0.01], [1, 1, 1], "point 3: position 0.01 m repeats"),
    ([-0.01, 0.01], [1, 1], "point 1: a position must be >= 0"),
    ([0.0, 0.01], [1.0], "one velocity per position"),
    ([0.0, np.nan], [1.0, 1.0], "finite"),
])
def test_bad_traverse_names_the_point(pos, vel, words):
    with pytest.raises(InputError, match="traverse") as e:
        traverse(pos, vel)
    assert words in str(e.value)
