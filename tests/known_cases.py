"""Every correct case the project ships, as worksheet-function inputs.

The template's reference cases (recorded from the blocks ``workbook.cases`` and
``workbook.cases_closures`` draw), the three example workbooks' scenarios and the demo scenario:
each as (name, ports grid, cv_velocity cells, settings grid or None), the values a spreadsheet
would hand to a ``PFX_`` function. Used by ``tests/test_mistakes.py`` to prove that the checks
for classic mistakes add no warning to a correct case.
"""

from __future__ import annotations

import importlib.util
import os

from portflux.demo import scenarios
from portflux.workbook import cases, template

HERE = os.path.dirname(os.path.abspath(__file__))


def _settings_grid(rows):
    if not rows:
        return None
    return (("setting", "value", "unit"),) + tuple(tuple(r) for r in rows)


def reference_cases() -> list:
    """(name, ports, cv, settings) of every input block of the template's 'Check cases'."""
    seen = []
    original = cases.Sheet.block

    def record(self, title, columns, units, rows, cv, cv_unit, settings=None, extra=None):
        if columns == ("r", "u"):           # a velocity traverse (PFX_TRAVERSE), not ports
            return original(self, title, columns, units, rows, cv, cv_unit, settings, extra)
        seen.append((f"template {title}", (tuple(columns), tuple(units)) + tuple(map(tuple, rows)),
                     tuple(cv) + (cv_unit,), _settings_grid(settings)))
        return original(self, title, columns, units, rows, cv, cv_unit, settings, extra)

    cases.Sheet.block = record
    try:
        template.build_workbook()
    finally:
        cases.Sheet.block = original
    return seen


def _scenario_case(name, sc) -> tuple:
    settings = _settings_grid([(k, v, u) for k, (v, u) in sc.settings.items()])
    return (name, tuple(map(tuple, sc.ports)), tuple(sc.cv_velocity) + (sc.cv_unit,), settings)


def example_cases() -> list:
    """The scenarios of ``examples/build_examples.py`` and the demo scenario."""
    path = os.path.join(HERE, os.pardir, "examples", "build_examples.py")
    spec = importlib.util.spec_from_file_location("build_examples", path)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    out = [_scenario_case(f"example {k}", sc) for k, sc in mod.SCENARIOS.items()]
    out.append(_scenario_case("demo carriage_vane", scenarios.carriage_vane()))
    return out


def all_cases() -> list:
    return reference_cases() + example_cases()
