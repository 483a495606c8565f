"""Reach on one machine: wall time, throughput, memory and worker scaling of a whole formula-mode run.

One compound of the fit part of the open data (``benchmarks/data/open-spectra.tsv``, NMRShiftDB2; by
default 3'-methoxyacetophenone, C9H10O2, whose 1H list leaves about 85,000 candidates to score after the
hints and limits) is identified from its own 1H list with 1 worker and then with 2 (``--workers``).
Prints per run: structures scored, wall time, candidates per second, the peak resident memory of this
process and of the largest worker (``resource.getrusage``), and whether the top 10 (SMILES, misfits,
ties) is the same for every number of workers.  Then the time a hopeless formula takes to be refused.

Usage: python benchmarks/reach.py [--case INCHIKEY] [--workers 1,2]

Figures (2026-12-04, this machine, 2 cores): 84,867 candidates scored; 1 worker 92.6 s (916/s), 2 workers
53.8 s (1,577/s): 1.72 times; peak memory 150 MB in this process and 128 MB in each worker; the top 10
identical; C30H62 refused in 0.6 s.
"""

from __future__ import annotations

import argparse
import resource
import time
from pathlib import Path

from rank.bench import read_cases
from rank.errors import InputError
from rank.shortlist import Identifier

DATA = Path(__file__).resolve().parent / "data" / "open-spectra.tsv"
DEFAULT_CASE = "BAYUSCHCCGXLAY-UHFFFAOYSA-N"  # 3'-methoxyacetophenone, C9H10O2
HOPELESS = ("C30H62", "0.88 (t, 6H), 1.26 (m, 56H)")


def _peak_mb(who: int) -> float:
    return resource.getrusage(who).ru_maxrss / 1024  # Linux reports KiB


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--case", default=DEFAULT_CASE, help="open-data id (InChIKey)")
    parser.add_argument("--workers", default="1,2", help="comma-separated worker counts")
    args = parser.parse_args()
    case = next(c for c in read_cases(str(DATA), "all") if c.id == args.case)
    print(f"{case.name}: {case.formula} {case.smiles}")
    tops, walls = {}, {}
    for workers in (int(w) for w in args.workers.split(",")):
        start = time.perf_counter()
        result = Identifier(workers=workers, top=10, solvent=case.solvent or None).identify(case.formula, case.peaks)
        wall = time.perf_counter() - start
        walls[workers] = wall
        tops[workers] = [(c.smiles, c.misfit, c.tied) for c in result.candidates]
        truth = next((c.rank for c in result.candidates if c.smiles == case.smiles), None)
        print(f"workers {workers}: {result.explored:,} scored of about {result.estimated:,.0f} estimated, "
              f"{wall:.1f} s wall, {result.explored / wall:,.0f} candidates/s; truth at rank {truth}; peak memory "
              f"{_peak_mb(resource.RUSAGE_SELF):.0f} MB here, {_peak_mb(resource.RUSAGE_CHILDREN):.0f} MB in the "
              "largest worker")
    first = next(iter(tops.values()))
    print("top 10 with misfits and ties identical for every number of workers:",
          all(t == first for t in tops.values()))
    if 1 in walls and len(walls) > 1:
        print("speed-up over 1 worker: " + ", ".join(f"{w} workers {walls[1] / s:.2f}x" for w, s in walls.items()
                                                     if w != 1))
    start = time.perf_counter()
    try:
        Identifier(workers=1).identify(*HOPELESS)
        print("the hopeless formula was not refused")
    except InputError as exc:
        print(f"{HOPELESS[0]} refused in {time.perf_counter() - start:.1f} s: {exc}")


if __name__ == "__main__":
    main()
