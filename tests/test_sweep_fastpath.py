"""The specialised speed sweep gives the same table as the general balance path.

Reference: the general path (portflux.core.balance.balance and closures.balance_closed, each
checked against published results in tests/test_sweep.py and tests/test_closures.py). The port
sets are random scenarios of our own; every column must agree to 1e-9 of its own scale.
"""

from __future__ import annotations

import numpy as np
import pytest

from portflux.core import TRAIN, Closures, InputError, Ports
from portflux.core import sweep as S

COLUMNS = ("support_force", "force_on_body", "power", "jet_efficiency", "inflow")
FLAGS = ("contact", "balanced", "valid")


def random_case(seed):
    """Random ports (frames, roles, given flows, pressures, heights) and closures."""
    rng = np.random.default_rng(seed)
    n = int(rng.integers(2, 6))
    kind = rng.choice(["plain", "free", "loss", "bernoulli", "solve", "share", "split"])
    n_in = 1 if kind != "plain" else int(rng.integers(1, n))
    role = ["in"] * n_in + ["out"] * (n - n_in)
    vel = rng.normal(0.0, 20.0, (n, 3))
    vel[0] = [30.0 + 10 * rng.random(), rng.normal(0, 3), rng.normal(0, 3)]
    rel = rng.random(n) < 0.3
    rel[0] = False
    area = 1e-3 * (1 + rng.random(n))
    mass_flow = np.full(n, np.nan)
    if kind == "plain" and n > 2 and rng.random() < 0.5:
        mass_flow[-1] = 2.0 * rng.random()
    ports = Ports.build(area=area, density=998.0, role=role, velocity=vel, relative=rel,
                        p_gauge=rng.normal(0, 2e3, n) * (rng.random(n) < 0.4),
                        beta=1.0 + 0.05 * rng.random(n) * (rng.random(n) < 0.5),
                        height=rng.normal(0, 0.5, n), mass_flow=mass_flow)
    closures = None
    rules = [""] * n
    opts = {}
    if kind in ("free", "loss", "bernoulli"):
        rules[1:] = [kind] * (n - 1)
        loss = [np.nan] + [0.2] * (n - 1) if kind == "loss" else None
        closures = Closures.build(ports, rules, loss=loss)
    elif kind == "solve":
        rules[1] = "solve"
        rules[2:] = ["free"] * (n - 2)
        closures = Closures.build(ports, rules)
    elif kind == "share":
        rules[1] = "solve"
        share = np.full(n, np.nan)
        if n > 2:
            share[2] = 0.3
        closures = Closures.build(ports, rules, share=share)
    elif kind == "split":
        t = rng.normal(size=3)
        t /= np.linalg.norm(t)
        p = Ports.build(area=[3e-4, 1.0, 1.0], density=998.0, role=["in", "out", "out"],
                        velocity=[vel[0], t, -t])
        ports, closures = p, Closures.build(p, ["", "solve", "solve"], no_force=t)
    if kind != "plain" and rng.random() < 0.3:
        opts["intercept"] = TRAIN
    if rng.random() < 0.3:
        opts["fluid_mass"] = 2.0 * rng.random()
    d = rng.normal(size=3)
    if rng.random() < 0.5:
        d = np.array([1.0, 0.0, 0.0])
    return ports, closures, d, opts


def options(opts):
    full = dict(fluid_mass=0.0, gravity=(0.0, 0.0, -9.80665), tol=1e-3, intercept="single")
    full.update(opts)
    return full


def compare(ports, closures, d, opts, speeds):
    dd = S._unit(d)
    full = options(opts)
    fast = S._table_fast(ports, speeds, dd, closures, full, 37)
    ref = S._table_general(ports, speeds, dd, closures, full, 37)
    for name in COLUMNS:
        a, b = getattr(fast, name), getattr(ref, name)
        np.testing.assert_array_equal(np.isnan(a), np.isnan(b), err_msg=name)
        scale = np.nanmax(np.abs(b)) if np.any(np.isfinite(b)) else 1.0
        np.testing.assert_allclose(a, b, rtol=1e-9, atol=1e-9 * max(scale, 1e-300),
                                   err_msg=name)
    for name in FLAGS:
        np.testing.assert_array_equal(getattr(fast, name), getattr(ref, name), err_msg=name)
    return fast


@pytest.mark.parametrize("seed", range(80))
def test_fast_sweep_equals_general_balance_on_random_port_sets(seed):
    try:
        case = random_case(seed)
    except InputError:
        pytest.skip("random ports not valid (checked by Ports.build)")
    speeds = np.linspace(-60.0, 60.0, 301)
    try:
        S._table_general(case[0], speeds[:1], S._unit(case[2]), case[1], options(case[3]), 1)
    except InputError:
        pytest.skip("options rejected by the general path (e.g. a train needs one inlet)")
    compare(*case, speeds)


def test_fast_sweep_covers_each_closure_kind_and_the_vane_train():
    seen = set()
    for seed in range(80):
        try:
            ports, closures, d, opts = random_case(seed)
        except InputError:
            continue
        kinds = set(closures.rule) - {"given"} if closures is not None else {"none"}
        if closures is not None and closures.unknown.any():
            kinds.add("solve")
        if opts.get("intercept") == TRAIN:
            kinds.add("train")
        seen |= kinds
    assert seen >= {"none", "free", "loss", "bernoulli", "solve", "train"}


def test_tables_long_enough_take_the_fast_path(monkeypatch):
    calls = []
    real = S._Sweep.chunk
    monkeypatch.setattr(S._Sweep, "chunk", lambda self, *a: calls.append(1) or real(self, *a))
    ports, closures, d, opts = random_case(3)
    S.speed_table(ports, np.linspace(0, 20, S._FAST_MIN), d, closures=closures)
    assert calls


def test_singular_split_still_raises_the_general_message():
    # Source: common practice, no source: a no-force direction perpendicular to both unknown
    # outlets leaves the split undetermined (the general path names the speed).
    p = Ports.build(area=[3e-4, 1.0, 1.0], density=998.0, role=["in", "out", "out"],
                    velocity=[[25.0, 0, 0], [0, 1.0, 0], [0, -1.0, 0]])
    c = Closures.build(p, ["", "solve", "solve"], no_force=[0.0, 0.0, 1.0])
    with pytest.raises(InputError, match="singular system at CV velocity"):
        S.speed_table(p, np.linspace(0.0, 10.0, 100), [1.0, 0, 0], closures=c)
