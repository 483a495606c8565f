"""Accuracy of the 13C predictor on the open data set, with and without the environment correction.

Reads the c13 column of ``benchmarks/data/open-spectra.tsv`` (derived from NMRShiftDB2, the
open-access, open-content NMR database: Steinbeck & Kuhn, Phytochemistry 2004, 65, 2711; Kuhn &
Schloerer, Magn. Reson. Chem. 2015, 53, 582; see the file's header).  ``rank.bench.read_cases``
does not keep that column, so the file is read here, with the same split (``rank.bench.data_part``)
and the same choice of compounds (elements peakrank handles, with carbon).

Within each compound the predicted symmetry classes are paired with the observed entries of the same
DEPT type by the Hungarian algorithm on |Δδ|; a class left without a peak of its type (symmetric
carbons merged in the data, or a misassignment) is left out and counted.

Usage: python benchmarks/predict_carbon_open.py [--part held-out|fit] [--limit N] [--worst N]
The default part is held-out; nothing is fitted here.
"""

from __future__ import annotations

import argparse
import csv
import re
import statistics
import sys
import time
from collections import defaultdict
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from rdkit import Chem
from scipy.optimize import linear_sum_assignment

from rank.bench import data_part
from rank.errors import InputError
from rank.formula import parse_formula
from rank.predict.carbon import CARBON_FAMILIES, CarbonPredictor, CarbonSignal

DATA = Path(__file__).resolve().parent / "data" / "open-spectra.tsv"
COLUMNS = ("id", "nmrshiftdb2_id", "smiles", "formula", "solvent", "h1", "c13", "hsqc")
_PEAK = re.compile(r"(-?\d+(?:\.\d+)?)\s*\((C|CH|CH2|CH3)\)")


@dataclass(frozen=True)
class CarbonCase:
    """One compound of the open data set with its observed 13C entries (shift, DEPT type)."""

    id: str
    nmrshiftdb2_id: str
    smiles: str
    solvent: str
    observed: tuple[tuple[float, str], ...]
    part: str


def _supported(formula: str) -> bool:
    try:
        return parse_formula(formula)["C"] > 0
    except InputError:
        return False


def read_carbon_cases(part: str = "held-out", path: Path = DATA) -> list[CarbonCase]:
    """The compounds of one part ("fit", "held-out" or "all") that have a 13C peak list."""
    lines = [ln for ln in path.read_text(encoding="utf-8").splitlines() if ln.strip() and not ln.startswith("#")]
    cases = []
    for r in csv.DictReader(lines, fieldnames=COLUMNS, delimiter="\t", quoting=csv.QUOTE_NONE):
        which = data_part(r["id"])
        if part != "all" and which != part:
            continue
        if not _supported(r["formula"]) or not (r.get("c13") or "").strip():
            continue
        observed = tuple((float(s), t) for s, t in _PEAK.findall(r["c13"]))
        if not observed or Chem.MolFromSmiles(r["smiles"]) is None:
            continue
        cases.append(CarbonCase(r["id"], r["nmrshiftdb2_id"], r["smiles"], r["solvent"] or "CDCl3", observed, which))
    return cases


def pair(signals: list[CarbonSignal], observed: tuple[tuple[float, str], ...]
         ) -> tuple[list[tuple[CarbonSignal, float]], int]:
    """(signal, observed shift) pairs by DEPT type (Hungarian on |Δδ|), and the number of classes left out."""
    pairs, left_out = [], 0
    for dept in ("C", "CH", "CH2", "CH3"):
        mine = [s for s in signals if s.dept == dept]
        theirs = [o for o, t in observed if t == dept]
        if not mine:
            continue
        if not theirs:
            left_out += len(mine)
            continue
        cost = np.abs(np.array([[s.shift - o for o in theirs] for s in mine]))
        rows, cols = linear_sum_assignment(cost)
        pairs.extend((mine[i], theirs[j]) for i, j in zip(rows, cols))
        left_out += len(mine) - len(rows)
    return pairs, left_out


def evaluate(cases: list[CarbonCase], predictor: CarbonPredictor):
    """Per-family absolute errors, per-compound MAE, classes left out, compounds failed, seconds."""
    errors: dict[str, list[float]] = defaultdict(list)
    per_compound = []
    left, failed = 0, 0
    start = time.perf_counter()
    for case in cases:
        try:
            signals = predictor.predict(Chem.MolFromSmiles(case.smiles))
        except Exception:   # noqa: BLE001 - a benchmark counts failures, it does not stop on them
            failed += 1
            continue
        pairs, n_left = pair(signals, case.observed)
        left += n_left
        for s, o in pairs:
            errors[s.family].append(abs(s.shift - o))
        if pairs:
            per_compound.append((statistics.fmean(abs(s.shift - o) for s, o in pairs), case,
                                 max(pairs, key=lambda p: abs(p[0].shift - p[1]))))
    return errors, per_compound, left, failed, time.perf_counter() - start


def _line(name: str, values: list[float]) -> str:
    if not values:
        return f"{name:<15} {0:>6}"
    v = sorted(values)
    p95 = v[min(len(v) - 1, int(0.95 * len(v)))]
    return f"{name:<15} {len(v):>6} {statistics.fmean(v):>6.2f} {statistics.median(v):>6.2f} {p95:>6.2f}"


def report(cases: list[CarbonCase], environment: bool, worst: int) -> float:
    errors, per_compound, left, failed, seconds = evaluate(cases, CarbonPredictor(environment=environment))
    every = [e for v in errors.values() for e in v]
    print(f"\n== environment correction {'on' if environment else 'off'}: {len(cases)} compounds, "
          f"{len(every)} paired classes, {left} classes without a peak of their type, {failed} failed, "
          f"{len(cases) / seconds:.0f} molecules/s")
    print(f"{'family':<15} {'n':>6} {'MAE':>6} {'median':>6} {'p95':>6}")
    for family in CARBON_FAMILIES:
        print(_line(family, errors.get(family, [])))
    print(_line("all", every))
    if worst:
        print(f"worst {worst} compounds (MAE, id, SMILES, worst class):")
        for mae, case, (s, o) in sorted(per_compound, key=lambda t: -t[0])[:worst]:
            print(f"  {mae:6.2f}  {case.nmrshiftdb2_id:>9}  {case.smiles}  "
                  f"pred {s.shift:.1f} obs {o:.1f} ({s.family}, {s.dept})")
    return statistics.fmean(every) if every else float("nan")


def main(argv: list[str]) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--part", choices=("held-out", "fit"), default="held-out")
    parser.add_argument("--limit", type=int, default=None, help="first N compounds only")
    parser.add_argument("--worst", type=int, default=10)
    parser.add_argument("--no-environment", action="store_true", help="only the additive increments")
    args = parser.parse_args(argv)
    cases = read_carbon_cases(args.part)[: args.limit]
    print(f"{args.part} part of {DATA.name}: {len(cases)} compounds with 13C peaks")
    report(cases, False, args.worst)
    if not args.no_environment:
        report(cases, True, args.worst)
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
