"""Command line: ``portflux demo`` (and, as features land, recalc, check, template, bench)."""

from __future__ import annotations

import argparse
import sys

CAUTION = (
    "CAUTION: these forces feed the design of supports and restraints. The formulas idealize the "
    "flow (steady, inertial CV, uniform or beta-corrected ports, frictionless closures) and can "
    "under-predict real loads. Apply the safety factors and load cases of the governing code, "
    "have designs checked under licensed engineering practice, and treat high-pressure jets as "
    "hazardous."
)


def _grid_to_columns(grid):
    header, unit_row, *rows = grid
    cols = {h: [r[i] for r in rows] for i, h in enumerate(header)}
    units = {h: u for h, u in zip(header, unit_row) if u}
    return cols, units


def cmd_demo(args) -> int:
    from . import api
    from .demo.scenarios import CARRIAGE_VANE as s

    cols, units = _grid_to_columns(s["ports"])
    r = api.solve(cols, s["cv_velocity"], units=units, cv_unit=s["cv_unit"],
                  fluid_mass=s["fluid_mass"], mass_unit=s["mass_unit"], gravity_unit="m/s^2")
    print(s["title"])
    print("=" * len(s["title"]))
    print(r.report(args.units or s["units"]))
    print()
    print(CAUTION)
    return 0


def build_parser() -> argparse.ArgumentParser:
    from . import __version__

    p = argparse.ArgumentParser(prog="portflux", description="Steady momentum balances of "
                                "control volumes moving at constant velocity.")
    p.add_argument("--version", action="version", version=f"portflux {__version__}")
    sub = p.add_subparsers(dest="command", required=True)
    d = sub.add_parser("demo", help="solve the built-in demo scenario and print the results")
    d.add_argument("--units", help="output units: SI, US, or e.g. 'SI; force=kN'")
    d.set_defaults(func=cmd_demo)
    return p


def main(argv=None) -> int:
    from .core import PortfluxError

    args = build_parser().parse_args(argv)
    try:
        return args.func(args)
    except PortfluxError as e:
        print(f"portflux: {e}", file=sys.stderr)
        return 2


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
