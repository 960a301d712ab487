"""A speed table (the model evaluated on chunks of many speeds, table quantities only) gives
the same rows as full balances evaluated one speed at a time.

Reference: the one-speed balance (portflux.core.balance.balance and balance_closed, each checked
against published results in tests/test_sweep.py and tests/test_closures.py). The port sets are
random scenarios of our own; every column must agree to 1e-9 of its own scale.
"""

from __future__ import annotations

import numpy as np
import pytest

from portflux.core import (TRAIN, Closures, InputError, Model, Ports, balance, balance_closed,
                           in_contact)
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


def one_speed_at_a_time(ports, closures, d, opts, speeds):
    """The table's columns from full balances, one CV velocity per call."""
    cols = {k: [] for k in COLUMNS + FLAGS}
    for u in speeds:
        v = u * d
        if closures is None:
            b, valid = balance(ports, v, **opts), True
        else:
            cb = balance_closed(ports, closures, v, unreachable="flag", **opts)
            b, valid = cb.balance, bool(cb.valid)
        for k in ("support_force", "force_on_body", "power", "jet_efficiency", "inflow",
                  "balanced"):
            cols[k].append(getattr(b, k))
        cols["contact"].append(bool(in_contact(b)))
        cols["valid"].append(valid)
    return {k: np.array(v) for k, v in cols.items()}


def compare(ports, closures, d, opts, speeds):
    dd = S._unit(d)
    full = options(opts)
    table = S.speed_table(ports, speeds, dd, closures=closures, chunk=37, **full)
    ref = one_speed_at_a_time(ports, closures, dd, full, speeds)
    for name in COLUMNS:
        a, b = getattr(table, name), ref[name]
        np.testing.assert_array_equal(np.isnan(a), np.isnan(b), err_msg=name)
        scale = np.nanmax(np.abs(b)) if np.any(np.isfinite(b)) else 1.0
        np.testing.assert_allclose(a, b, rtol=1e-9, atol=1e-9 * max(scale, 1e-300),
                                   err_msg=name)
    for name in FLAGS:
        np.testing.assert_array_equal(getattr(table, name), ref[name], err_msg=name)
    return table


@pytest.mark.parametrize("seed", range(80))
def test_speed_table_equals_one_speed_balances_on_random_port_sets(seed):
    try:
        case = random_case(seed)
    except InputError:
        pytest.skip("random ports not valid (checked by Ports.build)")
    speeds = np.linspace(-60.0, 60.0, 301)
    try:
        Model(case[0], case[1], **options(case[3]))
    except InputError:
        pytest.skip("options rejected by the model (e.g. a train needs one inlet)")
    compare(*case, speeds)


def test_random_cases_cover_each_closure_kind_and_the_vane_train():
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


def test_a_long_table_evaluates_the_model_once_per_chunk(monkeypatch):
    calls = []
    real = Model.evaluate_columns
    monkeypatch.setattr(Model, "evaluate_columns", lambda self, *a, **k: calls.append(1) or real(
        self, *a, **k))
    ports, closures, d, opts = random_case(3)
    S.speed_table(ports, np.linspace(0, 20, 1000), d, closures=closures, chunk=256)
    assert len(calls) == 4          # ceil(1000 / 256) chunks, no loop per speed


def test_singular_split_in_a_table_names_the_speed():
    # Source: common practice, no source: a no-force direction perpendicular to both unknown
    # outlets leaves the split undetermined (the message names the speed).
    p = Ports.build(area=[3e-4, 1.0, 1.0], density=998.0, role=["in", "out", "out"],
                    velocity=[[25.0, 0, 0], [0, 1.0, 0], [0, -1.0, 0]])
    c = Closures.build(p, ["", "solve", "solve"], no_force=[0.0, 0.0, 1.0])
    with pytest.raises(InputError, match="singular system at CV velocity"):
        S.speed_table(p, np.linspace(0.0, 10.0, 100), [1.0, 0, 0], closures=c)
