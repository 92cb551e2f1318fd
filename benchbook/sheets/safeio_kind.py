"""What a file is, by its bytes: zip, OLE compound file, PDF, text, or unknown; how far its cells reach.

Part of :mod:`benchbook.sheets.safeio` (used by its archive gate).
"""

from __future__ import annotations

import os
import stat
import struct
from pathlib import Path

import numpy as np

_OLE_MAGIC = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
_BOMS = (b"\xef\xbb\xbf", b"\xff\xfe", b"\xfe\xff")


def sniff(path: str | os.PathLike) -> str:
    """What a file is, by its first bytes.

    Returns
    -------
    str
        ``"zip"``, ``"ole"``, ``"pdf"``, ``"empty"``, ``"text"`` (UTF-8, or
        text with a UTF-16 byte-order mark) or ``"unknown"``.
    """
    if not stat.S_ISREG(os.stat(path).st_mode):
        return "unknown"  # a folder, pipe or device: never open it (a pipe would block)
    with open(path, "rb") as fh:
        head = fh.read(4096)
    if not head:
        return "empty"
    if head.startswith((b"PK\x03\x04", b"PK\x05\x06", b"PK\x07\x08")):
        return "zip"
    if head.startswith(_OLE_MAGIC):
        return "ole"
    if head.startswith(b"%PDF-"):
        return "pdf"
    if head.startswith(_BOMS[1:]):
        return "text"
    if b"\x00" in head:
        return "unknown"
    controls = sum(1 for b in head if b < 9 or 13 < b < 32)
    return "text" if controls <= len(head) // 100 else "unknown"


def text_kind(path: Path) -> str:
    with open(path, "rb") as fh:
        head = fh.read(4096)
    for bom, codec in zip(_BOMS, ("utf-8", "utf-16-le", "utf-16-be")):
        if head.startswith(bom):
            head = head[len(bom):].decode(codec, "ignore").encode("utf-8", "ignore")
    low = head.lower()
    if b"urn:schemas-microsoft-com:office:spreadsheet" in low:
        return "an XML Spreadsheet 2003 file, not a workbook benchbook reads"
    if b"<html" in low or b"<table" in low or b"<!doctype html" in low:
        return "a web page (HTML) saved under a workbook name, not a workbook"
    return "a text file (CSV or similar), not a workbook"


def ole_streams(path: Path) -> set[str] | None:
    """Names of the streams and storages of an OLE compound file, or ``None`` if unreadable.

    Reads the directory of a Compound File Binary file ([MS-CFB] sections 2.2,
    2.3 and 2.6: header, FAT sectors listed in the header DIFAT, directory
    chain). Bounded: it reads at most the header, the first 109 FAT sectors and
    the directory chain, and stops at a loop.
    """
    try:
        with open(path, "rb") as fh:
            header = fh.read(512)
            if len(header) < 512 or not header.startswith(_OLE_MAGIC):
                return None
            shift = struct.unpack_from("<H", header, 30)[0]
            if shift not in (9, 12):
                return None
            size = 1 << shift
            n_fat, first_dir = struct.unpack_from("<L", header, 44)[0], struct.unpack_from("<L", header, 48)[0]
            difat = struct.unpack_from("<109L", header, 76)[: min(n_fat, 109)]
            base = size if shift == 12 else 512  # sector 0 starts after the (sector-sized) header

            def sector(i: int) -> bytes:
                fh.seek(base + i * size)
                return fh.read(size)

            fat: list[int] = []
            for s in difat:
                chunk = sector(s)
                fat.extend(struct.unpack(f"<{len(chunk) // 4}L", chunk[: len(chunk) // 4 * 4]))
            names: set[str] = set()
            seen: set[int] = set()
            s = first_dir
            while s < 0xFFFFFFFA and s not in seen and len(seen) < 4096:
                seen.add(s)
                chunk = sector(s)
                for off in range(0, len(chunk) - 127, 128):
                    nlen = struct.unpack_from("<H", chunk, off + 64)[0]
                    if 2 <= nlen <= 64 and chunk[off + 66] in (1, 2, 5):
                        names.add(chunk[off:off + nlen - 2].decode("utf-16-le", "replace"))
                s = fat[s] if s < len(fat) else 0xFFFFFFFE
            return names
    except (OSError, struct.error):
        return None


def ole_message(path: Path) -> str:
    streams = ole_streams(path) or set()
    name = path.name
    if {"EncryptionInfo", "EncryptedPackage"} & streams:
        return (f"{name}: is an encrypted (password-protected) workbook; open it, remove the password "
                "(File > Info > Protect Workbook, or Save As without a password) and save it as .xlsx")
    if {"Workbook", "Book"} & streams:
        return f"{name}: is a legacy Excel 97-2003 workbook (.xls); open it and save it as .xlsx"
    if "WordDocument" in streams:
        return f"{name}: is a Word document, not a workbook; give the path of the .xlsx workbook"
    if "PowerPoint Document" in streams:
        return f"{name}: is a PowerPoint file, not a workbook; give the path of the .xlsx workbook"
    return (f"{name}: is an OLE compound file (a legacy Office file, or an encrypted workbook) that benchbook "
            "cannot read; remove any password and save it as .xlsx")


class CellExtent:
    """Last row and column reached by ``r="A1"``-style cell references in an XML stream (vectorized).

    Fed chunk by chunk; the last 16 bytes are scanned again with the next
    chunk, so a reference cut at a chunk edge is read whole there (a cut one
    can only under-read, never over-read).
    """

    def __init__(self) -> None:
        self.rows = 0
        self.cols = 0
        self._tail = b""

    def feed(self, chunk: bytes) -> None:
        buf = self._tail + chunk
        self._tail = buf[-16:]
        a = np.frombuffer(buf, dtype=np.uint8)
        n = a.size
        if n < 6:
            return
        prev, quote = a[0:n - 3], (a[3:n] == 0x22) | (a[3:n] == 0x27)
        space = (prev == 32) | (prev == 9) | (prev == 10) | (prev == 13)
        hit = np.flatnonzero((a[1:n - 2] == 0x72) & (a[2:n - 1] == 0x3D) & quote & space) + 4
        if hit.size == 0:
            return
        pad = np.concatenate([a, np.zeros(12, dtype=np.uint8)])
        up = [pad[hit + k] & 0xDF for k in range(3)]  # the first three characters, upper-cased
        let = [(u >= 65) & (u <= 90) for u in up]
        nlet = let[0] * (1 + let[1] * (1 + let[2]))  # leading letters: 0 to 3
        keep = nlet > 0
        if not keep.any():
            return
        hit, nlet = hit[keep], nlet[keep]
        c0, c1, c2 = (u[keep].astype(np.int64) - 64 for u in up)
        col = np.where(nlet == 1, c0, np.where(nlet == 2, c0 * 26 + c1, c0 * 676 + c1 * 26 + c2))
        start = hit + nlet
        row = np.zeros(hit.size, dtype=np.int64)
        going = np.ones(hit.size, dtype=bool)
        for k in range(8):
            d = pad[start + k].astype(np.int64) - 48
            going &= (d >= 0) & (d <= 9)
            row = np.where(going, row * 10 + d, row)
        ok = row > 0
        if ok.any():
            self.rows = max(self.rows, int(row[ok].max()))
            self.cols = max(self.cols, int(col[ok].max()))


def col_name(n: int) -> str:
    """Column letters of 1-based column ``n`` (28 -> AB)."""
    s = ""
    while n > 0:
        n, r = divmod(n - 1, 26)
        s = chr(65 + r) + s
    return s
