"""Reference cases for closures, splits, vane trains, speed tables and the optimum speed."""

from __future__ import annotations

from .cases import PLATE, TRADE, WHEEL, WHITE, cos_deg
from .drawing import put, rng

COLS = ("port", "role", "frame", "area", "density", "speed", "angle", "closure", "loss",
        "height")
UNITS = (None, None, None, "m^2", "kg/m^3", "m/s", "deg", None, None, "m")


def _speeds(s, left, top, values, unit="m/s"):
    """A speeds column led by its unit cell; ``values`` are formulas or numbers."""
    put(s.ws, left, top - 1, "speeds", font=None)
    put(s.ws, left, top, unit)
    for i, v in enumerate(values):
        put(s.ws, left, top + 1 + i, v)
    return rng(left, top, left, top + len(values))


def closure_cases(s) -> None:
    """Add the closure and speed cases to the 'Check cases' sheet (see :mod:`.cases`)."""
    # H. Invented: frictionless single vane (closure "free"), 0.002 m^2 jet at 30 m/s, 120 deg.
    left = s.col
    t, cv, U, _, ex = s.block("H. frictionless single vane over speed", COLS, UNITS,
                              (("nozzle", "in", "abs", 0.002, 998.0, 30.0, 0.0, None, None, None),
                               ("exit", "out", "rel", 0.002, 998.0, None, 120.0, "free", None,
                                None)),
                              (10.0, 0.0, 0.0), "m/s",
                              extra=(("force to find", 500.0, "N"), ("low", 0.0, "m/s"),
                                     ("high", 30.0, "m/s")))
    rho, A, V, th = t.at(0, "density"), t.at(0, "area"), t.at(0, "speed"), t.at(1, "angle")
    F, Fu = ex["force to find"], ex["force to find and unit"]
    lo, hi = ex["low and unit"], ex["high and unit"]
    sp = _speeds(s, left + 8, 78, (0.0, f"={V}/3", f"=2*{V}/3", f"=1.2*{V}"))
    pmax = f"4/27*{rho}*{A}*{V}^3*(1-{cos_deg(th)})"
    P = t.ref
    s.add("speed table: power at U = V/3 is (4/27) rho A V^3 (1 - cos th)", "PFX_SPEEDTABLE",
          f"=INDEX(PFX_SPEEDTABLE({P},{sp}),3,8)", f"={pmax}", 1e-12, WHITE)
    s.add("speed table: body faster than the jet has no contact (0)", "PFX_SPEEDTABLE",
          f"=INDEX(PFX_SPEEDTABLE({P},{sp}),5,10)", "=0", 0.0, TRADE)
    s.add("best speed of a single vane is V/3", "PFX_BESTSPEED",
          f"=INDEX(PFX_BESTSPEED({P},{lo},{hi}),2,2)", f"={V}/3", 1e-6, WHITE)
    s.add("maximum power of a single vane (4/27) rho A V^3 (1 - cos th)", "PFX_BESTSPEED",
          f"=INDEX(PFX_BESTSPEED({P},{lo},{hi}),3,2)", f"={pmax}", 1e-9, WHITE)
    s.add("speed at which F_x falls to F: U = V - sqrt(F / (rho A (1 - cos th)))",
          "PFX_SPEEDATFORCE", f'=INDEX(PFX_SPEEDATFORCE({P},{Fu},{lo},{hi},"x"),2,2)',
          f"={V}-SQRT({F}/({rho}*{A}*(1-{cos_deg(th)})))", 1e-6, WHITE)

    # I. Invented bucket wheel: the same jet, 165 deg buckets, a vane train.
    t, cv, _, sref, ex = s.block("I. bucket wheel (vane train)", COLS, UNITS,
                                 (("nozzle", "in", "abs", 0.002, 998.0, 30.0, 0.0, None, None,
                                   None),
                                  ("bucket exit", "out", "rel", 0.002, 998.0, None, 165.0, "free",
                                   None, None)),
                                 (15.0, 0.0, 0.0), "m/s", settings=(("intercept", "train", None),),
                                 extra=(("low", 0.0, "m/s"), ("high", 30.0, "m/s")))
    V, b = t.at(0, "speed"), t.at(1, "angle")
    lo, hi = ex["low and unit"], ex["high and unit"]
    s.add("best speed of a bucket wheel is V/2", "PFX_BESTSPEED",
          f"=INDEX(PFX_BESTSPEED({t.ref},{lo},{hi},,,{sref}),2,2)", f"={V}/2", 1e-6, WHEEL)
    s.add("ideal bucket-wheel efficiency (1 - cos beta)/2", "PFX_BESTSPEED",
          f"=INDEX(PFX_BESTSPEED({t.ref},{lo},{hi},,,{sref}),4,2)", f"=(1-{cos_deg(b)})/2", 1e-9,
          WHEEL)
    rho, A = t.at(0, "density"), t.at(0, "area")
    s.add("vane train intercepts the full nozzle flow rho A V", "PFX_MASSFLOWS",
          f"=INDEX(PFX_MASSFLOWS({t.ref},{cv},,,{sref}),1,1)", f"=-{rho}*{A}*{V}", 1e-12, WHEEL)

    # J. Invented: vane losing 10 % of its relative speed.
    t, cv, U, _, _ = s.block("J. vane with a loss factor", COLS, UNITS,
                             (("nozzle", "in", "abs", 0.002, 998.0, 30.0, 0.0, None, None, None),
                              ("exit", "out", "rel", None, 998.0, None, 150.0, "loss", 0.1,
                               None)),
                             (8.0, 0.0, 0.0), "m/s")
    rho, A, V = t.at(0, "density"), t.at(0, "area"), t.at(0, "speed")
    th, k = t.at(1, "angle"), t.at(1, "loss")
    s.add("loss vane: F_x = rho A (V-U)^2 (1 - (1-k) cos th)", "PFX_BODYFORCE",
          f'=PFX_BODYFORCE({t.ref},{cv},"x")',
          f"={rho}*{A}*({V}-{U})^2*(1-(1-{k})*{cos_deg(th)})", 1e-12,
          WHITE + "; relative speed reduced by the loss fraction (" + TRADE + ")")

    # K. Invented: a jet striking a fixed frictionless flat plate (the x axis) at 60 degrees.
    t, cv, _, sref, _ = s.block("K. jet split on an inclined flat plate", COLS, UNITS,
                                (("jet", "in", "abs", 0.002, 998.0, 30.0, -60.0, None, None,
                                  None),
                                 ("up", "out", "rel", None, 998.0, None, 0.0, "solve", None, None),
                                 ("down", "out", "rel", None, 998.0, None, 180.0, "solve", None,
                                  None)),
                                (0.0, 0.0, 0.0), "m/s", settings=(("slip_angle", 0.0, "deg"),))
    rho, A, V, a = t.at(0, "density"), t.at(0, "area"), t.at(0, "speed"), t.at(0, "angle")
    s.add("plate split: share of the upstream-facing stream (1 + cos th)/2", "PFX_SPLIT",
          f"=INDEX(PFX_SPLIT({t.ref},{cv},,{sref}),3,5)", f"=(1+COS(RADIANS(-{a})))/2", 1e-12,
          PLATE)
    s.add("plate split: share of the other stream (1 - cos th)/2", "PFX_SPLIT",
          f"=INDEX(PFX_SPLIT({t.ref},{cv},,{sref}),4,5)", f"=(1-COS(RADIANS(-{a})))/2", 1e-12,
          PLATE)
    s.add("plate-normal force rho Q V sin th", "PFX_BODYFORCE",
          f'=PFX_BODYFORCE({t.ref},{cv},"y",,{sref})',
          f"=-{rho}*{A}*{V}*{V}*SIN(RADIANS(-{a}))", 1e-12, PLATE)

    # L. Invented: Bernoulli outlet 2 m above the inlet, CV at rest.
    t, cv, _, sref, _ = s.block("L. Bernoulli outlet above the inlet", COLS, UNITS,
                                (("in", "in", "rel", 0.01, 1000.0, 10.0, 0.0, None, None, 0.0),
                                 ("out", "out", "rel", None, 1000.0, None, 90.0, "bernoulli",
                                  None, 2.0)),
                                (0.0, 0.0, 0.0), "m/s",
                                settings=(("gz", -9.80665, "m/s^2"),))
    w1, h = t.at(0, "speed"), t.at(1, "height")
    s.add("Bernoulli outlet: w_out^2 = w_in^2 - 2 g h", "PFX_RELVELS",
          f"=INDEX(PFX_RELVELS({t.ref},{cv},,,{sref}),2,2)", f"=SQRT({w1}^2-2*9.80665*{h})",
          1e-12, "Bernoulli equation along a streamline in the moving frame; " + WHITE)


NOZZLE = ("nozzle/orifice relation V = C_v sqrt(2 dp / rho), F. M. White, Fluid Mechanics, "
          "sec. 6.12 (from memory); jet area C_c pi d^2 / 4")


def nozzle_cases(s) -> None:
    """Jets given by the nozzle's supply pressure, diameter and coefficients."""
    # M. Invented: a 20 mm nozzle fed at 300 kPa (C_v 0.96, C_c 0.9) on a frictionless 150 deg
    # vane moving at 6 m/s.
    cols = ("port", "role", "frame", "diameter", "density", "angle", "supply_pressure",
            "velocity_coef", "contraction_coef", "closure")
    units = (None, None, None, "mm", "kg/m^3", "deg", "kPa", None, None, None)
    t, cv, U, _, _ = s.block("M. nozzle fed at a supply pressure", cols, units,
                             (("nozzle", "in", "abs", 20.0, 998.0, 0.0, 300.0, 0.96, 0.9, None),
                              ("exit", "out", "rel", None, 998.0, 150.0, None, None, None,
                               "free")),
                             (6.0, 0.0, 0.0), "m/s")
    d, rho, p = t.at(0, "diameter"), t.at(0, "density"), t.at(0, "supply_pressure")
    cv_, cc, th = t.at(0, "velocity_coef"), t.at(0, "contraction_coef"), t.at(1, "angle")
    V = f"{cv_}*SQRT(2*{p}*1000/{rho})"
    A = f"{cc}*PI()*({d}/1000)^2/4"
    s.add("jet speed from supply pressure: V = C_v sqrt(2 dp / rho)", "PFX_ABSVEL",
          f"=INDEX(PFX_ABSVEL({t.ref},{cv}),1,1)", f"={V}", 1e-12, NOZZLE)
    s.add("nozzle jet on a moving vane: mdot = -rho C_c (pi d^2/4) (V - U)", "PFX_MASSFLOWS",
          f"=INDEX(PFX_MASSFLOWS({t.ref},{cv}),1,1)", f"=-{rho}*{A}*({V}-{U})", 1e-12,
          NOZZLE + "; " + WHITE)
    s.add("nozzle jet on a moving vane: F_x = rho A_j (V-U)^2 (1 - cos th)", "PFX_BODYFORCE",
          f'=PFX_BODYFORCE({t.ref},{cv},"x")',
          f"={rho}*{A}*({V}-{U})^2*(1-{cos_deg(th)})", 1e-12, NOZZLE + "; " + WHITE)


EULER = ("Euler's turbine equation T = mdot r (V_theta1 - V_theta2), S. L. Dixon, Fluid "
         "Mechanics and Thermodynamics of Turbomachinery, Euler work equation (from memory); "
         "1 rpm = 2 pi / 60 rad/s, NIST SP 811 Appendix B")


def wheel_rpm_cases(s) -> None:
    """A bucket wheel typed in rpm with its radius: torque and best speed in rpm."""
    # N. Invented: the wheel of case I, 0.5 m pitch radius, turning at 240 rpm.
    left = s.col
    t, cv, n, sref, ex = s.block("N. bucket wheel in rpm (wheel_radius)", COLS, UNITS,
                                 (("nozzle", "in", "abs", 0.002, 998.0, 30.0, 0.0, None, None,
                                   None),
                                  ("bucket exit", "out", "rel", 0.002, 998.0, None, 165.0,
                                   "free", None, None)),
                                 (240.0, 0.0, 0.0), "rpm",
                                 settings=(("intercept", "train", None),
                                           ("wheel_radius", 0.5, "m")),
                                 extra=(("low", 0.0, "rpm"), ("high", 1000.0, "rpm")))
    P = t.ref
    rho, A, V, b = t.at(0, "density"), t.at(0, "area"), t.at(0, "speed"), t.at(1, "angle")
    r = ex["wheel_radius"]
    lo, hi = ex["low and unit"], ex["high and unit"]
    U = f"({n}*2*PI()/60*{r})"
    euler = f"{rho}*{A}*{V}*{r}*({V}-({U}+({V}-{U})*{cos_deg(b)}))"
    s.add("wheel shaft torque = mdot r (V_theta1 - V_theta2) at n rpm", "PFX_SHAFTTORQUE",
          f"=PFX_SHAFTTORQUE({P},{cv},,{sref})", f"={euler}", 1e-12, EULER)
    s.add("best speed of a bucket wheel in rpm: V/2 / r x 60 / (2 pi)", "PFX_BESTSPEED",
          f"=INDEX(PFX_BESTSPEED({P},{lo},{hi},,,{sref}),2,2)",
          f"={V}/2/{r}*60/(2*PI())", 1e-6, WHEEL + "; " + EULER)
    sp = _speeds(s, left + 8, 78, (0.0, f"={n}", f"=2*{n}"), unit="rpm")
    s.add("speed table in rpm: shaft torque column at n rpm", "PFX_SPEEDTABLE",
          f"=INDEX(PFX_SPEEDTABLE({P},{sp},,,{sref}),3,11)", f"={euler}", 1e-12, EULER)


#: The parts of this module, in sheet order (see :data:`.cases.PARTS`).
PARTS = (closure_cases, nozzle_cases, wheel_rpm_cases)
