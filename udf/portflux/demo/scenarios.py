"""Demo scenarios of our own invention, as port tables with a unit row.

Each scenario is a grid exactly as a user lays it out on a sheet: header row, unit row, one port
per row. The numbers are invented for illustration and are not measurements of any device.
"""

from __future__ import annotations

#: A deflector on a test carriage: a 2.5 in water jet at 110 ft/s from a fixed nozzle meets a
#: vane that runs away from the nozzle at 30 ft/s and turns the jet through 135 degrees, throwing
#: it 10 degrees upward. The vane is frictionless, so the relative speed stays 80 ft/s.
CARRIAGE_VANE = {
    "title": "Deflector on a test carriage (invented demo scenario)",
    "ports": (
        ("port", "role", "frame", "area", "density", "speed", "angle", "tilt"),
        (None, None, None, "in^2", "slug/ft^3", "ft/s", "deg", "deg"),
        ("nozzle jet", "in", "abs", 4.908739, 1.94, 110.0, 0.0, 0.0),
        ("vane exit", "out", "rel", 4.908739, 1.94, 80.0, 135.0, 10.0),
    ),
    "cv_velocity": (30.0, 0.0, 0.0),
    "cv_unit": "ft/s",
    "fluid_mass": 0.04,
    "mass_unit": "slug",
    "units": "US",
}
