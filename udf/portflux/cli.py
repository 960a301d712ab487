"""Command line: ``portflux demo | recalc | check | template | report | bench | libreoffice``.

Exit codes: 0 ok, 1 reference cases FAILed or cells hold messages/errors, 2 usage or a file
that cannot be read, is refused or cannot be written, 3 an internal fault (a bug).
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile

from .cautions import CAUTION


def _template_source(tmp: str) -> str:
    from .workbook.template import build_template, shipped_template

    return shipped_template() or build_template(os.path.join(tmp, "portflux_template.xlsx"))


def _block(values, sheet, at) -> list[tuple]:
    """Computed values of a (column, row, rows, columns) block, from an engine's summary
    (``RecalcSummary.values``): the output is never read back (it holds the input's parts,
    which may be large)."""
    from .workbook.package import coord_name

    c, r, nr, nc = at
    rows = [tuple(values.get((sheet, coord_name(rr, cc))) for cc in range(c, c + nc))
            for rr in range(r, r + nr)]
    return [row for row in rows if row[0] not in (None, "", "#N/A")]


def cmd_demo(args) -> int:
    from .demo.scenarios import carriage_vane
    from .workbook.fill import fill

    sc = carriage_vane()
    out = args.output or os.path.join(tempfile.mkdtemp(prefix="portflux-demo-"),
                                      "portflux-demo.xlsx")
    with tempfile.TemporaryDirectory(prefix="portflux-fill-") as tmp:
        filled = fill(None, os.path.join(tmp, "demo-input.xlsx"), sc)   # fresh, charts kept
        summary = _recalc_into(filled, out, quiet=False, label="the demo scenario")
    print(sc.title)
    print("=" * len(sc.title))
    print(sc.note)
    print()
    from .workbook import template as T

    w = _block(summary.values, T.CV, T.RELVEL_AT)
    m = _block(summary.values, T.CV, T.MASSFLOW_AT)
    print("Ports (relative velocity w = V - V_cv; mass flow + out of the CV)")
    table = [[f"{c:.6g}" if isinstance(c, float) else str(c) for c in (*wr, mr[1])]
             for wr, mr in zip(w, m)]
    widths = [max(len(r[j]) for r in table) for j in range(len(table[0]))] if table else []
    for r in table:
        print("  " + "  ".join(c.rjust(widths[j]) for j, c in enumerate(r)))
    print()
    print("\n".join(_summary_lines(summary.values)))
    print()
    print(f"result workbook: {out}")
    print()
    print("CAUTION: " + CAUTION)
    return 0


def _summary_lines(values) -> list[str]:
    """The template's summary block (and best speed) of a recalculation's values
    (``RecalcSummary.values``); [] when the workbook is not a template."""
    from .workbook import template as T

    names = {sheet for sheet, _ in values}
    if T.CV not in names:
        return []
    rows = _block(values, T.CV, T.SUMMARY_AT)
    if not rows or str(rows[0][0]).strip().lower() != "quantity [unit]":
        return []

    def line(q, v):
        return f"  {q:46s} {v:.6g}" if isinstance(v, float) else f"  {q:46s} {v}"

    lines = [line(q, v) for q, v in rows]
    best = _block(values, T.SWEEP, T.BEST_AT) if T.SWEEP in names else []
    if best:
        lines += ["", f"Speed sweep (sheet {T.SWEEP!r}):"] + [line(q, v) for q, v in best]
    return lines


def _say(args, text) -> None:
    if not getattr(args, "quiet", False):
        print(text, file=sys.stderr, flush=True)


def _report_cells(found) -> None:
    from .workbook.audit import describe

    for line in describe(found):
        print(line, file=sys.stderr)


def _recalc_into(src, out, *, quiet, values_only=False, label=None, engine="embedded"):
    """Recalculate ``src`` into ``out`` atomically, naming the user's files (never a temporary
    one) in the progress lines; returns the engine's summary. ``engine`` is "embedded" (the
    built-in interpreter) or "libreoffice" (headless LibreOffice with the portflux add-in)."""
    import time

    from .core import PortfluxError
    from .workbook.check import WorkbookError
    if engine == "libreoffice":
        from .addins.libreoffice.recalc import recalc_libreoffice as recalc
    else:
        from .workbook.check import recalc
    from .workbook.output import atomic_path

    t0 = time.perf_counter()
    if not quiet:
        print(f"recalculating {label or src} ...", file=sys.stderr, flush=True)
    with atomic_path(out) as part:
        try:
            summary = recalc(src, part, values_only=values_only)
        except PortfluxError as e:      # the engine names the file it wrote: the user's, here
            if part not in str(e):
                raise
            raise WorkbookError(str(e).replace(part, os.fspath(out))) from None
    if not quiet:
        print(f"  {summary.formula_cells} formulas, {summary.array_ranges} array ranges, "
              f"{summary.cells_written} cells written in {time.perf_counter() - t0:.2f} s "
              f"-> {out}", file=sys.stderr, flush=True)
        if engine == "libreoffice":
            from .addins.libreoffice.recalc import notes_of

            for line in notes_of(summary):
                print(f"  note: {line}", file=sys.stderr, flush=True)
    return summary


def cmd_recalc(args) -> int:
    from .workbook.audit import audit
    from .workbook.check import WorkbookError
    from .workbook.output import same_file

    if same_file(args.input, args.output):
        raise WorkbookError(f"{args.output}: refusing to write over the input workbook; "
                            f"choose another output path")
    summary = _recalc_into(args.input, args.output, quiet=args.quiet,
                           values_only=args.values_only, engine=args.engine)
    found = audit(args.input, summary.values, summary.formulas, summary.arrays,
                  summary.error_cells)
    if not found.clean:
        _report_cells(found)
        print(f"portflux: {args.output} written, but its cells report the problems above",
              file=sys.stderr)
        return 1
    if not args.quiet:
        lines = _summary_lines(summary.values)
        if lines:
            print("\n".join(lines))
    return 0


def cmd_check(args) -> int:
    from .workbook.audit import audit
    from .workbook.check import WorkbookError, format_cases, read_cases, recalc
    from .workbook.template import shipped_template

    with tempfile.TemporaryDirectory(prefix="portflux-check-") as tmp:
        src = args.input or shipped_template()
        name = src or "the built-in template"      # what the user is told, never a temp path
        src = src or _template_source(tmp)
        out = os.path.join(tmp, "checked" + os.path.splitext(os.fspath(src))[1])
        print(f"checking {name} ...", file=sys.stderr, flush=True)
        try:
            summary = recalc(src, out)
            results = _read_cases_contained(read_cases, out)
        except WorkbookError as e:
            raise WorkbookError(str(e).replace(out, os.fspath(name))
                                .replace(os.fspath(src), os.fspath(name))) from None
        found = audit(src, summary.values, summary.formulas, summary.arrays)   # may read src: inside the temporary folder's life
    print(format_cases(results))
    _report_cells(found)
    return 0 if all(c.passed for c in results) and found.clean else 1


def _read_cases_contained(read_cases, path):
    """``read_cases(path)`` in a contained child (openpyxl reads the output's styles, which are
    the input's and may be huge): memory, CPU and wall-clock bounded like the evaluation."""
    import dataclasses

    from .workbook.check import CaseResult, WorkbookError
    from .workbook.contain import run_contained
    from .workbook.xlvalues import RecalcError

    try:
        rows = run_contained(lambda: [dataclasses.asdict(c) for c in read_cases(path)],
                             os.fspath(path))
    except RecalcError as e:
        raise WorkbookError(str(e)) from None
    return [CaseResult(**row) for row in rows]


def cmd_template(args) -> int:
    from .workbook.output import atomic_path
    from .workbook.template import TEMPLATE_NAME, build_template

    path = args.path or TEMPLATE_NAME
    if os.path.isdir(path):
        path = os.path.join(path, TEMPLATE_NAME)
    with atomic_path(path, overwrite=args.force) as part:
        build_template(part)
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
    r.add_argument("--engine", choices=("embedded", "libreoffice"), default="embedded",
                   help="embedded (default, no other program needed) or libreoffice (headless "
                        "LibreOffice >= 25.2 with the portflux add-in)")
    r.set_defaults(func=cmd_recalc)
    c = sub.add_parser("check", help="recalculate a workbook's reference cases and report "
                                     "PASS/FAIL (exit 1 if any fails)")
    c.add_argument("input", nargs="?", help="workbook (default: the shipped template)")
    c.set_defaults(func=cmd_check)
    t = sub.add_parser("template", help="write the template workbook")
    t.add_argument("path", nargs="?", help="file or folder (default: ./portflux_template.xlsx)")
    t.add_argument("-f", "--force", action="store_true", help="replace an existing file")
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
    from .addins.libreoffice.install import add_parser as add_libreoffice_parser

    add_libreoffice_parser(sub)
    return p


#: Exit codes (docs/reference/cli.md, "Exit codes of the command line").
EXIT_OK, EXIT_FINDINGS, EXIT_REFUSED, EXIT_BUG = 0, 1, 2, 3
#: Where an internal fault should be reported.
BUG_REPORT = ("the portflux issue tracker (documentation, reference: 'Exit codes of the command "
              "line')")


class _QuietInternals:
    """No log records or Python warnings of the libraries on the user's terminal."""

    def __enter__(self):
        import logging
        import warnings

        self._warn = warnings.catch_warnings()
        self._warn.__enter__()
        warnings.simplefilter("ignore")
        self._null = logging.NullHandler()
        self._root = logging.getLogger()
        self._root.addHandler(self._null)
        return self

    def __exit__(self, *exc):
        self._root.removeHandler(self._null)
        self._warn.__exit__(*exc)
        return False


def main(argv=None) -> int:
    """Run the command line; returns the exit code (docs/reference/cli.md)."""
    from .core import PortfluxError
    from .workbook.output import (WRITE_REFUSED, OutputError, Terminated, explain,
                                  signals_raise)

    args = build_parser().parse_args(argv)          # usage errors: argparse exits with 2
    try:
        with signals_raise(), _QuietInternals():
            return args.func(args)
    except KeyboardInterrupt:
        print("portflux: interrupted; no partial output was left", file=sys.stderr)
        return 130
    except Terminated as e:
        print("portflux: terminated; no partial output was left", file=sys.stderr)
        return 128 + int(e.signum)
    except (OutputError, PortfluxError) as e:
        print(f"portflux: {e}", file=sys.stderr)
        return EXIT_REFUSED
    except OSError as e:
        if e.errno in WRITE_REFUSED:
            print(f"portflux: {explain(e, e.filename or 'the output')}", file=sys.stderr)
        elif e.filename:
            print(f"portflux: {e.filename}: {e.strerror or e}", file=sys.stderr)
        else:
            print(f"portflux: {e.strerror or e}", file=sys.stderr)
        return EXIT_REFUSED
    except Exception as e:  # noqa: BLE001 - the last line of defence: one line, no traceback
        from . import __version__

        text = " ".join(str(e).split())[:200]
        print(f"portflux: internal error ({type(e).__name__}: {text}). This is a bug in "
              f"portflux {__version__}, not in your input; please report it with the command "
              f"you ran to {BUG_REPORT}.", file=sys.stderr)
        return EXIT_BUG


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
