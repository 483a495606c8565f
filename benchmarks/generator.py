"""Throughput and peak memory of the isomer generator.

Each run goes in a fresh subprocess so that its peak resident memory is its own.
Usage: python benchmarks/generator.py [FORMULA[:all] ...]
"""

from __future__ import annotations

import json
import subprocess
import sys

RUNS = [
    ("C16H34", True, "alkanes, OEIS A000602 gives 10,359"),
    ("C8H10", True, "complete space"),
    ("C9H12", True, "complete space; target >= 20,000 isomers/s"),
    ("C7H7NO", True, "two heteroatoms, complete space"),
    ("C8H8O", True, "complete space, about 112,000 by brute force"),
    ("C6H12O", False, "default space with filters, SMILES built for every isomer"),
]

_CHILD = r"""
import json, resource, sys, time
from rank.generate import IsomerStream
formula, complete, mode = sys.argv[1], sys.argv[2] == "1", sys.argv[3]
stream = IsomerStream(formula, complete=complete, ceiling=0)
start = time.perf_counter()
if mode == "count":
    n = stream.count()
else:
    n = sum(1 for _ in stream)
seconds = time.perf_counter() - start
peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
print(json.dumps({"n": n, "seconds": seconds, "peak_mb": peak}))
"""


def measure(formula: str, complete: bool, mode: str) -> dict:
    out = subprocess.run(
        [sys.executable, "-c", _CHILD, formula, "1" if complete else "0", mode],
        capture_output=True, text=True, check=True,
    )
    return json.loads(out.stdout)


def main(argv: list[str]) -> None:
    runs = [(a.split(":")[0], a.endswith(":all"), "") for a in argv] or RUNS
    print(f"{'formula':<8} {'space':<9} {'mode':<6} {'isomers':>9} {'seconds':>8} {'isomers/s':>10} {'peak MB':>8}")
    for formula, complete, note in runs:
        modes = ["count", "stream"] if complete else ["stream"]
        for mode in modes:
            r = measure(formula, complete, mode)
            rate = r["n"] / r["seconds"] if r["seconds"] else float("inf")
            space = "--all" if complete else "default"
            print(f"{formula:<8} {space:<9} {mode:<6} {r['n']:>9,} {r['seconds']:>8.2f} {rate:>10,.0f} "
                  f"{r['peak_mb']:>8.0f}  {note}")


if __name__ == "__main__":
    main(sys.argv[1:])
