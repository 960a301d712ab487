"""Demo scenarios of our own invention, as port tables with a unit row.

Each scenario is a grid exactly as a user lays it out on a sheet: header row, unit row, one port
per row. The numbers are invented for illustration and are not measurements of any device.
"""

from __future__ import annotations

from dataclasses import dataclass, field


@dataclass
class Scenario:
    """Inputs for the template's 'Control volume' and 'Speed sweep' sheets (plain data; the
    workbook layer's ``fill`` writes them into a copy of the template)."""

    title: str
    ports: tuple                       #: header row, unit row, port rows
    cv_velocity: tuple                 #: (x, y, z)
    cv_unit: str = "m/s"
    units: str = "SI"                  #: output units of the results
    settings: dict = field(default_factory=dict)   #: name -> (value, unit)
    sweep: dict = field(default_factory=dict)      #: low, high, unit, direction, force, units
    triangle_port: int | None = None               #: port of the velocity triangle (None:
    #: the first outlet)
    note: str = ""
    report: dict = field(default_factory=dict)     #: Report title block: project, case, ...
    #: measured inputs: rows (input, standard uncertainty, unit or %) of the uncertainty block
    uncertainties: tuple = ()


def carriage_vane():
    """A deflector on a test carriage (the ``portflux demo`` scenario).

    A 2.5 in water jet at 110 ft/s from a fixed nozzle meets a vane that runs away from the nozzle
    at 30 ft/s and turns the jet through 135 degrees, throwing it 10 degrees upward. The vane is
    frictionless (closure ``free``): the relative speed leaves as it arrived. The vane's ports
    sit 1.5 to 1.8 ft above the carriage mount (the origin, where moments are taken), and the
    water on the vane (0.04 slug) acts 1.6 ft above it.
    """
    return Scenario(
        title="Deflector on a test carriage (invented demo scenario)",
        ports=(
            ("port", "role", "frame", "area", "density", "speed", "angle", "tilt", "closure",
             "rx", "ry"),
            (None, None, None, "in^2", "slug/ft^3", "ft/s", "deg", "deg", None, "ft", "ft"),
            ("nozzle jet", "in", "abs", 4.908739, 1.94, 110.0, 0.0, 0.0, None, -0.4, 1.5),
            ("vane exit", "out", "rel", 4.908739, 1.94, None, 135.0, 10.0, "free", 0.3, 1.8),
        ),
        cv_velocity=(30.0, 0.0, 0.0), cv_unit="ft/s", units="US",
        settings={"fluid_mass": (0.04, "slug"), "gx": (0.0, "ft/s^2"), "gy": (0.0, "ft/s^2"),
                  "gz": (-32.174049, "ft/s^2"), "cg_x": (0.0, "ft"), "cg_y": (1.6, "ft")},
        sweep=dict(low=0.0, high=110.0, unit="ft/s", direction=0.0, force=500.0, units="US"),
        triangle_port=2,
        uncertainties=(("nozzle jet.speed", 1.0, "%"), ("nozzle jet.area", 0.5, "%"),
                       ("vane exit.angle", 0.5, "deg"), ("cv_x", 0.3, "ft/s"),
                       ("fluid_mass", 0.004, "slug")),
        note="Invented scenario for the demo: a 2.5 in jet at 110 ft/s, carriage at 30 ft/s, "
             "135 degree frictionless vane throwing 10 degrees up. Check all results against "
             "your own codes before use.")
