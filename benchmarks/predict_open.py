"""1H predictor error on real compounds: the held-out part of the open data set.

Each held-out compound of ``benchmarks/data/open-spectra.tsv`` (derived from NMRShiftDB2, see its
header) is predicted in its solvent (CDCl3 when not reported); predicted and observed shifts are
paired H by H after sorting (the pairing with the least absolute error, since the data set gives no
atom assignment), exchangeable H left out as the data set leaves them out.  Prints the per-H mean
absolute error, median, 95th percentile, the error by family and by sp3 substitution, and the
worst compounds.  ``--part fit`` measures the fit part instead; ``--environment`` adds the
environment corrections fitted on the fit part (``rules/environment.tsv``).

``--pairing hsqc`` measures on exact atom assignments instead: the data set's HSQC pairs are put on atoms
through the 13C prediction (``benchmarks/hsqc_pairing.py``; compounds whose 13C assignment is ambiguous
within ``--margin`` ppm, or does not match the structure, are left out and counted), each predicted H is
compared with the observed shift(s) of its own carbon, and the sorted pairing of the same H on the same
compounds is printed beside it (the sorted pairing is optimistic: it never pairs across a crossing).
``--partial`` also measures the ambiguous compounds, on the H of their firm 13C classes only (those no
assignment within the margin changes); the sorted figure beside it then pairs the whole compound and keeps
the same H.

Held-out part, margin 2 ppm (nothing tuned on it): 283 of 614 compounds paired, 2224 H (33.8 % of the 6575
listed H on carbon).  Per-H MAE / p95 with the HSQC pairing 0.140 / 0.45 ppm against 0.130 / 0.41 for the
sorted pairing of the same H (additive increments); 0.136 / 0.45 against 0.124 / 0.40 with ``--environment``.
With ``--partial`` (572 compounds, 4288 H, 65.2 %): 0.150 / 0.51 against 0.131 / 0.43; 0.143 / 0.49 against
0.122 / 0.40 with ``--environment``.  The sorted pairing thus understates the per-H MAE by 0.010-0.021 ppm
(7-15 %) and the p95 by 0.04-0.09 ppm.  On the fit part the understatement grows as the margin falls (0.012
ppm at 4 ppm, 0.016 at 3, 0.023 at 2, 0.029 at 1): part of the HSQC figure is 13C misassignment
(``hsqc_pairing.py --simulate``), part the harder compounds a small margin lets in.

Usage: python benchmarks/predict_open.py [--part held-out|fit] [--environment] [--pairing sorted|hsqc]
       [--margin PPM] [--partial] [--worst N]
"""

from __future__ import annotations

import argparse
import statistics
import sys
from collections import Counter, defaultdict
from pathlib import Path

from hsqc_pairing import MARGIN, STATUSES, pair_cases
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


def hsqc_h(case, predictor: Predictor, pairing, firm_only: bool = False) -> tuple[list, list[tuple[int, float]]] | None:
    """As :func:`paired_h`, but each predicted H with the observed shift of its own carbon (``pairing``, a
    ``hsqc_pairing.Pairing``); None when the predicted H of some carbons do not match their observed H in number.
    ``firm_only``: only the H on the pairing's firm atoms.

    Predicted signals that share a carbon (the two H of a terminal =CH2) are paired with that carbon's H
    by sorted shift: which H is which is not in the data."""
    signals = [s for s in predictor.predict(Chem.MolFromSmiles(case.smiles)) if not s.exchangeable]
    groups: list[tuple[set[int], list[int]]] = []
    for k, s in enumerate(signals):
        joined = [g for g in groups if g[0] & set(s.atoms)]
        atoms, members = set(s.atoms).union(*(g[0] for g in joined)), [k] + [m for g in joined for m in g[1]]
        groups = [g for g in groups if g not in joined] + [(atoms, members)]
    pairs = []
    for atoms, members in groups:
        observed = sorted(h for atom in atoms for h in pairing.observed.get(atom, ()))
        predicted = sorted((signals[k].shift, k) for k in members for _ in range(signals[k].n_h))
        if len(observed) != len(predicted):
            return None
        if not firm_only or atoms <= pairing.firm:
            pairs += [(k, o) for (_, k), o in zip(predicted, observed)]
    return signals, pairs


def sorted_pairs(signals: list, pairing, keep: set[int]) -> list[tuple[int, float]] | None:
    """All the compound's predicted and observed (HSQC) H paired after sorting both sides, then only the H of
    the signals in ``keep``; None when the H counts differ."""
    predicted = sorted((s.shift, k) for k, s in enumerate(signals) for _ in range(s.n_h))
    observed = sorted(h for hs in pairing.observed.values() for h in hs)
    if len(predicted) != len(observed):
        return None
    return [(k, o) for (_, k), o in zip(predicted, observed) if k in keep]


def summarise(title: str, found: list[tuple[str, float]]) -> None:
    errors = sorted(e for _, e in found)
    print(f"{title}: {len(errors)} H, per-H MAE {statistics.fmean(errors):.3f} ppm, median "
          f"{statistics.median(errors):.3f}, 95th percentile {errors[int(0.95 * len(errors))]:.3f}")


def predictors(environment: bool) -> dict[str, Predictor]:
    """One predictor per known solvent; a case whose solvent is not reported uses the default."""
    return {name: Predictor(name, environment=environment) for name in solvent_names()}


def predictor_for(case, table: dict[str, Predictor]) -> Predictor:
    return table.get(case.solvent, table[DEFAULT_SOLVENT])


def measure_hsqc(args, table: dict[str, Predictor]) -> int:
    """``--pairing hsqc``: per-H error on exact atom assignments, with the sorted pairing of the same H beside it."""
    cases = read_cases(str(DATA), args.part)
    pairings = pair_cases(cases, args.margin)
    counts = Counter(pairings[c.id].status if c.id in pairings else "no row" for c in cases)
    exact, optimistic, by_family, worst, mismatched, partial = [], [], defaultdict(list), [], 0, 0
    for case in cases:
        pairing = pairings.get(case.id)
        if pairing is None or pairing.status != "paired" and not (args.partial and pairing.status == "ambiguous"):
            continue
        found = hsqc_h(case, predictor_for(case, table), pairing, firm_only=True)
        optimistic_pairs = sorted_pairs(found[0], pairing, {k for k, _ in found[1]}) if found else None
        if found is None or optimistic_pairs is None:
            mismatched += 1
            continue
        signals, pairs = found
        if not pairs:
            continue
        partial += pairing.status == "ambiguous"
        here = [(signals[k].family, abs(o - signals[k].shift)) for k, o in pairs]
        exact += here
        optimistic += [(signals[k].family, abs(o - signals[k].shift)) for k, o in optimistic_pairs]
        for family, e in here:
            by_family[family].append(e)
        worst.append((statistics.fmean(e for _, e in here), case))
    label = "with environment corrections" if args.environment else "additive increments only"
    print(f"{args.part} part, {label}, HSQC pairing (13C margin {args.margin} ppm): {len(worst)} of {len(cases)} "
          f"compounds measured ({100 * len(worst) / len(cases):.1f} %"
          + (f"; {partial} of them ambiguous, on their firm classes only" if args.partial else "") + "); "
          + ", ".join(f"{s} {counts[s]}" for s in STATUSES if counts[s])
          + (", no row {counts['no row']}" if counts["no row"] else "")
          + f"; 1H classes not matching the 13C assignment {mismatched}")
    if not exact:
        return 1
    listed = sum(int(p.integral) for case in cases for p in parse_peak_text(case.peaks).peaks)
    print(f"{len(exact)} of the part's {listed} listed H on carbon measured ({100 * len(exact) / listed:.1f} %)")
    summarise("exact (HSQC) pairing", exact)
    summarise("sorted pairing, same H", optimistic)
    gap = statistics.fmean(e for _, e in exact) - statistics.fmean(e for _, e in optimistic)
    print(f"the sorted pairing understates the per-H MAE by {gap:.3f} ppm "
          f"({100 * gap / statistics.fmean(e for _, e in exact):.0f} % of the exact figure)")
    for family, values in sorted(by_family.items(), key=lambda kv: -len(kv[1])):
        print(f"  {family:<16} {len(values):6d} H  MAE {statistics.fmean(values):.3f}")
    print("worst compounds (mean |Δδ| per H, exact pairing):")
    for mean, case in sorted(worst, key=lambda t: -t[0])[:args.worst]:
        print(f"  {mean:.2f}  {case.smiles}  ({case.name})", flush=True)
    return 0


def main(argv: list[str]) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--part", choices=("held-out", "fit"), default="held-out")
    parser.add_argument("--environment", action="store_true", help="add the fitted environment corrections")
    parser.add_argument("--worst", type=int, default=12)
    parser.add_argument("--pairing", choices=("sorted", "hsqc"), default="sorted",
                        help="pair predicted and observed H by sorted shift, or on atoms through the HSQC pairs")
    parser.add_argument("--margin", type=float, default=MARGIN,
                        help="with --pairing hsqc: ppm by which the 13C assignment must beat the second best")
    parser.add_argument("--partial", action="store_true",
                        help="with --pairing hsqc: measure ambiguous compounds too, on their firm classes only")
    args = parser.parse_args(argv)
    table = predictors(args.environment)
    if args.pairing == "hsqc":
        return measure_hsqc(args, table)
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
