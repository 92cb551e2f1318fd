"""Every command on valid inputs leaves every input byte for byte as it was (issue 7, "Nothing lost").

Each command runs as a subprocess (``python -m benchbook ...``) in a fresh folder on copies of the
committed samples: a job, a CSV catalog and a workbook catalog (``--catalog``), the shipped quote
template (``--template``), a quote written by ``quote`` (``fieldsheet --from-quote``), a filled
capacity-test sheet and an earlier one as ``--baseline``. Every input is hashed (SHA-256, FIPS 180-4)
before and after; the command must succeed and write its output. That inputs are never modified is
the project's own contract (README "Input safety", DEVELOPERS.md "Safe I/O"): common practice, no
source. The commands are read from the CLI's parser, so a new command fails here until it is added.
"""

from __future__ import annotations

import hashlib
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]
SAMPLES = REPO / "samples"

# (id, command line); {name} is a copy of an input (INPUTS) or a fresh output path ({out}, {outdir}).
RUNS = [
    ("size", ["size", "{job}", "--top", "3"]),
    ("size-csv-catalog", ["size", "{job}", "--catalog", "{csv}", "--top", "3"]),
    ("size-workbook-catalog", ["size", "{job}", "--catalog", "{catbook}", "--json", "--top", "3"]),
    ("quote-template", ["quote", "{job}", "--template", "{template}", "--catalog", "{catbook}", "-o", "{out}"]),
    ("compare-csv-catalog", ["compare", "{job}", "--catalog", "{csv}", "--top", "2", "--no-hourly", "-o", "{out}"]),
    ("fieldsheet-job", ["fieldsheet", "{job}", "--kind", "readings", "--catalog", "{catbook}", "-o", "{out}"]),
    ("fieldsheet-from-quote", ["fieldsheet", "--from-quote", "{quote}", "--kind", "capacity-test", "-o", "{out}"]),
    ("check-baseline", ["check", "{field}", "--baseline", "{baseline}", "-o", "{out}"]),
    ("template-check-job", ["template-check", "{job}"]),
    ("template-check-quote", ["template-check", "{template}", "--kind", "quote"]),
    ("new", ["new", "{out}"]),
    ("demo", ["demo", "{outdir}", "--no-pdf"]),
]


def _sha(p: Path) -> str:
    return hashlib.sha256(p.read_bytes()).hexdigest()


def _run(argv: list[str], cwd: Path) -> subprocess.CompletedProcess:
    env = dict(os.environ, PYTHONPATH=str(REPO))
    env.pop("BENCHBOOK_DEBUG", None)
    return subprocess.run([sys.executable, "-m", "benchbook", *argv], cwd=cwd, env=env, capture_output=True,
                          text=True, timeout=900)


@pytest.fixture(scope="module")
def inputs(tmp_path_factory) -> dict[str, Path]:
    folder = tmp_path_factory.mktemp("inputs")
    found = {
        "{job}": SAMPLES / "telecom-48v.xlsx",
        "{csv}": SAMPLES / "catalog-extra.csv",
        "{catbook}": SAMPLES / "offgrid-cabin.xlsx",  # its Batteries table is a catalog workbook
        "{template}": REPO / "templates" / "quote.xlsx",
        "{field}": SAMPLES / "field" / "trend-DC-A" / "capacity-test-2026.xlsx",
        "{baseline}": SAMPLES / "field" / "trend-DC-A" / "capacity-test-2025.xlsx",
    }
    out = {k: Path(shutil.copyfile(p, folder / p.name)) for k, p in found.items()}
    # the quote behind fieldsheet --from-quote: written by benchbook itself, from the job
    made = _run(["quote", str(out["{job}"]), "-o", str(folder / "telecom-quote.xlsx")], folder)
    assert made.returncode == 0, made.stderr
    out["{quote}"] = folder / "telecom-quote.xlsx"
    return out


def test_every_command_is_run_here():
    import argparse

    from benchbook.cli import build_parser

    sub = next(a for a in build_parser()._actions if isinstance(a, argparse._SubParsersAction))
    assert {argv[0] for _id, argv in RUNS} == set(sub.choices)  # every subcommand the CLI offers


@pytest.mark.parametrize("argv", [a for _i, a in RUNS], ids=[i for i, _a in RUNS])
def test_a_command_on_valid_inputs_never_modifies_them(argv, inputs, tmp_path):
    before = {k: _sha(p) for k, p in inputs.items()}
    stat_before = {k: p.stat().st_mtime_ns for k, p in inputs.items()}
    out = tmp_path / ("out.xlsx" if argv[0] != "new" else "new-job.xlsx")
    outdir = tmp_path / "demo"
    args = [str(inputs[a]) if a in inputs else str(out) if a == "{out}" else str(outdir) if a == "{outdir}" else a
            for a in argv]
    proc = _run(args, tmp_path)
    assert proc.returncode == 0, proc.stderr[-2000:]  # valid inputs: the command succeeds (exit 0)
    assert "Traceback" not in proc.stderr
    if "{out}" in argv:
        assert out.is_file() and out.stat().st_size > 0  # it did write its output
    if "{outdir}" in argv:
        assert any(outdir.iterdir())
    after = {k: _sha(p) for k, p in inputs.items()}
    assert after == before  # SHA-256 of every input unchanged: never modified
    assert {k: p.stat().st_mtime_ns for k, p in inputs.items()} == stat_before  # not even rewritten in place
    assert not [p.name for p in inputs["{job}"].parent.iterdir() if p.name.endswith(".part")]  # no temp left
