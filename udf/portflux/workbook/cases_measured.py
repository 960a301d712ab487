"""Reference cases of the measured inputs (drawing only): named profiles, a traverse, and the
uncertainty of the moving-vane force against its hand propagation."""

from __future__ import annotations

from openpyxl.utils.cell import column_index_from_string, coordinate_from_string

from .cases import TRADE, WHITE, Sheet, cos_deg
from .drawing import rng

GUM = "JCGM 100:2008 (GUM), sec. 5.1.2, eq. (10), partial derivatives by hand; " + WHITE
PROFILES = ("F. M. White, Fluid Mechanics, sec. 3.4 and 6.6: laminar beta 4/3, power law "
            "beta = (n+1)(2n+1)^2/(4n^2(n+2)) (from memory)")


def _row_of(value_cell):
    """The name | value | unit range of an ``extra`` row of a block, from its value cell."""
    col, row = coordinate_from_string(value_cell.replace("$", ""))
    c = column_index_from_string(col)
    return rng(c - 1, row, c + 1, row)


def _profile_cases(s: Sheet):
    # a linear (cone) traverse u = U (1 - r/R): exact for the piecewise-linear rule; by hand
    # V = 2U int (1 - s) s ds = U/3, int u^2 dA / A = 2U^2 int (1 - s)^2 s ds = U^2/6, beta 3/2
    cols = ("r", "u")
    t, _, _, _, c = s.block("S. velocity profiles and a traverse", cols, ("mm", "m/s"),
                            ((0.0, 4.5), (20.0, 3.0), (40.0, 1.5), (60.0, 0.0)),
                            (0.0, 0.0, 0.0), "m/s",
                            extra=(("profile", "laminar"), ("n", 7.0)))
    T = t.ref
    R, U0 = t.at(3, "r"), t.at(0, "u")
    s.add("laminar profile: beta = 4/3", "PFX_PROFILE", f"=INDEX(PFX_PROFILE({c['profile']}),1,1)",
          "=4/3", 1e-12, PROFILES)
    s.add("power law 1/n: beta = (n+1)(2n+1)^2/(4n^2(n+2))", "PFX_PROFILE",
          f'=INDEX(PFX_PROFILE("power "&{c["n"]}),1,1)',
          f"=({c['n']}+1)*(2*{c['n']}+1)^2/(4*{c['n']}^2*({c['n']}+2))", 1e-12, PROFILES)
    s.add("cone traverse u = U (1 - r/R): beta = 3/2", "PFX_TRAVERSE",
          f"=INDEX(PFX_TRAVERSE({T}),1,2)", "=3/2", 1e-12,
          "hand integral of the cone profile (" + TRADE + "); " + WHITE)
    s.add("cone traverse: mean velocity U/3", "PFX_TRAVERSE", f"=INDEX(PFX_TRAVERSE({T}),2,2)",
          f"={U0}/3", 1e-12, "hand integral of the cone profile (" + TRADE + ")")
    s.add("cone traverse: flow pi R^2 U/3", "PFX_TRAVERSE",
          f'=INDEX(PFX_TRAVERSE({T},,,,,"SI; volume_flow=L/s"),3,2)',
          f"=PI()*({R}/1000)^2*{U0}/3*1000", 1e-12,
          "hand integral of the cone profile (" + TRADE + ")")


def _uncertainty_cases(s: Sheet):
    # a jet on a frictionless vane (exit flow from continuity), the jet's speed measured to
    # u_V and the vane's speed to u_U: dF/dV = -dF/dU = 2 rho A (V - U)(1 - cos th)
    cols = ("port", "role", "frame", "area", "density", "speed", "angle", "closure", "u_speed")
    t, cv, U, _, c = s.block(
        "T. uncertainty of the vane force (GUM against the hand propagation)", cols,
        (None, None, None, "m^2", "kg/m^3", "m/s", "deg", None, "%"),
        (("jet", "in", "abs", 0.002, 998.0, 30.0, 0.0, None, 1.0),
         ("exit", "out", "rel", None, 998.0, None, 150.0, "free", None)),
        (10.0, 0.0, 0.0), "m/s", extra=(("cv_x", 1.0, "%"),))
    V = t.at(0, "speed")
    # relative uncertainties (%): the same inputs whatever units the speeds are typed in
    table = _row_of(c["cv_x"])            # the uncertainties range: cv_x | u | unit
    P = t.ref
    # relative: u(F_x) / F_x = sqrt((2 V u_V% / (V - U))^2 + (2 U u_U% / (V - U))^2) / 100,
    # a ratio of speeds (the same in any units); Monte Carlo is checked in the test suite
    p, qq = t.at(0, "u_speed"), c["cv_x"]
    rel = f"SQRT((2*{V}*{p}/({V}-{U}))^2+(2*{U}*{qq}/({V}-{U}))^2)/100"
    blk = f"PFX_LOADUNCERTAINTY({P},{cv},,,{table},1000,0)"
    s.add("GUM: u(F_x) / F_x from u(V) and u(U), by hand", "PFX_LOADUNCERTAINTY",
          f"=INDEX({blk},2,3)/INDEX({blk},2,2)", f"={rel}", 1e-7, GUM)
    bud = f"PFX_UNCERTAINTYBUDGET({P},{cv},,,{table})"
    s.add("budget: share of the jet speed in u^2 [%]", "PFX_UNCERTAINTYBUDGET",
          f"=INDEX({bud},2,3)", f"=100*{V}^2*{p}^2/({V}^2*{p}^2+{U}^2*{qq}^2)", 1e-7, GUM)
    # the line's wording and rounding, on the force and the GUM uncertainty the functions give
    # (both in N whatever units the block's inputs are typed in)
    force = f"INDEX(PFX_BODYFORCE({P},{cv}),1,1)"
    u_f = f"INDEX(PFX_LOADUNCERTAINTY({P},{cv},,,{table},1000,0),2,3)"
    s.add("report line: F_x +- 2 u(F_x) (k = 2), rounded to two significant figures of U",
          "PFX_UNCERTAINTYLINE", f"=PFX_UNCERTAINTYLINE({P},{cv},,,{table})",
          f'="force on body x "&TEXT({force},"#,##0")&" \u00b1 "&TEXT(2*{u_f},"#,##0")'
          f'&" N (k = 2)"', None, "JCGM 100:2008, sec. 7.2.6 (two significant figures)")


#: The parts of this module, in sheet order (after the support-load cases).
PARTS = (_profile_cases, _uncertainty_cases)
