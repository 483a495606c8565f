"""How much the limits of a 13C peak list shrink the generator's space, on held-out compounds of the open data.

For every held-out compound of ``benchmarks/data/open-spectra.tsv`` (NMRShiftDB2, see its README) with
6 to 12 carbons, the limits of its own 13C list (``rank.generate.constraints.carbon_limits``, with and
without its DEPT types) are given to the generator, and the estimated space (Knuth estimates of every
run, ``IsomerStream.estimate``) is compared with the space without them.  The estimate shows what
planning removes (hydrogen distributions, double-bond flags, triple-bond bans); structures the limits
remove only once built are measured on the compounds whose limited space is small enough to build
(``--build``, default 20,000 estimated structures): the share of built structures the limits keep.

Usage: python benchmarks/constraints.py [--carbons 6-12] [--build 20000] [--sample N]

Figures (2026-12-03, 361 held-out compounds of C6-C12, about 30 minutes on a shared core):

| 13C list | factor: lower quartile / median / upper quartile | geometric mean | under the ceiling |
| --- | --- | --- | --- |
| with DEPT types | 25.8 / 156.4 / 1,320.1 | 188.8 | 145 -> 263 |
| shifts only | 1.0 / 1.3 / 2.0 | 1.5 | 145 -> 155 |

No true structure broke a limit.  Structures removed only once built are few where the space was
small enough to build (median share kept 1.00 of 161 and 63 compounds).
"""

from __future__ import annotations

import argparse
import re
import statistics
import sys
import time
from pathlib import Path

from rdkit import Chem

from rank.bench import read_cases
from rank.formula import parse_formula
from rank.generate import IsomerStream
from rank.generate.constraints import carbon_limits
from rank.generate.stream import DEFAULT_CEILING, MAX_HEAVY_ATOMS
from rank.shortlist import evidence_limits, observe
from rank.spectra import read_carbon_peaks, read_peaks

DATA = Path(__file__).resolve().parent / "data" / "open-spectra.tsv"
_TYPES = {"C": 0, "CH": 1, "CH2": 2, "CH3": 3}


def _c13() -> dict[str, str]:
    out = {}
    for line in DATA.read_text(encoding="utf-8").splitlines():
        if line.strip() and not line.startswith("#"):
            fields = line.split("\t")
            out[fields[0]] = fields[6]
    return out


def _peaks(text: str, typed: bool) -> list[tuple[float, int | None]]:
    return [(float(s), _TYPES[t] if typed else None) for s, t in re.findall(r"(-?[\d.]+) \(([^)]*)\)", text)]


def _quartiles(values: list[float]) -> str:
    if len(values) < 2:
        return "-"
    q = statistics.quantiles(values, n=4)
    return f"{q[0]:,.1f} / {statistics.median(values):,.1f} / {q[2]:,.1f}"


def _variants(c13: dict[str, str]) -> dict[str, object]:
    """Evidence name -> function (case, formula) -> the limits it sets."""
    def proton(case, formula, carbon=None):
        spectrum = read_carbon_peaks(carbon) if carbon else None
        observation, _ = observe(formula, read_peaks(case.peaks), case.solvent, carbon=spectrum)
        return evidence_limits(formula, observation)

    return {
        "13c-typed": lambda case, formula: carbon_limits(formula, _peaks(c13[case.id], True)),
        "13c": lambda case, formula: carbon_limits(formula, _peaks(c13[case.id], False)),
        "1h": proton,
        "1h+13c-typed": lambda case, formula: proton(case, formula, c13[case.id]),
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--carbons", default="6-12")
    parser.add_argument("--heteroatoms", type=int, default=None, 
                        help="only compounds with at most N atoms besides C, H")
    parser.add_argument("--build", type=int, default=20_000)
    parser.add_argument("--sample", type=int, default=None, help="every k-th compound only (a quick look)")
    parser.add_argument("--evidence", default="13c-typed,13c",
                        help="comma-separated: 13c-typed, 13c (shifts only), 1h, 1h+13c-typed")
    args = parser.parse_args()
    low, high = (int(x) for x in args.carbons.split("-"))
    c13 = _c13()
    variants = _variants(c13)
    cases = [c for c in read_cases(str(DATA), "held-out") if low <= parse_formula(c.formula)["C"] <= high
             and parse_formula(c.formula).heavy_atoms <= MAX_HEAVY_ATOMS
             and (args.heteroatoms is None or _heteroatoms(parse_formula(c.formula)) <= args.heteroatoms)]
    if args.sample:
        cases = cases[::args.sample]
    print(f"{len(cases)} held-out compounds with {low}-{high} carbons", file=sys.stderr)
    start = time.time()
    for name in args.evidence.split(","):
        factors, under_before, under_after, kept_shares, broken = [], 0, 0, [], 0
        for i, case in enumerate(cases):
            formula = parse_formula(case.formula)
            limits = variants[name](case, formula)
            truth = Chem.MolFromSmiles(case.smiles)
            broken += not all(lim.holds(truth) for lim in limits)
            plain = IsomerStream(formula, ceiling=0).estimate()
            stream = IsomerStream(formula, ceiling=0, limits=limits)
            limited = stream.estimate()
            factors.append(plain / max(limited, 1.0))
            under_before += plain <= DEFAULT_CEILING
            under_after += limited <= DEFAULT_CEILING
            if limited <= args.build:
                built = IsomerStream(formula, ceiling=0, limits=limits, budget=60)
                kept = sum(1 for _ in built)
                planned = sum(built.plan().hinted.values())
                checked_out = sum(built.hinted.values()) - planned   # removed by the checks of built structures
                if built.complete_run and kept + checked_out:
                    kept_shares.append(kept / (kept + checked_out))
            print(f"\r{name} {i + 1}/{len(cases)} {time.time() - start:.0f} s", end="", file=sys.stderr)
        print(file=sys.stderr)
        print(f"limits of {name}: {len(cases)} compounds, C{low}-C{high}")
        print(f"  estimated space shrinks by a factor (quartiles / median / upper quartile): {_quartiles(factors)}")
        print(f"  geometric mean factor: {statistics.geometric_mean(factors):,.1f}")
        print(f"  under the default ceiling ({DEFAULT_CEILING:,}): {under_before} before, {under_after} after")
        if kept_shares:
            print(f"  built and checked ({len(kept_shares)} compounds with at most {args.build:,} estimated): "
                  f"median share kept {statistics.median(kept_shares):.2f}")
        print(f"  true structure breaks a limit: {broken}")


def _heteroatoms(formula) -> int:
    return formula.heavy_atoms - formula["C"]


if __name__ == "__main__":
    main()
