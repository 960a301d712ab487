"""One declaration of every input (portflux.schema), and the same check through both doors.

Every port column and setting is declared once; the worksheet functions and the Python API
turn cells or keywords into values and units and hand them to the one builder, so a bad value
is refused with the same words, naming the same field, whichever door it came through.
Source: common practice, no source (input rules of this package).
"""

from __future__ import annotations

import math
import re
from pathlib import Path

import pytest

import portflux as pf
import portflux.cells as C
from portflux import schema as S
from portflux import units as U
from portflux.core import InputError
from portflux.workbook import template as T

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(autouse=True)
def fresh_caches():
    C.clear_caches()
    yield


# ---- the declarations and what is derived from them ----------------------------------------
def test_every_column_and_setting_has_a_known_kind_a_help_text_and_unique_names():
    owner = {}
    for c in S.COLUMNS.values():
        assert c.kind is None or c.kind in U.QUANTITIES, c.key
        assert c.help, c.key
        for n in (c.key,) + c.aliases:                   # a name means one column only
            assert owner.setdefault(S.normalised(n), c.key) == c.key, n
    for s in S.SETTINGS.values():
        assert s.kind is None or s.kind in U.QUANTITIES, s.key
        assert s.help, s.key
        if s.vector:
            assert S.SETTING_VECTORS[s.vector[0]][s.vector[1]] == s.key


def test_pfx_columns_and_pfx_settings_answer_from_the_schema():
    cols = C.PFX_COLUMNS()
    assert [r[0] for r in cols[1:]] == list(S.COLUMNS)
    assert [r[3] for r in cols[1:]] == [c.help for c in S.COLUMNS.values()]
    us = {r[0]: r[2] for r in C.PFX_COLUMNS("US")[1:]}
    assert us["area"] == "ft^2" and us["port"] == "(text)"
    st = C.PFX_SETTINGS()
    assert [r[0] for r in st[1:]] == list(S.SETTINGS)
    assert [r[1] for r in st[1:]] == [s.kind or "(text)" for s in S.SETTINGS.values()]


def test_template_port_columns_and_units_are_derived_from_the_schema():
    assert T.CV_COLUMNS == S.sheet_columns(S.TEMPLATE_GROUPS)
    assert T.CV_UNITS == tuple(S.COLUMNS[k].sheet_unit or S.default_unit(k, U.QUANTITIES)
                               for k in T.CV_COLUMNS)
    # every column a template could show, in order, with a unit for each dimensional one
    every = S.sheet_columns(S.SHEET_GROUPS)
    assert set(every) == set(S.COLUMNS)
    for key, unit in zip(every, S.sheet_units(U.QUANTITIES, S.SHEET_GROUPS)):
        assert (unit is not None) == (S.COLUMNS[key].kind not in (None, "ratio")), key


def test_documented_tables_of_columns_and_settings_are_the_schema_tables():
    # the tables moved from README to the documentation, generated there at build time
    import sys

    sys.path.insert(0, str(ROOT / "docs" / "_ext"))
    import pfx_reference

    assert S.markdown_columns(U.QUANTITIES) in pfx_reference.columns_page()
    assert S.markdown_settings(U.QUANTITIES) in pfx_reference.settings_page()
    shown = (ROOT / "docs" / "guide" / "port-table.md").read_text(encoding="utf-8")
    assert "{include} ../_generated/columns.md" in shown
    shown = (ROOT / "docs" / "guide" / "settings.md").read_text(encoding="utf-8")
    assert "{include} ../_generated/settings.md" in shown


def test_api_keywords_come_from_the_schema_and_are_all_documented():
    doc = pf.solve.__doc__
    for keyword, (keys, unit_kw, _) in S.api_keywords().items():
        assert re.search(rf"^\s+{keyword} : ", doc, re.M), keyword
        if unit_kw:
            assert re.search(rf"^\s+{unit_kw} : str", doc, re.M), unit_kw
    import inspect
    params = inspect.signature(pf.solve).parameters
    assert set(S.api_keywords()) | set(S.unit_keywords()) <= set(params)


# ---- the same refusal through the API and through the cells --------------------------------
def _bad_value(check: S.Bound) -> float:
    if check.low is not None and check.high is not None and check.low == check.high:
        return check.low + 1.0
    if check.low is not None:
        return check.low - 1.0 if not check.low_open else check.low
    return check.high + 1.0


def _si_unit(kind):
    return None if kind in (None, "ratio") else U.QUANTITIES[kind].default


SETTING_CASES = [s for s in S.SETTINGS.values()
                 if (s.check is not None or s.choices) and s.api is not None]


def _api_settings(s: S.Setting, bad):
    keyword = S.keyword_of(s.key)
    if s.vector:
        v = [S.SETTINGS[k].default or 0.0 for k in S.SETTING_VECTORS[s.vector[0]]]
        v[s.vector[1]] = bad
        return {keyword: v}
    return {keyword: bad}


VANE = [{"port": "jet", "role": "in", "area": 2e-4, "density": 998.0, "speed": 30.0},
        {"port": "exit", "role": "out", "area": 2e-4, "density": 998.0, "angle": 150.0,
         "closure": "free"}]


def _sheet(rows):
    head = tuple(dict.fromkeys(k for r in rows for k in r))
    units = tuple(_si_unit(S.COLUMNS[k].kind) for k in head)
    return (head, units) + tuple(tuple(r.get(k) for k in head) for r in rows)


@pytest.mark.parametrize("s", SETTING_CASES, ids=[s.key for s in SETTING_CASES])
def test_a_bad_setting_is_refused_the_same_way_through_the_api_and_the_cells(s):
    bad = "wheel" if s.choices else _bad_value(s.check)
    with pytest.raises(InputError) as e:
        pf.solve(VANE, 10.0, **_api_settings(s, bad))
    api = e.value
    assert (api.field or api.argument) == s.key          # the same field ...
    cell = C.PFX_BODYFORCE(_sheet(VANE), (10.0, "m/s"), None, None,
                           ((s.key, bad, _si_unit(s.kind)),))
    assert cell == f"settings row 1, {s.key}: {api.message}"   # ... and the same words


COLUMN_CASES = [c for c in S.COLUMNS.values() if c.check is not None]


@pytest.mark.parametrize("c", COLUMN_CASES, ids=[c.key for c in COLUMN_CASES])
def test_a_bad_column_value_is_refused_the_same_way_through_the_api_and_the_cells(c):
    bad = _bad_value(c.check)
    rows = [dict(VANE[0], **{c.key: bad}), dict(VANE[1])]
    with pytest.raises(InputError) as e:
        pf.solve(rows, 10.0)
    api = e.value
    assert (api.port, api.field) == (0, c.key)
    cell = C.PFX_BODYFORCE(_sheet(rows), (10.0, "m/s"))
    assert cell == f"ports row 3, {c.key}: {api.message}"


@pytest.mark.parametrize("key", [k for k, c in S.COLUMNS.items() if c.needs_unit])
def test_a_dimensional_column_without_its_unit_is_refused_through_both_doors(key):
    # no unit, no value: a blank unit cell beside a value, or a units dict without the column
    rows = [dict(VANE[0], **{key: 1.0}), dict(VANE[1])]
    t = _sheet(rows)
    j = t[0].index(key)
    blank = (t[0], t[1][:j] + (None,) + t[1][j + 1:]) + t[2:]
    cell = C.PFX_BODYFORCE(blank, (10.0, "m/s"))
    assert cell.startswith(f"ports row 2, {key}: the unit cell is blank beside a value "
                           f"(ports row 3); type its unit"), cell
    units = {k: u for k, u in zip(t[0], t[1]) if u and k != key}
    with pytest.raises(InputError) as e:
        pf.solve(rows, 10.0, units=units)
    assert (e.value.argument, e.value.field) == ("units", key)


def test_the_issue_example_every_setting_the_sheet_refuses_the_api_refuses():
    # the sheet refused dynamic_factor = -2 and api.solve accepted it (only the envelope
    # refused it later): now both refuse it at once, with the same words
    msg = C.PFX_BODYFORCE(_sheet(VANE), (10.0, "m/s"), None, None,
                          (("dynamic_factor", -2.0, None),))
    assert msg.startswith("settings row 1, dynamic_factor: must be > 0 (got -2)")
    with pytest.raises(InputError, match=r"dynamic_factor: must be > 0 \(got -2\)"):
        pf.solve(VANE, 10.0, dynamic_factor=-2.0)
    assert math.isfinite(pf.solve(VANE, 10.0, dynamic_factor=2.0).power)
