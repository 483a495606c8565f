"""Fit the environment corrections and the σ of the 13C predictor on the fit part of the open data set.

For every fit-part compound of ``benchmarks/data/open-spectra.tsv`` (derived from NMRShiftDB2; see its
header) the additive prediction without environment correction is paired with the observed 13C entries
(``predict_carbon_open.pair``: Hungarian algorithm on |Δδ| within each DEPT type), and each paired
class's residual (observed − predicted) is filed under the environment codes of its carbon
(``rank.predict.environment``, radius 0 to ``rank.predict.carbon.CARBON_RADIUS``).  A code seen on at
least ``--min-compounds`` compounds keeps the mean of its per-compound residuals, shrunk towards its parent
code's value by n / (n + ``--shrink``) (radius 0 towards zero).

σ per family (``rules/carbon_sigma.tsv``): the root mean square residual of the paired classes on the fit
part, the worst 1 % left out, without the correction (``sigma``) and with a correction fitted on the other
half of the fit part (``sigma_environment``: two-fold cross-fitting, so the spread is not the in-sample one).

Nothing of the held-out part is read.
Usage: python benchmarks/fit_carbon.py [--write] [--min-compounds N] [--shrink S] [--select]
"""

from __future__ import annotations

import argparse
import math
import statistics
import sys
from collections import defaultdict
from pathlib import Path

from predict_carbon_open import pair, read_carbon_cases
from rdkit import Chem

from rank.predict.carbon import CARBON_FAMILIES, CARBON_RADIUS, CarbonPredictor
from rank.predict.environment import environment_codes

RULES = Path(__file__).resolve().parent.parent / "rules"
TABLE = RULES / "carbon_environment.tsv"
SIGMA = RULES / "carbon_sigma.tsv"

Residual = tuple[str, tuple[str, ...], float]   # family, environment codes, observed − predicted


def residuals(cases) -> list[list[Residual]]:
    """Per compound: (family, codes, residual) of each paired class, additive prediction only."""
    predictor = CarbonPredictor(environment=False)
    out = []
    for case in cases:
        mol = Chem.MolFromSmiles(case.smiles)
        pairs, _ = pair(predictor.predict(mol), case.observed)
        out.append([(s.family, environment_codes(mol, s.atoms[0], CARBON_RADIUS), o - s.shift) for s, o in pairs])
    return out


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


def cross_fitted(per_compound: list[list[Residual]], min_compounds: int, shrink: float, radius: int
                 ) -> list[tuple[str, float]]:
    """Residuals after a correction fitted on the other half (compounds alternate between the halves)."""
    halves = [per_compound[0::2], per_compound[1::2]]
    out = []
    for k in (0, 1):
        table = fit(halves[1 - k], min_compounds, shrink, radius)
        for found in halves[k]:
            out.extend(corrected(found, table))
    return out


def spread(values: list[float]) -> float:
    """Root mean square with the largest 1 % of |values| left out."""
    v = sorted(abs(x) for x in values)
    kept = v[: max(1, math.ceil(0.99 * len(v)))]
    return math.sqrt(statistics.fmean(x * x for x in kept))


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

SIGMA_HEADER = """# Uncertainty (one standard deviation, ppm) of a predicted 13C shift by family: root mean square
#   residual (observed − predicted, the worst 1 % left out) of the paired classes of the fit part
#   ({compounds} compounds) of benchmarks/data/open-spectra.tsv, derived from NMRShiftDB2 (Steinbeck & Kuhn,
#   Phytochemistry 2004, 65, 2711; Kuhn & Schloerer, Magn. Reson. Chem. 2015, 53, 582).
#   sigma: the additive increments alone; sigma_environment: with the environment correction, fitted on the
#   other half of the fit part (two-fold cross-fitting). Written by benchmarks/fit_carbon.py; the held-out part was never read.
family\tsigma\tsigma_environment\tnote
"""


def main(argv: list[str]) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--min-compounds", type=int, default=1)
    parser.add_argument("--shrink", type=float, default=1.0)
    parser.add_argument("--select", action="store_true",
                        help="compare settings by two-fold cross-fitting within the fit part")
    parser.add_argument("--write", action="store_true", help="write rules/carbon_environment.tsv and carbon_sigma.tsv")
    args = parser.parse_args(argv)
    cases = read_carbon_cases("fit")
    per_compound = residuals(cases)
    plain = [(f, r) for found in per_compound for f, _, r in found]
    print(f"fit part: {len(cases)} compounds, {len(plain)} paired classes; additive MAE {mae(plain):.2f}")
    if args.select:
        for radius in range(1, CARBON_RADIUS + 1):
            for min_compounds in (1, 2, 3, 5):
                for shrink in (0.5, 1.0, 2.0, 4.0):
                    cv = cross_fitted(per_compound, min_compounds, shrink, radius)
                    print(f"radius {radius} min {min_compounds} shrink {shrink}: cross-fitted MAE {mae(cv):.3f}")
    table = fit(per_compound, args.min_compounds, args.shrink)
    cv = cross_fitted(per_compound, args.min_compounds, args.shrink, CARBON_RADIUS)
    print(f"{len(table)} codes; cross-fitted MAE with the correction {mae(cv):.2f}")
    sigmas = {}
    for family in CARBON_FAMILIES:
        a = [r for f, r in plain if f == family]
        b = [r for f, r in cv if f == family]
        sigmas[family] = (round(spread(a), 1) if a else 5.0, round(spread(b), 1) if b else 5.0, len(a))
        print(f"  {family:<15} n {len(a):>6}  sigma {sigmas[family][0]:>5}  with correction {sigmas[family][1]:>5}")
    if args.write:
        rows = sorted(table.items(), key=lambda kv: (kv[1][0], kv[0]))
        text = HEADER.format(radius=CARBON_RADIUS, compounds=len(cases), min_compounds=args.min_compounds,
                             shrink=args.shrink)
        TABLE.write_text(text + "".join(f"{c}\t{r}\t{n}\t{m}\t{sd}\n" for c, (r, n, m, sd) in rows), encoding="utf-8")
        text = SIGMA_HEADER.format(compounds=len(cases))
        text += "".join(f"{f}\t{s}\t{se}\t{n} classes\n" for f, (s, se, n) in sigmas.items())
        SIGMA.write_text(text, encoding="utf-8")
        print(f"written {TABLE} and {SIGMA}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
