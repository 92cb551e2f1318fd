"""The real entry point: --version, --help for every subcommand, and the error contract."""

from __future__ import annotations

import subprocess
import sys

import pytest

from benchbook import __version__
from benchbook.cli import build_parser, main


def run(*args: str, cwd=None) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "benchbook", *args], capture_output=True, text=True,
                          cwd=cwd, timeout=300)


def subcommands() -> list[str]:
    parser = build_parser()
    action = next(a for a in parser._actions if a.dest == "command")
    return sorted(action.choices)


def test_version():
    # benchbook's own contract: --version prints "benchbook <version>" and exits 0
    r = run("--version")
    assert r.returncode == 0
    assert r.stdout.strip() == f"benchbook {__version__}"


def test_help_lists_every_subcommand():
    # benchbook's own contract: the top-level help names every subcommand of the parser
    r = run("--help")
    assert r.returncode == 0
    for name in subcommands():
        assert name in r.stdout


@pytest.mark.parametrize("name", subcommands())
def test_every_subcommand_has_help(name):
    # benchbook's own contract: every subcommand answers --help with its argparse usage line
    r = run(name, "--help")
    assert r.returncode == 0, r.stderr
    assert r.stdout.startswith("usage: benchbook " + name)


def test_no_command_prints_help_and_fails():
    # benchbook's own contract: no command prints the usage and exits 2
    r = run()
    assert r.returncode == 2
    assert "usage: benchbook" in r.stdout


def test_missing_input_is_a_clear_error(tmp_path):
    # benchbook's own contract (DEVELOPERS.md): a BenchbookError becomes "Error: ..." on stderr and exit 2, with no
    # traceback
    r = run("size", str(tmp_path / "nope.xlsx"))
    assert r.returncode == 2
    assert r.stderr.startswith("Error: ")
    assert "nope.xlsx" in r.stderr and "no such file" in r.stderr
    assert "Traceback" not in r.stderr


def test_not_a_workbook_is_a_clear_error(tmp_path):
    # benchbook's own contract (DEVELOPERS.md): a text file saved as .xlsx is named as such, exit 2, no traceback
    p = tmp_path / "loads.xlsx"
    p.write_text("Load,Power [W]\nfridge,80\n")
    r = run("size", str(p))
    assert r.returncode == 2
    assert "text file" in r.stderr and "save it as .xlsx" in r.stderr
    assert "Traceback" not in r.stderr


def test_internal_error_exits_1_without_traceback(monkeypatch, capsys):
    # benchbook's own contract (DEVELOPERS.md): anything other than a BenchbookError is a bug, exit 1, traceback only
    # with BENCHBOOK_DEBUG=1
    import benchbook.cli as cli

    def boom(args):
        raise ZeroDivisionError("division by zero")

    parser = cli.build_parser()
    monkeypatch.setattr(cli, "build_parser", lambda: parser)
    for action in parser._actions:
        if action.dest == "command":
            action.choices["size"].set_defaults(handler=boom)
    assert main(["size", "x.xlsx"]) == 1
    err = capsys.readouterr().err
    assert err.startswith("Error: internal error (ZeroDivisionError")
    assert "Traceback" not in err


def test_template_check_accepts_the_shipped_templates():
    # benchbook's own contract: the shipped templates fulfil the template contract (benchbook/sheets/names.py)
    from benchbook.sheets.names import template_path

    for kind in ("intake", "quote"):
        r = run("template-check", str(template_path(kind)), "--kind", kind)
        assert r.returncode == 0, r.stdout + r.stderr
        assert f"usable as an {kind}" in r.stdout or f"usable as a {kind}" in r.stdout


def test_template_check_lists_every_missing_name(tmp_path):
    # benchbook's own contract: every missing defined name reported at once, exit 2, and the input file is never
    # modified
    import hashlib

    import openpyxl

    from benchbook.sheets.names import template_path

    wb = openpyxl.load_workbook(template_path("quote"))
    for name in ("quote_grand_total", "quote_site"):
        del wb.defined_names[name]
    broken = tmp_path / "firm-quote.xlsx"
    wb.save(broken)
    before = hashlib.sha256(broken.read_bytes()).hexdigest()
    r = run("template-check", str(broken), "--kind", "quote")
    assert r.returncode == 2
    assert r.stderr.startswith("Error: firm-quote.xlsx: ")
    assert "defined name quote_grand_total" in r.stderr and "defined name quote_site" in r.stderr
    assert hashlib.sha256(broken.read_bytes()).hexdigest() == before


def test_input_safety_limits_can_be_overridden_and_are_named(tmp_path):
    # benchbook's own contract: the input safety limits (sheets/safeio) are named in the error and can be overridden;
    # a bad option value is reported as "found ...; expected ..."
    from pathlib import Path

    sample = Path(__file__).resolve().parents[1] / "samples" / "offgrid-cabin.xlsx"
    r = run("size", str(sample), "--max-unpacked-mb", "0.01")
    assert r.returncode == 2
    assert "max_uncompressed_bytes" in r.stderr and "--max-unpacked-mb" in r.stderr
    r = run("size", str(sample), "--max-ratio", "-3")
    assert r.returncode == 2 and "--max-ratio: found -3; expected a positive number" in r.stderr
    r = run("size", str(sample), "--max-unpacked-mb", "2048", "--json")
    assert r.returncode == 0, r.stderr
