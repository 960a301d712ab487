"""Build the example workbooks from the template: ``python examples/build_examples.py``.

Three invented scenarios (not measurements of any device):

- ``carriage_vane.xlsx``: a water jet on a frictionless deflector riding a test carriage (SI);
- ``bucket_wheel.xlsx``: a bucket wheel (vane train) swept over wheel speed, with bucket losses;
- ``waterjet_craft.xlsx``: a water-jet craft at cruise, swept over craft speed (US customary).

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
}


def main(folder=HERE) -> int:
    for name, sc in SCENARIOS.items():      # built afresh from the generator (charts kept)
        path = fill(None, os.path.join(folder, name), sc)
        print(f"wrote {path}")
    return 0


if __name__ == "__main__":
    sys.exit(main(*sys.argv[1:]))
