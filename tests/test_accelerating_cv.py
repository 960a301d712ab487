"""A control volume translating with an acceleration (no rotation of its frame).

In the frame moving with the CV the momentum balance gains the apparent force of the fluid
inside, -m a_cv, beside its weight m g (White, *Fluid Mechanics*, sec. 3.4, the non-inertial
control volume; Fox & McDonald, *Introduction to Fluid Mechanics*, momentum equation for a CV
with rectilinear acceleration; both from memory)::

    R = sum beta mdot w + sum p A n - m (g - a_cv),      F_body = -R

and its moment about the reference point O acts at the fluid's centroid r_G:
r_G x m (g - a_cv). The ports are quasi-steady (the flows of the current CV velocity), so
a_cv = 0 is the steady form, exactly.
"""

from __future__ import annotations

import numpy as np
import pytest

import portflux as pf
import portflux.cells as C
from portflux.core import Closures, Model, OutsideScopeError, Ports, speed_table

RHO, AREA, V = 998.0, 2e-3, 30.0
TH = np.radians(150.0)


def _tank_vane(**kw):
    """A jet on a vane that holds fluid (a bucket), with port positions."""
    p = Ports.build(area=[AREA, AREA], density=RHO, role=["in", "out"],
                    velocity=[[V, 0, 0], [20 * np.cos(TH), 20 * np.sin(TH), 0]],
                    relative=[False, True], position=[[0.0, 0.1, 0], [0.05, 0.2, 0]])
    return Model(p, fluid_mass=kw.pop("fluid_mass", 1.5),
                 fluid_centroid=kw.pop("fluid_centroid", [0.1, 0.15, 0.02]), **kw)


SPEEDS = np.array([[0.0, 0, 0], [10.0, 0, 0], [25.0, 0.0, 0.0], [40.0, 0, 0]])


def test_zero_acceleration_is_the_steady_form_exactly():
    # a = 0 (given, or by default) must give the very same numbers, bit for bit.
    steady, zero = _tank_vane(), _tank_vane(cv_acceleration=[0.0, 0.0, 0.0])
    for want in ("force_on_body", "support_force", "moment_on_body", "power"):
        a = getattr(steady.balance(SPEEDS), want)
        b = getattr(zero.balance(SPEEDS), want)
        assert np.array_equal(a, b), want
    t0 = speed_table(steady, [0.0, 5.0, 12.0], [1.0, 0, 0], moments=True)
    t1 = speed_table(zero, [0.0, 5.0, 12.0], [1.0, 0, 0], moments=True)
    assert np.array_equal(t0.force_on_body, t1.force_on_body)
    assert np.array_equal(t0.moment_on_body, t1.moment_on_body)


def test_the_fluid_inside_takes_its_apparent_force_from_the_body():
    # Hand calculation (White sec. 3.4, from memory): the body's force changes by -m a in
    # contact, the support force by +m a; power F . V changes with it.
    m, a = 1.5, np.array([2.0, -1.0, 0.5])
    base, acc = _tank_vane(fluid_mass=m).balance(SPEEDS), _tank_vane(
        fluid_mass=m, cv_acceleration=a).balance(SPEEDS)
    contact = ~base.no_contact
    expect = base.force_on_body - m * a[None, :] * contact[:, None]
    np.testing.assert_allclose(acc.force_on_body, expect, rtol=0, atol=1e-12)
    np.testing.assert_allclose(acc.support_force - base.support_force,
                               m * a[None, :] * contact[:, None], rtol=0, atol=1e-12)
    assert not contact[-1]                       # outrun: no fluid inside, no apparent force
    np.testing.assert_array_equal(acc.force_on_body[-1], 0.0)


def test_the_apparent_force_acts_at_the_fluid_centroid():
    # Moment about O of -m a at r_G: the body's moment changes by r_G x (-m a) (r x F, common
    # practice, no source); worked out by hand for r_G = (0.1, 0.15, 0.02), m a = (3, 0, 0):
    # r_G x (-3, 0, 0) = (0, -0.06, 0.45).
    base = _tank_vane(fluid_mass=1.5).balance([10.0, 0, 0])
    acc = _tank_vane(fluid_mass=1.5, cv_acceleration=[2.0, 0, 0]).balance([10.0, 0, 0])
    np.testing.assert_allclose(acc.moment_on_body - base.moment_on_body, [0.0, -0.06, 0.45],
                               rtol=0, atol=1e-12)


def test_an_acceleration_equal_to_gravity_leaves_the_fluid_weightless():
    # Free fall: g - a = 0, so the fluid inside carries no body force (and needs no centroid).
    g = [0.0, 0.0, -9.80665]
    model = _tank_vane(gravity=g, cv_acceleration=g, fluid_centroid=None)
    jet_only = _tank_vane(fluid_mass=0.0, fluid_centroid=None)
    np.testing.assert_array_equal(model.balance(SPEEDS).force_on_body,
                                  jet_only.balance(SPEEDS).force_on_body)
    assert model.moment_need == ""


def test_the_api_and_the_sheet_take_the_acceleration_in_any_unit():
    rows = [{"port": "jet", "role": "in", "area": AREA, "density": RHO, "vx": V, "rx": 0.0},
            {"port": "out", "role": "out", "frame": "rel", "area": AREA, "density": RHO,
             "speed": 20.0, "angle": 150.0, "rx": 0.1}]
    kw = dict(fluid_mass=1.5, fluid_centroid=(0.1, 0.15, 0.0))
    steady = pf.solve(rows, [10.0, 0, 0], **kw)
    acc = pf.solve(rows, [10.0, 0, 0], cv_acceleration=(2.0, 0.0, 0.0), **kw)
    ft = pf.solve(rows, [10.0, 0, 0], cv_acceleration=(2.0 / 0.3048, 0.0, 0.0),
                  acceleration_unit="ft/s^2", **kw)
    np.testing.assert_allclose(acc.force_on_body - steady.force_on_body, [-3.0, 0, 0],
                               atol=1e-9)
    np.testing.assert_allclose(ft.force_on_body, acc.force_on_body, rtol=1e-12)
    head = ("port", "role", "frame", "area", "density", "vx", "speed", "angle", "rx")
    units = ("SI", None, None, None, None, None, None, None, None)
    table = (head, units, ("jet", "in", "abs", AREA, RHO, V, None, None, 0.0),
             ("out", "out", "rel", AREA, RHO, None, 20.0, 150.0, 0.1))
    settings = (("fluid_mass", 1.5, "kg"), ("cg_x", 0.1, "m"), ("cg_y", 0.15, "m"),
                ("ax", 2.0 / 0.3048, "ft/s^2"))
    cell = C.PFX_BODYFORCE(table, 10.0, None, None, settings)
    np.testing.assert_allclose(np.ravel(cell), acc.force_on_body, rtol=1e-12)


def test_a_bernoulli_height_in_an_accelerating_cv_is_refused():
    p = Ports.build(area=[1e-3, 1e-3], density=998.0, role=["in", "out"],
                    velocity=[[12.0, 0, 0], [0, 1.0, 0]], height=[0.0, 2.0])
    c = Closures.build(p, ["", "bernoulli"])
    Model(p, c)                                          # steady: fine
    with pytest.raises(OutsideScopeError, match="heights are taken along gravity"):
        Model(p, c, cv_acceleration=[1.0, 0, 0])


def test_every_speed_driver_of_the_api_takes_the_acceleration():
    # speed tables and envelopes compile the same model: their force on the body shifts by
    # -m a wherever the jet reaches the body (White sec. 3.4, from memory).
    rows = [{"port": "jet", "role": "in", "area": AREA, "density": RHO, "speed": V, "ry": 0.2},
            {"port": "out", "role": "out", "closure": "free", "angle": 150.0, "area": AREA,
             "density": RHO, "ry": 0.2}]
    kw = dict(fluid_mass=2.0, fluid_centroid=(0.0, 0.25, 0.0))
    a = (1.5, 0.0, 0.0)
    t0 = pf.speed_table(rows, [0.0, 10.0], moments=True, **kw)
    t1 = pf.speed_table(rows, [0.0, 10.0], moments=True, cv_acceleration=a, **kw)
    np.testing.assert_allclose(t1.force_on_body - t0.force_on_body, [[-3.0, 0, 0]] * 2,
                               atol=1e-9)
    np.testing.assert_allclose(t1.moment_on_body - t0.moment_on_body,   # r_G x (-m a)
                               [[0.0, 0.0, 0.75]] * 2, atol=1e-9)
    e0 = pf.envelope(rows, (0.0, 20.0), **kw)
    e1 = pf.envelope(rows, (0.0, 20.0), cv_acceleration=a, **kw)
    assert e1.value[0] == pytest.approx(e0.value[0] - 3.0, rel=1e-9)   # worst F_x at U = 0
