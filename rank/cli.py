"""The ``peakrank`` command: parses arguments, calls the API, prints.

Exit status 0 on success; 2 on bad input with one line on stderr saying what is
wrong and how to fix it; 130 on Ctrl-C.  Output files are checked before any
work starts and written whole or not at all.
"""

from __future__ import annotations

import argparse
import difflib
import os
import re
import sys
from collections.abc import Sequence
from pathlib import Path

from .errors import InputError

__all__ = ["build_parser", "main"]


class _Parser(argparse.ArgumentParser):
    """argparse that reports a usage error on one line, suggesting the closest option or command."""

    def __init__(self, *args, **kwargs) -> None:
        self._known_options: set[str] = set()
        self._commands: dict[str, _Parser] = {}
        self._given: list[str] = []
        super().__init__(*args, **kwargs)

    def add_argument(self, *args, **kwargs):
        action = super().add_argument(*args, **kwargs)
        self._known_options.update(action.option_strings)
        return action

    def add_subparsers(self, **kwargs):
        sub = super().add_subparsers(**kwargs)
        self._commands = sub.choices
        return sub

    def parse_known_args(self, args=None, namespace=None):
        self._given = list(sys.argv[1:] if args is None else args)
        return super().parse_known_args(args, namespace)

    def error(self, message: str) -> None:
        prog, text = self._better(message)
        self.exit(2, f"{prog}: {text} (see {prog} --help)\n")

    def _better(self, message: str) -> tuple[str, str]:
        """(program, message), the message led by 'did you mean ...?' for a misspelled command or option."""
        choice = re.search(r"invalid choice: '([^']*)'", message)
        if choice and self._commands:
            close = difflib.get_close_matches(choice.group(1), list(self._commands), n=1, cutoff=0.5)
            if close:
                return self.prog, f"unknown command {choice.group(1)!r}; did you mean {close[0]}?"
            return self.prog, f"unknown command {choice.group(1)!r}; the commands are {', '.join(self._commands)}"
        command = next((a for a in self._given if a in self._commands), None)
        parser, prog = (self._commands[command], f"{self.prog} {command}") if command else (self, self.prog)
        known = sorted(parser._known_options)
        for given in self._given:
            name = given.split("=", 1)[0]
            if not name.startswith("--") or name == "--" or any(k.startswith(name) for k in known):
                continue
            close = difflib.get_close_matches(name, known, n=1, cutoff=0.6)
            return prog, f"unknown option {name}" + (f"; did you mean {close[0]}?" if close else "")
        return prog, message


def _version() -> str:
    from importlib.metadata import PackageNotFoundError, version

    try:
        return version("peakrank")
    except PackageNotFoundError:
        from . import __version__

        return __version__


_WORKERS_HELP = "processes that generate and score (default: the cores this process may use)"


def _workers(args: argparse.Namespace) -> int:
    from .shortlist import available_cores

    if args.workers is None:
        return available_cores()
    if args.workers == 0:
        raise InputError("--workers must be at least 1")
    return args.workers


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
    parser.add_argument("--version", action="version", version=f"peakrank {_version()}")
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
    _add_peaks(sub)
    return parser


def _add_demo(sub) -> None:
    dem = sub.add_parser("demo", help="identify the demo scenario's four unknowns and write their reports")
    dem.add_argument("--out", default="peakrank-demo-reports", metavar="DIR",
                     help="folder for the reports (a new one: -2, -3, ... is added if it exists)")
    dem.add_argument("--workers", type=_positive_int, default=None, metavar="N", help=_WORKERS_HELP)
    dem.set_defaults(run=_run_demo)


def _run_demo(args: argparse.Namespace) -> int:
    from .demo import run_demo

    run_demo(Path(args.out), workers=_workers(args), echo=lambda text: print(text, flush=True))
    return 0


def _add_bench(sub) -> None:
    ben = sub.add_parser("bench", help="run a known-answer set and report how often the truth ranks first")
    ben.add_argument("file", metavar="FILE",
                     help="tab-separated known answers: id, name, formula, smiles, solvent, peaks, source")
    ben.add_argument("--only", action="append", default=[], metavar="ID", help="run only these ids (repeatable)")
    ben.add_argument("--no-hints", action="store_true", help="do not narrow the isomer space with hints")
    ben.add_argument("--workers", type=_positive_int, default=None, metavar="N", help=_WORKERS_HELP)
    ben.add_argument("--budget", type=_seconds, metavar="SECONDS", help="time limit per compound")
    ben.add_argument("--ceiling", type=_positive_int, default=None, metavar="N",
                     help="without --budget, refuse compounds whose isomer space is estimated above N "
                          "(default 2,000,000)")
    ben.add_argument("--fit", action="store_true",
                     help="fit the confidence temperature on this set and print it with the calibration")
    ben.add_argument("--part", choices=("fit", "held-out", "all"), default="all",  # rank.bench.PARTS
                     help="of the open data set: the fit part, the held-out part or all rows (default all)")
    ben.add_argument("--library", metavar="FILE",
                     help="rank each compound among the structures of its formula in this grouped file "
                          "(formula<TAB>smiles|smiles|...) instead of generating isomers")
    ben.add_argument("--carbons", metavar="LOW-HIGH", help="only compounds with this many carbons, e.g. 2-8")
    ben.add_argument("--heteroatoms", type=int, metavar="N", help="only compounds with at most N atoms besides C and H")
    ben.add_argument("--with-carbon", action="store_true",
                     help="score the file's 13C lists too (the open data's c13 column, a carbon column)")
    ben.add_argument("--sample", type=_positive_int, metavar="N",
                     help="only the first N cases in a fixed order (by a hash of the id)")
    ben.set_defaults(run=_run_bench)


def _run_bench(args: argparse.Namespace) -> int:
    from .bench import fit_temperature, read_cases, read_library, reliability, run_case, select_cases, summary
    from .generate import DEFAULT_CEILING
    from .shortlist import temperature

    workers = _workers(args)
    cases = select_cases(read_cases(args.file, args.part), args.only, args.carbons, args.sample, args.heteroatoms)
    library = read_library(args.library) if args.library else None
    if not cases:
        raise InputError("no case left to run; check --only, --part, --carbons and --sample")
    outcomes = []
    print(f"{'id':<14} {'rank':>5} {'scored':>8} {'seconds':>8}  name")
    for case in cases:
        o = run_case(case, library=library, with_carbon=args.with_carbon, use_hints=not args.no_hints,
                     workers=workers, budget=args.budget,
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
    ide = sub.add_parser("identify", help="rank the isomers of a formula against a 1H peak list (and a 13C list)")
    ide.add_argument("--formula", required=True, help="molecular formula of the unknown, e.g. C9H10O2")
    ide.add_argument("--peaks", required=True, metavar="PEAKS",
                     help="a peak file (.csv, .tsv, .json, .jdx), a 1H spectrum (JCAMP-DX, Bruker folder) whose "
                          "peaks are picked, or an inline list such as "
                          "'7.35-7.20 (m, 5H), 4.12 (q, J = 7.1 Hz, 2H), 2.05 (s, 3H)'")
    ide.add_argument("--carbon", metavar="PEAKS",
                     help="the 13C list, a file, a 13C spectrum or inline, with DEPT types when known, e.g. "
                          "'170.9 (C), 60.4 (CH2), 21.0 (CH3), 14.2 (CH3)'")
    ide.add_argument("--dept135", metavar="FILE",
                     help="a DEPT-135 spectrum (JCAMP-DX, Bruker folder) that types the lines picked from the "
                          "--carbon spectrum: CH and CH3 up, CH2 down, quaternary absent")
    ide.add_argument("--solvent", metavar="NAME",
                     help="NMR solvent (default: the peak list's or spectrum file's, else CDCl3)")
    ide.add_argument("--field", type=float, metavar="MHZ",
                     help="spectrometer frequency (default: the peak list's, else 400)")
    ide.add_argument("--top", type=_positive_int, default=10, metavar="N",
                     help="candidates to list (default 10)")
    ide.add_argument("--candidates", metavar="FILE",
                     help="score these structures (SMILES lines or SDF) instead of all isomers")
    ide.add_argument("--require", action="append", default=[], metavar="SMARTS",
                     help="candidates must match (repeatable)")
    ide.add_argument("--forbid", action="append", default=[], metavar="SMARTS",
                     help="candidates must not match (repeatable)")
    ide.add_argument("--no-hints", action="store_true",
                     help="do not narrow the isomer space with hints and limits read from the 1H and 13C lists")
    ide.add_argument("--keep-all-peaks", action="store_true", help="do not drop solvent, water and TMS signals")
    ide.add_argument("--workers", type=_positive_int, default=None, metavar="N", help=_WORKERS_HELP)
    ide.add_argument("--budget", type=_seconds, metavar="SECONDS",
                     help="stop scoring after this long and say how much was searched; any space is then searched, "
                          "the likeliest hydrogen distributions first")
    ide.add_argument("--ceiling", type=_positive_int, default=None, metavar="N",
                     help="without --budget, refuse isomer spaces estimated above N structures (default 2,000,000; "
                          "0 = no limit)")
    ide.add_argument("--json", metavar="PATH", help="write the short list as JSON ('-' for stdout, nothing else there)")
    ide.add_argument("--csv", metavar="PATH", help="write the short list as CSV ('-' for stdout, nothing else there)")
    ide.add_argument("--report", metavar="PATH.html",
                     help="write a self-contained HTML report ('-' for stdout, nothing else there)")
    ide.add_argument("--force", action="store_true", help="replace output files that exist")
    ide.add_argument("--quiet", action="store_true", help="no progress line on stderr")
    ide.set_defaults(run=_run_identify)


def _run_identify(args: argparse.Namespace) -> int:
    from .generate import DEFAULT_CEILING
    from .report import csv_text, json_text, terminal_text, write_whole_file
    from .shortlist import Identifier

    identifier = Identifier(
        top=args.top, solvent=args.solvent, field_mhz=args.field, require=args.require, forbid=args.forbid,
        use_hints=not args.no_hints, workers=_workers(args), budget=args.budget,
        ceiling=DEFAULT_CEILING if args.ceiling is None else args.ceiling,
        keep_all_peaks=args.keep_all_peaks, progress=not args.quiet and sys.stderr.isatty(),
    )
    identifier.check_options()
    outputs = _check_outputs(args, {"--json": ("json", "shortlist.json"), "--csv": ("csv", "shortlist.csv"),
                                    "--report": ("report", "report.html")})
    if args.dept135 is not None and args.carbon is None:
        raise InputError("--dept135 types the lines of a 13C spectrum; give the 13C spectrum file with --carbon too")
    from .formula import parse_formula
    from .spectra import read_peak_source

    parse_formula(args.formula)  # a typing slip is refused before any spectrum is picked

    peaks = read_peak_source(args.peaks, "1H", args.solvent)
    carbon = None if args.carbon is None else read_peak_source(args.carbon, "13C", args.solvent, args.dept135)
    result = identifier.identify(args.formula, peaks, args.candidates, carbon)
    _print_notes(result.notes)  # after the run, so that a refusal stays one line

    def render(option: str) -> str:
        if option == "--json":
            return json_text(result)
        if option == "--csv":
            return csv_text(result)
        from .report import report_html

        return report_html(result, trace=peaks.trace, carbon_trace=carbon and carbon.trace, notes=result.notes)

    texts = {option: render(option) for option in outputs}
    for option, path in outputs.items():
        if path != "-":
            write_whole_file(path, texts[option], args.force)
    to_stdout = next((option for option, path in outputs.items() if path == "-"), None)
    sys.stdout.write(texts[to_stdout] if to_stdout else terminal_text(result))
    sys.stdout.flush()
    note = result.candidates_file_note()
    if note and to_stdout:  # the terminal text carries it otherwise
        print(f"peakrank: {note}", file=sys.stderr)
    if not result.complete:
        print("peakrank: the run stopped early; the list is incomplete", file=sys.stderr)
    return 0


def _print_notes(notes) -> None:
    """What picking a spectrum file did (referencing, picking), one stderr line each."""
    for note in notes:
        print(f"peakrank: {note}", file=sys.stderr)


def _check_outputs(args: argparse.Namespace, options: dict[str, tuple[str, str]]) -> dict[str, str]:
    """The outputs asked for, option -> path ('-' for standard output), checked before any work.

    At most one may go to standard output; no two may name the same file; a path must
    name a file (not a folder) in a folder that exists and can be written, and an
    existing file is replaced only with --force.
    """
    chosen = {option: getattr(args, dest) for option, (dest, _) in options.items() if getattr(args, dest)}
    to_stdout = [option for option, path in chosen.items() if path == "-"]
    if len(to_stdout) > 1:
        raise InputError(f"{' and '.join(to_stdout)} would both write to standard output; send all but one "
                         f"to a file, e.g. {to_stdout[1]} {options[to_stdout[1]][1]}")
    seen: dict[str, str] = {}
    for option, path in chosen.items():
        if path == "-":
            continue
        _check_output_path(option, path, options[option][1], args.force)
        key = os.path.realpath(path)
        if key in seen:
            raise InputError(f"{seen[key]} and {option} both name {path}; give each its own file")
        seen[key] = option
    return chosen


def _check_output_path(option: str, path: str, example: str, force: bool) -> None:
    target = Path(path)
    folder = target.parent
    if target.is_dir():
        raise InputError(f"{option} {path} is a folder; give a file name, e.g. {option} {target / example}")
    if not folder.is_dir():
        what = "does not exist" if not folder.exists() else "is not a folder"
        raise InputError(f"{option} {path}: folder {folder} {what}; create it or choose another path")
    if target.exists() and target.is_file() and not force:
        raise InputError(f"{option} {path}: the file exists; choose another name or pass --force to replace it")
    if not os.access(folder, os.W_OK | os.X_OK) and not (target.exists() and not target.is_file()):
        raise InputError(f"{option} {path}: cannot write in folder {folder} (permission denied); "
                         "choose another path")


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
    pre = sub.add_parser("predict", help="predict the 1H and 13C NMR signals of a structure, with their arithmetic")
    pre.add_argument("smiles", metavar="SMILES", help="the structure, e.g. 'CCOC(C)=O' (quote it in the shell)")
    pre.add_argument("--solvent", metavar="NAME", help="NMR solvent (default CDCl3)")
    pre.add_argument("--field", type=float, metavar="MHZ",
                     help="spectrometer frequency, judges first-order multiplets (default 400)")
    pre.add_argument("--json", metavar="PATH", help="write the signals as JSON ('-' for stdout, nothing else there)")
    pre.add_argument("--force", action="store_true", help="replace the --json file if it exists")
    pre.set_defaults(run=_run_predict)


def _run_predict(args: argparse.Namespace) -> int:
    import json

    from rdkit import Chem

    from .predict import CarbonPredictor, Predictor, carbon_table, parse_smiles, signal_table
    from .report import write_whole_file
    from .spectra import DEFAULT_FIELD_MHZ, DEFAULT_SOLVENT

    outputs = _check_outputs(args, {"--json": ("json", "signals.json")})
    args.field = DEFAULT_FIELD_MHZ if args.field is None else args.field
    predictor = Predictor(args.solvent or DEFAULT_SOLVENT, args.field)
    notes: list[str] = []
    mol = parse_smiles(args.smiles, notes)
    used = Chem.MolToSmiles(mol)
    # a salt or an ion is replaced by another molecule, whose atoms follow its canonical SMILES
    smiles = args.smiles if used == Chem.CanonSmiles(args.smiles) else used
    signals = predictor.predict(mol)
    carbons = CarbonPredictor(predictor.solvent_id).predict(mol)
    doc = {"smiles": smiles, "solvent": predictor.solvent_id, "field_mhz": args.field,
           "signals": [s.to_json() for s in signals], "carbons": [s.to_json() for s in carbons]}
    if notes:
        doc.update({"input": args.smiles, "note": " ".join(notes)})
    text = json.dumps(doc, indent=2, ensure_ascii=False) + "\n"
    if outputs.get("--json", "-") != "-":
        write_whole_file(outputs["--json"], text, args.force)
    for note in notes:
        print(f"peakrank: {note}", file=sys.stderr)
    if outputs.get("--json") == "-":
        sys.stdout.write(text)
        return 0
    print(f"{smiles}  ({predictor.solvent_id}, {args.field:g} MHz)")
    sys.stdout.write(signal_table(signals))
    print()
    sys.stdout.write(carbon_table(carbons))
    return 0


def _add_peaks(sub) -> None:
    pea = sub.add_parser("peaks", help="print the peak list read from a file or picked from a spectrum, "
                                       "in the style --peaks and --carbon accept")
    pea.add_argument("file", metavar="FILE",
                     help="a peak file (.csv, .tsv, .json, .jdx, .txt), a 1H or 13C spectrum (JCAMP-DX, Bruker "
                          "folder) or inline text")
    pea.add_argument("--dept135", metavar="FILE",
                     help="a DEPT-135 spectrum that types the lines picked from FILE, a 13C spectrum")
    pea.add_argument("--solvent", metavar="NAME",
                     help="solvent to reference and drop by (default: the file's, else CDCl3)")
    pea.add_argument("--json", metavar="PATH", help="write the peaks as JSON ('-' for stdout, nothing else there)")
    pea.add_argument("--force", action="store_true", help="replace the --json file if it exists")
    pea.set_defaults(run=_run_peaks)


def _run_peaks(args: argparse.Namespace) -> int:
    import json

    from .report import peak_list_json, write_whole_file
    from .spectra import CarbonSpectrum, format_carbon_peaks, format_peaks, read_peak_source

    outputs = _check_outputs(args, {"--json": ("json", "peaks.json")})
    source = read_peak_source(args.file, None, args.solvent, args.dept135)
    spectrum = source.spectrum
    text = json.dumps(peak_list_json(source), indent=2, ensure_ascii=False) + "\n"
    if outputs.get("--json", "-") != "-":
        write_whole_file(outputs["--json"], text, args.force)
    _print_notes(source.notes)
    for d in source.dropped:
        print(f"peakrank: dropped {d.peak.caption} ({d.reason})", file=sys.stderr)
    if outputs.get("--json") == "-":
        sys.stdout.write(text)
        return 0
    facts = ", ".join(f for f in (f"{spectrum.field_mhz:g} MHz" if spectrum.field_mhz else "", spectrum.solvent or "")
                      if f)
    carbon = isinstance(spectrum, CarbonSpectrum)
    listed = format_carbon_peaks(spectrum.peaks) if carbon else format_peaks(spectrum.peaks)
    print(f"{'13C' if carbon else '1H'} NMR{f' ({facts})' if facts else ''} δ {listed}")
    return 0


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``peakrank`` console script."""
    try:
        args = build_parser().parse_args(argv)
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
