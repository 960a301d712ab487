"""Command line: ``portflux demo | recalc | check | template | report | bench``."""

from __future__ import annotations

import argparse
import os
import sys
import tempfile

from .cautions import CAUTION


def _block(path, sheet, at) -> list[tuple]:
    """Cached values of a (column, row, rows, columns) block of a recalculated workbook."""
    import openpyxl

    c, r, nr, nc = at
    wb = openpyxl.load_workbook(path, data_only=True, read_only=True)
    try:
        rows = [row[c - 1:c - 1 + nc] for row in wb[sheet].iter_rows(
            min_row=r, max_row=r + nr - 1, max_col=c + nc - 1, values_only=True)]
    finally:
        wb.close()
    return [row for row in rows if row[0] not in (None, "#N/A")]


def cmd_demo(args) -> int:
    from .demo.scenarios import carriage_vane
    from .workbook.check import recalc
    from .workbook.fill import fill

    sc = carriage_vane()
    out = args.output or os.path.join(tempfile.mkdtemp(prefix="portflux-demo-"),
                                      "portflux-demo.xlsx")
    with tempfile.TemporaryDirectory(prefix="portflux-fill-") as tmp:
        filled = fill(None, os.path.join(tmp, "demo-input.xlsx"), sc)   # fresh, charts kept
        recalc(filled, out, progress=True)
    print(sc.title)
    print("=" * len(sc.title))
    print(sc.note)
    print()
    from .workbook import template as T

    w = _block(out, T.CV, T.RELVEL_AT)
    m = _block(out, T.CV, T.MASSFLOW_AT)
    print("Ports (relative velocity w = V - V_cv; mass flow + out of the CV)")
    table = [[f"{c:.6g}" if isinstance(c, float) else str(c) for c in (*wr, mr[1])]
             for wr, mr in zip(w, m)]
    widths = [max(len(r[j]) for r in table) for j in range(len(table[0]))] if table else []
    for r in table:
        print("  " + "  ".join(c.rjust(widths[j]) for j, c in enumerate(r)))
    print()
    for q, v in _block(out, T.CV, T.SUMMARY_AT):
        print(f"  {q:46s} {v:.6g}" if isinstance(v, float) else f"  {q:46s} {v}")
    best = _block(out, T.SWEEP, T.BEST_AT)
    if best:
        print()
        print("Speed sweep (sheet 'Speed sweep'):")
        for q, v in best:
            print(f"  {q:46s} {v:.6g}" if isinstance(v, float) else f"  {q:46s} {v}")
    print()
    print(f"result workbook: {out}")
    print()
    print("CAUTION: " + CAUTION)
    return 0


def cmd_recalc(args) -> int:
    from .workbook.check import recalc

    summary = recalc(args.input, args.output, progress=not args.quiet,
                     values_only=args.values_only)
    if summary.error_cells and not args.quiet:
        (sheet, where), v = next(iter(summary.error_cells.items()))
        print(f"note: {len(summary.error_cells)} cell(s) show spreadsheet errors (first: "
              f"{sheet}!{where} = {v}); array ranges larger than their result show #N/A",
              file=sys.stderr)
    return 0


def cmd_check(args) -> int:
    from .workbook.check import check, format_cases

    results = check(args.input, progress=True)
    print(format_cases(results))
    return 0 if all(c.passed for c in results) else 1


def cmd_template(args) -> int:
    from .workbook.template import TEMPLATE_NAME, build_template

    path = build_template(args.path or TEMPLATE_NAME)
    print(f"template written: {path}")
    return 0


def cmd_report(args) -> int:
    from .workbook.report import write_report

    path = write_report(args.input, args.output, paper=args.paper, progress=not args.quiet)
    print(f"report written: {path}")
    return 0


def cmd_bench(args) -> int:
    from . import bench

    return bench.main(["--quick"] if args.quick else [])


def build_parser() -> argparse.ArgumentParser:
    from . import __version__

    p = argparse.ArgumentParser(prog="portflux", description="Steady momentum balances of "
                                "control volumes moving at constant velocity.")
    p.add_argument("--version", action="version", version=f"portflux {__version__}")
    sub = p.add_subparsers(dest="command", required=True)
    d = sub.add_parser("demo", help="fill the template with a demo scenario, recalculate it, "
                                    "print the summary and write the result workbook")
    d.add_argument("-o", "--output", help="result workbook (default: a new temporary folder)")
    d.set_defaults(func=cmd_demo)
    r = sub.add_parser("recalc", help="recalculate a workbook without Excel into a new file")
    r.add_argument("input", help="workbook to read (never modified)")
    r.add_argument("-o", "--output", required=True, help="workbook to write (not the input)")
    r.add_argument("-q", "--quiet", action="store_true", help="no progress messages")
    r.add_argument("--values-only", action="store_true",
                   help="write values without formulas (for LibreOffice and for sharing "
                        "results; charts are kept)")
    r.set_defaults(func=cmd_recalc)
    c = sub.add_parser("check", help="recalculate a workbook's reference cases and report "
                                     "PASS/FAIL (exit 1 if any fails)")
    c.add_argument("input", nargs="?", help="workbook (default: the shipped template)")
    c.set_defaults(func=cmd_check)
    t = sub.add_parser("template", help="write the template workbook")
    t.add_argument("path", nargs="?", help="file or folder (default: ./portflux_template.xlsx)")
    t.set_defaults(func=cmd_template)
    rp = sub.add_parser("report", help="write the workbook's one-page 'Report' sheet as a PDF "
                                       "(through LibreOffice)")
    rp.add_argument("input", help="workbook made from the template (never modified)")
    rp.add_argument("-o", "--output", required=True, help="PDF to write")
    rp.add_argument("--paper", choices=("a4", "letter"), default="a4", help="paper size")
    rp.add_argument("-q", "--quiet", action="store_true", help="no progress messages")
    rp.set_defaults(func=cmd_report)
    b = sub.add_parser("bench", help="measure speed against a bare numpy baseline")
    b.add_argument("--quick", action="store_true", help="tiny sizes (seconds), as CI runs it")
    b.set_defaults(func=cmd_bench)
    return p


def main(argv=None) -> int:
    from .core import PortfluxError

    args = build_parser().parse_args(argv)
    try:
        return args.func(args)
    except PortfluxError as e:
        print(f"portflux: {e}", file=sys.stderr)
        return 2
    except OSError as e:
        print(f"portflux: {e.filename or ''}: {e.strerror or e}", file=sys.stderr)
        return 2


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
