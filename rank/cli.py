"""The ``peakrank`` command: parses arguments, calls the API, prints.

Exit status 0 on success, 2 on bad input with one line on stderr.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence

from .errors import InputError


class _Parser(argparse.ArgumentParser):
    """argparse that reports a usage error on one line."""

    def error(self, message: str) -> None:
        self.exit(2, f"{self.prog}: {message} (see {self.prog} --help)\n")


def _positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if value < 0:
        raise argparse.ArgumentTypeError(f"{text!r} is negative")
    return value


def _seconds(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number of seconds") from None
    if not value > 0:
        raise argparse.ArgumentTypeError("the budget must be more than 0 seconds")
    return value


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="peakrank",
        description="Rank the structures a molecular formula allows against a 1H NMR peak list.",
    )
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    sub.required = True

    iso = sub.add_parser("isomers", help="list the constitutional isomers of a formula")
    iso.add_argument("formula", metavar="FORMULA", help="molecular formula, e.g. C4H8O2")
    iso.add_argument(
        "--all",
        action="store_true",
        help="complete space: standard valences, neutral, no plausibility filters",
    )
    iso.add_argument("--count", action="store_true", help="print only the number of isomers")
    iso.add_argument("--require", action="append", default=[], metavar="SMARTS",
                     help="keep only structures matching this pattern (repeatable)")
    iso.add_argument("--forbid", action="append", default=[], metavar="SMARTS",
                     help="drop structures matching this pattern (repeatable)")
    iso.add_argument("--ceiling", type=_positive_int, default=None, metavar="N",
                     help="refuse when the estimated space exceeds N structures "
                          "(default 2,000,000; 0 = no limit)")
    iso.add_argument("--budget", type=_seconds, default=None, metavar="SECONDS",
                     help="stop after this many seconds and say the list is incomplete")
    iso.add_argument("--tally", action="store_true",
                     help="report on stderr how many structures each plausibility filter removed")
    iso.set_defaults(run=_run_isomers)
    return parser


def _run_isomers(args: argparse.Namespace) -> int:
    from .generate import DEFAULT_CEILING, IsomerStream

    stream = IsomerStream(
        args.formula,
        complete=args.all,
        require=args.require,
        forbid=args.forbid,
        ceiling=DEFAULT_CEILING if args.ceiling is None else args.ceiling,
        budget=args.budget,
    )
    if args.count:
        print(stream.count())
    else:
        out = sys.stdout
        for n, isomer in enumerate(stream, 1):
            out.write(isomer.smiles + "\n")
            if n % 1000 == 0:
                out.flush()
    if args.tally:
        from .generate import plausibility_filters

        removed = ", ".join(f"{f.id} {stream.removed.get(f.id, 0)}" for f in plausibility_filters())
        note = "no filters in the complete space" if args.all else f"removed by filter: {removed}"
        print(f"peakrank: {stream.explored} structures built; {note}", file=sys.stderr)
    if not stream.complete_run:
        print(f"peakrank: time budget of {args.budget:g} s spent; the list is incomplete",
              file=sys.stderr)
    return 0


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``peakrank`` console script."""
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return args.run(args)
    except InputError as exc:
        print(f"peakrank: {exc}", file=sys.stderr)
        return 2
    except BrokenPipeError:
        sys.stderr.close()
        return 0
    except KeyboardInterrupt:
        print("peakrank: interrupted", file=sys.stderr)
        return 130
