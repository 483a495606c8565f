"""How early a budgeted run reaches the true structure's hydrogen distribution, on the open data.

A budgeted formula-mode run scores its work units nearest-first by ``rank.shortlist.HydrogenProfile``
(CH3 groups and exchangeable H the 1H list suggests).  For every compound of the chosen part of
``benchmarks/data/open-spectra.tsv`` (NMRShiftDB2, see its README) within the carbon and heteroatom
bounds, the space the identification would generate (the hints and limits of the compound's own 1H
list) is planned, each run estimated (Knuth), and the share of the estimated space that comes before
the true structure's own profile (half of the runs tied with it) is measured: 0 means the truth's
distribution is searched first, 0.5 is what an arbitrary order gives on average.  Nothing is scored,
so the figure is quick to measure.

Usage: python benchmarks/search_order.py [--part fit|held-out] [--carbons 6-12] [--heteroatoms 4] [--sample K]

Figures (2026-12-04, C6-C12, at most 4 heteroatoms, about a minute each): share of the estimated space before
the truth's profile, lower quartile / median / upper quartile / mean
- fit part (1,059 compounds; the order was chosen here): 0.011 / 0.048 / 0.198 / 0.146; first decile 62.9 %
  (CH3 and exchangeable H alone, without the CH2/CH tie-break, on every 8th: median 0.078, mean 0.152)
- held-out part (274 compounds): 0.007 / 0.037 / 0.248 / 0.149; first decile 64.2 %
"""

from __future__ import annotations

import argparse
import statistics
import sys

from rdkit import Chem

from rank.bench import read_cases
from rank.errors import InputError
from rank.formula import parse_formula
from rank.generate import IsomerStream, read_hints
from rank.shortlist import HydrogenProfile, evidence_limits, observe
from rank.spectra import read_peaks

DATA = "benchmarks/data/open-spectra.tsv"
MAX_RUNS = 3000


def _truth_profile(smiles: str) -> HydrogenProfile:
    mol = Chem.MolFromSmiles(smiles)
    carbons = [a.GetTotalNumHs() for a in mol.GetAtoms() if a.GetSymbol() == "C"]
    labile = sum(a.GetTotalNumHs() for a in mol.GetAtoms() if a.GetSymbol() != "C")
    return HydrogenProfile(carbons.count(3), carbons.count(2), carbons.count(1), labile)


def _share_before(case) -> float | None:
    formula = parse_formula(case.formula)
    observation, _ = observe(formula, read_peaks(case.peaks), case.solvent or None)
    hints = tuple(read_hints(observation.peaks, observation.normalisations[0].counts, formula))
    stream = IsomerStream(formula, hints=hints, limits=evidence_limits(formula, observation), ceiling=0)
    runs = []
    for types in stream.runs():
        runs.append(types)
        if len(runs) > MAX_RUNS:
            return None
    expected = HydrogenProfile.of_observation(observation, formula)
    truth = expected.distance(_truth_profile(case.smiles))
    before = tied = total = 0.0
    for types in runs:
        guess = stream.estimate_run(types)
        d = expected.distance(HydrogenProfile.of_types(types))
        total += guess
        before += guess if d < truth else 0.0
        tied += guess if d == truth else 0.0
    return None if total == 0 else (before + tied / 2) / total


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--part", choices=("fit", "held-out"), default="held-out")
    parser.add_argument("--carbons", default="6-12")
    parser.add_argument("--heteroatoms", type=int, default=4)
    parser.add_argument("--sample", type=int, default=1, help="every k-th compound only")
    args = parser.parse_args()
    low, high = (int(x) for x in args.carbons.split("-"))
    cases = [c for c in read_cases(DATA, args.part)
             if low <= parse_formula(c.formula)["C"] <= high
             and parse_formula(c.formula).heavy_atoms - parse_formula(c.formula)["C"] <= args.heteroatoms]
    cases = cases[::args.sample]
    shares, skipped = [], 0
    for i, case in enumerate(cases, 1):
        try:
            share = _share_before(case)
        except InputError:
            share = None
        if share is None:
            skipped += 1
        else:
            shares.append(share)
        print(f"\r{i}/{len(cases)}", end="", file=sys.stderr)
    print(file=sys.stderr)
    q = statistics.quantiles(shares, n=4)
    print(f"{args.part} part, C{low}-C{high}, at most {args.heteroatoms} heteroatoms: {len(shares)} compounds "
          f"({skipped} left out: unreadable list or more than {MAX_RUNS} runs)")
    print(f"share of the estimated space searched before the truth's hydrogen profile: lower quartile {q[0]:.3f}, "
          f"median {statistics.median(shares):.3f}, upper quartile {q[2]:.3f}, mean {statistics.mean(shares):.3f} "
          "(an arbitrary order: 0.5)")
    print(f"truth's profile searched first (share 0.1 or less): {sum(s <= 0.1 for s in shares) / len(shares):.1%}")


if __name__ == "__main__":
    main()
