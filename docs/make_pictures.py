"""Regenerate the README pictures from the real outputs of `benchbook demo`.

    python docs/make_pictures.py            # needs LibreOffice and pdftoppm

Runs the demo into a temporary folder, prints chosen workbooks to PDF with
LibreOffice headless (formulas recalculated) and turns chosen pages into PNG
files under docs/img/.
"""

from __future__ import annotations

import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

from benchbook.sheets import office
from benchbook.sheets.demo import run_demo

IMG = Path(__file__).resolve().parent / "img"

#: (workbook inside the demo folder, page, picture name)
PAGES = (
    ("jobs/offgrid-larchmoor.xlsx", 1, "intake-job"),
    ("quotes/offgrid-larchmoor-quote.xlsx", 1, "quote-page1"),
    ("quotes/offgrid-larchmoor-quote.xlsx", 2, "quote-page2"),
    ("compare/standby-brindle-hill-options.xlsx", 1, "compare-summary"),  # three options meet its requirement
    ("field/DC-A-capacity-test.xlsx", 1, "fieldsheet-capacity-test"),
    ("field/DC-A-readings.xlsx", 1, "fieldsheet-readings"),
    ("field/checked/DC-A-readings-2026-03.checked.xlsx", None, "checked-findings"),
    ("field/checked/fleet-summary.xlsx", 1, "fleet-summary"),
)


def main() -> int:
    if not office.office_available() or shutil.which("pdftoppm") is None:
        print("needs LibreOffice (soffice) and pdftoppm", file=sys.stderr)
        return 1
    IMG.mkdir(parents=True, exist_ok=True)
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "demo"
        run_demo(out, pdf=False)
        for rel, page, name in PAGES:
            pdf = office.to_pdf(out / rel, Path(tmp) / f"{name}.pdf", force=True)
            if page is None:  # the first page of the Findings sheet (it comes last in a checked copy)
                info = subprocess.run(["pdfinfo", str(pdf)], capture_output=True, text=True).stdout
                pages = int(next(l.split()[-1] for l in info.splitlines() if l.startswith("Pages:")))
                page = next((p for p in range(1, pages + 1) if "Check of " in subprocess.run(
                    ["pdftotext", "-f", str(p), "-l", str(p), str(pdf), "-"], capture_output=True, text=True).stdout),
                    pages)
            subprocess.run(["pdftoppm", "-png", "-r", "70", "-f", str(page), "-l", str(page), "-singlefile",
                            str(pdf), str(IMG / name)], check=True)
            print(f"wrote {IMG / name}.png")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
