"""Shared test helper for real-client (LibreOffice headless) tests.

``require_office()`` returns the path of ``soffice``. When LibreOffice is absent
it skips the test with a loud reason, unless the environment sets
``BENCHBOOK_REQUIRE_OFFICE=1`` (as ``.ci/run`` does), in which case the test fails.
"""

from __future__ import annotations

import os
import shutil

import pytest

REASON = ("LibreOffice (soffice) is NOT installed: real-client spreadsheet tests SKIPPED. "
          "Install libreoffice-calc-nogui and poppler-utils, or set BENCHBOOK_REQUIRE_OFFICE=1 to make this a failure.")


def require_office(*, pdf_tools: bool = False) -> str:
    """Path of ``soffice``; skip loudly (or fail under BENCHBOOK_REQUIRE_OFFICE=1) when absent.

    With ``pdf_tools=True`` also require ``pdftoppm`` and ``pdftotext`` (poppler-utils).
    """
    exe = os.environ.get("BENCHBOOK_SOFFICE") or shutil.which("soffice") or shutil.which("libreoffice")
    missing = [] if exe else ["soffice"]
    if pdf_tools:
        missing += [t for t in ("pdftoppm", "pdftotext") if shutil.which(t) is None]
    if missing:
        msg = REASON if "soffice" in missing else (
            f"{', '.join(missing)} NOT installed (poppler-utils): PDF checks SKIPPED; "
            "set BENCHBOOK_REQUIRE_OFFICE=1 to make this a failure.")
        if os.environ.get("BENCHBOOK_REQUIRE_OFFICE") == "1":
            pytest.fail("BENCHBOOK_REQUIRE_OFFICE=1 but " + msg, pytrace=False)
        pytest.skip(msg)
    return exe
