"""Build the example workbooks from the template: ``python examples/build_examples.py``.

Three invented scenarios (not measurements of any device):

- ``carriage_vane.xlsx``: a water jet on a frictionless deflector riding a test carriage (SI);
- ``bucket_wheel.xlsx``: a bucket wheel (vane train) swept over wheel speed, with bucket losses;
- ``waterjet_craft.xlsx``: a water-jet craft at cruise, swept over craft speed (US customary);
- ``wheel_rpm.xlsx``: a bucket wheel typed in rpm with its pitch radius: shaft torque, best
  wheel speed in rpm;
- ``nozzle_carriage.xlsx``: a nozzle fed at 5 bar gauge (diameter, velocity and contraction
  coefficients) on a deflector riding a carriage, with port positions (the mount below the jet
  line), a bucket loss and design factors.

Each is the template with its input cells filled; ``portflux recalc`` computes it and
``tests/test_examples.py`` checks it against closed forms.
"""

from __future__ import annotations

import os
import sys

from portflux.workbook.fill import Scenario, fill

HERE = os.path.dirname(os.path.abspath(__file__))

SCENARIOS = {
    "carriage_vane.xlsx": Scenario(
        report=dict(project="portflux examples (invented)", case="carriage vane at 11 m/s", revision="A"),
        title="Example: water jet on a deflector riding a test carriage (invented)",
        ports=(("port", "role", "frame", "area", "density", "speed", "angle", "closure"),
               (None, None, None, "cm^2", "kg/m^3", "m/s", "deg", None),
               ("nozzle", "in", "abs", 12.0, 998.2, 42.0, 0.0, None),
               ("deflector lip", "out", "rel", None, 998.2, None, 160.0, "free")),
        cv_velocity=(11.0, 0.0, 0.0), cv_unit="m/s", units="SI; force=kN; power=kW",
        sweep=dict(low=0.0, high=42.0, unit="m/s", direction=0.0, force=2.0,
                   units="SI; force=kN; power=kW"),
        note="Invented example: 12 cm^2 jet at 42 m/s, carriage at 11 m/s, 160 deg frictionless "
             "deflector. The speed sweep finds the best carriage speed (V/3)."),
    "bucket_wheel.xlsx": Scenario(
        report=dict(project="portflux examples (invented)", case="bucket wheel at 36 m/s", revision="A"),
        title="Example: bucket wheel (vane train) swept over wheel speed (invented)",
        ports=(("port", "role", "frame", "area", "density", "speed", "angle", "closure", "loss"),
               (None, None, None, "mm^2", "kg/m^3", "m/s", "deg", None, None),
               ("jet", "in", "abs", 1963.5, 999.0, 75.0, 0.0, None, None),
               ("bucket exit", "out", "rel", None, 999.0, None, 168.0, "loss", 0.04)),
        cv_velocity=(36.0, 0.0, 0.0), cv_unit="m/s", units="SI; power=kW",
        settings={"intercept": ("train", None)},
        sweep=dict(low=0.0, high=75.0, unit="m/s", direction=0.0, force=5000.0,
                   units="SI; power=kW"),
        note="Invented example: 50 mm jet at 75 m/s on a wheel of 168 deg buckets that lose 4 % "
             "of the relative speed. Best bucket speed near V/2."),
    "waterjet_craft.xlsx": Scenario(
        report=dict(project="portflux examples (invented)", case="water-jet craft at 40 ft/s", revision="A"),
        title="Example: water-jet craft at cruise (invented)",
        ports=(("port", "role", "frame", "speed", "angle", "nx", "mass_flow"),
               (None, None, None, "ft/s", "deg", None, "slug/s"),
               ("intake", "in", "abs", 0.0, 0.0, 1.0, 30.0),
               ("nozzle", "out", "rel", 70.0, 180.0, None, 30.0)),
        cv_velocity=(40.0, 0.0, 0.0), cv_unit="ft/s", units="US",
        sweep=dict(low=0.0, high=70.0, unit="ft/s", direction=0.0, force=600.0, units="US"),
        note="Invented example: the pump moves 30 slug/s; the jet leaves at 70 ft/s relative to "
             "the hull; the craft cruises at 40 ft/s. Thrust mdot (Vj - V0), Froude efficiency "
             "2 / (1 + Vj/V0)."),
    "wheel_rpm.xlsx": Scenario(
        report=dict(project="portflux examples (invented)", case="bucket wheel at 600 rpm",
                    revision="A"),
        title="Example: bucket wheel typed in rpm, 0.45 m pitch radius (invented)",
        ports=(("port", "role", "frame", "area", "density", "speed", "angle", "closure", "loss"),
               (None, None, None, "mm^2", "kg/m^3", "m/s", "deg", None, None),
               ("jet", "in", "abs", 1256.6, 998.0, 60.0, 0.0, None, None),
               ("bucket exit", "out", "rel", None, 998.0, None, 165.0, "loss", 0.05)),
        cv_velocity=(600.0, 0.0, 0.0), cv_unit="rpm", units="SI; power=kW",
        settings={"intercept": ("train", None), "wheel_radius": (0.45, "m")},
        sweep=dict(low=0.0, high=1400.0, unit="rpm", direction=0.0, force=2000.0,
                   units="SI; power=kW"),
        note="Invented example: a 40 mm jet at 60 m/s on a wheel of 165 deg buckets (5 % loss "
             "of the relative speed) turning at 600 rpm, pitch radius 0.45 m (U = omega r = "
             "28.3 m/s). Shaft torque T = mdot r (V - U)(1 - (1 - k) cos b); best speed near "
             "V / 2, in rpm."),
    "nozzle_carriage.xlsx": Scenario(
        report=dict(project="portflux examples (invented)",
                    case="nozzle at 5 bar gauge on a carriage deflector", revision="A"),
        title="Example: nozzle fed at 5 bar gauge on a deflector riding a carriage (invented)",
        ports=(("port", "role", "frame", "diameter", "supply_pressure", "velocity_coef",
                "contraction_coef", "density", "angle", "closure", "loss", "rx", "ry", "rz"),
               (None, None, None, "mm", "bar", None, None, "kg/m^3", "deg", None, None, "m",
                "m", "m"),
               ("nozzle", "in", "abs", 30.0, 5.0, 0.98, 0.95, 998.0, 0.0, None, None, 0.0,
                0.6, 0.0),
               ("deflector lip", "out", "rel", None, None, None, None, 998.0, 150.0, "loss",
                0.05, 0.0, 0.6, 0.0)),
        cv_velocity=(8.0, 0.0, 0.0), cv_unit="m/s", units="SI; force=kN; moment=kN*m",
        settings={"dynamic_factor": (2.0, None), "load_factor": (1.5, None)},
        sweep=dict(low=0.0, high=30.0, unit="m/s", direction=0.0, force=1.0,
                   units="SI; force=kN; moment=kN*m"),
        note="Invented example: a 30 mm nozzle fed at 5 bar gauge (C_v 0.98, C_c 0.95) on a "
             "150 deg deflector losing 5 % of the relative speed, riding a carriage at 8 m/s; "
             "the mount is 0.6 m below the jet line. Design factors 2 (suddenly applied jet) "
             "and 1.5 (invented; take yours from your code)."),
}


def main(folder=HERE) -> int:
    for name, sc in SCENARIOS.items():      # built afresh from the generator (charts kept)
        path = fill(None, os.path.join(folder, name), sc)
        print(f"wrote {path}")
    return 0


if __name__ == "__main__":
    sys.exit(main(*sys.argv[1:]))
