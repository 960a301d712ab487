"""Reference cases of the template's 'Check cases' sheet.

Each case evaluates one worksheet function on a small port table placed on the sheet and compares
one value of its result with the expected value. The expected value is a *native* spreadsheet
formula of the published closed form written on the same input cells (never a typed number), so
changing an input keeps the case meaningful. Every case names its source: a book (author, title,
section; "from memory" where recalled), a standard (NIST SP 811), or "common practice, no source".

Index table (rows :data:`INDEX_TOP` + 1 ...): case | function | output | expected | tolerance |
result | source. ``portflux check`` reads it after recalculation.
"""

from __future__ import annotations

from dataclasses import dataclass

from openpyxl.styles import Font
from openpyxl.utils import get_column_letter

from .. import __version__
from .drawing import (BOLD, HEAD_FILL, INPUT_FILL, OUTPUT_FILL, TITLE_FONT, cell, cv_row,
                      port_table, put, rng, settings_block)

INDEX_TOP = 4
#: Output and expected values: six decimals (the comparison itself uses full precision).
CHECK_FORMAT = "#,##0.000000;-#,##0.000000"
INDEX_HEADER = ("case", "function", "output", "expected", "tolerance", "result", "source")
BLOCKS_TOP = 84
BLOCK_WIDTH = 10

WHITE = "F. M. White, Fluid Mechanics, sec. 3.4, moving-vane analysis (from memory)"
NIST = "NIST SP 811 (2008), Appendix B: 1 lbf = 4.448222 N, 1 hp = 745.6999 W"
PROPULSION = ("P. Hill & C. Peterson, Mechanics and Thermodynamics of Propulsion, thrust "
              "equation (from memory)")
FROUDE = ("Froude momentum theory of propulsion; J. Carlton, Marine Propellers and Propulsion, "
          "waterjet chapter (from memory)")
PLATE = ("inclined flat plate split, standard fluid-mechanics texts, e.g. White, Fluid "
         "Mechanics, ch. 3 (from memory)")
WHEEL = ("impulse turbine (bucket wheel) theory, S. L. Dixon, Fluid Mechanics and "
         "Thermodynamics of Turbomachinery, Pelton wheel section (from memory)")
TRADE = "common practice, no source"
ANGULAR = ("F. M. White, Fluid Mechanics, sec. 3.5, the angular momentum theorem for a control "
           "volume (from memory)")
SPRINKLER = ("held (non-rotating) two-arm sprinkler, T = 2 mdot_arm r w_t; White, Fluid "
             "Mechanics, sec. 3.5 (from memory)")


@dataclass
class Case:
    name: str
    function: str
    output: str           # formula giving one value
    expected: str         # native closed-form formula, or a text value
    tolerance: float | None
    source: str


class Sheet:
    """Places input blocks side by side below the index and collects cases."""

    def __init__(self, ws):
        self.ws = ws
        self.col = 1
        self.cases: list[Case] = []

    def block(self, title, columns, units, rows, cv, cv_unit, settings=None, extra=None):
        ws, left = self.ws, self.col
        put(ws, left, BLOCKS_TOP, title, font=BOLD)
        t = port_table(ws, left, BLOCKS_TOP + 1, columns, units, rows)
        r = BLOCKS_TOP + 3 + len(rows) + 1
        cvref = cv_row(ws, left, r, cv, cv_unit)
        cvx = cell(left + 1, r + 1)
        r += 3
        sref = None
        extras = {}
        if settings:
            sref = settings_block(ws, left, r, settings)
            extras.update({name: cell(left + 1, r + 1 + i)
                           for i, (name, _, _) in enumerate(settings)})
            r += len(settings) + 2
        for name, value, *unit in (extra or ()):
            put(ws, left, r, name, font=BOLD)
            put(ws, left + 1, r, value, fill=INPUT_FILL)
            extras[name] = cell(left + 1, r)
            if unit:                # a value with its unit cell beside it: both are read
                put(ws, left + 2, r, unit[0], fill=INPUT_FILL)
                extras[name + " and unit"] = rng(left + 1, r, left + 2, r)
            r += 1
        self.col += max(len(columns), 5) + 1
        return t, cvref, cvx, sref, extras

    def add(self, *args):
        self.cases.append(Case(*args))


def cos_deg(c):
    """Spreadsheet text of the cosine of an angle cell in degrees: ``COS(RADIANS(c))``."""
    return f"COS(RADIANS({c}))"


def sin_deg(c):
    """Spreadsheet text of the sine of an angle cell in degrees: ``SIN(RADIANS(c))``."""
    return f"SIN(RADIANS({c}))"


VANE_COLS = ("port", "role", "frame", "area", "density", "speed", "angle")
VANE_SI = (None, None, None, "m^2", "kg/m^3", "m/s", "deg")
#: Invented numbers: 0.002 m^2 water jet at 30 m/s, 120 degree frictionless vane; the outlet's
#: relative speed is typed as V - U = 20 m/s for a vane at 10 m/s (= V/3).
VANE_ROWS = (("nozzle", "in", "abs", 0.002, 998.0, 30.0, 0.0),
             ("exit", "out", "rel", 0.002, 998.0, 20.0, 120.0))


def _vane_cases(s: Sheet):
    # Invented numbers: 0.002 m^2 water jet at 30 m/s, vane at 10 m/s (= V/3), 120 degree turn,
    # frictionless: the outlet's relative speed is typed as V - U = 20 m/s.
    t, cv, U, _, _ = s.block("A. single vane, SI (outlet speed typed)", VANE_COLS, VANE_SI,
                             VANE_ROWS,
                             (10.0, 0.0, 0.0), "m/s")
    rho, A, V = t.at(0, "density"), t.at(0, "area"), t.at(0, "speed")
    w2, th = t.at(1, "speed"), t.at(1, "angle")
    P = t.ref
    flux = f"{rho}*{A}*({V}-{U})^2"
    s.add("relative velocity = V - V_cv (jet, x)", "PFX_RELVEL",
          f'=INDEX(PFX_RELVEL({P},{cv},"nozzle"),1,1)', f"={V}-{U}", 1e-12,
          "Galilean velocity addition; " + WHITE)
    s.add("relative velocity of every port (exit, y)", "PFX_RELVELS",
          f"=INDEX(PFX_RELVELS({P},{cv}),2,2)", f"={w2}*{sin_deg(th)}", 1e-12, TRADE)
    s.add("absolute velocity from relative (exit, x)", "PFX_ABSVEL",
          f"=INDEX(PFX_ABSVEL({P},{cv}),2,1)", f"={U}+{w2}*{cos_deg(th)}", 1e-12,
          "Galilean velocity addition; " + WHITE)
    s.add("single-vane intercepted mass flow -rho A (V - U)", "PFX_MASSFLOWS",
          f"=INDEX(PFX_MASSFLOWS({P},{cv}),1,1)", f"=-{rho}*{A}*({V}-{U})", 1e-12, WHITE)
    s.add("mass balance status", "PFX_IMBALANCE", f"=INDEX(PFX_IMBALANCE({P},{cv}),1,3)",
          "ok", None, TRADE)
    s.add("support force x = -rho A (V-U)^2 (1 - cos th)", "PFX_SUPPORT",
          f"=INDEX(PFX_SUPPORT({P},{cv}),1,1)", f"=-{flux}*(1-{cos_deg(th)})", 1e-12, WHITE)
    s.add("force on body x = rho A (V-U)^2 (1 - cos th)", "PFX_BODYFORCE",
          f"=INDEX(PFX_BODYFORCE({P},{cv}),1,1)", f"={flux}*(1-{cos_deg(th)})", 1e-12, WHITE)
    s.add("force on body y = -rho A (V-U)^2 sin th (axis argument)", "PFX_BODYFORCE",
          f'=PFX_BODYFORCE({P},{cv},"y")', f"=-{flux}*{sin_deg(th)}", 1e-12, WHITE)
    s.add("power = F_x U", "PFX_POWER", f"=PFX_POWER({P},{cv})",
          f"={flux}*(1-{cos_deg(th)})*{U}", 1e-12, WHITE)
    s.add("jet efficiency at U = V/3: (8/27)(1 - cos th)", "PFX_EFFICIENCY",
          f'=PFX_EFFICIENCY({P},{cv},"jet")', f"=8/27*(1-{cos_deg(th)})", 1e-12,
          "P_max = (4/27) rho A V^3 (1 - cos th) over the jet flux rho A V^3 / 2; " + WHITE)
    s.add("summary block: force on body x (row 16)", "PFX_SUMMARY",
          f"=INDEX(PFX_SUMMARY({P},{cv}),16,2)",
          f"={flux}*(1-{cos_deg(th)})", 1e-12, WHITE)
    s.add("about block: version", "PFX_ABOUT", "=INDEX(PFX_ABOUT(),2,2)",
          __version__, None, "the installed package's version (common practice, no source)")
    s.add("column catalogue: US unit of area", "PFX_COLUMNS",
          '=INDEX(PFX_COLUMNS("US"),5,3)', "ft^2", None,
          "US customary area unit, NIST SP 811 Appendix B (square foot)")
    s.add("settings catalogue: gz is an acceleration", "PFX_SETTINGS",
          "=INDEX(PFX_SETTINGS(),5,2)", "acceleration", None, TRADE)

    # The same vane, outrun by the body: U = 40 m/s > V.
    t2, cv2, U2, _, _ = s.block("B. the body outruns the jet", VANE_COLS, VANE_SI,
                                VANE_ROWS,
                                (40.0, 0.0, 0.0), "m/s")
    s.add("body faster than the jet: no contact", "PFX_IMBALANCE",
          f"=INDEX(PFX_IMBALANCE({t2.ref},{cv2}),1,3)", "no contact", None,
          "a vane faster than the jet receives no fluid (" + TRADE + ")")
    s.add("body faster than the jet: zero force", "PFX_BODYFORCE",
          f'=PFX_BODYFORCE({t2.ref},{cv2},"x")', "=0", 1e-12, TRADE)
    s.add("body faster than the jet: warning names the outrun inlet", "PFX_WARNINGS",
          f"=LEFT(INDEX(PFX_WARNINGS({t2.ref},{cv2}),1,1),27)", "port nozzle: declared inlet",
          None, TRADE)
    # the input checksum: a SHA-256 digest is 64 hexadecimal digits; blocks A and B type the
    # same port table (same digest) at other CV speeds (other digest)
    sha = "NIST FIPS 180-4, Secure Hash Standard, SHA-256 (256-bit digest)"
    s.add("input checksum: 64 hexadecimal digits (SHA-256)", "PFX_CHECKSUM",
          f"=LEN(PFX_CHECKSUM({P},{cv}))", "=256/4", 0.0, sha)
    s.add("input checksum: the same port table typed twice gives one digest", "PFX_CHECKSUM",
          f'=IF(EXACT(PFX_CHECKSUM({P},{cv})&"",PFX_CHECKSUM({t2.ref},{cv})&""),"same",'
          f'"differs")',
          "same", None, sha + "; " + TRADE)
    s.add("input checksum: another CV speed gives another digest", "PFX_CHECKSUM",
          f'=IF(EXACT(PFX_CHECKSUM({P},{cv})&"",PFX_CHECKSUM({t2.ref},{cv2})&""),"same",'
          f'"differs")', "differs", None, sha + "; " + TRADE)


def _us_vane_cases(s: Sheet):
    # Invented: 0.05 ft^2 jet at 80 ft/s, vane at 20 ft/s, 150 degree turn, US customary.
    t, cv, U, _, _ = s.block("C. single vane, US customary", VANE_COLS,
                             (None, None, None, "ft^2", "slug/ft^3", "ft/s", "deg"),
                             (("nozzle", "in", "abs", 0.05, 1.94, 80.0, 0.0),
                              ("exit", "out", "rel", 0.05, 1.94, 60.0, 150.0)),
                             (20.0, 0.0, 0.0), "ft/s")
    rho, A, V, th = t.at(0, "density"), t.at(0, "area"), t.at(0, "speed"), t.at(1, "angle")
    f = f"{rho}*{A}*({V}-{U})^2*(1-{cos_deg(th)})"
    s.add("force on body x in lbf (slug ft/s^2 = lbf)", "PFX_BODYFORCE",
          f'=PFX_BODYFORCE({t.ref},{cv},"x","US")', f"={f}", 1e-9, WHITE + "; " + NIST)
    s.add("force on body x in N = lbf x 4.4482216152605", "PFX_BODYFORCE",
          f'=PFX_BODYFORCE({t.ref},{cv},"x","SI")', f"={f}*4.4482216152605", 1e-9, NIST)
    s.add("power in hp = F U / 550", "PFX_POWER", f'=PFX_POWER({t.ref},{cv},"US")',
          f"={f}*{U}/550", 1e-9, NIST + " (1 hp = 550 ft lbf/s)")


def _frame_cases(s: Sheet):
    # Deliberately imbalanced (outlet area smaller): frame difference = V_cv x imbalance.
    # the inlet's normal is typed: the CV moves across the jet, and the port is cut square to
    # the jet from the fixed nozzle (a role-based normal would draw a warning saying so)
    t, cv, U, _, _ = s.block("D. imbalanced CV (frame cross-check)", VANE_COLS + ("nx", "ny"),
                             VANE_SI + (None, None),
                             (("in", "in", "abs", 0.01, 1000.0, 12.0, 0.0, -1.0, 0.0),
                              ("out", "out", "rel", 0.008, 1000.0, 9.0, 90.0, 0.0, 1.0)),
                             (3.0, 1.0, 0.0), "m/s")
    rho, A1, V = t.at(0, "density"), t.at(0, "area"), t.at(0, "speed")
    A2, w2 = t.at(1, "area"), t.at(1, "speed")
    imb = f"({rho}*{A2}*{w2}-{rho}*{A1}*({V}-{U}))"
    s.add("frame check: sum mdot V - sum mdot w = V_cv x imbalance (x)", "PFX_FRAMECHECK",
          f"=INDEX(PFX_FRAMECHECK({t.ref},{cv}),4,2)", f"={U}*{imb}", 1e-12,
          "Galilean velocity addition; " + WHITE)
    s.add("imbalance = sum of mass flows", "PFX_IMBALANCE",
          f"=INDEX(PFX_IMBALANCE({t.ref},{cv}),1,1)", f"={imb}", 1e-12, TRADE)


def _propulsion_cases(s: Sheet):
    # Invented water-jet craft at 12 m/s, jet 21 m/s relative, 0.04 m^2 nozzle, sea water.
    cols = ("port", "role", "frame", "area", "density", "vx", "mass_flow", "p_gauge", "nx")
    t, cv, U, _, _ = s.block(
        "E. water-jet craft at cruise", cols,
        (None, None, None, "m^2", "kg/m^3", "m/s", "kg/s", "Pa", None),
        (("intake", "in", "rel", 0.07, 1025.0, -12.0, None, None, None),
         ("nozzle", "out", "rel", 0.04, 1025.0, -21.0, None, None, None)),
        (12.0, 0.0, 0.0), "m/s")
    rho, Aj, Vj = t.at(1, "density"), t.at(1, "area"), t.at(1, "vx")
    mj = f"{rho}*{Aj}*ABS({Vj})"
    # intake area chosen so the intake swallows the nozzle flow at V0: A_i = A_j Vj / V0
    s.ws[t.at(0, "area").replace("$", "")] = f"={Aj}*ABS({Vj})/{U}"
    s.ws[t.at(0, "area").replace("$", "")].fill = OUTPUT_FILL
    s.add("water-jet thrust = mdot (Vj - V0)", "PFX_BODYFORCE",
          f'=PFX_BODYFORCE({t.ref},{cv},"x")', f"={mj}*(ABS({Vj})-{U})", 1e-12, FROUDE)
    s.add("Froude propulsive efficiency = 2 / (1 + Vj/V0)", "PFX_EFFICIENCY",
          f'=PFX_EFFICIENCY({t.ref},{cv},"propulsive")', f"=2/(1+ABS({Vj})/{U})", 1e-12,
          FROUDE)

    # Invented turbojet at 240 m/s: air 50 kg/s, fuel 1.1 kg/s, exit 610 m/s, 18 kPa over ambient.
    t2, cv2, U2, _, _ = s.block(
        "F. turbojet at cruise (fuel port, exit pressure)", cols,
        (None, None, None, "m^2", "kg/m^3", "m/s", "kg/s", "kPa", None),
        (("intake", "in", "rel", None, None, -240.0, 50.0, None, 1.0),
         ("fuel", "in", "rel", None, None, 0.0, 1.1, None, None),
         ("nozzle", "out", "rel", 0.21, None, -610.0, 51.1, 18.0, -1.0)),
        (240.0, 0.0, 0.0), "m/s")
    ma, Ve = t2.at(0, "mass_flow"), t2.at(2, "vx")
    me, pe, Ae = t2.at(2, "mass_flow"), t2.at(2, "p_gauge"), t2.at(2, "area")
    s.add("net thrust = (ma + mf) Ve - ma V0 + (pe - pa) Ae", "PFX_BODYFORCE",
          f'=PFX_BODYFORCE({t2.ref},{cv2},"x")',
          f"={me}*ABS({Ve})-{ma}*{U2}+{pe}*1000*{Ae}", 1e-12, PROPULSION)
    s.add("turbojet: inflow (air + fuel) balances the exit", "PFX_IMBALANCE",
          f"=INDEX(PFX_IMBALANCE({t2.ref},{cv2}),1,3)", "ok", None, PROPULSION)


def _statics_cases(s: Sheet):
    cols = ("port", "role", "area", "density", "vx", "vy", "vz", "nx", "ny", "nz", "p_gauge")
    units = (None, None, "m^2", "kg/m^3", "m/s", "m/s", "m/s", None, None, None, "kPa")
    t, cv, _, sref, cells = s.block(
        "G. capped pipe: water at rest, gauge pressure, weight", cols, units,
        (("cap", "in", 0.05, 1000.0, 0.0, 0.0, 0.0, -1.0, 0.0, 0.0, 200.0),),
        (0.0, 0.0, 0.0), "m/s",
        settings=(("fluid_mass", 250.0, "kg"), ("gz", -9.80665, "m/s^2")))
    p, A = t.at(0, "p_gauge"), t.at(0, "area")
    s.add("end-cap thrust = p A", "PFX_BODYFORCE",
          f'=PFX_BODYFORCE({t.ref},{cv},"x",,{sref})', f"={p}*1000*{A}", 1e-12, TRADE)
    s.add("weight of the fluid is carried by the support: R_z = m g", "PFX_SUPPORT",
          f'=PFX_SUPPORT({t.ref},{cv},"z",,{sref})', f"={cells['fluid_mass']}*9.80665", 1e-12,
          "g_n = 9.80665 m/s^2, NIST SP 330 (3rd CGPM, 1901); statics (" + TRADE + ")")


def _support_load_cases(s: Sheet):
    # Invented 90-degree reducing bend, water at rest in the pipe frame (V_cv = 0), inlet and
    # outlet gauge pressures; moments about a chosen point O = (ref_x, ref_y).
    cols = ("port", "role", "area", "density", "vx", "vy", "p_gauge", "rx", "ry")
    t, cv, _, sref, c = s.block(
        "O. reducing bend: anchor moment about a chosen point", cols,
        (None, None, "m^2", "kg/m^3", "m/s", "m/s", "kPa", "m", "m"),
        (("in", "in", 0.02, 998.0, 3.0, 0.0, 150.0, 0.0, 0.4),
         ("out", "out", 0.01, 998.0, 0.0, 6.0, 120.0, 0.6, 1.0)),
        (0.0, 0.0, 0.0), "m/s", settings=(("ref_x", 0.1, "m"), ("ref_y", -0.2, "m")))
    rho, A1, V1, p1 = (t.at(0, k) for k in ("density", "area", "vx", "p_gauge"))
    A2, V2, p2 = (t.at(1, k) for k in ("area", "vy", "p_gauge"))
    y1, x2, ox, oy = t.at(0, "ry"), t.at(1, "rx"), c["ref_x"], c["ref_y"]
    m = f"{rho}*{A1}*{V1}"
    mz = (f"({x2}-{ox})*({m}*{V2}+{p2}*1000*{A2})+({y1}-{oy})*({m}*{V1}+{p1}*1000*{A1})")
    s.add("bend: support moment M_R,z = sum r x (mdot V + p A) about O", "PFX_SUPPORTMOMENT",
          f'=PFX_SUPPORTMOMENT({t.ref},{cv},"z",,{sref})', f"={mz}", 1e-12, ANGULAR)
    s.add("bend: moment on the bend about O = -M_R,z", "PFX_MOMENT",
          f'=INDEX(PFX_MOMENT({t.ref},{cv},,,{sref}),1,3)', f"=-({mz})", 1e-12, ANGULAR)

    # Invented lawn sprinkler held still: supply from below at the hub, two nozzles at +-r.
    cols = ("port", "role", "area", "density", "vy", "vz", "volume_flow", "rx")
    t, cv, _, _, _ = s.block(
        "P. held two-arm sprinkler", cols,
        (None, None, "m^2", "kg/m^3", "m/s", "m/s", "m^3/s", "m"),
        (("supply", "in", None, 998.0, 0.0, 1.0, 6e-4, 0.0),
         ("east", "out", 5e-5, 998.0, -6.0, 0.0, None, 0.15),
         ("west", "out", 5e-5, 998.0, 6.0, 0.0, None, -0.15)),
        (0.0, 0.0, 0.0), "m/s")
    rho, An, w, r = t.at(1, "density"), t.at(1, "area"), t.at(2, "vy"), t.at(2, "rx")
    s.add("sprinkler held still: torque on it T = 2 mdot_arm r w_t", "PFX_MOMENT",
          f'=PFX_MOMENT({t.ref},{cv},"z")', f"=2*({rho}*{An}*{w})*ABS({r})*{w}", 1e-12,
          SPRINKLER)

    # Invented vane on a carriage, its mount h below the jet line; design factors set.
    cols = ("port", "role", "area", "density", "speed", "angle", "closure", "ry")
    t, cv, U, sref, c = s.block(
        "Q. vane with its mount below the jet line; envelope", cols,
        (None, None, "m^2", "kg/m^3", "m/s", "deg", None, "m"),
        (("jet", "in", 3e-4, 998.0, 25.0, 0.0, None, 0.35),
         ("exit", "out", 3e-4, 998.0, None, 135.0, "free", 0.35)),
        (6.0, 0.0, 0.0), "m/s",
        settings=(("dynamic_factor", 2.0, None), ("load_factor", 1.5, None)),
        extra=(("low", 0.0, "m/s"), ("high", 20.0, "m/s")))
    rho, A, V, th, h = (t.at(0, "density"), t.at(0, "area"), t.at(0, "speed"),
                        t.at(1, "angle"), t.at(0, "ry"))
    k = f"{rho}*{A}*({V}-{U})^2"
    fx, fy = f"({k}*(1-{cos_deg(th)}))", f"(-{k}*{sin_deg(th)})"
    lever = "moment of a force about a point below its line: M_z = -h F_x (" + TRADE + "); "
    s.add("vane: moment about the mount = -h F_x", "PFX_MOMENT",
          f'=PFX_MOMENT({t.ref},{cv},"z",,{sref})', f"=-{h}*{fx}", 1e-12, lever + WHITE)
    s.add("vane: summary block, moment on body z (row 32)", "PFX_SUMMARY",
          f"=INDEX(PFX_SUMMARY({t.ref},{cv},,{sref}),32,2)", f"=-{h}*{fx}", 1e-12,
          lever + WHITE)
    s.add("force resultant |F| = rho A (V-U)^2 sqrt(2 - 2 cos th)", "PFX_RESULTANT",
          f"=INDEX(PFX_RESULTANT({t.ref},{cv},,,{sref}),1,1)", f"=SQRT({fx}^2+{fy}^2)", 1e-12,
          WHITE + "; vector magnitude (" + TRADE + ")")
    s.add("force direction: in-plane angle atan2(F_y, F_x) [deg]", "PFX_RESULTANT",
          f'=INDEX(PFX_RESULTANT({t.ref},{cv},"force",,{sref}),1,2)',
          f"=DEGREES(ATAN2({fx},{fy}))", 1e-12, WHITE + "; direction angles (" + TRADE + ")")
    s.add("moment resultant: elevation -90 deg (M along -z)", "PFX_RESULTANT",
          f'=INDEX(PFX_RESULTANT({t.ref},{cv},"moment",,{sref}),1,3)', "=-90", 1e-12,
          lever + "direction angles")
    low, high = c["low and unit"], c["high and unit"]
    env = f"PFX_ENVELOPE({t.ref},{low},{high},,,{sref})"
    f0 = f"{rho}*{A}*{V}^2*(1-{cos_deg(th)})"
    s.add("envelope: largest F_x at U = 0, rho A V^2 (1 - cos th)", "PFX_ENVELOPE",
          f"=INDEX({env},2,2)", f"={f0}", 1e-9, WHITE)
    s.add("envelope: speed of the largest F_x is 0 (statics)", "PFX_ENVELOPE",
          f"=INDEX({env},2,3)", "=0", 1e-9, WHITE)
    s.add("envelope: factored = raw x dynamic factor x load factor", "PFX_ENVELOPE",
          f"=INDEX({env},2,4)", f"={f0}*{c['dynamic_factor']}*{c['load_factor']}", 1e-9,
          "design load = factors x load (" + TRADE + "); " + WHITE)


#: The parts of this module, in sheet order (each adds its blocks and cases to a Sheet): the
#: balance cases A-G come first, the support loads O-Q last (after the closure cases H-N of
#: :mod:`.cases_closures`).
PARTS = (_vane_cases, _us_vane_cases, _frame_cases, _propulsion_cases, _statics_cases)
LOAD_PARTS = (_support_load_cases,)


def write_cases(ws, parts=PARTS):
    """Write the index table and every input block of ``parts`` on the 'Check cases' sheet."""
    put(ws, 1, 1, "Reference cases: every worksheet function against a published closed "
                   "form", font=TITLE_FONT)
    put(ws, 1, 2, "The expected value of each case is a native formula on the inputs of its "
                   "block (below, from row " + str(BLOCKS_TOP) + "). 'portflux check' "
                   "recalculates this sheet and reports every case.")
    s = Sheet(ws)
    for part in parts:
        part(s)
    widths = (46, 16, 14, 14, 10, 8, 90)
    for j, h in enumerate(INDEX_HEADER):
        put(ws, 1 + j, INDEX_TOP, h, fill=HEAD_FILL, font=BOLD)
        ws.column_dimensions[get_column_letter(1 + j)].width = max(
            widths[j], ws.column_dimensions[get_column_letter(1 + j)].width or 0)
    for i, c in enumerate(s.cases):
        r = INDEX_TOP + 1 + i
        put(ws, 1, r, c.name)
        put(ws, 2, r, c.function)
        put(ws, 3, r, c.output, fill=OUTPUT_FILL, fmt=CHECK_FORMAT)
        put(ws, 4, r, c.expected, fill=OUTPUT_FILL if str(c.expected).startswith("=")
             else INPUT_FILL, fmt=CHECK_FORMAT)
        out, exp = cell(3, r, absolute=False), cell(4, r, absolute=False)
        if c.tolerance is None:
            put(ws, 5, r, "text")
            # EXACT, not "=": exact (case too) in every application; LibreOffice 25.2 gave
            # FALSE for "=" between two equal texts holding "\u00b1" where EXACT gave TRUE
            verdict = f'=IF(EXACT({out},{exp}),"PASS","FAIL")'
        else:
            put(ws, 5, r, c.tolerance, fill=INPUT_FILL)
            tol = cell(5, r, absolute=False)
            verdict = (f'=IF(AND(ISNUMBER({out}),ISNUMBER({exp})),'
                       f'IF(ABS({out}-{exp})<={tol}*MAX(1,ABS({exp})),"PASS","FAIL"),"FAIL")')
        put(ws, 6, r, verdict, fill=OUTPUT_FILL, font=Font(bold=True))
        put(ws, 7, r, c.source)
    if len(s.cases) + INDEX_TOP + 2 > BLOCKS_TOP:
        raise AssertionError("reference-case index runs into the input blocks; raise BLOCKS_TOP")
    return s.cases


__all__ = ["INDEX_HEADER", "INDEX_TOP", "LOAD_PARTS", "PARTS", "Case", "Sheet", "cos_deg", "sin_deg",
           "write_cases"]
