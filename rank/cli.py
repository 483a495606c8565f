"""The ``peakrank`` command: parses arguments, calls the API, prints.

Exit status 0 on success, 2 on bad input with one line on stderr.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence
from pathlib import Path

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
    _add_identify(sub)
    _add_bench(sub)
    _add_demo(sub)
    _add_predict(sub)
    return parser


def _add_demo(sub) -> None:
    dem = sub.add_parser("demo", help="identify the demo scenario's four unknowns and write their reports")
    dem.add_argument("--out", default="peakrank-demo-reports", metavar="DIR",
                     help="folder for the reports (a new one: -2, -3, ... is added if it exists)")
    dem.add_argument("--workers", type=_positive_int, default=1, metavar="N", help="scoring processes (default 1)")
    dem.set_defaults(run=_run_demo)


def _run_demo(args: argparse.Namespace) -> int:
    from .demo import run_demo

    if args.workers == 0:
        raise InputError("--workers must be at least 1")
    run_demo(Path(args.out), workers=args.workers, echo=lambda text: print(text, flush=True))
    return 0


def _add_bench(sub) -> None:
    ben = sub.add_parser("bench", help="run a known-answer set and report how often the truth ranks first")
    ben.add_argument("file", metavar="FILE",
                     help="tab-separated known answers: id, name, formula, smiles, solvent, peaks, source")
    ben.add_argument("--only", action="append", default=[], metavar="ID", help="run only these ids (repeatable)")
    ben.add_argument("--no-hints", action="store_true", help="do not narrow the isomer space with hints")
    ben.add_argument("--workers", type=_positive_int, default=1, metavar="N", help="scoring processes (default 1)")
    ben.add_argument("--budget", type=_seconds, metavar="SECONDS", help="time limit per compound")
    ben.add_argument("--ceiling", type=_positive_int, default=None, metavar="N",
                     help="refuse compounds whose isomer space is estimated above N (default 2,000,000)")
    ben.add_argument("--fit", action="store_true",
                     help="fit the confidence temperature on this set and print it with the calibration")
    ben.set_defaults(run=_run_bench)


def _run_bench(args: argparse.Namespace) -> int:
    from .bench import fit_temperature, read_cases, reliability, run_case, summary
    from .generate import DEFAULT_CEILING
    from .shortlist import temperature

    cases = [c for c in read_cases(args.file) if not args.only or c.id in args.only]
    if not cases:
        raise InputError("no case left to run; check --only")
    outcomes = []
    print(f"{'id':<14} {'rank':>5} {'scored':>8} {'seconds':>8}  name")
    for case in cases:
        o = run_case(case, use_hints=not args.no_hints, workers=args.workers, budget=args.budget,
                     ceiling=DEFAULT_CEILING if args.ceiling is None else args.ceiling)
        outcomes.append(o)
        rank = "-" if o.rank is None else str(o.rank)
        print(f"{case.id:<14} {rank:>5} {o.scored:>8,} {o.seconds:>8.2f}  {case.name}", flush=True)
    s = summary(outcomes)
    print()
    print(f"cases {s['cases']}: top-1 {s['top1']:.1%}, top-3 {s['top3']:.1%}, top-10 {s['top10']:.1%}, "
          f"MRR {s['mrr']:.3f}")
    print(f"candidates scored {s['scored_total']:,}; time per compound median {s['median_s']:.2f} s, "
          f"max {s['max_s']:.2f} s")
    misses = [o for o in outcomes if o.rank != 1]
    if misses:
        print("misses (true rank; best candidate; misfits true / best):")
        for o in misses:
            where = f"refused ({o.refused})" if o.refused else "never scored" if o.rank is None else f"rank {o.rank}"
            true = "-" if o.true_misfit is None else f"{o.true_misfit:.3f}"
            best = "-" if o.best_misfit is None else f"{o.best_misfit:.3f}"
            print(f"  {o.case.id} {o.case.name}: {where}; best {o.best}; {true} / {best}")
    t = fit_temperature(outcomes) if args.fit else temperature()
    label = "fitted" if args.fit else "in use"
    print(f"confidence temperature {label}: {t:.3f}; calibration of the top candidate's confidence:")
    for span, n, conf, right in reliability(outcomes, t):
        print(f"  confidence {span}: {n} cases, mean confidence {conf:.1%}, top-1 right {right:.1%}")
    return 0


def _add_identify(sub) -> None:
    ide = sub.add_parser("identify", help="rank the isomers of a formula against a 1H peak list")
    ide.add_argument("--formula", required=True, help="molecular formula of the unknown, e.g. C9H10O2")
    ide.add_argument("--peaks", required=True, metavar="PEAKS",
                     help="a peak file (.csv, .tsv, .json, .jdx) or an inline list such as "
                          "'7.35-7.20 (m, 5H), 4.12 (q, J = 7.1 Hz, 2H), 2.05 (s, 3H)'")
    ide.add_argument("--solvent", metavar="NAME", help="NMR solvent (default: the peak list's, else CDCl3)")
    ide.add_argument("--field", type=float, metavar="MHZ", help="spectrometer frequency (default: the peak list's, else 400)")
    ide.add_argument("--top", type=_positive_int, default=10, metavar="N", help="candidates to list (default 10)")
    ide.add_argument("--candidates", metavar="FILE", help="score these structures (SMILES lines or SDF) instead of all isomers")
    ide.add_argument("--require", action="append", default=[], metavar="SMARTS", help="candidates must match (repeatable)")
    ide.add_argument("--forbid", action="append", default=[], metavar="SMARTS", help="candidates must not match (repeatable)")
    ide.add_argument("--no-hints", action="store_true", help="do not narrow the isomer space with hints read from the peaks")
    ide.add_argument("--keep-all-peaks", action="store_true", help="do not drop solvent, water and TMS signals")
    ide.add_argument("--workers", type=_positive_int, default=1, metavar="N", help="scoring processes (default 1)")
    ide.add_argument("--budget", type=_seconds, metavar="SECONDS", help="stop scoring after this long and say so")
    ide.add_argument("--ceiling", type=_positive_int, default=None, metavar="N",
                     help="refuse isomer spaces estimated above N structures (default 2,000,000; 0 = no limit)")
    ide.add_argument("--json", metavar="PATH", help="write the short list as JSON ('-' for stdout, nothing else there)")
    ide.add_argument("--csv", metavar="PATH", help="write the short list as CSV")
    ide.add_argument("--report", metavar="PATH.html", help="write a self-contained HTML report")
    ide.add_argument("--force", action="store_true", help="replace output files that exist")
    ide.add_argument("--quiet", action="store_true", help="no progress line on stderr")
    ide.set_defaults(run=_run_identify)


def _run_identify(args: argparse.Namespace) -> int:
    from .generate import DEFAULT_CEILING
    from .report import csv_text, json_text, terminal_text, write_text_file
    from .shortlist import Identifier

    if args.top == 0:
        raise InputError("--top must be at least 1")
    if args.workers == 0:
        raise InputError("--workers must be at least 1")
    if args.field is not None and not 20 <= args.field <= 1500:
        raise InputError("--field must be a spectrometer frequency in MHz, between 20 and 1500")
    for path in (args.csv, args.report, None if args.json == "-" else args.json):
        if path and Path(path).exists() and not args.force:
            raise InputError(f"{path} exists; choose another name or pass --force to replace it")
    identifier = Identifier(
        top=args.top, solvent=args.solvent, field_mhz=args.field, require=args.require, forbid=args.forbid,
        use_hints=not args.no_hints, workers=args.workers, budget=args.budget,
        ceiling=DEFAULT_CEILING if args.ceiling is None else args.ceiling,
        keep_all_peaks=args.keep_all_peaks, progress=not args.quiet and sys.stderr.isatty(),
    )
    result = identifier.identify(args.formula, args.peaks, args.candidates)
    if args.json == "-":
        sys.stdout.write(json_text(result))
    else:
        sys.stdout.write(terminal_text(result))
        if args.json:
            write_text_file(args.json, json_text(result), args.force)
    if args.csv:
        write_text_file(args.csv, csv_text(result), args.force)
    if args.report:
        from .html import report_html

        write_text_file(args.report, report_html(result), args.force)
    if not result.complete:
        print("peakrank: the run stopped early; the list is incomplete", file=sys.stderr)
    return 0


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


def _add_predict(sub) -> None:
    pre = sub.add_parser("predict", help="predict the 1H NMR signals of a structure, with their arithmetic")
    pre.add_argument("smiles", metavar="SMILES", help="the structure, e.g. 'CCOC(C)=O' (quote it in the shell)")
    pre.add_argument("--solvent", default="CDCl3", metavar="NAME", help="NMR solvent (default CDCl3)")
    pre.add_argument("--field", type=float, default=400.0, metavar="MHZ",
                     help="spectrometer frequency, judges first-order multiplets (default 400)")
    pre.add_argument("--json", metavar="PATH", help="write the signals as JSON ('-' for stdout, nothing else there)")
    pre.add_argument("--force", action="store_true", help="replace the --json file if it exists")
    pre.set_defaults(run=_run_predict)


def _run_predict(args: argparse.Namespace) -> int:
    import json

    from .predict import Predictor, parse_smiles, signal_table

    if args.json and args.json != "-" and Path(args.json).exists() and not args.force:
        raise InputError(f"{args.json} exists; choose another name or pass --force to replace it")
    predictor = Predictor(args.solvent, args.field)
    signals = predictor.predict(parse_smiles(args.smiles))
    doc = {"smiles": args.smiles, "solvent": predictor.solvent_id, "field_mhz": args.field,
           "signals": [s.to_json() for s in signals]}
    text = json.dumps(doc, indent=2, ensure_ascii=False) + "\n"
    if args.json == "-":
        sys.stdout.write(text)
        return 0
    print(f"{args.smiles}  ({predictor.solvent_id}, {args.field:g} MHz)")
    sys.stdout.write(signal_table(signals))
    if args.json:
        try:
            Path(args.json).write_text(text, encoding="utf-8")
        except OSError as exc:
            raise InputError(f"cannot write {args.json}: {exc.strerror}; choose another path") from None
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
