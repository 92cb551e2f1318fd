"""The ``benchbook`` command: thin argument parsing over the library.

Each subcommand parses its arguments, calls one library function, prints the
result and maps errors to exit codes: ``Error: …`` and exit 2 for bad input
(any :class:`~benchbook.errors.BenchbookError`), exit 1 for an internal error.
No traceback is shown for bad input; set ``BENCHBOOK_DEBUG=1`` to see one for an
internal error. What the readers notice in an input workbook (macros, external
or DDE links, hidden sheets) is printed on stderr as ``Warning: …`` lines after
the output (``check`` lists it among its findings instead).
"""

from __future__ import annotations

import argparse
import os
import sys
import traceback
from typing import Callable, Sequence

from benchbook import __version__
from benchbook.errors import BenchbookError

Handler = Callable[[argparse.Namespace], int]


def _add_force(p: argparse.ArgumentParser) -> None:
    p.add_argument("--force", action="store_true", help="overwrite an existing output file")


def _limits_parent() -> argparse.ArgumentParser:
    """Options that override the input-safety limits (every command that reads a workbook)."""
    p = argparse.ArgumentParser(add_help=False)
    g = p.add_argument_group("input-safety limits (see README, Input safety)")
    g.add_argument("--max-file-mb", type=float, metavar="MB", help="largest input file on disk (default 512)")
    g.add_argument("--max-unpacked-mb", type=float, metavar="MB", help="largest unpacked size of a workbook (default 1024)")
    g.add_argument("--max-members", type=int, metavar="N", help="most parts in a workbook archive (default 10000)")
    g.add_argument("--max-ratio", type=float, metavar="R", help="highest compression ratio of a part (default 200)")
    g.add_argument("--max-cells", type=int, metavar="N", help="most cells a sheet may span (default 20000000)")
    return p


_LIMIT_OPTIONS = ("max_file_mb", "max_unpacked_mb", "max_members", "max_ratio", "max_cells")


def _apply_limits(args: argparse.Namespace) -> None:
    given = {k: getattr(args, k, None) for k in _LIMIT_OPTIONS}
    if any(v is not None for v in given.values()):
        from benchbook.sheets import safeio

        safeio.set_limits(safeio.ArchiveLimits.from_options(**given))


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="benchbook",
        description="Lead-acid battery banks in spreadsheets: size, compare, quote, issue field sheets, check them.",
    )
    parser.add_argument("--version", action="version", version=f"benchbook {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    limits = _limits_parent()

    p = sub.add_parser("demo", help="run the whole job on an invented scenario",
                       description="Size, compare and quote two invented jobs, issue field sheets, fill them "
                                   "as an invented crew would and check them against the model.")
    p.add_argument("outdir", help="empty folder for every output")
    p.add_argument("--no-pdf", action="store_true", help="do not print the quotes to PDF")
    p.add_argument("--force", action="store_true",
                   help="write into a folder that is not empty, overwriting earlier demo outputs")
    p.set_defaults(handler=_cmd_demo)

    p = sub.add_parser("new", help="write a blank job workbook to fill in",
                       description="Write a blank job workbook (intake form with the embedded catalog).")
    p.add_argument("job", help="path of the job workbook to create (.xlsx)")
    _add_force(p)
    p.set_defaults(handler=_cmd_new)

    p = sub.add_parser("size", parents=[limits], help="turn a job workbook into ranked bank options",
                       description="Read a job workbook and print ranked bank options.")
    p.add_argument("job", help="filled-in job workbook (.xlsx)")
    p.add_argument("--catalog", help="battery catalog: a workbook with a Batteries table, or a CSV with its headers")
    p.add_argument("--json", action="store_true", help="print the options as JSON")
    p.add_argument("--top", type=int, default=10, help="how many options to print (default 10)")
    p.add_argument("--rank-by", choices=("cost", "unserved", "price", "weight"), default="cost",
                   help="ranking: cost per delivered kWh (cyclic) or cost of readiness per year (standby); "
                        "unserved energy; price; weight (default cost)")
    p.set_defaults(handler=_cmd_size)

    p = sub.add_parser("quote", parents=[limits], help="fill the quote template for one option",
                       description="Evaluate the job and fill a quote workbook for the option of the given rank.")
    p.add_argument("job", help="filled-in job workbook (.xlsx)")
    p.add_argument("--option", type=int, default=1, help="rank of the option to quote, as `size` lists it (default 1)")
    p.add_argument("--template", help="the firm's own quote template (default: the shipped one)")
    p.add_argument("--catalog", help="battery catalog workbook or CSV (default: the job's Batteries table)")
    p.add_argument("-o", "--output", required=True, help="quote workbook to write (.xlsx)")
    p.add_argument("--pdf", action="store_true", help="also print a PDF beside it (needs LibreOffice)")
    p.add_argument("--paper", choices=("A4", "Letter"), default="A4", help="paper size (default A4)")
    _add_force(p)
    p.set_defaults(handler=_cmd_quote)

    p = sub.add_parser("compare", parents=[limits], help="write the side-by-side comparison workbook",
                       description="Evaluate the job and write a comparison workbook: options as columns, "
                                   "native charts, and one sheet per option with its hourly year.")
    p.add_argument("job", help="filled-in job workbook (.xlsx)")
    p.add_argument("-o", "--output", required=True, help="comparison workbook to write (.xlsx)")
    group = p.add_mutually_exclusive_group()
    group.add_argument("--options", help="ranks to compare, comma-separated, e.g. 1,2,5")
    group.add_argument("--top", type=int, help="compare the first N options")
    p.add_argument("--catalog", help="battery catalog workbook or CSV (default: the job's Batteries table)")
    p.add_argument("--no-hourly", action="store_true", help="leave out the hourly sheets")
    _add_force(p)
    p.set_defaults(handler=_cmd_compare)

    p = sub.add_parser("fieldsheet", parents=[limits], help="write a data-entry sheet for a field crew",
                       description="Write a capacity-test or routine-readings sheet for one bank, pre-filled with "
                                   "its identity and every block numbered by string and position.")
    p.add_argument("job", nargs="?", help="job workbook (.xlsx); or use --from-quote")
    p.add_argument("--from-quote", dest="quote", help="a quote workbook (.xlsx) written by `benchbook quote`")
    p.add_argument("--option", type=int, default=1, help="rank of the option, as `size` lists it (default 1)")
    p.add_argument("--kind", required=True, choices=("capacity-test", "readings"), help="which sheet")
    p.add_argument("--bank-id", default="BANK-1", help="the bank's name on site (default BANK-1)")
    p.add_argument("--test-hours", type=float, default=3.0,
                   help="rated duration the capacity test runs at, from the rate table (default 3)")
    p.add_argument("--catalog", help="battery catalog workbook or CSV")
    p.add_argument("-o", "--output", required=True, help="sheet to write (.xlsx)")
    _add_force(p)
    p.set_defaults(handler=_cmd_fieldsheet)

    p = sub.add_parser("check", parents=[limits], help="check filled field sheets against the model",
                       description="Read filled capacity-test or readings sheets (a file or a folder), validate "
                                   "every entry, apply the IEEE 450 and maintenance checks, compare with the "
                                   "model, and write checked copies with a Findings sheet.")
    p.add_argument("path", help="a filled sheet (.xlsx, .xlsm, .ods) or a folder of them")
    p.add_argument("-o", "--output", help="checked copy to write (a folder for a folder input; "
                                         "default FOLDER/checked for folders, none for one file)")
    p.add_argument("--baseline", help="an earlier sheet of the same bank to compare with")
    p.add_argument("--json", action="store_true", help="print the findings as JSON")
    p.add_argument("--workers", type=int, help="processes for a folder (default: the number of CPUs)")
    _add_force(p)
    _add_thresholds(p)
    p.set_defaults(handler=_cmd_check)

    p = sub.add_parser("template-check", parents=[limits], help="check a template against the template contract",
                       description="List every missing or malformed defined name and table header of a "
                                   "template. Exit 0 when it is usable.")
    p.add_argument("template", help="template workbook (.xlsx)")
    p.add_argument("--kind", choices=("intake", "quote", "capacity-test", "readings"),
                   help="which contract (default: guessed from the names the workbook holds)")
    p.add_argument("--strict", action="store_true", help="also report missing optional names and headers")
    p.set_defaults(handler=_cmd_template_check)
    return parser


def _cmd_demo(args: argparse.Namespace) -> int:
    from benchbook.sheets.demo import run_demo

    res = run_demo(args.outdir, force=args.force, pdf=False if args.no_pdf else None)
    print(res.summary())
    return 0


def _cmd_new(args: argparse.Namespace) -> int:
    from benchbook.sheets.intake import write_blank_job

    path = write_blank_job(args.job, force=args.force)
    print(f"wrote {path}")
    return 0


def _cmd_size(args: argparse.Namespace) -> int:
    from benchbook.sheets.report import size_report

    print(size_report(args.job, catalog=args.catalog, as_json=args.json, top=args.top, rank_by=args.rank_by))
    return 0


def _ranks(text: str | None) -> list[int] | None:
    if text is None:
        return None
    from benchbook.errors import InputError

    try:
        return [int(t) for t in text.split(",") if t.strip()]
    except ValueError:
        raise InputError("--options", "", text, "option ranks separated by commas, e.g. 1,2,5") from None


def _cmd_quote(args: argparse.Namespace) -> int:
    from benchbook.sheets.report import quote_job

    res = quote_job(args.job, args.option, args.output, template=args.template, catalog=args.catalog,
                    pdf=args.pdf, paper=args.paper, force=args.force)
    print(f"wrote {res.path} (grand total {res.totals.grand_total:,.2f})")
    if res.pdf_path:
        print(f"wrote {res.pdf_path}")
    for note in res.notes:
        print(note)
    return 0


def _cmd_compare(args: argparse.Namespace) -> int:
    from benchbook.sheets.report import compare_job

    path = compare_job(args.job, args.output, options=_ranks(args.options), top=args.top, catalog=args.catalog,
                       force=args.force, hourly=not args.no_hourly)
    print(f"wrote {path}")
    return 0


def _cmd_fieldsheet(args: argparse.Namespace) -> int:
    from benchbook.sheets.fieldjobs import write_fieldsheet

    path = write_fieldsheet(args.kind, args.output, job=args.job, quote=args.quote, option=args.option,
                            catalog=args.catalog, bank_id=args.bank_id, test_hours=args.test_hours, force=args.force)
    print(f"wrote {path}")
    return 0


# ---- check: thresholds --------------------------------------------------------------------------
# (criteria, field, metavar, low, high, low_open, what, source); each option is named after the field of
# CapacityCriteria / ReadingsCriteria it sets, as the JSON output's "criteria" names it, and shows its default.
def _threshold_type(th) -> Callable[[str], float]:
    """argparse type of one threshold option: the range and words of its model field (``model.criteria``)."""
    def parse(text: str) -> float:
        try:
            v = float(text)
        except ValueError:
            v = float("nan")
        if not th.accepts(v):
            raise argparse.ArgumentTypeError(f"found {text!r}; expected {th.expected()}")
        return v
    return parse


def _criteria_classes() -> tuple:
    from benchbook.model.fieldtests import CapacityCriteria
    from benchbook.model.readings import ReadingsCriteria

    return (("capacity-test thresholds", "capacity_criteria", CapacityCriteria),
            ("readings thresholds", "readings_criteria", ReadingsCriteria))


def _add_thresholds(p: argparse.ArgumentParser) -> None:
    """The check's thresholds, one option per criterion field; each report records the values used."""
    from benchbook.model.criteria import thresholds

    for title, _key, cls in _criteria_classes():
        g = p.add_argument_group(f"{title} (override the defaults; the output records the values used)")
        defaults = cls()
        for name, th in thresholds(cls):
            g.add_argument("--" + name.replace("_", "-"), dest=name, metavar=th.metavar, type=_threshold_type(th),
                           help=f"{th.what} (default {getattr(defaults, name):g}; {th.source})".replace("%", "%%"))


def _criteria(args: argparse.Namespace) -> dict:
    """``capacity_criteria`` / ``readings_criteria`` for the library, from the threshold options given."""
    from dataclasses import replace

    from benchbook.model.criteria import thresholds

    out = {}
    for _title, key, cls in _criteria_classes():
        given = {name: getattr(args, name) for name, _ in thresholds(cls) if getattr(args, name) is not None}
        if given:
            out[key] = replace(cls(), **given)
    return out


def _cmd_check(args: argparse.Namespace) -> int:
    from benchbook.sheets.checked import check_path
    from benchbook.sheets.fieldjobs import check_text

    rep = check_path(args.path, out=args.output, baseline=args.baseline, force=args.force, workers=args.workers,
                     **_criteria(args))
    print(rep.to_json() if args.json else check_text(rep))
    return rep.exit_code


def _cmd_template_check(args: argparse.Namespace) -> int:
    from benchbook.sheets.templatecheck import template_check

    from benchbook.errors import TemplateError

    ok, text = template_check(args.template, kind=args.kind, strict=args.strict)
    if not ok:
        raise TemplateError(text)
    print(text)
    return 0


def _collecting(notes: list):
    from benchbook.sheets.safeio import collecting_notes

    return collecting_notes(notes)


def _warn(notes: list) -> None:
    """Print the readers' notes on stderr (stdout stays the command's output, e.g. valid JSON)."""
    for note in notes:
        print(f"{'Warning' if note.severity == 'warning' else 'Note'}: {note}", file=sys.stderr)


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    handler: Handler | None = getattr(args, "handler", None)
    if handler is None:
        parser.print_help()
        return 2
    notes: list = []  # what the readers noticed (macros, links, hidden sheets): warnings after the output
    if os.environ.get("BENCHBOOK_DEBUG") != "1":
        # python-calamine is Rust: a panic on a hostile cell becomes a FileFormatError, but Rust's hook would
        # still print a stack backtrace on stderr when the machine sets RUST_BACKTRACE
        os.environ["RUST_BACKTRACE"] = "0"
    try:
        _apply_limits(args)
        with _collecting(notes):
            code = handler(args)
        _warn(notes)
        return code
    except BenchbookError as exc:
        print(f"Error: {exc}", file=sys.stderr)
        _warn(notes)
        return exc.exit_code
    except BrokenPipeError:  # output piped into head & co.: not an error
        try:
            sys.stdout = open(os.devnull, "w")
        except OSError:
            pass
        return 0
    except KeyboardInterrupt:
        print("Error: interrupted", file=sys.stderr)
        return 130
    except Exception as exc:  # a bug, not bad input
        print(f"Error: internal error ({type(exc).__name__}: {exc}); please report it", file=sys.stderr)
        if os.environ.get("BENCHBOOK_DEBUG"):
            traceback.print_exc()
        return 1


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
