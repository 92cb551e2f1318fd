"""Writing outputs safely: a hidden temporary file in the same folder, renamed into place.

Part of :mod:`benchbook.sheets.safeio` (re-exported there; import it from there).

Leftovers: a killed writer leaves its hidden ``.NAME.XXXXXXXX.part`` file
behind (never a partial file at the output path). The next
:func:`atomic_output` into that folder removes such files once they are older
than :data:`STALE_PART_SECONDS` (one hour); :func:`clean_stale_parts` does it
on demand.
"""

from __future__ import annotations

import contextlib
import os
import re
import tempfile
import time
import zipfile
from pathlib import Path
from typing import Iterator, Sequence

from benchbook.errors import FileFormatError
from benchbook.sheets.safeio import IntegrityError

STALE_PART_SECONDS = 3600
"""A ``.NAME.XXXXXXXX.part`` file older than this is a leftover of a killed writer. [s]"""

_PART_RE = re.compile(r"^\..+\.[a-z0-9_]{8}\.part$")


def clean_stale_parts(folder: str | os.PathLike, older_than_s: float = STALE_PART_SECONDS) -> list[Path]:
    """Remove leftover temporary outputs of killed writers from ``folder``.

    Only hidden files named like :func:`atomic_output`'s temporary files
    (``.NAME.XXXXXXXX.part``) and last modified more than ``older_than_s``
    seconds ago are removed.

    Parameters
    ----------
    folder : path-like
        Folder to clean.
    older_than_s : float
        Minimum age. [s]

    Returns
    -------
    list of Path
        The files removed.
    """
    removed = []
    now = time.time()
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return removed
    for entry in entries:
        if not _PART_RE.match(entry.name):
            continue
        try:
            if entry.is_file(follow_symlinks=False) and now - entry.stat().st_mtime > older_than_s:
                os.unlink(entry.path)
                removed.append(Path(entry.path))
        except OSError:  # another process removed it, or no permission: leave it
            continue
    return removed


def _same_file(a: Path, b: Path) -> bool:
    try:
        return a.exists() and b.exists() and os.path.samefile(a, b)
    except OSError:
        return False


def _umask() -> int:
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def _verify_output(tmp: Path, target: Path) -> None:
    if not tmp.exists():
        raise IntegrityError(f"{target.name}: the writer removed its temporary file; nothing was written")
    if tmp.stat().st_size == 0:
        raise IntegrityError(f"{target.name}: the writer produced an empty file; nothing was written")
    if target.suffix.lower() in (".xlsx", ".xlsm", ".ods"):
        try:
            with zipfile.ZipFile(tmp) as zf:
                ok = "[Content_Types].xml" in zf.namelist() or "mimetype" in zf.namelist()
        except (zipfile.BadZipFile, OSError):
            ok = False
        if not ok:
            raise IntegrityError(f"{target.name}: the writer produced a broken workbook; nothing was written")


def _fsync(path: Path, directory: bool = False) -> None:
    try:
        fd = os.open(path, os.O_RDONLY | (getattr(os, "O_DIRECTORY", 0) if directory else 0))
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


@contextlib.contextmanager
def atomic_output(path: str | os.PathLike, force: bool = False, *,
                  inputs: Sequence[str | os.PathLike] = ()) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; move it into place when the block succeeds.

    The temporary file is hidden (``.NAME.XXXXXXXX.part``, unique per call),
    so two processes writing into one folder never share one. When the block
    ends, the file must be non-empty (and a readable zip for .xlsx/.xlsm/.ods),
    it gets the permissions of an ordinary new file, is flushed to disk, and
    is renamed into place with :func:`os.replace` (atomic). Without ``force``
    it is linked into place instead, which fails if another process created
    ``path`` meanwhile, so an existing output is never overwritten. On any
    exception, or if the process is killed, ``path`` is left as it was.

    Parameters
    ----------
    path : path-like
        The output file.
    force : bool
        Overwrite an existing output.
    inputs : sequence of path-like
        The command's input files; ``path`` may never be one of them, even
        with ``force``.

    Raises
    ------
    FileFormatError
        ``path`` exists (without ``force``), is a folder, or is an input.
    IntegrityError
        The writer produced an empty or broken file.
    """
    target = Path(path)
    if target.is_dir():
        raise FileFormatError(f"{target}: is a folder; give a file name for the output")
    for inp in inputs:
        if _same_file(target, Path(inp)):
            raise FileFormatError(f"{target}: is one of this command's input files; benchbook never overwrites "
                                  "an input, choose another output name")
    if target.exists() and not force:
        raise FileFormatError(f"{target}: already exists; use --force to overwrite it")
    target.parent.mkdir(parents=True, exist_ok=True)
    clean_stale_parts(target.parent)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=target.parent)
    os.close(fd)
    tmp_path = Path(tmp)
    try:
        yield tmp_path
        _verify_output(tmp_path, target)
        os.chmod(tmp_path, 0o666 & ~_umask())
        _fsync(tmp_path)
        if force:
            os.replace(tmp_path, target)
        else:
            try:
                os.link(tmp_path, target)  # fails if the target appeared meanwhile: never clobber
            except FileExistsError:
                raise FileFormatError(f"{target}: was created by another process while benchbook was writing; "
                                      "use --force to overwrite it") from None
            except OSError:  # a file system without hard links
                if target.exists():
                    raise FileFormatError(f"{target}: already exists; use --force to overwrite it") from None
                os.replace(tmp_path, target)
        _fsync(target.parent, directory=True)
    finally:
        with contextlib.suppress(OSError):
            tmp_path.unlink()


