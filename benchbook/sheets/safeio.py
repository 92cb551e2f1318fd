"""Safe file I/O shared by every workbook reader and writer.

Readers call :func:`check_workbook_file` (or :func:`load_openpyxl`) before any
parser sees the bytes: it tells what the file really is, and refuses zip bombs,
oversize archives, encrypted (OLE) workbooks, legacy ``.xls`` and anything that
is not a workbook, with one sentence that says what to do.

Writers call :func:`atomic_output`: the output is written to a temporary file in
the same folder and renamed into place, so a killed process never leaves a
partial file, and an existing output is refused without ``force``.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
import zipfile
from dataclasses import dataclass
from pathlib import Path
from typing import Iterator

from benchbook.errors import FileFormatError


@dataclass(frozen=True)
class ArchiveLimits:
    """Limits checked on an .xlsx/.xlsm/.ods archive before parsing.

    Parameters
    ----------
    max_uncompressed_bytes : int
        Total uncompressed size of all members. [bytes]
    max_members : int
        Number of members in the archive.
    max_ratio : float
        Largest compression ratio (uncompressed / compressed) of any member
        larger than 1 MiB uncompressed.
    """

    max_uncompressed_bytes: int = 2 * 1024**3
    max_members: int = 10_000
    max_ratio: float = 200.0


DEFAULT_LIMITS = ArchiveLimits()

_OLE_MAGIC = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"


def sniff(path: str | os.PathLike) -> str:
    """What a file is, by its bytes: ``"zip"``, ``"ole"``, ``"empty"``, ``"text"`` or ``"unknown"``."""
    p = Path(path)
    with open(p, "rb") as fh:
        head = fh.read(8)
    if not head:
        return "empty"
    if head.startswith(b"PK\x03\x04") or head.startswith(b"PK\x05\x06"):
        return "zip"
    if head.startswith(_OLE_MAGIC):
        return "ole"
    try:
        with open(p, "rb") as fh:
            fh.read(4096).decode("utf-8")
        return "text"
    except UnicodeDecodeError:
        return "unknown"


def check_workbook_file(path: str | os.PathLike, limits: ArchiveLimits = DEFAULT_LIMITS) -> str:
    """Check that ``path`` is a readable, safe workbook archive, and return its kind.

    Returns
    -------
    str
        ``"xlsx"``, ``"xlsm"`` or ``"ods"``.

    Raises
    ------
    FileFormatError
        With one sentence that says what the file is and what to do.
    """
    p = Path(path)
    name = p.name
    if not p.exists():
        raise FileFormatError(f"{name}: no such file")
    if p.is_dir():
        raise FileFormatError(f"{name}: is a folder, not a workbook; give the path of a .xlsx file")
    kind = sniff(p)
    if kind == "empty":
        raise FileFormatError(f"{name}: the file is empty (0 bytes); save the workbook again as .xlsx")
    if kind == "ole":
        if p.suffix.lower() == ".xls":
            raise FileFormatError(f"{name}: is a legacy .xls workbook; open it and save it as .xlsx")
        raise FileFormatError(
            f"{name}: is an encrypted or password-protected workbook (or a legacy .xls); "
            "remove the password and save it as .xlsx")
    if kind == "text":
        raise FileFormatError(f"{name}: is a text file (CSV?), not a workbook; open it and save it as .xlsx")
    if kind != "zip":
        raise FileFormatError(f"{name}: is not a workbook; save it as .xlsx")
    try:
        with zipfile.ZipFile(p) as zf:
            infos = zf.infolist()
            members = {i.filename for i in infos}
    except (zipfile.BadZipFile, OSError, ValueError) as exc:
        raise FileFormatError(f"{name}: is a damaged or truncated zip archive ({exc}); save the workbook again as .xlsx")
    if len(infos) > limits.max_members:
        raise FileFormatError(
            f"{name}: archive has {len(infos)} members, over the limit of {limits.max_members} (max_members)")
    total = sum(i.file_size for i in infos)
    if total > limits.max_uncompressed_bytes:
        raise FileFormatError(
            f"{name}: archive unpacks to {total} bytes, over the limit of {limits.max_uncompressed_bytes} "
            "(max_uncompressed_bytes)")
    for i in infos:
        if i.file_size > 1024**2 and i.compress_size > 0 and i.file_size / i.compress_size > limits.max_ratio:
            raise FileFormatError(
                f"{name}: member {i.filename} has compression ratio {i.file_size / i.compress_size:.0f}, "
                f"over the limit of {limits.max_ratio:g} (max_ratio); it looks like a zip bomb")
    if "mimetype" in members and "content.xml" in members:
        return "ods"
    if "[Content_Types].xml" not in members or not any(m.startswith("xl/") for m in members):
        raise FileFormatError(f"{name}: is a zip archive but not an Excel workbook; save it as .xlsx")
    return "xlsm" if "xl/vbaProject.bin" in members else "xlsx"


def load_openpyxl(path: str | os.PathLike, *, data_only: bool = False, read_only: bool = False,
                  limits: ArchiveLimits = DEFAULT_LIMITS):
    """Open a workbook with openpyxl after :func:`check_workbook_file`; never keeps macros.

    The file is opened read-only from disk; benchbook never writes to it.
    """
    import openpyxl  # noqa: PLC0415 - openpyxl lives in sheets/ only

    kind = check_workbook_file(path, limits)
    if kind == "ods":
        raise FileFormatError(f"{Path(path).name}: is an OpenDocument spreadsheet; save it as .xlsx for this command")
    try:
        return openpyxl.load_workbook(path, data_only=data_only, read_only=read_only, keep_vba=False,
                                      keep_links=False)
    except Exception as exc:  # openpyxl raises many kinds on broken parts
        raise FileFormatError(f"{Path(path).name}: could not be read as a workbook ({type(exc).__name__}: {exc}); "
                              "open it in a spreadsheet application and save it again as .xlsx")


@contextlib.contextmanager
def atomic_output(path: str | os.PathLike, force: bool = False) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; rename it into place when the block succeeds.

    An existing ``path`` is refused unless ``force``. On any exception the
    temporary file is removed and ``path`` is left as it was.
    """
    target = Path(path)
    if target.exists() and not force:
        raise FileFormatError(f"{target}: already exists; use --force to overwrite it")
    if target.exists() and target.is_dir():
        raise FileFormatError(f"{target}: is a folder; give a file name for the output")
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.stem}.", suffix=target.suffix + ".part", dir=target.parent)
    os.close(fd)
    tmp_path = Path(tmp)
    try:
        yield tmp_path
        os.replace(tmp_path, target)
    finally:
        if tmp_path.exists():
            tmp_path.unlink()
