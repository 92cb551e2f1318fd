"""Safe file I/O shared by every workbook reader and writer.

Readers call :func:`check_workbook_file` (or :func:`load_openpyxl` /
:func:`read_values`, which call it) before any parser sees the bytes. It tells
what the file really is and refuses, with one sentence that says what to do:

- anything that is not an .xlsx/.xlsm/.ods workbook: an empty file, a folder,
  a CSV or HTML file renamed, a PDF, a legacy ``.xls``, a binary ``.xlsb``, a
  Word or PowerPoint file, a Strict Open XML workbook;
- an encrypted / password-protected workbook (an OLE container with an
  ``EncryptionInfo`` stream);
- a damaged archive: truncated, bad CRC, broken deflate data, encrypted zip
  members, duplicate or overlapping members, odd compression methods;
- zip bombs: every member is unpacked as a stream (never to memory or disk) and
  counted against :class:`ArchiveLimits`; a member that unpacks to more than it
  declares is refused;
- XML attacks: any document type declaration (``<!DOCTYPE`` / ``<!ENTITY``, the
  carriers of "billion laughs" and external-entity attacks) in an XML part.
  Workbook parts never need one. openpyxl must also run with defusedxml.

Writers call :func:`atomic_output`: the output is written to a hidden temporary
file ``.NAME.XXXXXXXX.part`` in the same folder and renamed into place, so a
killed process never leaves a partial file at the output path. Such leftovers
are removed by the next :func:`atomic_output` in that folder once they are
older than :data:`STALE_PART_SECONDS`.

Inspection of a workbook's contents (macros, links, formulas, hidden sheets)
and defined names live in :mod:`benchbook.sheets.safeio_notes`; readers and
sheet and header look-ups in :mod:`benchbook.sheets.safeio_read`; number and
date parsing in :mod:`benchbook.sheets.safeio_numbers`. All are re-exported
here, so callers need only ``from benchbook.sheets import safeio``.
"""

from __future__ import annotations

import collections
import contextlib
import dataclasses
import hashlib
import importlib
import io
import os
import stat
import struct
import threading
import zipfile
import zlib
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any, Iterator

from benchbook.errors import BenchbookError, FileFormatError
from benchbook.sheets.safeio_kind import CellExtent, col_name, ole_message, sniff, text_kind

MiB = 1024**2


class IntegrityError(BenchbookError):
    """benchbook refused to go on because one of its own guarantees would break.

    Raised when openpyxl runs without defusedxml, or when a writer produced an
    empty or broken file (then nothing is renamed into place). This is not the
    user's input, so the CLI exits 1, but it prints no traceback.
    """

    exit_code = 1


@dataclass(frozen=True)
class ArchiveLimits:
    """Limits checked on an .xlsx/.xlsm/.ods file before any parser sees it.

    The defaults admit a full-height sheet (1,048,576 rows of a few numeric
    columns unpacks to well under 1 GiB) and refuse what would exhaust memory.
    Override them with :meth:`from_options` (the CLI's ``--max-file-mb``,
    ``--max-unpacked-mb``, ``--max-members``, ``--max-ratio``).

    Parameters
    ----------
    max_uncompressed_bytes : int
        Total size of all members once unpacked, counted while unpacking. [bytes]
    max_members : int
        Number of members (parts) in the archive. [count]
    max_ratio : float
        Largest compression ratio (unpacked / packed) of any member whose
        unpacked size exceeds ``ratio_floor_bytes``. Real workbook parts pack
        about 5-50 : 1; deflate bombs about 1000 : 1. [-]
    max_file_bytes : int
        Size of the file on disk. [bytes]
    ratio_floor_bytes : int
        Members smaller than this are not ratio-checked (tiny parts of
        repeated markup pack very well and are harmless). [bytes]
    max_cells : int
        Largest rectangle, from A1 to the last row and column that any cell
        reference of a sheet reaches. Readers that build a dense grid
        (python-calamine) or loop over rows x columns would otherwise be
        sunk by one stray value at XFD1048576. 20 million is a full-height
        sheet of 19 columns. [cells]
    """

    max_uncompressed_bytes: int = 1024 * MiB
    max_members: int = 10_000
    max_ratio: float = 200.0
    max_file_bytes: int = 512 * MiB
    ratio_floor_bytes: int = 1 * MiB
    max_cells: int = 20_000_000

    @classmethod
    def from_options(cls, *, max_file_mb: float | None = None, max_unpacked_mb: float | None = None,
                     max_members: int | None = None, max_ratio: float | None = None,
                     max_cells: int | None = None, base: ArchiveLimits | None = None) -> ArchiveLimits:
        """Limits from CLI options; ``None`` keeps the default (or ``base``'s value).

        Parameters
        ----------
        max_file_mb : float, optional
            ``--max-file-mb``. [MiB]
        max_unpacked_mb : float, optional
            ``--max-unpacked-mb``. [MiB]
        max_members : int, optional
            ``--max-members``. [count]
        max_ratio : float, optional
            ``--max-ratio``. [-]
        max_cells : int, optional
            ``--max-cells``. [cells]
        base : ArchiveLimits, optional
            Limits to start from (default :data:`DEFAULT_LIMITS`).

        Raises
        ------
        InputErrorGroup
            Naming every option that is not a positive number.
        """
        from benchbook.errors import Problems  # noqa: PLC0415

        base = base or DEFAULT_LIMITS
        problems = Problems("command-line options")
        changes: dict[str, Any] = {}
        for option, value, field, scale in (("--max-file-mb", max_file_mb, "max_file_bytes", MiB),
                                            ("--max-unpacked-mb", max_unpacked_mb, "max_uncompressed_bytes", MiB),
                                            ("--max-members", max_members, "max_members", 1),
                                            ("--max-ratio", max_ratio, "max_ratio", 1),
                                            ("--max-cells", max_cells, "max_cells", 1)):
            if value is None:
                continue
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not 0 < value < 1e12:
                problems.add(option, "", value, "a positive number")
                continue
            changes[field] = type(getattr(base, field))(value * scale)
        problems.raise_if_any()
        return dataclasses.replace(base, **changes)


DEFAULT_LIMITS = ArchiveLimits()
_limits_in_force: list[ArchiveLimits] = [DEFAULT_LIMITS]

# Which CLI option raises which limit, for the messages.
_OPTION = {"max_file_bytes": "--max-file-mb", "max_uncompressed_bytes": "--max-unpacked-mb",
           "max_members": "--max-members", "max_ratio": "--max-ratio", "max_cells": "--max-cells"}


def set_limits(limits: ArchiveLimits) -> None:
    """Make ``limits`` the process-wide limits used when a reader passes none (the CLI calls this)."""
    _limits_in_force[0] = limits


def limits_in_force() -> ArchiveLimits:
    """The limits a reader gets when it passes ``limits=None``."""
    return _limits_in_force[0]


@contextlib.contextmanager
def using_limits(limits: ArchiveLimits) -> Iterator[ArchiveLimits]:
    """Apply ``limits`` process-wide inside a ``with`` block, then restore the previous ones."""
    old = _limits_in_force[0]
    _limits_in_force[0] = limits
    try:
        yield limits
    finally:
        _limits_in_force[0] = old


def _over(name: str, what: str, found: str, limits: ArchiveLimits, field: str, shown: str) -> FileFormatError:
    return FileFormatError(
        f"{name}: {what} {found}, over the limit {field} = {shown}; refused before parsing. If you trust "
        f"the file, raise the limit with {_OPTION.get(field, field)}")


# --------------------------------------------------------------------------- what a file is

# --------------------------------------------------------------------------- archive checks

_SCAN_CHUNK = 1 * MiB
_DTD_MARKS = tuple(m.encode(enc) for m in ("<!DOCTYPE", "<!ENTITY") for enc in ("utf-8", "utf-16-le", "utf-16-be"))
_STRICT_NS = b"purl.oclc.org/ooxml/spreadsheetml/main"
_BINARY_EXT = (".bin", ".png", ".jpeg", ".jpg", ".gif", ".bmp", ".tif", ".tiff", ".emf", ".wmf", ".svg",
               ".wdp", ".jfif")


@dataclass(frozen=True)
class ArchiveInfo:
    """What :func:`check_archive` learned about a workbook archive.

    Parameters
    ----------
    kind : str
        ``"xlsx"``, ``"xlsm"`` or ``"ods"``.
    members : tuple of str
        Part names, in archive order.
    unpacked_bytes : int
        Total size of all parts once unpacked, as counted. [bytes]
    extents : tuple of (str, int, int)
        ``(part, last row, last column)`` reached by the cell references of
        each sheet-like XML part (1-based; 0 when it has no cells).
    """

    kind: str
    members: tuple[str, ...]
    unpacked_bytes: int
    extents: tuple[tuple[str, int, int], ...] = ()


class _Damaged(Exception):
    pass


def _sheet_title(p: Path, part: str) -> str:
    try:
        from benchbook.sheets.safeio_notes import sheet_parts  # noqa: PLC0415

        with zipfile.ZipFile(p) as zf:
            return next((f'sheet "{t}"' for t, _state, pt in sheet_parts(zf) if pt == part), f"part {part}")
    except Exception:  # only for the message: the archive was already checked
        return f"part {part}"


def _is_xml_part(member: str) -> bool:
    low = member.lower()
    return not (low.endswith(_BINARY_EXT) or "/media/" in low or "/embeddings/" in low
                or low.startswith(("pictures/", "thumbnails/")))


def _unpack(fh: io.BufferedReader, info: zipfile.ZipInfo) -> Iterator[bytes]:
    """Unpack one member as a stream of chunks of at most ``_SCAN_CHUNK`` bytes (never all at once)."""
    fh.seek(info.header_offset)
    head = fh.read(30)
    if len(head) < 30 or head[:4] != b"PK\x03\x04":
        raise _Damaged(f"member {info.filename} has no local header")
    nlen, elen = struct.unpack("<HH", head[26:30])
    fh.seek(info.header_offset + 30 + nlen + elen)
    left = info.compress_size
    dec = zlib.decompressobj(-15) if info.compress_type == zipfile.ZIP_DEFLATED else None
    while left > 0:
        raw = fh.read(min(_SCAN_CHUNK, left))
        if not raw:
            raise _Damaged(f"member {info.filename} is cut short")
        left -= len(raw)
        if dec is None:
            yield raw
            continue
        data = dec.decompress(raw, _SCAN_CHUNK)
        yield data
        while dec.unconsumed_tail:
            yield dec.decompress(dec.unconsumed_tail, _SCAN_CHUNK)
    if dec is not None:
        yield dec.flush()
        if not dec.eof:
            raise _Damaged(f"member {info.filename} has incomplete compressed data")


def _bad_name(member: str) -> bool:
    parts = member.replace("\\", "/").split("/")
    return member.startswith(("/", "\\")) or "\x00" in member or ".." in parts or (len(member) > 1 and member[1] == ":")


def _zip_structure(name: str, zf: zipfile.ZipFile, size_on_disk: int, limits: ArchiveLimits) -> None:
    """Refuse archives whose directory alone is hostile, before unpacking a byte."""
    infos = zf.infolist()
    if len(infos) > limits.max_members:
        raise _over(name, "the archive has", f"{len(infos)} members", limits, "max_members", str(limits.max_members))
    declared = sum(i.file_size for i in infos)
    if declared > limits.max_uncompressed_bytes:
        raise _over(name, "the archive declares it unpacks to", f"{declared / MiB:.0f} MiB", limits,
                    "max_uncompressed_bytes", f"{limits.max_uncompressed_bytes / MiB:g} MiB")
    seen: set[str] = set()
    for i in infos:
        if i.filename in seen:
            raise FileFormatError(f"{name}: the archive holds two parts named {i.filename}; it is damaged or "
                                  "crafted; open it in a spreadsheet application and save it again as .xlsx")
        seen.add(i.filename)
        if _bad_name(i.filename):
            raise FileFormatError(f"{name}: the archive holds a part with an unsafe name ({i.filename!r}); "
                                  "it is not a genuine workbook")
        if i.flag_bits & 0x1:
            raise FileFormatError(f"{name}: the archive's parts are encrypted (a zip password); remove the "
                                  "password and save it as .xlsx")
        if (i.file_size > limits.ratio_floor_bytes and i.compress_size > 0
                and i.file_size / i.compress_size > limits.max_ratio):
            raise _over(name, f"part {i.filename} declares compression ratio",
                        f"{i.file_size / i.compress_size:.0f} : 1 (a zip bomb?)", limits, "max_ratio",
                        f"{limits.max_ratio:g} : 1")
        if i.compress_type not in (zipfile.ZIP_STORED, zipfile.ZIP_DEFLATED):
            raise FileFormatError(f"{name}: part {i.filename} uses zip compression method {i.compress_type}, "
                                  "which workbooks do not use; open it and save it again as .xlsx")
    ordered = sorted(infos, key=lambda i: i.header_offset)
    end_of_data = getattr(zf, "start_dir", size_on_disk)
    for a, b in zip(ordered, ordered[1:] + [None]):
        end = a.header_offset + 30 + len(a.filename.encode("utf-8")) + a.compress_size
        limit = b.header_offset if b is not None else end_of_data
        if end > limit:
            raise FileFormatError(f"{name}: the archive's parts overlap ({a.filename}); that is the shape of a "
                                  "zip bomb, not of a workbook; refused")


def check_archive(path: str | os.PathLike, limits: ArchiveLimits | None = None) -> ArchiveInfo:
    """Check a workbook file completely (what it is, its archive, every part) and describe it.

    Every part is unpacked as a stream and counted against ``limits``; its CRC
    is verified; XML parts are scanned for document type declarations. A file
    whose exact bytes already passed under the same limits (same SHA-256) is
    not scanned again.

    Parameters
    ----------
    path : path-like
        The file to check. It is opened read-only.
    limits : ArchiveLimits, optional
        Default: :func:`limits_in_force`.

    Returns
    -------
    ArchiveInfo

    Raises
    ------
    FileFormatError
        With one sentence that says what the file is and what to do.
    """
    limits = limits or limits_in_force()
    p = Path(path)
    name = p.name or str(p)
    try:
        st = p.stat()
    except FileNotFoundError:
        raise FileFormatError(f"{name}: no such file; check the path") from None
    except OSError as exc:
        raise FileFormatError(f"{name}: cannot be opened ({exc.strerror}); check the path and its permissions") from None
    if stat.S_ISDIR(st.st_mode):
        raise FileFormatError(f"{name}: is a folder, not a workbook; give the path of a .xlsx file")
    if not stat.S_ISREG(st.st_mode):
        raise FileFormatError(f"{name}: is not a regular file (a pipe or device?); give the path of a .xlsx file")
    if st.st_size > limits.max_file_bytes:
        raise _over(name, "the file is", f"{st.st_size / MiB:.0f} MiB", limits, "max_file_bytes",
                    f"{limits.max_file_bytes / MiB:g} MiB")
    try:
        kind = sniff(p)
    except OSError as exc:
        raise FileFormatError(f"{name}: cannot be read ({exc.strerror}); check its permissions") from None
    if kind == "empty":
        raise FileFormatError(f"{name}: the file is empty (0 bytes); save the workbook again as .xlsx")
    if kind == "ole":
        raise FileFormatError(ole_message(p))
    if kind == "pdf":
        raise FileFormatError(f"{name}: is a PDF document, not a workbook; give the path of the .xlsx workbook")
    if kind == "text":
        raise FileFormatError(f"{name}: is {text_kind(p)}; open it in a spreadsheet application and save it as .xlsx")
    if kind != "zip":
        raise FileFormatError(f"{name}: is not a workbook (its bytes match no spreadsheet format); save it as .xlsx")
    try:
        digest = _digest(p)
    except OSError as exc:
        raise FileFormatError(f"{name}: cannot be read ({exc.strerror}); check its permissions") from None
    known = _passed_get((digest, limits))
    if known is not None:
        return known
    info = _scan_archive(p, name, st.st_size, limits)
    _passed_put((digest, limits), info)
    return info


# Files that passed the gate, by content: one read of a workbook often opens it several times (the
# read-back, the notes, the checked copy), and the full scan of a 100,000-row log costs far more than
# hashing its bytes. Only passes are remembered, keyed by the SHA-256 of the whole file and the
# limits, so a changed byte is a new file; the parsers re-open the file in any case.
_PASSED: "collections.OrderedDict[tuple[bytes, ArchiveLimits], ArchiveInfo]" = collections.OrderedDict()
_PASSED_LOCK = threading.Lock()
_PASSED_MAX = 32


def _digest(p: Path) -> bytes:
    h = hashlib.sha256()
    with open(p, "rb") as fh:
        for block in iter(lambda: fh.read(_SCAN_CHUNK), b""):
            h.update(block)
    return h.digest()


def _passed_get(key: tuple[bytes, ArchiveLimits]) -> ArchiveInfo | None:
    with _PASSED_LOCK:
        info = _PASSED.get(key)
        if info is not None:
            _PASSED.move_to_end(key)
        return info


def _passed_put(key: tuple[bytes, ArchiveLimits], info: ArchiveInfo) -> None:
    with _PASSED_LOCK:
        _PASSED[key] = info
        while len(_PASSED) > _PASSED_MAX:
            _PASSED.popitem(last=False)


def _scan_archive(p: Path, name: str, size_on_disk: int, limits: ArchiveLimits) -> ArchiveInfo:
    """The archive checks of :func:`check_archive`, after the file was found to be a zip."""
    damaged = (f"{name}: is a damaged or truncated workbook archive ({{}}); open it in a spreadsheet application, "
               "repair it if offered, and save it again as .xlsx")
    try:
        with open(p, "rb") as fh, zipfile.ZipFile(fh) as zf:
            _zip_structure(name, zf, size_on_disk, limits)
            infos = zf.infolist()
            members = tuple(i.filename for i in infos)
            total = 0
            heads: dict[str, bytes] = {}
            extents = []
            for info in infos:
                count, crc, tail = 0, 0, b""
                scan = _is_xml_part(info.filename)
                extent = CellExtent() if scan and info.filename.startswith("xl/") and not info.filename.endswith(
                    "sharedStrings.xml") else None
                for chunk in _unpack(fh, info):
                    count += len(chunk)
                    total += len(chunk)
                    if count > info.file_size:
                        raise FileFormatError(
                            f"{name}: part {info.filename} unpacks to more than the {info.file_size} bytes it "
                            "declares; that is a zip bomb, not a workbook; refused")
                    if total > limits.max_uncompressed_bytes:
                        raise _over(name, "the archive unpacks to more than", f"{total / MiB:.0f} MiB", limits,
                                    "max_uncompressed_bytes", f"{limits.max_uncompressed_bytes / MiB:g} MiB")
                    crc = zlib.crc32(chunk, crc)
                    if scan:
                        window = tail + chunk
                        if any(m in window for m in _DTD_MARKS):
                            raise FileFormatError(
                                f"{name}: part {info.filename} declares a document type or XML entities, which "
                                "workbooks never need (the carrier of entity-expansion and external-entity "
                                "attacks); refused. Save the data into a new workbook")
                        tail = window[-24:]
                        if info.filename not in heads:
                            heads[info.filename] = chunk[:4096]
                    if extent is not None:
                        extent.feed(chunk)
                if count != info.file_size or crc != info.CRC:
                    raise _Damaged(f"part {info.filename} fails its size or CRC check")
                if extent is not None and extent.rows:
                    extents.append((info.filename, extent.rows, extent.cols))
                    if extent.rows * extent.cols > limits.max_cells:
                        raise FileFormatError(
                            f"{name}: {_sheet_title(p, info.filename)} has cells as far as row {extent.rows} and "
                            f"column {col_name(extent.cols)}, a grid of {extent.rows * extent.cols:,} cells, over "
                            f"the limit max_cells = {limits.max_cells:,}; delete stray values far from the data, "
                            f"or, if you trust the file, raise the limit with --max-cells")
                if (count > limits.ratio_floor_bytes and info.compress_size > 0
                        and count / info.compress_size > limits.max_ratio):
                    raise _over(name, f"part {info.filename} has compression ratio",
                                f"{count / info.compress_size:.0f} : 1 (a zip bomb?)", limits, "max_ratio",
                                f"{limits.max_ratio:g} : 1")
    except FileFormatError:
        raise
    except _Damaged as exc:
        raise FileFormatError(damaged.format(exc)) from None
    except (zipfile.BadZipFile, zlib.error, OSError, ValueError, EOFError, struct.error,
            NotImplementedError, RuntimeError) as exc:
        raise FileFormatError(damaged.format(f"{type(exc).__name__}: {exc}")) from None
    return ArchiveInfo(_archive_kind(name, set(members), heads), members, total, tuple(extents))


def _archive_kind(name: str, members: set[str], heads: dict[str, bytes]) -> str:
    if "mimetype" in members:
        mime = heads.get("mimetype", b"")
        if b"opendocument.spreadsheet" in mime and "content.xml" in members:
            return "ods"
        if b"opendocument" in mime:
            return _not_workbook(name, "an OpenDocument text or presentation file")
    if any(h.find(_STRICT_NS, 0, 4096) >= 0 for m, h in heads.items() if m.startswith("xl/")):
        raise FileFormatError(f"{name}: is saved as Strict Open XML; open it and save it as an ordinary "
                              "Excel Workbook (.xlsx)")
    if "[Content_Types].xml" in members:
        if "xl/workbook.bin" in members:
            raise FileFormatError(f"{name}: is a binary workbook (.xlsb); open it and save it as .xlsx")
        if "xl/workbook.xml" in members:
            return "xlsm" if any(m.startswith("xl/") and m.endswith("vbaProject.bin") for m in members) else "xlsx"
        if any(m.startswith("word/") for m in members):
            return _not_workbook(name, "a Word document")
        if any(m.startswith("ppt/") for m in members):
            return _not_workbook(name, "a PowerPoint file")
        if any(m.startswith("xl/") for m in members):
            raise FileFormatError(f"{name}: is a workbook archive without its workbook part (xl/workbook.xml); "
                                  "it is damaged; save it again as .xlsx")
    if "xl/workbook.xml" in members:
        raise FileFormatError(f"{name}: is a workbook archive without its [Content_Types].xml part; it is damaged; "
                              "open it in a spreadsheet application and save it again as .xlsx")
    return _not_workbook(name, "a zip archive")


def _not_workbook(name: str, what: str) -> str:
    raise FileFormatError(f"{name}: is {what}, not a workbook; give the path of the .xlsx workbook")


def check_workbook_file(path: str | os.PathLike, limits: ArchiveLimits | None = None) -> str:
    """Check that ``path`` is a readable, safe workbook and return its kind.

    See :func:`check_archive` for what is checked.

    Returns
    -------
    str
        ``"xlsx"``, ``"xlsm"`` or ``"ods"``.

    Raises
    ------
    FileFormatError
        With one sentence that says what the file is and what to do.
    """
    return check_archive(path, limits).kind


# Public helpers that live in sibling modules (each kept well under 600 lines). They are loaded on
# first use (PEP 562), so the siblings can import this module's gate without an import cycle.
_LAZY = {
    "load_openpyxl": "safeio_read", "read_values": "safeio_read", "reading": "safeio_read",
    "require_defusedxml": "safeio_read",
    "atomic_output": "safeio_write", "clean_stale_parts": "safeio_write", "STALE_PART_SECONDS": "safeio_write",
    "closest": "safeio_read", "missing_sheet": "safeio_read", "require_sheet": "safeio_read",
    "CellRef": "safeio_notes", "FormulaCell": "safeio_notes", "Note": "safeio_notes", "WorkbookNotes": "safeio_notes",
    "collecting_notes": "safeio_notes", "inspect_workbook": "safeio_notes", "reader_notes": "safeio_notes",
    "report_notes": "safeio_notes", "report_reader_notes": "safeio_notes",
    "resolve_defined_name": "safeio_names", "resolve_defined_names": "safeio_names",
    "parse_date": "safeio_numbers", "parse_number": "safeio_numbers",
}

if TYPE_CHECKING:  # pragma: no cover - for readers and type checkers
    from benchbook.sheets.safeio_names import resolve_defined_name, resolve_defined_names
    from benchbook.sheets.safeio_notes import (CellRef, FormulaCell, Note, WorkbookNotes, collecting_notes,
                                               inspect_workbook, reader_notes, report_notes, report_reader_notes)
    from benchbook.sheets.safeio_numbers import parse_date, parse_number
    from benchbook.sheets.safeio_read import (closest, load_openpyxl, missing_sheet, read_values, reading,
                                              require_defusedxml, require_sheet)
    from benchbook.sheets.safeio_write import STALE_PART_SECONDS, atomic_output, clean_stale_parts


def __getattr__(name: str) -> Any:
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(importlib.import_module(f"benchbook.sheets.{module}"), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_LAZY))


__all__ = sorted(["ArchiveInfo", "ArchiveLimits", "DEFAULT_LIMITS", "IntegrityError", "check_archive",
                  "check_workbook_file", "limits_in_force", "set_limits", "sniff", "using_limits", *_LAZY])
