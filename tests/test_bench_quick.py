"""The benchmark runs end to end in quick mode and reports every figure with its target.

Structure only: no timing is compared with a target here (shared, noisy machines; speed is
judged from a full ``portflux bench`` run).
"""

from __future__ import annotations

import math

import pytest

from portflux import bench

EXPECTED = {
    "1 balance": ["ratio cold / bare", "ratio warm / bare", "PFX_BODYFORCE cold",
                  "PFX_BODYFORCE warm", "bare numpy, 10 ports", "unit factors cleared too"],
    "2 speed table": ["ratio core / bare, compute only", "ratio core / bare, end to end",
                      "ratio PFX_SPEEDTABLE / bare, end to end", "core peak / core output",
                      "peak traced memory, bare", "peak traced memory, core",
                      "garbage collector running"],
    "3 import": ["portflux.cells - numpy alone", "pint registry built at import",
                 "import numpy", "import portflux.cells"],
    "4 recalc": ["cold", "warm (CV speed changed)", "native formulas: warm",
                 "PFX_ formulas: warm"],
    "7 Monte Carlo uncertainty": ["bare numpy", "load_uncertainty", "ratio portflux / bare"],
}


@pytest.fixture(scope="module")
def rows():
    return bench.run(quick=True)


def test_quick_run_reports_every_benchmark_figure_finite(rows):
    for group, names in EXPECTED.items():
        mine = [r for r in rows if r["benchmark"].startswith(group)]
        assert mine, f"benchmark {group} reported nothing"
        for name in names:
            hits = [r for r in mine if name in r["figure"]]
            assert hits, f"{group}: no figure {name!r}"
            for r in hits:
                assert math.isfinite(r["value"]) and r["value"] >= 0.0, r


def test_every_figure_with_a_target_carries_its_limit_and_verdict(rows):
    targeted = [r for r in rows if r["target"]]
    assert len(targeted) >= 9
    for r in targeted:
        assert r["limit"] is not None and math.isfinite(r["limit"])
        assert (r["met"] is None) == (not r["applies"])


def test_cold_figure_says_unit_factors_stay_cached_and_baseline_pauses_gc(rows):
    # What "cold" and the end-to-end baseline mean is part of the report, not folklore.
    cold = next(r for r in rows if r["figure"].startswith("PFX_BODYFORCE cold"))
    assert "unit factors stay cached" in cold["note"]
    base = next(r for r in rows if r["figure"].startswith("bare numpy + asarray"))
    assert "gc paused" in base["note"]


def test_pint_registry_is_not_built_by_importing_the_cells(rows):
    # Checked in a fresh interpreter by the benchmark itself (portflux.units.registry_built).
    r = next(r for r in rows if r["figure"].startswith("pint registry built"))
    assert r["value"] == 0.0 and r["met"] is True


def test_report_prints_machine_header_and_each_figure_beside_its_target(rows):
    text = bench.format_report(rows)
    head = text.splitlines()[:3]
    assert any("CPUs" in h and "numpy" in h and "BLAS" in h for h in head)
    for r in rows:
        line = next(x for x in text.splitlines() if r["figure"] in x)
        if r["target"]:
            assert r["target"] in line


def test_main_quick_exits_zero_and_prints_the_table(capsys):
    assert bench.main(["--quick"]) == 0
    out = capsys.readouterr().out
    assert "2 speed table" in out and "4 recalc" in out


def test_addin_benchmark_reports_its_ratio_and_where_the_time_goes_or_why_not(rows):
    mine = [r for r in rows if r["benchmark"].startswith("6 LibreOffice add-in")]
    ratio = next(r for r in mine if r["figure"] == "ratio add-in / native, edit latency")
    assert ratio["target"] == "<= 2" or ratio["note"].startswith("n/a: ")
    if not math.isfinite(ratio["value"]):
        assert ratio["note"].startswith("n/a: ")        # no LibreOffice here: says why
        return
    addin = next(r for r in mine if r["figure"].startswith("edit latency") and "add-in" in
                 r["figure"])
    assert addin["note"] == "same total"                 # both tables hold the same numbers
    for part in ("native array formula", "adapter.call", "from_calc", "PFX_SPEEDTABLE",
                 "to_calc", "by difference"):
        hit = next(r for r in mine if part in r["figure"])
        assert math.isfinite(hit["value"]) and hit["value"] >= 0.0, hit
