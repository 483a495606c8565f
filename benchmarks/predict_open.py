"""1H predictor error on real compounds: the held-out part of the open data set.

Each held-out compound of ``benchmarks/data/open-spectra.tsv`` (derived from NMRShiftDB2, see its
header) is predicted in its solvent (CDCl3 when not reported); predicted and observed shifts are
paired H by H after sorting (the pairing with the least absolute error, since the data set gives no
atom assignment), exchangeable H left out as the data set leaves them out.  Prints the per-H mean
absolute error, median, 95th percentile, the error by family and by sp3 substitution, and the
worst compounds.  ``--part fit`` measures the fit part instead; ``--environment`` adds the
environment corrections fitted on the fit part (``rules/environment.tsv``).

Usage: python benchmarks/predict_open.py [--part held-out|fit] [--environment] [--worst N]
"""

from __future__ import annotations

import argparse
import statistics
import sys
from collections import defaultdict
from pathlib import Path

from rdkit import Chem

from rank.bench import read_cases
from rank.predict import Predictor
from rank.spectra import DEFAULT_SOLVENT, parse_peak_text, solvent_names

DATA = Path(__file__).resolve().parent / "data" / "open-spectra.tsv"


def paired_h(case, predictor: Predictor) -> tuple[list, list[tuple[int, float]]] | None:
    """The non-exchangeable predicted signals and, per H, (signal index, observed shift) after sorting
    both sides (the pairing with the least absolute error); None when the H counts differ."""
    signals = [s for s in predictor.predict(Chem.MolFromSmiles(case.smiles)) if not s.exchangeable]
    predicted = sorted((s.shift, k) for k, s in enumerate(signals) for _ in range(s.n_h))
    observed = sorted(p.shift for p in parse_peak_text(case.peaks).peaks for _ in range(int(p.integral)))
    if len(predicted) != len(observed):
        return None
    return signals, [(k, o) for (_, k), o in zip(predicted, observed)]


def predictors(environment: bool) -> dict[str, Predictor]:
    """One predictor per known solvent; a case whose solvent is not reported uses the default."""
    return {name: Predictor(name, environment=environment) for name in solvent_names()}


def predictor_for(case, table: dict[str, Predictor]) -> Predictor:
    return table.get(case.solvent, table[DEFAULT_SOLVENT])


def main(argv: list[str]) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--part", choices=("held-out", "fit"), default="held-out")
    parser.add_argument("--environment", action="store_true", help="add the fitted environment corrections")
    parser.add_argument("--worst", type=int, default=12)
    args = parser.parse_args(argv)
    table = predictors(args.environment)
    errors, by_family, worst, unpaired = [], defaultdict(list), [], 0
    cases = read_cases(str(DATA), args.part)
    for case in cases:
        paired = paired_h(case, predictor_for(case, table))
        if paired is None:
            unpaired += 1
            continue
        signals, pairs = paired
        found = [(signals[k].family, abs(o - signals[k].shift)) for k, o in pairs]
        errors += [e for _, e in found]
        for family, e in found:
            by_family[family].append(e)
        worst.append((statistics.fmean(e for _, e in found), case))
    ranked = sorted(errors)
    label = "with environment corrections" if args.environment else "additive increments only"
    print(f"{args.part} part, {label}: {len(cases) - unpaired} compounds ({unpaired} whose H counts do not "
          f"pair), {len(errors)} H")
    print(f"per-H MAE {statistics.fmean(errors):.3f} ppm, median {statistics.median(errors):.3f}, "
          f"95th percentile {ranked[int(0.95 * len(ranked))]:.3f}")
    for family, values in sorted(by_family.items(), key=lambda kv: -len(kv[1])):
        print(f"  {family:<16} {len(values):6d} H  MAE {statistics.fmean(values):.3f}")
    print("worst compounds (mean |Δδ| per H):")
    for mean, case in sorted(worst, key=lambda t: -t[0])[:args.worst]:
        print(f"  {mean:.2f}  {case.smiles}  ({case.name})", flush=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
