"""Keep a Rust panic message of python-calamine off the user's screen while benchbook recovers from it.

python-calamine is written in Rust. Some inputs make it panic (a date-formatted
cell holding a number no calendar reaches, for instance); pyo3 turns the panic
into a Python exception, which benchbook catches and reports at the cell, but
Rust's default panic hook has already written ``thread '…' panicked at …`` to
file descriptor 2. :func:`held_panic_messages` points descriptor 2 at a
temporary file for the length of a python-calamine call, then writes back
everything that is not such a panic message, so nothing else written to
stderr in that window is lost.
"""

from __future__ import annotations

import os
import re
import sys
import tempfile
from contextlib import contextmanager
from typing import Iterator

#: First line of a Rust panic message (``thread '<unnamed>' (1234) panicked at src/lib.rs:1:2:``).
_PANIC_HEAD = re.compile(r"^thread '[^']*'(?: \(\d+\))? panicked at ")
#: Last line of the message when no backtrace is shown.
_PANIC_NOTE = re.compile(r"^note: run with `RUST_BACKTRACE=")


def strip_panic_messages(text: str) -> str:
    """``text`` without Rust panic messages: from a ``thread '…' panicked at`` line to its ``note: run with
    `RUST_BACKTRACE=…`` line (or to the end), and the blank line Rust writes before it."""
    out: list[str] = []
    lines = text.splitlines(keepends=True)
    i = 0
    while i < len(lines):
        if _PANIC_HEAD.match(lines[i]):
            if out and not out[-1].strip():
                out.pop()
            j = i + 1
            while j < len(lines) and not _PANIC_NOTE.match(lines[j]):
                j += 1
            i = j + 1
            continue
        out.append(lines[i])
        i += 1
    return "".join(out)


@contextmanager
def held_panic_messages() -> Iterator[None]:
    """For the ``with`` block, hold what is written to stderr and give back all of it but Rust panic messages.

    Descriptor 2 is process-wide, so writes of other threads in that window are
    held too, and given back when the block ends. When descriptor 2 cannot be
    duplicated (no console), the block runs unchanged.
    """
    try:
        sys.stderr.flush()
        saved = os.dup(2)
    except (OSError, ValueError, AttributeError):
        yield
        return
    hold = tempfile.TemporaryFile()
    try:
        os.dup2(hold.fileno(), 2)
        try:
            yield
        finally:
            try:
                sys.stderr.flush()
            except (OSError, ValueError):
                pass
            os.dup2(saved, 2)
            hold.seek(0)
            kept = strip_panic_messages(hold.read().decode("utf-8", "replace"))
            if kept:
                os.write(2, kept.encode("utf-8", "replace"))
    finally:
        os.close(saved)
        hold.close()
