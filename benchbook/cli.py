"""The ``benchbook`` command: thin argument parsing over the library.

Each subcommand parses its arguments, calls one library function, prints the
result and maps errors to exit codes: ``Error: …`` and exit 2 for bad input
(any :class:`~benchbook.errors.BenchbookError`), exit 1 for an internal error.
No traceback is shown for bad input; set ``BENCHBOOK_DEBUG=1`` to see one for an
internal error.
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


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="benchbook",
        description="Lead-acid battery banks in spreadsheets: size, compare, quote, issue field sheets, check them.",
    )
    parser.add_argument("--version", action="version", version=f"benchbook {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    p = sub.add_parser("new", help="write a blank job workbook to fill in",
                       description="Write a blank job workbook (intake form with the embedded catalog).")
    p.add_argument("job", help="path of the job workbook to create (.xlsx)")
    _add_force(p)
    p.set_defaults(handler=_cmd_new)

    p = sub.add_parser("size", help="turn a job workbook into ranked bank options",
                       description="Read a job workbook and print ranked bank options.")
    p.add_argument("job", help="filled-in job workbook (.xlsx)")
    p.add_argument("--catalog", help="battery catalog: a workbook with a Batteries table, or a CSV with its headers")
    p.add_argument("--json", action="store_true", help="print the options as JSON")
    p.add_argument("--top", type=int, default=10, help="how many options to print (default 10)")
    p.add_argument("--rank-by", choices=("cost", "unserved", "price", "weight"), default="cost",
                   help="ranking: cost per delivered kWh (cyclic) or cost of readiness per year (standby); "
                        "unserved energy; price; weight (default cost)")
    p.set_defaults(handler=_cmd_size)
    return parser


def _cmd_new(args: argparse.Namespace) -> int:
    from benchbook.sheets.intake import write_blank_job

    path = write_blank_job(args.job, force=args.force)
    print(f"wrote {path}")
    return 0


def _cmd_size(args: argparse.Namespace) -> int:
    from benchbook.sheets.report import size_report

    print(size_report(args.job, catalog=args.catalog, as_json=args.json, top=args.top, rank_by=args.rank_by))
    return 0


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    handler: Handler | None = getattr(args, "handler", None)
    if handler is None:
        parser.print_help()
        return 2
    try:
        return handler(args)
    except BenchbookError as exc:
        print(f"Error: {exc}", file=sys.stderr)
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
