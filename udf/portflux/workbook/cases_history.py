"""Reference cases of the speed history (PFX_SPEEDHISTORY, PFX_HISTORYSUMMARY): a vane on a
carriage driven from rest by a fixed jet, no resistance, against the closed form.

M dU/dt = rho A (V - U)^2 (1 - cos theta); with s = V - U and k = rho A (1 - cos theta) / M,
ds/dt = -k s^2, so U(t) = V - V / (1 + k V t) and x(t) = V t - ln(1 + k V t) / k; the time to
a target speed U_t is (1 / (V - U_t) - 1 / V) / k (moving-vane force: White, *Fluid
Mechanics*, sec. 3.4, from memory; the integration by separation of variables).
"""

from __future__ import annotations

from .cases import WHITE, Sheet, cos_deg

CARRIAGE = ("closed form of the carriage driven from rest, U(t) = V - V / (1 + k V t), "
            "k = rho A (1 - cos th) / M, by separation of variables; " + WHITE)


def history_cases(s: Sheet):
    # Invented: a 10 cm^2, 25 m/s water jet on a 160-degree vane on a 60 kg carriage.
    cols = ("port", "role", "area", "density", "speed", "angle", "closure")
    t, _, _, sref, c = s.block(
        "R. vane on a carriage from rest: speed history", cols,
        (None, None, "m^2", "kg/m^3", "m/s", "deg", None),
        (("jet", "in", 1e-3, 1000.0, 25.0, 0.0, None),
         ("exit", "out", 1e-3, 1000.0, None, 160.0, "free")),
        (0.0, 0.0, 0.0), "m/s",
        settings=(("carriage_mass", 60.0, "kg"), ("duration", 4.0, "s"),
                  ("target_speed", 18.0, "m/s"), ("history_rows", 5, None)))
    rho, A, V, th = t.at(0, "density"), t.at(0, "area"), t.at(0, "speed"), t.at(1, "angle")
    M, T, Ut = c["carriage_mass"], c["duration"], c["target_speed"]
    k = f"({rho}*{A}*(1-{cos_deg(th)})/{M})"
    hist = f"PFX_SPEEDHISTORY({t.ref},{sref})"
    summ = f"PFX_HISTORYSUMMARY({t.ref},{sref})"
    s.add("carriage: speed at the end U(T) = V - V / (1 + k V T)", "PFX_SPEEDHISTORY",
          f"=INDEX({hist},6,2)", f"={V}-{V}/(1+{k}*{V}*{T})", 1e-7, CARRIAGE)
    s.add("carriage: distance x(T) = V T - ln(1 + k V T) / k", "PFX_SPEEDHISTORY",
          f"=INDEX({hist},6,3)", f"={V}*{T}-LN(1+{k}*{V}*{T})/{k}", 1e-7, CARRIAGE)
    s.add("carriage: time to the target (1 / (V - U_t) - 1 / V) / k", "PFX_HISTORYSUMMARY",
          f"=INDEX({summ},2,2)", f"=(1/({V}-{Ut})-1/{V})/{k}", 1e-7, CARRIAGE)
    s.add("carriage: largest load at the start, rho A V^2 sqrt(2 - 2 cos th)",
          "PFX_HISTORYSUMMARY", f"=INDEX({summ},7,2)",
          f"={rho}*{A}*{V}^2*SQRT(2-2*{cos_deg(th)})", 1e-9,
          WHITE + "; vector magnitude (common practice, no source)")


#: The parts of this module, in sheet order (see :data:`.cases.PARTS`).
PARTS = (history_cases,)
