"""LibreOffice headless, used as a real spreadsheet client: recalculate, convert to xlsx or PDF.

Every call runs ``soffice`` with a fresh profile of its own
(``-env:UserInstallation``), so it never touches a user's LibreOffice settings
and never collides with another running instance. The profile sets
``OOXMLRecalcMode=0`` ("always recalculate") in its ``registrymodifications.xcu``:
openpyxl saves formulas without cached values, and without this LibreOffice
would show them as empty or stale.

The source file is never modified: LibreOffice writes into a private temporary
folder and the result is moved into place with
:func:`benchbook.sheets.safeio.atomic_output`.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import tempfile
from pathlib import Path
from typing import Optional

from benchbook.errors import BenchbookError
from benchbook.sheets.safeio import atomic_output

#: Filters LibreOffice uses for each output format.
FILTERS = {"xlsx": "xlsx:Calc MS Excel 2007 XML", "pdf": "pdf:calc_pdf_Export", "ods": "ods"}

_XCU = """<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry" xmlns:xs="http://www.w3.org/2001/XMLSchema" \
xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="OOXMLRecalcMode" oor:op="fuse">\
<value>0</value></prop></item>
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="ODFRecalcMode" oor:op="fuse">\
<value>0</value></prop></item>
</oor:items>
"""

INSTALL_HINT = ("install LibreOffice (Debian/Ubuntu: apt-get install -y --no-install-recommends "
                "libreoffice-calc-nogui) and make sure `soffice` is on PATH")


class OfficeError(BenchbookError):
    """LibreOffice is missing or could not convert a workbook."""


def soffice_path() -> Optional[str]:
    """Path of the LibreOffice executable, or ``None`` when it is not installed.

    The environment variable ``BENCHBOOK_SOFFICE`` overrides the search.
    """
    env = os.environ.get("BENCHBOOK_SOFFICE")
    if env:
        return env if Path(env).exists() else None
    return shutil.which("soffice") or shutil.which("libreoffice")


def office_available() -> bool:
    """True when LibreOffice headless can be run."""
    return soffice_path() is not None


def write_profile(folder: Path) -> Path:
    """Write a minimal LibreOffice user profile that recalculates on load; return its URL-able path."""
    user = folder / "user"
    user.mkdir(parents=True, exist_ok=True)
    (user / "registrymodifications.xcu").write_text(_XCU, encoding="utf-8")
    return folder


def convert(src: str | os.PathLike, target: str | os.PathLike, fmt: str | None = None, *,
            force: bool = False, timeout_s: float = 180.0) -> Path:
    """Open ``src`` in LibreOffice headless (formulas recalculated) and save it as ``target``.

    Parameters
    ----------
    src : path
        Workbook to open. It is never modified.
    target : path
        File to write; its suffix gives the format when ``fmt`` is None.
    fmt : str, optional
        ``"xlsx"``, ``"pdf"`` or ``"ods"``.
    force : bool
        Overwrite an existing ``target``.
    timeout_s : float
        Give up after this long. [s]

    Returns
    -------
    Path
        ``target``.

    Raises
    ------
    OfficeError
        LibreOffice is not installed, timed out, or produced no file.
    """
    exe = soffice_path()
    if exe is None:
        raise OfficeError(f"LibreOffice is not installed, so {Path(target).name} was not written; {INSTALL_HINT}")
    src_p = Path(src).resolve()
    tgt = Path(target)
    fmt = (fmt or tgt.suffix.lstrip(".")).lower()
    if fmt not in FILTERS:
        raise OfficeError(f"{tgt.name}: cannot convert to {fmt!r}; expected one of {', '.join(FILTERS)}")
    if not src_p.is_file():
        raise OfficeError(f"{src_p.name}: no such file")
    with tempfile.TemporaryDirectory(prefix="benchbook-office-") as tmp:
        tmp_p = Path(tmp)
        prof = write_profile(tmp_p / "profile")
        outdir = tmp_p / "out"
        outdir.mkdir()
        # copy so that LibreOffice's lock file and any accident happen away from the user's file
        work = tmp_p / ("in" + src_p.suffix.lower())
        shutil.copyfile(src_p, work)
        cmd = [exe, f"-env:UserInstallation={prof.as_uri()}", "--headless", "--norestore", "--nologo",
               "--convert-to", FILTERS[fmt], "--outdir", str(outdir), str(work)]
        try:
            proc = subprocess.run(cmd, stdin=subprocess.DEVNULL, capture_output=True, text=True, timeout=timeout_s,
                                  env={**os.environ, "HOME": str(tmp_p)})
        except subprocess.TimeoutExpired:
            raise OfficeError(f"LibreOffice did not finish converting {src_p.name} within {timeout_s:g} s")
        produced = outdir / ("in." + fmt)
        if not produced.is_file():
            detail = (proc.stderr or proc.stdout or "").strip().splitlines()
            raise OfficeError(f"LibreOffice produced no {fmt} for {src_p.name} (exit {proc.returncode}"
                              + (f": {detail[-1]}" if detail else "") + ")")
        with atomic_output(tgt, force=force, inputs=(src_p,)) as out:
            shutil.copyfile(produced, out)
    return tgt


def recalculated_copy(src: str | os.PathLike, target: str | os.PathLike, *, force: bool = False) -> Path:
    """Save ``src`` as ``target`` (.xlsx) after LibreOffice recalculated every formula.

    Reading ``target`` with ``openpyxl.load_workbook(data_only=True)`` then gives
    the values a real spreadsheet application computed.
    """
    return convert(src, target, "xlsx", force=force)


def to_pdf(src: str | os.PathLike, target: str | os.PathLike | None = None, *, force: bool = False) -> Path:
    """Print ``src`` to PDF with LibreOffice headless, using the workbook's own page set-up.

    ``target`` defaults to ``src`` with the suffix ``.pdf``.
    """
    tgt = Path(target) if target is not None else Path(src).with_suffix(".pdf")
    return convert(src, tgt, "pdf", force=force)
