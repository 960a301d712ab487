"""Re-render the committed pictures of the template's sheets and the Report (docs/_static/pictures).

    python docs/pictures.py

The demo scenario fills the template and the headless engine recalculates it
(``portflux demo``), ``portflux recalc --values-only`` freezes the values (LibreOffice would
otherwise recalculate the array formulas it does not know), LibreOffice prints every sheet to
PDF and poppler's ``pdftoppm`` turns each page into a PNG. ``SOURCE.sha256`` records the SHA-256
of ``workbook_templates/portflux_template.xlsx``; ``tests/test_docs.py`` fails when the template
changes and the pictures were not rendered again. Why committed and not rendered at build
time: docs/design/documentation.md. Needs LibreOffice (``soffice``) and poppler-utils.
"""

from __future__ import annotations

import hashlib
import os
import shutil
import subprocess
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
OUT = os.path.join(HERE, "_static", "pictures")
TEMPLATE = os.path.join(ROOT, "workbook_templates", "portflux_template.xlsx")
#: The sheets pictured (the first printed page of each) and the picture of each.
PAGES = (("Report", "report.png"), ("About", "about.png"), ("Control volume", "control-volume.png"),
         ("Speed sweep", "speed-sweep.png"), ("Carriage", "carriage.png"),
         ("Check cases", "check-cases.png"))
DPI = {"report.png": 90, "control-volume.png": 110, "check-cases.png": 80}


def template_sha256(path=TEMPLATE) -> str:
    with open(path, "rb") as f:
        return hashlib.sha256(f.read()).hexdigest()


def _portflux(*args):
    code = ("import sys; sys.path.insert(0, sys.argv[1]); from portflux.cli import main; "
            "sys.exit(main(sys.argv[2:]))")
    subprocess.run([sys.executable, "-c", code, os.path.join(ROOT, "udf"), *args], check=True,
                   stdout=subprocess.DEVNULL)


def render(out=OUT) -> list:
    for tool in ("soffice", "pdftoppm", "pdftotext"):
        if not shutil.which(tool):
            raise SystemExit(f"pictures: {tool} not found (LibreOffice, poppler-utils)")
    os.makedirs(out, exist_ok=True)
    written = []
    with tempfile.TemporaryDirectory() as tmp:
        demo, values = os.path.join(tmp, "demo.xlsx"), os.path.join(tmp, "values.xlsx")
        _portflux("demo", "-o", demo)
        _portflux("recalc", demo, "-o", values, "--values-only")
        profile = "file://" + os.path.join(tmp, "profile")
        subprocess.run(["soffice", f"-env:UserInstallation={profile}", "--headless",
                        "--convert-to", "pdf", "--outdir", tmp, values], check=True,
                       stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, timeout=300)
        pdf = os.path.join(tmp, "values.pdf")
        text = subprocess.run(["pdftotext", pdf, "-"], check=True, capture_output=True,
                              text=True).stdout
        headers = [[line.strip() for line in p.splitlines()[:4]] for p in text.split("\f")]
        for sheet, name in PAGES:
            # the first page whose header names the sheet (a sheet may print on several pages)
            page = next((i for i, h in enumerate(headers, start=1) if sheet in h), None)
            if page is None:
                raise SystemExit(f"pictures: no printed page of the sheet {sheet!r}")
            stem = os.path.join(tmp, f"page{page}")
            subprocess.run(["pdftoppm", "-r", str(DPI.get(name, 70)), "-f", str(page), "-l",
                            str(page), "-png", "-singlefile", pdf, stem], check=True)
            shutil.move(stem + ".png", os.path.join(out, name))
            written.append(name)
    with open(os.path.join(out, "SOURCE.sha256"), "w", encoding="utf-8") as f:
        f.write(f"{template_sha256()}  workbook_templates/portflux_template.xlsx\n")
    return written


if __name__ == "__main__":
    print("pictures:", ", ".join(render()))
