"""Fit the table deltas, the environment corrections and the σ of the 13C predictor on the fit part of the
open data set.

1. Refit (``rules/carbon_refit.tsv``).  For every fit-part compound of ``benchmarks/data/open-spectra.tsv``
   (derived from NMRShiftDB2; see its header) each carbon class's additive arithmetic is taken from the
   tables alone (``rank.predict.carbon.additive_features``: the handbook shift and how often each
   ``table:row:column`` value was used), the classes are paired with the observed 13C entries
   (``predict_carbon_open.pair``: Hungarian algorithm on |Δδ| within each DEPT type), and a delta per
   table value is found by ridge regression of observed − handbook shift on those counts (lambda
   ``--ridge``, towards the handbook values; residuals beyond 5 ppm down-weighted; values used by fewer
   than ``--min-classes`` paired classes keep their handbook value).  Pairing and regression are repeated
   once with the refitted shifts.
2. Environment corrections (``rules/carbon_environment.tsv``).  Each paired class's residual after the
   refit is filed under the environment codes of its carbon (``rank.predict.environment``, radius 0 to
   ``rank.predict.carbon.CARBON_RADIUS``).  A code seen on at least ``--min-compounds`` compounds keeps
   the mean of its per-compound residuals, shrunk towards its parent code's value by n / (n + ``--shrink``)
   (radius 0 towards zero); the predictor uses the largest-radius code it finds.
3. σ per family (``rules/carbon_sigma.tsv``): a robust spread (1.4826 × median |residual|) of the paired
   classes, without (``sigma``) and with (``sigma_environment``) the correction, each half of
   the fit part predicted by a refit and a correction fitted on the other half (two-fold cross-fitting,
   so the spread is not the in-sample one).  ``--select`` compares settings by the same cross-fitting.

Nothing of the held-out part is read.
Usage: python benchmarks/fit_carbon.py [--write] [--ridge L] [--min-classes N] [--min-compounds N]
       [--shrink S] [--select]
"""

from __future__ import annotations

import argparse
import statistics
import sys
from collections import defaultdict
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from predict_carbon_open import pair, read_carbon_cases
from rdkit import Chem

from rank.predict.carbon import CARBON_FAMILIES, CARBON_RADIUS, additive_features
from rank.predict.environment import environment_codes
from rank.tables import read_table

RULES = Path(__file__).resolve().parent.parent / "rules"
TABLE = RULES / "carbon_environment.tsv"
SIGMA = RULES / "carbon_sigma.tsv"
REFIT = RULES / "carbon_refit.tsv"

Residual = tuple[str, tuple[str, ...], float]   # family, environment codes, observed − predicted


@dataclass(frozen=True)
class Observed:
    """One carbon class of a fit-part compound: its additive arithmetic and the observed shifts of its type."""

    family: str
    dept: str
    handbook: float
    features: dict[str, float]
    codes: tuple[str, ...]


@dataclass(frozen=True)
class _Shifted:
    shift: float
    dept: str
    index: int


def compounds(cases) -> list[tuple[list[Observed], tuple[tuple[float, str], ...]]]:
    """Per compound: the additive arithmetic of each carbon class, and the observed entries."""
    out = []
    for case in cases:
        mol = Chem.MolFromSmiles(case.smiles)
        found = [Observed(f.family, ("C", "CH", "CH2", "CH3")[min(f.n_h, 3)], f.handbook, f.features,
                          environment_codes(mol, f.atoms[0], CARBON_RADIUS)) for f in additive_features(mol)]
        out.append((found, case.observed))
    return out


def paired(data, deltas: dict[str, float]) -> list[list[tuple[Observed, float]]]:
    """Per compound: (class, observed shift) pairs for the additive prediction with ``deltas``."""
    out = []
    for found, observed in data:
        shifted = [_Shifted(c.handbook + sum(deltas.get(k, 0.0) * v for k, v in c.features.items()), c.dept, i)
                   for i, c in enumerate(found)]
        pairs, _ = pair(shifted, observed)
        out.append([(found[s.index], o) for s, o in pairs])
    return out


def refit(data, ridge: float, min_classes: int, rounds: int = 2) -> dict[str, float]:
    """Deltas of the table values by ridge regression (towards the handbook values) of the paired residuals,
    down-weighting residuals beyond 5 ppm (Huber weights); features used by fewer than ``min_classes``
    classes keep their handbook value."""
    deltas: dict[str, float] = {}
    for _ in range(rounds):
        pairs = [p for compound in paired(data, deltas) for p in compound]
        support: dict[str, int] = defaultdict(int)
        for c, _ in pairs:
            for k in c.features:
                support[k] += 1
        names = sorted(k for k, n in support.items() if n >= min_classes)
        column = {k: j for j, k in enumerate(names)}
        x = np.zeros((len(pairs), len(names)))
        r = np.zeros(len(pairs))
        for i, (c, o) in enumerate(pairs):
            r[i] = o - c.handbook
            for k, v in c.features.items():
                if k in column:
                    x[i, column[k]] = v
        w = np.ones(len(pairs))
        for _ in range(3):
            xw = x * w[:, None]
            solution = np.linalg.solve(x.T @ xw + ridge * np.eye(len(names)), xw.T @ r)
            residual = np.abs(r - x @ solution)
            w = np.minimum(1.0, 5.0 / np.maximum(residual, 1e-9))
        deltas = {k: round(float(v), 2) for k, v in zip(names, solution) if abs(v) >= 0.005}
    return deltas


def residuals(data, deltas: dict[str, float]) -> list[list[Residual]]:
    """Per compound: (family, codes, observed − additive prediction) of each paired class."""
    return [[(c.family, c.codes, o - c.handbook - sum(deltas.get(k, 0.0) * v for k, v in c.features.items()))
             for c, o in compound] for compound in paired(data, deltas)]


def fit(per_compound: list[list[Residual]], min_compounds: int, shrink: float, radius: int = CARBON_RADIUS
        ) -> dict[str, tuple[int, int, float, float]]:
    """code -> (radius, compounds, mean, sd)."""
    by_code: dict[str, dict[int, list[float]]] = defaultdict(lambda: defaultdict(list))
    for n, found in enumerate(per_compound):
        for _, codes, residual in found:
            for code in codes[: radius + 1]:
                by_code[code][n].append(residual)
    table: dict[str, tuple[int, int, float, float]] = {}
    for r in range(radius + 1):
        for code, compounds in by_code.items():
            if code.count("|") != r or len(compounds) < (1 if r == 0 else min_compounds):
                continue
            values = [statistics.fmean(v) for v in compounds.values()]
            n, mean = len(values), statistics.fmean(values)
            sd = statistics.pstdev(values) if n > 1 else 0.0
            parent = table.get(code.rsplit("|", 1)[0]) if r else None
            base = parent[2] if parent else 0.0
            table[code] = (r, n, round(base + (mean - base) * n / (n + shrink), 2), round(sd, 2))
    return table


def corrected(found: list[Residual], table: dict) -> list[tuple[str, float]]:
    """(family, residual after the correction) per class; the largest-radius code in the table wins."""
    out = []
    for family, codes, residual in found:
        value = next((table[c][2] for c in reversed(codes) if c in table), 0.0)
        out.append((family, residual - value))
    return out


def cross_fitted(data, ridge: float, min_classes: int, min_compounds: int, shrink: float, radius: int
                 ) -> tuple[list[tuple[str, float]], list[tuple[str, float]]]:
    """(family, residual) without and with the environment correction, each half of the fit part predicted by
    a refit and a correction fitted on the other half (compounds alternate between the halves)."""
    halves = [data[0::2], data[1::2]]
    plain, with_correction = [], []
    for k in (0, 1):
        deltas = refit(halves[1 - k], ridge, min_classes) if ridge >= 0 else {}
        table = fit(residuals(halves[1 - k], deltas), min_compounds, shrink, radius)
        for found in residuals(halves[k], deltas):
            plain.extend((f, r) for f, _, r in found)
            with_correction.extend(corrected(found, table))
    return plain, with_correction


def spread(values: list[float]) -> float:
    """A robust σ: 1.4826 × the median |residual| (the σ of a normal distribution with that median).

    13C residuals are heavy-tailed: a root mean square lets the few gross misses (misassigned rows,
    uncovered groups) set σ for every class, so that ordinary 1-2 ppm differences between isomers
    weigh nothing; the misfit caps each class's squared z instead (``CarbonSettings.z_cap``).
    """
    return 1.4826 * statistics.median(abs(x) for x in values)


def mae(values: list[tuple[str, float]]) -> float:
    return statistics.fmean(abs(r) for _, r in values)


HEADER = """# Environment corrections of the 13C predictor, ppm: observed − additive prediction, by atom-centred
# environment code (rank/predict/environment.py; spheres as in HOSE codes, W. Bremser, Anal. Chim. Acta
# 1978, 103, 355), radius 0 to {radius}. Fitted by benchmarks/fit_carbon.py on the fit part ({compounds}
# compounds) of the open data set benchmarks/data/open-spectra.tsv, derived from NMRShiftDB2, the
# open-access, open-content NMR database (Steinbeck & Kuhn, Phytochemistry 2004, 65, 2711; Kuhn & Schloerer,
# Magn. Reson. Chem. 2015, 53, 582); keep this attribution with the table. Predicted symmetry classes paired
# with the observed entries of the same DEPT type (Hungarian algorithm on |shift difference|). A code of
# radius r >= 1 is kept when seen on at least {min_compounds} compounds; its mean is shrunk towards its parent
# code's by n/(n + {shrink}). sd: spread of the per-compound residuals. The held-out part was never read.
code\tradius\tcompounds\tmean\tsd
"""

SIGMA_HEADER = """# Uncertainty (one standard deviation, ppm) of a predicted 13C shift by family: a robust spread,
#   1.4826 × the median |observed − predicted|, of the paired classes of the fit part
#   ({compounds} compounds) of benchmarks/data/open-spectra.tsv, derived from NMRShiftDB2 (Steinbeck & Kuhn,
#   Phytochemistry 2004, 65, 2711; Kuhn & Schloerer, Magn. Reson. Chem. 2015, 53, 582).
#   sigma: the refitted increments alone; sigma_environment: with the environment correction; each half of
#   the fit part predicted by a refit and a correction fitted on the other half (two-fold cross-fitting).
#   Written by benchmarks/fit_carbon.py; the held-out part was never read.
family\tsigma\tsigma_environment\tnote
"""


REFIT_HEADER = """# Refit deltas of the 13C increment tables, ppm: the value used for a table value (feature
#   table:row:column) is its handbook value plus delta. Fitted by benchmarks/fit_carbon.py on the fit part
#   ({compounds} compounds) of benchmarks/data/open-spectra.tsv, derived from NMRShiftDB2 (Steinbeck & Kuhn,
#   Phytochemistry 2004, 65, 2711; Kuhn & Schloerer, Magn. Reson. Chem. 2015, 53, 582); keep this attribution
#   with the table. Ridge regression (lambda {ridge}) of observed − handbook prediction on the feature counts,
#   residuals beyond 5 ppm down-weighted; features used by fewer than {min_classes} paired classes are not
#   refitted. classes: the paired classes using the feature. The held-out part was never read.
feature\thandbook\tdelta\tclasses
"""


def main(argv: list[str]) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--min-compounds", type=int, default=1)
    parser.add_argument("--shrink", type=float, default=1.0)
    parser.add_argument("--ridge", type=float, default=1.0, help="ridge lambda of the refit; negative: no refit")
    parser.add_argument("--min-classes", type=int, default=5)
    parser.add_argument("--select", action="store_true",
                        help="compare settings by two-fold cross-fitting within the fit part")
    parser.add_argument("--write", action="store_true",
                        help="write rules/carbon_refit.tsv, carbon_environment.tsv and carbon_sigma.tsv")
    args = parser.parse_args(argv)
    cases = read_carbon_cases("fit")
    data = compounds(cases)
    plain = [(f, r) for found in residuals(data, {}) for f, _, r in found]
    print(f"fit part: {len(cases)} compounds, {len(plain)} paired classes; handbook additive MAE {mae(plain):.2f}")
    if args.select:
        for ridge in (0.3, 1.0, 3.0):
            for min_classes in (3, 5, 10):
                for shrink in (1.0,):
                    a, b = cross_fitted(data, ridge, min_classes, args.min_compounds, shrink, CARBON_RADIUS)
                    print(f"ridge {ridge} min_classes {min_classes} shrink {shrink}: cross-fitted MAE additive "
                          f"{mae(a):.3f}, with correction {mae(b):.3f}", flush=True)
    deltas = refit(data, args.ridge, args.min_classes) if args.ridge >= 0 else {}
    table = fit(residuals(data, deltas), args.min_compounds, args.shrink)
    a, b = cross_fitted(data, args.ridge, args.min_classes, args.min_compounds, args.shrink, CARBON_RADIUS)
    print(f"{len(deltas)} refit deltas, {len(table)} codes; cross-fitted MAE additive {mae(a):.2f}, "
          f"with the correction {mae(b):.2f}")
    sigmas = {}
    for family in CARBON_FAMILIES:
        x = [r for f, r in a if f == family]
        y = [r for f, r in b if f == family]
        sigmas[family] = (round(spread(x), 1) if x else 5.0, round(spread(y), 1) if y else 5.0, len(x))
        print(f"  {family:<15} n {len(x):>6}  sigma {sigmas[family][0]:>5}  with correction {sigmas[family][1]:>5}")
    if args.write:
        handbook, support = {}, defaultdict(int)
        for found, _ in data:
            for c in found:
                for k in c.features:
                    support[k] += 1
        for k in deltas:
            table_name, row_id, column = k.split(":")
            key = "key" if table_name == "carbon_sp3" else "id"
            row = next(r for r in read_table(table_name) if r[key] == row_id)
            handbook[k] = row[column.split("@")[0]]
        text = REFIT_HEADER.format(compounds=len(cases), ridge=args.ridge, min_classes=args.min_classes)
        text += "".join(f"{k}\t{handbook[k]}\t{v}\t{support[k]}\n" for k, v in sorted(deltas.items()))
        REFIT.write_text(text, encoding="utf-8")
        rows = sorted(table.items(), key=lambda kv: (kv[1][0], kv[0]))
        text = HEADER.format(radius=CARBON_RADIUS, compounds=len(cases), min_compounds=args.min_compounds,
                             shrink=args.shrink)
        TABLE.write_text(text + "".join(f"{c}\t{r}\t{n}\t{m}\t{sd}\n" for c, (r, n, m, sd) in rows), encoding="utf-8")
        text = SIGMA_HEADER.format(compounds=len(cases))
        text += "".join(f"{f}\t{s}\t{se}\t{n} classes\n" for f, (s, se, n) in sigmas.items())
        SIGMA.write_text(text, encoding="utf-8")
        print(f"written {REFIT}, {TABLE} and {SIGMA}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
