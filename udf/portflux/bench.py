"""Benchmarks: portflux's speed measured against a bare numpy baseline, in one run.

``portflux bench`` (or ``python -m portflux.bench``) times, with repetitions, and prints the
median of each figure beside its target:

1. **balance** -- a 10-port balance through a worksheet function (``PFX_BODYFORCE`` on a raw
   grid with a unit row in US units, forces out in lbf) against bare numpy evaluating the same
   formulas on pre-converted SI arrays. Reported cold (:func:`portflux.cells.clear_caches`
   before every call: the parsed grids, settings, unit systems and balances are forgotten, so
   the grid is parsed, the ports built and validated, the balance run and the result formatted
   again; the unit-conversion factors of :mod:`portflux.units` stay cached, as they do in a
   recalculation after a changed input, which is the case this figure stands for) and warm
   (the same grid again: a cache hit). The target applies to the cold call. A third figure,
   informational, also clears the unit factors (the first call that meets each unit; pint
   parses them once per process).
2. **speed table** -- 10^6 speeds of a single frictionless vane (F = rho A (V-U)^2 (1 - cos th))
   through :func:`portflux.core.speed_table` and through ``PFX_SPEEDTABLE`` against bare numpy of
   the closed form producing the same columns (support x y z, body x y z, power, efficiency,
   contact). Compute-only (arrays in, arrays out) and end to end (a tuple of 10^6 1-tuples in, a
   list of row lists out; the baseline then pays the same ``np.asarray`` and ``.tolist()``,
   with the cyclic garbage collector paused while the row lists are built, as
   ``PFX_SPEEDTABLE`` does; the baseline with the collector running is shown beside it);
   plus peak traced memory (tracemalloc) against the size of the output arrays.
3. **import** -- a fresh interpreter importing ``portflux.cells`` against one importing numpy
   alone (median of several); the pint registry must not be built at import.
4. **recalc** -- headless recalculation of the template (``workbook_templates/
   portflux_template.xlsx``, built with :func:`portflux.workbook.template.build_template` where
   absent) cold (load + first evaluation) and warm (one input changed, the CV speed), beside
   the same sheet with every ``PFX_`` call replaced by native arithmetic in the same engine.

5. **engine vs LibreOffice** -- native-formula sheets of 10,000 and 50,000 formulas: whole-file
   recalculation and peak memory against LibreOffice (and 100,000 formulas), linearity, and edit
   latency (:mod:`portflux.bench_engine`).
6. **LibreOffice add-in** -- edit latency of a 10^4-speed ``PFX_SPEEDTABLE`` block in Calc
   against the same table in native formulas, with where the add-in's time goes
   (:mod:`portflux.bench_addin`).
7. **differential test, long run** -- 24,000 generated formulas evaluated by the engine and by
   LibreOffice and judged (:mod:`portflux.workbook.difftest`); target: no disagreement outside
   the table of LibreOffice's departures from Excel.

``--quick`` runs everything with tiny sizes and one or two repetitions (CI: the benchmark
cannot rot). Timings are never asserted anywhere: machines are shared and noisy.

Reference for the vane formulas: moving-vane momentum balance, White, *Fluid Mechanics*,
sec. 3.4 (from memory).
"""

from __future__ import annotations

import argparse
import contextlib
import gc
import math
import os
import platform
import statistics
import subprocess
import sys
import tempfile
import time
import tracemalloc

import numpy as np

# --------------------------------------------------------------------------------------------
# machinery
# --------------------------------------------------------------------------------------------


def _median_time(fn, reps, setup=None):
    """Median wall time [s] of ``fn()`` over ``reps`` runs (``setup()`` untimed before each)."""
    times = []
    for _ in range(reps):
        if setup is not None:
            setup()
        gc.collect()
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def _per_call(fn, reps, inner, setup=None):
    """Median time [s] per call, timing ``inner`` calls per repetition (short calls)."""
    def many():
        for _ in range(inner):
            if setup is not None:
                setup()
            fn()
    if setup is None:
        return _median_time(many, reps) / inner
    # setup inside the timed loop: time it alone and subtract
    t_all = _median_time(many, reps) / inner
    t_setup = _median_time(lambda: [setup() for _ in range(inner)], reps) / inner
    return max(t_all - t_setup, 0.0)


def interleaved(cases, rounds):
    """Median time [s] per call of each case, timed A B C A B C ... in ``rounds`` rounds.

    ``cases`` maps a name to ``(fn, inner, setup)``: each round times ``inner`` calls of ``fn``
    (``setup()`` before each call, untimed: its own time, measured in the same round, is
    subtracted). Interleaving puts every case under the same machine drift, so the ratios of
    these medians are fair on a shared, noisy machine (common practice, no source).

    >>> t = interleaved({"a": (lambda: None, 10, None), "b": (lambda: sum(range(50)), 10,
    ...                  None)}, 3)
    >>> sorted(t), all(v >= 0 for v in t.values())
    (['a', 'b'], True)
    """
    times = {name: [] for name in cases}
    for _ in range(rounds):
        for name, (fn, inner, setup) in cases.items():
            gc.collect()
            if setup is None:
                t0 = time.perf_counter()
                for _ in range(inner):
                    fn()
                times[name].append((time.perf_counter() - t0) / inner)
                continue
            t0 = time.perf_counter()
            for _ in range(inner):
                setup()
                fn()
            t_all = time.perf_counter() - t0
            t0 = time.perf_counter()
            for _ in range(inner):
                setup()
            t_setup = time.perf_counter() - t0
            times[name].append(max(t_all - t_setup, 0.0) / inner)
    return {name: statistics.median(v) for name, v in times.items()}


def _gc_paused(active=True):
    """The collector pause PFX_SPEEDTABLE uses while building rows (or no pause)."""
    from .cells import no_gc

    return no_gc() if active else contextlib.nullcontext()


def _peak_mib(fn):
    """Peak traced memory [MiB] of ``fn()`` (tracemalloc; numpy reports its buffers)."""
    gc.collect()
    tracemalloc.start()
    try:
        fn()
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    return peak / 2 ** 20


def _figure(bench, name, value, unit, target=None, limit=None, applies=True, note=""):
    """One row of the report; ``met`` is None where the figure has no target of its own."""
    met = None
    if limit is not None and applies:
        met = bool(value <= limit)
    return dict(benchmark=bench, figure=name, value=float(value), unit=unit,
                target=target or "", limit=limit, applies=applies, met=met, note=note)


def machine() -> dict:
    """Platform, CPU count, Python, numpy and the BLAS numpy was built with."""
    info = dict(platform=platform.platform(), machine=platform.machine(),
                python=platform.python_version(), cpus=os.cpu_count(),
                numpy=np.__version__, blas="unknown",
                openblas_coretype=os.environ.get("OPENBLAS_CORETYPE", ""))
    try:
        cfg = np.show_config(mode="dicts")
        blas = cfg.get("Build Dependencies", {}).get("blas", {})
        info["blas"] = f"{blas.get('name', '?')} {blas.get('version', '')}".strip()
    except Exception:  # noqa: BLE001 - older numpy: keep "unknown"
        pass
    try:
        from threadpoolctl import threadpool_info

        pools = [f"{p.get('internal_api')} {p.get('version')} ({p.get('num_threads')} threads)"
                 for p in threadpool_info()]
        if pools:
            info["threadpools"] = "; ".join(pools)
    except Exception:  # noqa: BLE001 - threadpoolctl is optional
        pass
    return info


# --------------------------------------------------------------------------------------------
# 1. a 10-port balance through a worksheet function
# --------------------------------------------------------------------------------------------
_FT, _SLUG_FT3, _LBF = 0.3048, 515.3788183931961, 4.4482216152605
# NIST SP 811, appendix B.8: 1 ft = 0.3048 m, 1 lbf = 4.4482216152605 N;
# 1 slug/ft^3 = 515.378818 kg/m^3 (NIST SP 811, B.8).


def ten_ports():
    """A 10-port CV of our own invention in US units: raw grid (bridge form) and SI arrays."""
    rng = np.random.default_rng(7)
    n = 10
    ang = np.linspace(0.0, 2 * np.pi, n, endpoint=False)
    area = 0.02 + 0.01 * rng.random(n)                   # ft^2
    rho = np.full(n, 1.94)                               # slug/ft^3
    vel = np.stack([60 * np.cos(ang), 60 * np.sin(ang), 5 * rng.standard_normal(n)], 1)
    p = 5.0 * rng.random(n)                              # psi
    role = ["in" if i % 3 == 0 else "out" for i in range(n)]
    grid = [("port", "role", "area", "density", "vx", "vy", "vz", "p_gauge", "beta"),
            (None, None, "ft^2", "slug/ft^3", "ft/s", "ft/s", "ft/s", "psi", None)]
    for i in range(n):
        grid.append((f"p{i + 1}", role[i], float(area[i]), float(rho[i]), *map(float, vel[i]),
                     float(p[i]), 1.0))
    from .core import Ports
    ports = Ports.build(area=area * _FT ** 2, density=rho * _SLUG_FT3, velocity=vel * _FT,
                        role=role, p_gauge=p * 6894.757293168361)
    si = dict(area=ports.area, rho=ports.density, vel=ports.velocity, normal=ports.normal,
              p=ports.p_gauge, beta=ports.beta, role=ports.role)
    return tuple(grid), si, (12.0, 0.0, 0.0, "ft/s")


def bare_balance(si, v_cv):
    """Force on the body [lbf] from the balance formulas in bare numpy on SI arrays."""
    w = si["vel"] - v_cv
    wn = np.einsum("ij,ij->i", w, si["normal"])
    mdot = si["rho"] * si["area"] * wn
    mdot = np.where((si["role"] < 0) & (wn > 0), 0.0, mdot)
    mom = (si["beta"] * mdot) @ w
    support = mom + (si["p"] * si["area"]) @ si["normal"]
    return (-support / _LBF).tolist()


#: Fixed column order of the benchmark grid and the factors to SI of its unit row (NIST SP 811,
#: B.8: 1 ft = 0.3048 m, 1 slug/ft^3 = 515.378818 kg/m^3, 1 psi = 6894.757293168361 Pa).
_GRID_FACTORS = (_FT ** 2, _SLUG_FT3, _FT, _FT, _FT, 6894.757293168361, 1.0)


def bare_grid_balance(grid, cv):
    """Force on the body [lbf] of a raw grid read by a bare script: fixed columns (port, role,
    area, density, vx, vy, vz, p_gauge, beta), fixed factors, role-based normals, then the
    balance formulas in numpy (what a hand-written sheet macro would do, without checks)."""
    body = grid[2:]
    a = np.array([r[2:9] for r in body], dtype=float) * _GRID_FACTORS
    role = np.array([-1.0 if r[1] == "in" else 1.0 for r in body])
    vel = a[:, 2:5]
    normal = role[:, None] * vel / np.sqrt((vel * vel).sum(axis=1))[:, None]
    si = dict(area=a[:, 0], rho=a[:, 1], vel=vel, normal=normal, p=a[:, 5], beta=a[:, 6],
              role=role)
    return bare_balance(si, np.array(cv[:3], dtype=float) * _FT)


def _edited_grids(grid, count):
    """``count`` copies of ``grid``, each with the area of port 1 changed a little (new
    objects, so every one is a cache miss, as after an edit of the cell)."""
    rows = list(grid)
    out = []
    for k in range(count):
        r = list(rows[2])
        r[2] = r[2] * (1.0 + 1e-9 * (k + 1))
        out.append(tuple(rows[:2]) + (tuple(r),) + tuple(rows[3:]))
    return iter(out)


def bench_balance(quick):
    from . import cells

    grid, si, cv = ten_ports()
    v_si = np.array(cv[:3]) * _FT
    reps = 2 if quick else 7
    inner = 3 if quick else 200
    cells.clear_caches()
    got = cells.PFX_BODYFORCE(grid, cv, None, "US")
    ref = bare_balance(si, v_si)
    if isinstance(got, str) or not np.allclose(got[0], ref, rtol=1e-9, atol=1e-9):
        raise RuntimeError(f"benchmark 1: worksheet function and baseline disagree: {got} vs "
                           f"{ref}")
    parsed = bare_grid_balance(grid, cv)
    if not np.allclose(parsed, ref, rtol=1e-9, atol=1e-9):
        raise RuntimeError(f"benchmark 1: bare grid script and baseline disagree: {parsed} vs "
                           f"{ref}")
    from . import units

    def clear_all():
        cells.clear_caches()
        units._factor.cache_clear()

    cold = lambda: cells.PFX_BODYFORCE(grid, cv, None, "US")   # noqa: E731
    edits = _edited_grids(grid, reps * inner + 8)
    edited = lambda: cells.PFX_BODYFORCE(next(edits), cv, None, "US")   # noqa: E731
    t = interleaved({
        "bare": (lambda: bare_balance(si, v_si), inner, None),
        "grid": (lambda: bare_grid_balance(grid, cv), inner, None),
        "cold": (cold, max(inner // 4, 1), cells.clear_caches),
        "edited": (edited, max(inner // 4, 1), None),
        "first": (cold, max(inner // 20, 1), clear_all),
        "warm": (cold, inner, None),
    }, reps)
    b = "1 balance"
    return [
        _figure(b, "bare numpy, 10 ports, SI arrays", t["bare"] * 1e6, "us"),
        _figure(b, "bare script: grid parsed, fixed columns and factors", t["grid"] * 1e6, "us",
                note="the baseline of the target"),
        _figure(b, "PFX_BODYFORCE cold (cells caches cleared)", t["cold"] * 1e6, "us",
                note="grid parsed, ports built, model compiled and run; unit factors stay cached"),
        _figure(b, "PFX_BODYFORCE, one number of the grid edited", t["edited"] * 1e6, "us",
                note="a recalculation after an edit: caches kept, this grid is new"),
        _figure(b, "PFX_BODYFORCE warm (cache hit)", t["warm"] * 1e6, "us"),
        _figure(b, "PFX_BODYFORCE, unit factors cleared too", t["first"] * 1e6, "us",
                note="first use of each unit in a process (pint parses it)"),
        _figure(b, "ratio cold / bare grid script (changed input)", t["cold"] / t["grid"], "x",
                "<= 5", 5.0, note="the target applies here: a changed input is a cache miss"),
        _figure(b, "ratio cold / bare SI arrays", t["cold"] / t["bare"], "x",
                note="informational: parsing and checks included on one side only"),
        _figure(b, "ratio edited / bare grid script", t["edited"] / t["grid"], "x",
                note="informational: the header and unit rows are resolved already"),
        _figure(b, "ratio warm / bare grid script (same input again)", t["warm"] / t["grid"],
                "x", note="cache hit; shown for comparison"),
    ]


# --------------------------------------------------------------------------------------------
# 2. a speed table of many speeds
# --------------------------------------------------------------------------------------------
RHO, AREA, V_JET, THETA = 998.0, 2e-3, 30.0, np.radians(165.0)


def vane_ports():
    """Single vane, frictionless: inlet jet along +x, outlet 'free' at THETA, equal areas."""
    return (("port", "role", "area", "density", "speed", "angle", "closure"),
            (None, None, "m^2", "kg/m^3", "m/s", "deg", None),
            ("jet", "in", AREA, RHO, V_JET, 0.0, None),
            ("exit", "out", AREA, RHO, None, float(np.degrees(THETA)), "free"))


def bare_table(u):
    """Closed form in bare numpy: the columns of a speed table, each a 1-D array."""
    contact = u < V_JET
    r = V_JET - u
    r *= contact                                        # outrun: no flow, no force
    f = (RHO * AREA) * r
    f *= r
    fx = f * (1.0 - np.cos(THETA))
    fy = f * -np.sin(THETA)
    fz = np.zeros_like(u)
    power = fx * u
    eff = power / (0.5 * RHO * AREA * V_JET ** 3)
    return -fx, -fy, -fz, fx, fy, fz, power, eff, contact


def _core_vane():
    from .core import Closures, Ports

    p = Ports.build(area=[AREA, AREA], density=RHO, role=["in", "out"],
                    velocity=[[V_JET, 0, 0], [np.cos(THETA), np.sin(THETA), 0]])
    return p, Closures.build(p, ["", "free"])


def _table_inputs(quick):
    """The speeds, the vane (ports, closures, grid, a column as a bridge hands it over), the
    bare baseline's columns and the vane with positions; each checked against the baseline."""
    from .core import speed_table

    m = 2_000 if quick else 10 ** 6
    u = np.linspace(-10.0, 45.0, m)
    x = [1.0, 0.0, 0.0]
    p, c = _core_vane()
    t = speed_table(p, u, x, closures=c)
    ref = bare_table(u)
    np.testing.assert_allclose(t.force_on_body[:, 0], ref[3], rtol=1e-9, atol=1e-6)
    np.testing.assert_array_equal(t.contact, ref[8])
    # the same vane with its ports 0.3 m above the mount: M_z = -0.3 F_x (moment of a force)
    pm = type(p).build(area=[AREA, AREA], density=RHO, role=["in", "out"],
                       velocity=p.velocity, position=[[0.0, 0.3, 0.0]] * 2)
    tmom = speed_table(pm, u, x, closures=c, moments=True)
    np.testing.assert_allclose(tmom.moment_on_body[:, 2], -0.3 * ref[3], rtol=1e-9, atol=1e-6)
    return dict(m=m, u=u, x=x, p=p, c=c, pm=pm, t=t, ref=ref, grid=vane_ports(),
                col=tuple((float(s),) for s in u))


def _table_cases(i) -> dict:
    """The interleaved cases of benchmark 2 (name -> (fn, inner, setup))."""
    from . import cells
    from .core import speed_table

    u, x, p, c, col = i["u"], i["x"], i["p"], i["c"], i["col"]

    def bare_e2e(pause_gc=True):
        s = np.asarray(col, dtype=float).ravel()
        cols = bare_table(s)
        block = np.column_stack((s,) + cols[:8] + (cols[8].astype(float),))
        with _gc_paused(pause_gc):              # as PFX_SPEEDTABLE builds its rows
            out = block.tolist()
            out.insert(0, ["speed"] + [""] * 9)
        return out

    def core_e2e():
        s = np.asarray(col, dtype=float).ravel()
        r = speed_table(p, s, x, closures=c)
        block = np.column_stack((s, r.support_force, r.force_on_body, r.power,
                                 r.jet_efficiency, r.contact.astype(float)))
        with _gc_paused(True):
            out = block.tolist()
            out.insert(0, ["speed"] + [""] * 9)
        return out

    got = cells.PFX_SPEEDTABLE(i["grid"], col)
    if isinstance(got, str):
        raise RuntimeError(f"benchmark 2: PFX_SPEEDTABLE says {got}")
    np.testing.assert_allclose([r[4] for r in got[1:]], i["ref"][3], rtol=1e-9, atol=1e-6)
    u100 = np.linspace(-10.0, 45.0, 100)
    return {"bare": (lambda: bare_table(u), 1, None),
            "core": (lambda: speed_table(p, u, x, closures=c), 1, None),
            "bare100": (lambda: bare_table(u100), 200, None),
            "core100": (lambda: speed_table(p, u100, x, closures=c), 200, None),
            "core_mom": (lambda: speed_table(i["pm"], u, x, closures=c, moments=True), 1,
                         None),
            "bare_e": (bare_e2e, 1, None), "core_e": (core_e2e, 1, None),
            "bare_gc": (lambda: bare_e2e(pause_gc=False), 1, None),
            "sheet": (lambda: cells.PFX_SPEEDTABLE(i["grid"], col), 1, None)}


def _table_memory(i) -> tuple:
    """Output sizes and peak traced memory [MiB] of the baseline and the core table."""
    from .core import speed_table

    t, u = i["t"], i["u"]
    out_mib = sum(a.nbytes for a in i["ref"]) / 2 ** 20
    core_mib = sum(a.nbytes for a in (t.speed, t.support_force, t.force_on_body, t.power,
                                       t.jet_efficiency, t.inflow, t.contact, t.balanced,
                                       t.valid)) / 2 ** 20
    pk_bare = _peak_mib(lambda: bare_table(u))
    pk_core = _peak_mib(lambda: speed_table(i["p"], u, i["x"], closures=i["c"]))
    return out_mib, core_mib, pk_bare, pk_core


def bench_table(quick):
    i = _table_inputs(quick)
    tm = interleaved(_table_cases(i), 3 if quick else 5)
    out_mib, core_mib, pk_bare, pk_core = _table_memory(i)
    b = f"2 speed table (m={i['m']:,})"
    return [
        _figure(b, "bare numpy closed form (9 columns)", tm["bare"] * 1e3, "ms"),
        _figure(b, "core.speed_table, 'free' closure", tm["core"] * 1e3, "ms"),
        _figure(b, "ratio core / bare, compute only", tm["core"] / tm["bare"], "x", "<= 1.3",
                1.3),
        _figure(b, "core.speed_table with moments (rx, ry, rz)", tm["core_mom"] * 1e3, "ms",
                note="6 more columns (support moment, moment on body), chunked"),
        _figure(b, "ratio with moments / without", tm["core_mom"] / tm["core"], "x",
                note="informational: same chunks, no loop over speeds"),
        _figure(b, "100 speeds: bare numpy closed form", tm["bare100"] * 1e6, "us"),
        _figure(b, "100 speeds: core.speed_table", tm["core100"] * 1e6, "us",
                note="fixed cost of one table: compile the model, one chunk"),
        _figure(b, "100 speeds: ratio core / bare", tm["core100"] / tm["bare100"], "x"),
        _figure(b, "bare numpy + asarray(tuple) + tolist", tm["bare_e"] * 1e3, "ms",
                note="gc paused while the row lists are built"),
        _figure(b, "the same, garbage collector running", tm["bare_gc"] * 1e3, "ms",
                note="informational: what the pause saves"),
        _figure(b, "core + the same conversions", tm["core_e"] * 1e3, "ms"),
        _figure(b, "ratio core / bare, end to end", tm["core_e"] / tm["bare_e"], "x", "<= 1.5",
                1.5, note="both sides pay np.asarray on the tuple and .tolist() of the rows, "
                          "gc paused"),
        _figure(b, "PFX_SPEEDTABLE (tuple in, row lists out)", tm["sheet"] * 1e3, "ms"),
        _figure(b, "ratio PFX_SPEEDTABLE / bare, end to end", tm["sheet"] / tm["bare_e"], "x",
                "<= 1.5", 1.5, note="cells parses the grid, converts units, writes a header "
                                    "row and checks NaN rows"),
        _figure(b, "output arrays of the baseline", out_mib, "MiB"),
        _figure(b, "output arrays of core.speed_table", core_mib, "MiB",
                note="adds speed, inflow, balanced, valid"),
        _figure(b, "peak traced memory, bare", pk_bare, "MiB"),
        _figure(b, "peak traced memory, core", pk_core, "MiB"),
        _figure(b, "core peak / core output", pk_core / core_mib, "x", "<= 3", 3.0,
                note="'a few times the output'"),
    ]


# --------------------------------------------------------------------------------------------
# 3. cold import
# --------------------------------------------------------------------------------------------
_IMPORT_CHECK = ("import sys, portflux.cells, portflux.units as u; "
                 "print(u.registry_built(), 'pint' in sys.modules)")


def _fresh(code):
    t0 = time.perf_counter()
    subprocess.run([sys.executable, "-c", code], check=True, capture_output=True)
    return time.perf_counter() - t0


def import_profile(code="import portflux.cells", top=6):
    """The heaviest top-level packages of a cold import, from ``python -X importtime``."""
    r = subprocess.run([sys.executable, "-X", "importtime", "-c", code], capture_output=True,
                       text=True, check=True)
    total = {}
    for line in r.stderr.splitlines():
        if not line.startswith("import time:") or "|" not in line:
            continue
        parts = line.split("|")
        try:
            self_us = int(parts[0].split(":")[1])
        except ValueError:
            continue
        name = parts[2].strip().split(".")[0]
        total[name] = total.get(name, 0) + self_us
    return sorted(total.items(), key=lambda kv: -kv[1])[:top]


def bench_import(quick):
    reps = 1 if quick else 7
    t_np = statistics.median(_fresh("import numpy") for _ in range(reps))
    t_pf = statistics.median(_fresh("import portflux.cells") for _ in range(reps))
    out = subprocess.run([sys.executable, "-c", _IMPORT_CHECK], capture_output=True, text=True,
                         check=True).stdout.split()
    built, pint_loaded = out[0] == "True", out[1] == "True"
    heavy = import_profile()
    b = "3 import"
    return [
        _figure(b, "fresh python: import numpy", t_np * 1e3, "ms"),
        _figure(b, "fresh python: import portflux.cells", t_pf * 1e3, "ms"),
        _figure(b, "portflux.cells - numpy alone", (t_pf - t_np) * 1e3, "ms", "<= 300", 300.0),
        _figure(b, "pint registry built at import (0 = no)", float(built), "", "== 0", 0.0),
        _figure(b, "pint imported at import (0 = no)", float(pint_loaded), "",
                note="informational"),
        _figure(b, "self time of the 6 heaviest packages", sum(v for _, v in heavy) / 1e3, "ms",
                note="python -X importtime: " + ", ".join(f"{k} {v / 1e3:.0f} ms"
                                                          for k, v in heavy)),
    ]


# --------------------------------------------------------------------------------------------
# 4. headless recalculation of the template
# --------------------------------------------------------------------------------------------
def _template(folder):
    """The shipped template, or one built now in ``folder``; its sheet and CV-speed cell."""
    from .workbook import template as T

    shipped = T.shipped_template()
    path = shipped if shipped and os.path.isfile(shipped) else T.build_template(
        os.path.join(folder, T.TEMPLATE_NAME))
    ref = T.layout().cv_cells[0]
    return path, T.CV, ref.split("!")[-1].replace("$", ""), shipped == path


def _native_twin(folder):
    """A sheet computing single-vane numbers with native arithmetic only, and one with PFX_."""
    import openpyxl

    def book(native):
        wb = openpyxl.Workbook()
        ws = wb.active
        ws.title = "Vane"
        grid = vane_ports()
        for i, row in enumerate(grid, 1):
            for j, v in enumerate(row, 1):
                ws.cell(row=i, column=j, value=v)
        ws["I1"], ws["J1"] = "speed", 8.0                 # CV speed [m/s]
        # rho A (V-U)^2 (1 - cos th) and friends, 20 cells
        exprs = []
        for _ in range(5):
            th = "RADIANS($F$4)"
            r = "MAX($E$3-$J$1,0)"
            if native:
                exprs += [f"=$C$3*$D$3*{r}^2*(1-COS({th}))",
                          f"=-$C$3*$D$3*{r}^2*SIN({th})",
                          f"=$C$3*$D$3*{r}^2*(1-COS({th}))*$J$1",
                          f"=$C$3*$D$3*{r}^2*(1-COS({th}))*$J$1/(0.5*$C$3*$D$3*$E$3^3)"]
            else:
                table = "$A$1:$G$4"
                exprs += [f'=PFX_BODYFORCE({table},$J$1,"x")',
                          f'=PFX_BODYFORCE({table},$J$1,"y")',
                          f"=PFX_POWER({table},$J$1)",
                          f"=PFX_EFFICIENCY({table},$J$1)"]
        for i, e in enumerate(exprs):
            ws.cell(row=6 + i, column=2, value=e)
        path = os.path.join(folder, f"vane_{'native' if native else 'pfx'}.xlsx")
        wb.save(path)
        return path
    return book(True), book(False)


def _recalc(path, functions, sheet, cell, new_value, reps):
    from . import cells
    from .workbook.engine import Recalculator

    def cold():
        calc = Recalculator(path, functions)
        calc.evaluate()
        return calc

    t_cold = _median_time(cold, reps, setup=cells.clear_caches)   # cold: parse caches empty
    calc = cold()
    values = iter(new_value + 0.25 * k for k in range(10 ** 6))
    t_warm = _median_time(lambda: (calc.set_value(sheet, cell, next(values)), calc.evaluate()),
                          reps)
    return t_cold, t_warm, len(calc.formula_cells)


def bench_recalc(quick):
    from . import cells
    from .workbook import worksheet_functions

    reps = 1 if quick else 5
    fns = worksheet_functions()
    rows = []
    b = "4 recalc"
    with tempfile.TemporaryDirectory() as folder:
        path, sheet, cell, shipped = _template(folder)
        cells.clear_caches()
        tc, tw, nf = _recalc(path, fns, sheet, cell, 9.0, reps)
        what = "shipped template" if shipped else "template built now (none shipped)"
        rows += [
            _figure(b, f"{what}, {nf} formula cells: cold", tc, "s", "<= 2", 2.0),
            _figure(b, f"{what}: warm (CV speed changed)", tw, "s", "<= 0.1", 0.1),
        ]
        native, pfx = _native_twin(folder)
        tcn, twn, nn = _recalc(native, {}, "Vane", "J1", 9.0, reps)
        cells.clear_caches()
        tcp, twp, np_ = _recalc(pfx, fns, "Vane", "J1", 9.0, reps)
        rows += [
            _figure(b, f"vane sheet, {nn} native formulas: cold", tcn, "s"),
            _figure(b, "vane sheet, native formulas: warm", twn, "s"),
            _figure(b, f"vane sheet, {np_} PFX_ formulas: cold", tcp, "s"),
            _figure(b, "vane sheet, PFX_ formulas: warm", twp, "s"),
            _figure(b, "ratio PFX_ / native, warm", twp / twn, "x",
                    note="same numbers, same engine"),
        ]
    return rows


def bench_engine(quick):
    """5: the formula engine against LibreOffice (see :mod:`portflux.bench_engine`)."""
    from . import bench_engine as E

    return E.run(_figure, quick)


def bench_difftest(quick):
    """7: the differential test of the formula engine, a longer run (see
    :mod:`portflux.workbook.difftest`): formulas, agreement with LibreOffice, LibreOffice's
    known departures from Excel, refusals and disagreements (target 0)."""
    from .workbook import difftest

    b = "7 formula engine vs LibreOffice, differential"
    n = 240 if quick else 24_000
    if difftest.soffice_path() is None:
        return [_figure(b, "disagreements outside the departures table", float("nan"), "",
                        note="n/a: soffice not on PATH")]
    t0 = time.perf_counter()
    report = difftest.run(seed=20260, n=n, shrink=0 if quick else 5)
    took = time.perf_counter() - t0
    c = report.counts
    rows = [_figure(b, f"formulas (seed {report.seed})", c["formulas"], ""),
            _figure(b, "agree", c["agree"], ""),
            _figure(b, "known departures of LibreOffice", c["known"], ""),
            _figure(b, "refused by the engine", c["refused"], ""),
            _figure(b, "disagreements outside the departures table",
                    c["disagree"] + c["crashed"], "", "0", 0.0,
                    note="; ".join(o.line()[:160] for o in report.failures()[:3])),
            _figure(b, "run time (generate, both engines, judge)", took, "s")]
    return rows


# --------------------------------------------------------------------------------------------
def bench_addin(quick):
    """6: the LibreOffice add-in's edit latency (see :mod:`portflux.bench_addin`)."""
    from . import bench_addin as A

    return A.run(_figure, quick, vane_ports(), V_JET)


BENCHMARKS = (bench_balance, bench_table, bench_import, bench_recalc, bench_engine,
              bench_addin, bench_difftest)


def run(quick=False) -> list[dict]:
    """Run every benchmark and return its figures (dicts: benchmark, figure, value, unit,
    target, limit, applies, met, note). ``quick``: tiny sizes, 1-2 repetitions."""
    rows = []
    for bench in BENCHMARKS:
        rows.extend(bench(quick))
    return rows


def format_report(rows, info=None) -> str:
    info = machine() if info is None else info
    head = [f"portflux bench  ({'quick' if info.get('quick') else 'full'}; medians of "
            f"repetitions)",
            f"machine: {info['platform']}, {info['cpus']} CPUs, python {info['python']}, "
            f"numpy {info['numpy']}, BLAS {info['blas']}"
            + (f", OPENBLAS_CORETYPE={info['openblas_coretype']}"
               if info['openblas_coretype'] else "")]
    if "threadpools" in info:
        head.append(f"threads: {info['threadpools']}")
    lines = head + [""]
    current = None
    for r in rows:
        if r["benchmark"] != current:
            current = r["benchmark"]
            lines.append(current)
        verdict = "" if r["met"] is None else ("met" if r["met"] else "MISSED")
        target = r["target"] + ("" if r["applies"] or not r["target"] else " (n/a)")
        value = f"{r['value']:10.3f}" if math.isfinite(r["value"]) else f"{'n/a':>10}"
        lines.append(f"  {r['figure']:<50} {value} {r['unit']:<4} {target:<14} {verdict:<6}"
                     + (f"  {r['note']}" if r["note"] else ""))
    return "\n".join(lines)


def main(argv=None) -> int:
    """``portflux bench [--quick]``: run the benchmarks and print the report."""
    ap = argparse.ArgumentParser(prog="portflux bench", description=__doc__.split("\n\n")[0])
    ap.add_argument("--quick", action="store_true",
                    help="tiny sizes, 1-2 repetitions (seconds; for CI)")
    args = ap.parse_args(argv)
    info = machine()
    info["quick"] = args.quick
    print(format_report(run(quick=args.quick), info))
    return 0



# --------------------------------------------------------------------------------------------
# 7. Monte Carlo uncertainty of the loads (issue 22)
# --------------------------------------------------------------------------------------------
_MC_EXITS = 9


def mc_ports():
    """A 10-port problem (invented): a water jet split over 9 outlets of given relative
    speed, each at its own angle and position, with the measured inputs' uncertainties:
    jet speed 1 %, area 0.5 %, density 0.2 %, each exit angle 0.5 deg, CV speed 0.1 m/s."""
    rows = [{"port": "jet", "role": "in", "area": 3e-3, "density": 1000.0, "speed": 30.0,
             "u_speed": "1 %", "u_area": "0.5 %", "u_density": "0.2 %", "rx": 0.0, "ry": 0.0}]
    for k in range(_MC_EXITS):
        rows.append({"port": f"o{k}", "role": "out", "frame": "rel", "area": 3e-3 / _MC_EXITS,
                     "density": 1000.0, "speed": 20.0, "angle": 20.0 * k + 10.0,
                     "u_angle": 0.5, "rx": 0.1 * k, "ry": 0.2})
    return rows


def bare_monte_carlo(trials, seed, U=10.0):
    """The same closed form in bare numpy: F = -sum beta mdot w with the jet's
    mdot = -rho A (V - U) and each exit's rho a w (w cos th, w sin th), M_z = -sum r x (mdot w),
    P = F_x U; the same draws (one spawned stream), then the mean, standard deviation and
    95 % quantiles of the same 24 outputs."""
    x = np.array([30.0, 3e-3, 1000.0, *(np.radians(20.0 * k + 10.0) for k in range(_MC_EXITS)),
                  U])
    u = np.array([0.3, 1.5e-5, 2.0, *([np.radians(0.5)] * _MC_EXITS), 0.1])
    stream = np.random.SeedSequence(seed).spawn(1)[0]
    X = np.random.Generator(np.random.PCG64(stream)).standard_normal((trials, x.size)).T
    X = x[:, None] + u[:, None] * X
    V, A, rho, th, Uc = X[0], X[1], X[2], X[3:3 + _MC_EXITS], X[-1]
    w_in = V - Uc
    a, w = 3e-3 / _MC_EXITS, 20.0
    k = 1000.0 * a * w
    Fx = rho * A * w_in * w_in - k * w * np.cos(th).sum(axis=0)
    Fy = -k * w * np.sin(th).sum(axis=0)
    rx = 0.1 * np.arange(_MC_EXITS)[:, None]
    Mz = -(k * w * (rx * np.sin(th) - 0.2 * np.cos(th))).sum(axis=0)
    Fz = np.zeros_like(Fx)
    F = np.hypot(Fx, Fy)
    rows = [Fx, Fy, Fz, F, -Fx, -Fy, Fz, Fz, Fz, Mz, np.abs(Mz), Fz, Fz, -Mz, Fx * Uc,
            Fx, Fy, Fz, F, Fz, Fz, Mz, np.abs(Mz)]
    Y = np.stack(rows)
    low, high = np.quantile(Y, [0.025, 0.975], axis=1)
    return Y.mean(axis=1), Y.std(axis=1, ddof=1), low, high


def bench_uncertainty(quick):
    """7: 10^5 Monte Carlo trials of a 10-port problem, against the bare numpy script."""
    from . import api

    trials = 2_000 if quick else 100_000
    rows = mc_ports()
    run = lambda: api.load_uncertainty(rows, 10.0, cv_uncertainty=0.1, trials=trials,  # noqa
                                       seed=5)
    r = run().propagation
    mean, sd, _, _ = bare_monte_carlo(trials, 5)
    names = [n for n, _ in r.names]
    for name, t in (("force on body x", 0), ("force on body y", 1), ("moment on body z", 9),
                    ("power", 14)):
        i = names.index(name)
        if not np.allclose([r.mc.mean[i], r.mc.u[i]], [mean[t], sd[t]], rtol=1e-9, atol=1e-9):
            raise RuntimeError(f"benchmark 7: {name}: portflux and the bare script disagree: "
                               f"{r.mc.mean[i]}, {r.mc.u[i]} vs {mean[t]}, {sd[t]}")
    t = interleaved({"bare": (lambda: bare_monte_carlo(trials, 5), 1, None),
                     "portflux": (run, 1, None)}, 2 if quick else 5)
    b = "7 Monte Carlo uncertainty"
    return [
        _figure(b, f"bare numpy, {trials:,} trials, 10 ports", t["bare"] * 1e3, "ms"),
        _figure(b, f"load_uncertainty, {trials:,} trials (GUM and Monte Carlo)",
                t["portflux"] * 1e3, "ms", "<= 500 ms", 500.0, applies=not quick,
                note="rows parsed, problem built, GUM (27 points) and the batched kernel"),
        _figure(b, "ratio portflux / bare", t["portflux"] / t["bare"], "x",
                note="the bare script checks nothing and computes the closed form only"),
    ]


BENCHMARKS = BENCHMARKS + (bench_uncertainty,)

if __name__ == "__main__":
    sys.exit(main())
