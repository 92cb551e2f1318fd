"""The hostile / broken workbook corpus (tests/corpus/) through every reader and every CLI subcommand.

Each run happens in a subprocess that loops over the corpus files in-process
(one interpreter start per reader or command, not per file) with a per-file
watchdog (``faulthandler.dump_traceback_later(..., exit=True)``). A file that
hangs kills its worker; the parent records it and starts a new worker on the
remaining files. Nothing is timed: the tests assert only that every file
returns and what it returned. The corpus is copied to a temporary folder and
every copy is hashed before and after, so "the input is never modified" is
checked for every reader and command.

Expectations come from tests/corpus/make_corpus.py (``Case.expect``,
``Case.phrase``, ``Case.read``): common practice of the file formats, no
single source; the format facts behind each case are named in the generator.

Run as a script (``python tests/test_corpus.py --worker ...``) it is the worker.
"""

from __future__ import annotations

import hashlib
import io
import json
import os
import re
import shutil
import subprocess
import sys
import traceback
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO / "tests"))
sys.path.insert(0, str(REPO))

from corpus.make_corpus import CASES, FILES, README, build, readme  # noqa: E402

PER_FILE_S = 120  # watchdog per file; generous because CI machines are shared and slow
BY_NAME = {c.name: c for c in CASES}


def _sha(p: Path) -> str:
    return hashlib.sha256(p.read_bytes()).hexdigest()


@pytest.fixture(scope="module")
def corpus_copy(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("corpus")
    for c in CASES:
        shutil.copyfile(FILES / c.name, folder / c.name)
    return folder


def _run_worker(mode: str, files: list[Path], extra: list[str], cwd: Path) -> dict[str, dict]:
    """Run the worker until every file has a result; a hang or crash is recorded as that file's result."""
    results: dict[str, dict] = {}
    todo = list(files)
    env = dict(os.environ, PYTHONPATH=str(REPO), PYTHONFAULTHANDLER="1")
    env.pop("BENCHBOOK_DEBUG", None)
    while todo:
        args = [sys.executable, str(Path(__file__).resolve()), "--worker", mode, json.dumps(extra)] + [str(f) for f in todo]
        proc = subprocess.run(args, cwd=cwd, env=env, capture_output=True, text=True,
                              timeout=PER_FILE_S * len(todo) + 120)
        started = None
        for line in proc.stdout.splitlines():
            if line.startswith("START "):
                started = line[6:]
            elif line.startswith("RESULT "):
                rec = json.loads(line[7:])
                results[rec["file"]] = rec
                started = None
        done = {Path(f).name for f in results}
        if started is not None and started not in done:  # the worker died on this file
            results[started] = {"file": started, "died": True, "returncode": proc.returncode,
                                "stderr": proc.stderr[-3000:]}
        remaining = [f for f in todo if f.name not in results]
        if len(remaining) == len(todo):
            raise AssertionError(f"worker made no progress (rc {proc.returncode}): {proc.stderr[-3000:]}")
        todo = remaining
    return results


# --------------------------------------------------------------------------- the corpus itself

def test_corpus_is_generated_and_complete(tmp_path):
    made = build(tmp_path / "files")
    assert len(CASES) >= 40
    assert len({c.name for c in CASES}) == len(CASES)
    committed = {p.name for p in FILES.iterdir()}
    assert committed == set(made), "tests/corpus/files differs from make_corpus.py: run python tests/corpus/make_corpus.py"
    for name, data in made.items():
        assert (FILES / name).read_bytes() == data, f"{name} differs from its generator; regenerate the corpus"
    assert README.read_text(encoding="utf-8") == readme(), "tests/corpus/README.md is stale; regenerate it"
    for c in CASES:
        assert f"`{c.name}`" in readme()
        assert c.expect in ("refuse", "open")


def test_corpus_covers_every_hazard_class():
    phrases = " ".join(c.phrase for c in CASES if c.expect == "refuse")
    for hazard in ("empty", "text file (CSV", "legacy Excel", "remove the password", "damaged or truncated",
                   "max_ratio", "max_uncompressed_bytes", "max_members", "max_cells", "XML entities", "overlap",
                   "more than the", "zip password", "Strict Open XML", "binary workbook"):
        assert hazard in phrases, hazard
    kinds = {c.phrase for c in CASES if c.expect == "open"}
    assert kinds == {"xlsx", "xlsm", "ods"}


# --------------------------------------------------------------------------- the readers

def test_every_reader_on_every_corpus_file(corpus_copy, tmp_path):
    files = [corpus_copy / c.name for c in CASES]
    before = {f.name: _sha(f) for f in files}
    results = _run_worker("safeio", files, [], tmp_path)
    after = {f.name: _sha(f) for f in files}
    assert after == before, "a reader modified an input file"
    failures = []
    for c in CASES:
        rec = results[c.name]
        if rec.get("died"):
            failures.append(f"{c.name}: worker died or hung (rc {rec['returncode']}): {rec['stderr'][-800:]}")
            continue
        for reader, out in rec["out"].items():
            if out.startswith("escaped"):
                failures.append(f"{c.name}: {reader} let a non-benchbook exception escape: {out}")
        check = rec["out"]["check_workbook_file"]
        if c.expect == "refuse":
            if not (check.startswith("error:FileFormatError:") and c.phrase in check):
                failures.append(f"{c.name}: expected a refusal containing {c.phrase!r}, got {check}")
            if not check.split(":", 2)[2].startswith(c.name + ":"):
                failures.append(f"{c.name}: the message does not start with the file name: {check}")
            for reader, out in rec["out"].items():
                if not out.startswith("error:"):
                    failures.append(f"{c.name}: {reader} accepted a file the gate refuses: {out}")
        else:
            if check != f"ok:{c.phrase}":
                failures.append(f"{c.name}: expected the gate to pass it as {c.phrase}, got {check}")
            values = rec["out"]["read_values"]
            if c.read and not (values.startswith("error:") and c.read in values):
                failures.append(f"{c.name}: expected read_values to refuse with {c.read!r}, got {values}")
            if not c.read and not values.startswith("ok"):
                failures.append(f"{c.name}: expected read_values to read it, got {values}")
    assert not failures, "\n".join(failures)


def test_corpus_notes_name_what_they_found(corpus_copy, tmp_path):
    """inspect_workbook's findings on the corpus files built to carry them (their content is in make_corpus.py)."""
    files = [corpus_copy / n for n in ("macro-vba.xlsm", "macro-xlm.xlsx", "external-link.xlsx", "dde-link.xlsx",
                                       "formulas-cached.xlsx", "formulas-uncached.xlsx", "hidden-sheets.xlsx",
                                       "valid.ods", "valid-job.xlsx")]
    results = _run_worker("notes", files, [], tmp_path)
    notes = {name: rec["notes"] for name, rec in results.items()}
    assert notes["macro-vba.xlsm"]["macro_parts"] == ["xl/vbaProject.bin"]
    assert notes["macro-vba.xlsm"]["kind"] == "xlsm"
    assert notes["macro-xlm.xlsx"]["macro_parts"] == ["xl/macrosheets/sheet1.xml"]
    assert notes["external-link.xlsx"]["external_links"] == ["file:///C:/quotes/price-list-2031.xlsx"]
    assert notes["external-link.xlsx"]["formulas"] == [["Data", "B1", "=[1]Prices!B2", True]]
    assert notes["dde-link.xlsx"]["dde_links"][0] == "cmd|/c calc"
    assert "Data!B1" in notes["dde-link.xlsx"]["dde_links"][1]
    assert notes["formulas-cached.xlsx"]["formula_count"] == 3
    assert notes["formulas-cached.xlsx"]["uncached_count"] == 0
    assert [f[1] for f in notes["formulas-cached.xlsx"]["formulas"]] == ["C2", "C3", "C4"]
    assert notes["formulas-uncached.xlsx"]["uncached_count"] == 3
    assert notes["hidden-sheets.xlsx"]["hidden_sheets"] == ["Loads"]
    assert notes["hidden-sheets.xlsx"]["very_hidden_sheets"] == ["Secret"]
    assert notes["valid.ods"]["formulas"] == [["Loads", "C2", "of:=[.B2]*2", True]]
    assert notes["valid-job.xlsx"]["formula_count"] == 0 and notes["valid-job.xlsx"]["macro_parts"] == []
    assert any("not evaluate" in line for line in notes["formulas-cached.xlsx"]["lines"])
    assert any("no cached value" in line for line in notes["formulas-uncached.xlsx"]["lines"])
    assert any("never ran them" in line for line in notes["macro-vba.xlsm"]["lines"])


# --------------------------------------------------------------------------- the CLI

def _help(args: list[str]) -> str:
    env = dict(os.environ, PYTHONPATH=str(REPO))
    return subprocess.run([sys.executable, "-m", "benchbook", *args, "--help"], capture_output=True, text=True,
                          env=env, cwd=REPO, timeout=120).stdout


def _subcommands() -> list[str]:
    text = _help([])
    section = text.split("positional arguments:", 1)[-1].split("options:", 1)[0]
    return re.findall(r"^ {4}([a-z][\w-]*)(?:\s|$)", section, flags=re.M)


_FILEISH = re.compile(r"workbook|file|\.xlsx|csv|catalog|template|sheet|folder|path", re.I)
_OUTPUT = re.compile(r"output|write|create|save", re.I)
# Numeric limits (--max-file-mb MB "largest input file on disk (default 512)") mention files but take numbers.
_NOT_FILE = re.compile(r"\bprocesses\b|\bnumber of\b|how many|\brank\b|\blargest\b|\bmost\b|\bhighest\b"
                       r"|\(default [\d.]+\)", re.I)
# An output option pointed at an existing corpus file must refuse to overwrite it; that is the same
# for every file, so it runs on a few (the command may do its whole computation first).
OUTPUT_SAMPLE = ("empty.xlsx", "valid-job.xlsx", "zip-bomb-ratio.xlsx", "macro-vba.xlsm")


def _variants(command: str) -> list[tuple[str, list[str]]]:
    """Argument lists for ``command``: the corpus file in every positional; then in each file-taking option."""
    text = _help([command])
    pos = text.split("positional arguments:", 1)[-1].split("options:", 1)[0] if "positional arguments:" in text else ""
    positionals = re.findall(r"^ {2}([a-z][\w-]*)(?:\s|$)", pos, flags=re.M)
    writes = bool(positionals) and all(_OUTPUT.search(h) for h in re.findall(r"^ {2}[a-z][\w-]*\s+(.*)", pos, flags=re.M))
    opts = text.split("options:", 1)[-1]
    options = [(m.group(1), m.group(2), bool(_OUTPUT.search(m.group(3))))
               for m in re.finditer(r"^ {2}(?:-\w [A-Z_]+, )?(--[\w-]+) ([A-Z_]+)\s+(.*(?:\n {6,}.*)*)", opts, flags=re.M)
               if _FILEISH.search(m.group(3)) and not _NOT_FILE.search(m.group(3))]
    usage = " ".join(text.split("\n\n", 1)[0].split())
    while re.search(r"\[[^\[\]]*\]", usage):  # drop optional groups, innermost first
        usage = re.sub(r"\[[^\[\]]*\]", "", usage)
    # Required options: -o OUTPUT gets a fresh path in the cwd; --kind {a,b} gets its first choice.
    required = re.findall(r"(-{1,2}[\w-]+) ([A-Z_]+|\{[^}]*\})", usage)

    def req(skip: str = "") -> list[str]:
        return [a for opt, metavar in required if metavar != skip
                for a in (opt, metavar[1:].split(",")[0].rstrip("}") if metavar.startswith("{") else "{out}")]

    out = [("positional", ["{file}" for _ in positionals] + req(), writes)]  # new/demo: an output path
    # Beside a corpus file in an option, each positional gets a VALID input of its kind, so the command
    # gets as far as opening the option's file: a field sheet where the help says so, else a job. A
    # positional whose help offers the option instead ("job ...; or use --from-quote") is left out.
    helps = dict(re.findall(r"^ {2}([a-z][\w-]*)\s+(.*(?:\n {6,}.*)*)", pos, flags=re.M))
    for opt, metavar, is_output in options:
        base = ["{file}" if command == "new" else "{field}" if re.search(r"filled sheet|field sheet", helps.get(p, ""))
                else "{job}" for p in positionals if f"or use {opt}" not in " ".join(helps.get(p, "").split())]
        out.append((opt, base + req(metavar) + [opt, "{file}"], is_output))
    return out


COMMANDS = _subcommands()
CLI_CASES = [(cmd, label, args, is_out) for cmd in COMMANDS for label, args, is_out in _variants(cmd)]


@pytest.fixture(scope="module")
def valid_inputs(tmp_path_factory) -> dict[str, Path]:
    """The valid inputs given beside a corpus file in an option (copies of the samples, hashed by the test).

    A valid job and a valid field sheet, so that the corpus file given to ``--template``, ``--baseline``,
    ``--catalog`` or ``--from-quote`` is the one that is opened and refused (a blank job failed first).
    """
    folder = tmp_path_factory.mktemp("valid")
    return {"{job}": Path(shutil.copyfile(REPO / "samples" / "telecom-48v.xlsx", folder / "telecom-48v.xlsx")),
            "{field}": Path(shutil.copyfile(REPO / "samples" / "field" / "capacity-test-clean.xlsx",
                                            folder / "capacity-test-clean.xlsx"))}


def test_subcommands_were_discovered():
    assert "size" in COMMANDS and "new" in COMMANDS  # the two the skeleton ships; later ones join on their own


@pytest.mark.parametrize("command,label,args,is_output", CLI_CASES, ids=[f"{c}-{lab}" for c, lab, _a, _o in CLI_CASES])
def test_every_command_on_every_corpus_file(command, label, args, is_output, corpus_copy, valid_inputs, tmp_path):
    from benchbook.sheets.safeio import sniff

    cases = [c for c in CASES if c.name in OUTPUT_SAMPLE] if is_output else CASES
    files = [corpus_copy / c.name for c in cases]
    before = {f.name: _sha(f) for f in files}
    valid_hash = {k: _sha(p) for k, p in valid_inputs.items()}
    args = [str(valid_inputs.get(a, a)) for a in args]
    results = _run_worker("cli", files, [command, *args], tmp_path)
    assert {k: _sha(p) for k, p in valid_inputs.items()} == valid_hash  # the valid inputs are never modified
    after = {f.name: _sha(f) for f in files}
    assert after == before, f"benchbook {command} modified an input file"
    missing = [r for r in results.values() if r.get("rc") == 1 and "No module named 'benchbook." in r["stderr"]]
    if len(missing) == len(files):
        pytest.skip(f"benchbook {command}: its module is not written yet ({missing[0]['stderr'].strip()[:200]})")
    failures = []
    for c in cases:
        rec = results[c.name]
        if rec.get("died"):
            failures.append(f"{c.name}: benchbook {command} hung or crashed (rc {rec['returncode']}): "
                            f"{rec['stderr'][-600:]}")
            continue
        rc, err, out = rec["rc"], rec["stderr"], rec["stdout"]
        if "Traceback" in err or "Traceback" in out:
            failures.append(f"{c.name}: traceback shown: {err[-600:]}")
        if rc == 2:
            report = not err and out.startswith(c.name)  # a checking command's report of what is wrong
            if not (err.startswith("Error: ") or report):
                failures.append(f"{c.name}: exit 2 without 'Error: ...' (or a report naming the file): "
                                f"{(err or out)[:300]}")
        elif rc != 0:
            failures.append(f"{c.name}: exit {rc} (an internal error is a bug): {err[:400]}")
        if (c.expect == "refuse" or is_output) and rc != 2:
            failures.append(f"{c.name}: benchbook {command} exit {rc} on a file the gate refuses (or an existing output)")
        # A catalog may be a CSV by its content (catalog.read_catalog_entries sniffs it), so a text file
        # given to --catalog is read as a CSV catalog and refused cell by cell, not by the gate's phrase.
        as_csv = label == "--catalog" and sniff(corpus_copy / c.name) == "text"
        if c.expect == "refuse" and not is_output and rc == 2 and c.phrase not in err and not as_csv:
            failures.append(f"{c.name}: the error does not say {c.phrase!r}: {err[:300]}")
        if c.expect == "refuse" and label != "positional" and not is_output and f"{c.name}" not in err:
            # the option's file is the one opened and refused, not the valid job or field sheet beside it
            failures.append(f"{c.name}: benchbook {command} {label}: the error does not name the corpus file: "
                            f"{err[:300]}")
    leftovers = [p.name for p in tmp_path.iterdir()]
    assert not failures, "\n".join(failures)
    assert all(not n.endswith(".part") for n in leftovers), leftovers


# --------------------------------------------------------------------------- the worker (runs in a subprocess)

def _outcome(fn) -> str:
    from benchbook.errors import BenchbookError

    try:
        value = fn()
    except BenchbookError as exc:
        return f"error:{type(exc).__name__}:{exc}"
    except BaseException as exc:  # noqa: BLE001 - this is what the test looks for
        return "escaped:" + "".join(traceback.format_exception(exc))[-1500:]
    return f"ok:{value}" if isinstance(value, str) else "ok"


def _readers(path: Path) -> dict[str, str]:
    from benchbook.sheets import safeio

    def full():
        wb = safeio.load_openpyxl(path, data_only=True)
        for ws in wb.worksheets:  # readers iterate what the gate admits: at most max_cells
            for _row in ws.iter_rows(values_only=True):
                pass

    def lazy():
        wb = safeio.load_openpyxl(path, read_only=True)
        try:
            with safeio.reading(path):
                for ws in wb.worksheets:
                    for _row in ws.iter_rows(values_only=True):
                        pass
        finally:
            wb.close()

    out = {"check_workbook_file": _outcome(lambda: safeio.check_workbook_file(path)),
           "load_openpyxl": _outcome(full), "load_openpyxl_read_only": _outcome(lazy),
           "read_values": _outcome(lambda: safeio.read_values(path, 0)),
           "inspect_workbook": _outcome(lambda: safeio.inspect_workbook(path))}
    try:
        from benchbook.sheets.intake import read_job
    except ImportError:
        return out
    out["intake.read_job"] = _outcome(lambda: read_job(path))
    return out


def _notes(path: Path) -> dict:
    import dataclasses

    from benchbook.sheets import safeio

    n = safeio.inspect_workbook(path)
    d = dataclasses.asdict(n)
    d["formulas"] = [[f.sheet, f.cell, f.formula, f.cached] for f in n.formulas]
    d["lines"] = n.lines()
    return {k: list(v) if isinstance(v, tuple) else v for k, v in d.items()}


def _cli(path: Path, command: list[str]) -> dict:
    from contextlib import redirect_stderr, redirect_stdout

    from benchbook.cli import main

    fresh = Path.cwd() / f"out-{path.stem}.xlsx"  # every output benchbook writes is .xlsx
    argv = [a.replace("{file}", str(path)).replace("{out}", str(fresh)) for a in command]
    out, err = io.StringIO(), io.StringIO()
    with redirect_stdout(out), redirect_stderr(err):
        try:
            rc = main(argv)
        except SystemExit as exc:  # argparse usage errors
            rc = exc.code if isinstance(exc.code, int) else 2
        except BaseException as exc:  # noqa: BLE001 - escaping main is a bug; show it
            traceback.print_exception(exc)
            rc = 1
    return {"rc": rc, "stdout": out.getvalue()[:4000], "stderr": err.getvalue()[:4000]}


def _worker(argv: list[str]) -> int:
    import faulthandler
    import resource

    mode, extra, files = argv[0], json.loads(argv[1]), [Path(a) for a in argv[2:]]
    soft, hard = resource.getrlimit(resource.RLIMIT_AS)
    cap = 6 * 1024**3  # a memory bomb becomes MemoryError (or a recorded crash), not a swapping machine
    resource.setrlimit(resource.RLIMIT_AS, (cap if hard == resource.RLIM_INFINITY else min(cap, hard), hard))
    for f in files:
        print(f"START {f.name}", flush=True)
        faulthandler.dump_traceback_later(PER_FILE_S, exit=True)
        if mode == "safeio":
            rec = {"out": _readers(f)}
        elif mode == "notes":
            rec = {"notes": _notes(f)}
        else:
            rec = _cli(f, extra)
        faulthandler.cancel_dump_traceback_later()
        rec["file"] = f.name
        print("RESULT " + json.dumps(rec, default=str), flush=True)
    return 0


if __name__ == "__main__" and len(sys.argv) > 1 and sys.argv[1] == "--worker":
    raise SystemExit(_worker(sys.argv[2:]))
